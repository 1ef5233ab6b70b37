package record

import (
	"crypto/ed25519"
	"crypto/rand"
	"encoding/hex"
	"errors"
	"fmt"
	"io/fs"
	"os"
	"path"
	"path/filepath"
	"sort"
	"strings"
)

// Tags in the names of the folders WriteRun keeps beside a run folder DIR
// while it works: ".DIR.furrow-partial-<hex>" is the new folder being
// written, ".DIR.furrow-old-<hex>" the folder --replace set aside.
const (
	partialTag = ".furrow-partial-"
	oldTag     = ".furrow-old-"
)

// ScratchKind says whether name (a folder's base name) is one of the
// folders WriteRun keeps beside a run folder while it works: "partial"
// for a run folder being written, "old" for a run folder being replaced,
// "" for any other name. Neither kind is a run folder, whatever it holds:
// verify refuses them.
func ScratchKind(name string) string {
	if !strings.HasPrefix(name, ".") {
		return ""
	}
	switch {
	case strings.Contains(name, partialTag):
		return "partial"
	case strings.Contains(name, oldTag):
		return "old"
	}
	return ""
}

// ExistsError is the error of CheckRunDir and WriteRun when the run folder
// exists and it is not to be replaced.
type ExistsError struct {
	// Dir is the run folder as given.
	Dir string
	// Meanwhile is true when Dir did not exist when the run began: another
	// run (or someone) made it while this one was writing.
	Meanwhile bool
}

// Error says that the folder exists and what to do.
func (e *ExistsError) Error() string {
	if e.Meanwhile {
		return fmt.Sprintf("%s was created by someone else while this run was writing; this run wrote nothing there (choose a new run directory or pass --replace)", e.Dir)
	}
	return fmt.Sprintf("%s exists; choose a new run directory or pass --replace", e.Dir)
}

// CheckRunDir says whether WriteRun could write the run folder dir: it
// must not exist, unless replace is true and it is a run folder (it holds
// an audit record, or nothing). The check is only advisory, to stop before
// a long analysis; WriteRun decides again in one step when it puts the
// folder in place.
func CheckRunDir(dir string, replace bool) error {
	if k := ScratchKind(filepath.Base(filepath.Clean(dir))); k != "" {
		return fmt.Errorf("%s: furrow keeps names like this for the folders of runs in progress; choose another run directory", dir)
	}
	st, err := os.Lstat(dir)
	if errors.Is(err, fs.ErrNotExist) {
		return nil
	}
	if err != nil {
		return fmt.Errorf("checking %s: %w", dir, err)
	}
	if !replace {
		return &ExistsError{Dir: dir}
	}
	if !st.IsDir() {
		return fmt.Errorf("%s is not a folder; --replace replaces only a run folder", dir)
	}
	if _, err := os.Lstat(filepath.Join(dir, AuditFileName)); err == nil {
		return nil
	}
	if entries, err := os.ReadDir(dir); err == nil && len(entries) == 0 {
		return nil
	}
	return fmt.Errorf("%s is not a run folder (it holds no %s); --replace replaces only a run folder, whole", dir, AuditFileName)
}

// WriteRun writes the run folder dir whole or not at all. fill writes the
// reports into a new folder beside dir (".DIR.furrow-partial-<hex>"); the
// record, sealed and signed with key when it is not nil, is written there
// last; then that folder is renamed to dir.
//
// Without replace, the step that claims dir is os.Mkdir of dir, which
// fails when dir exists: two runs into the same dir cannot both succeed,
// and a folder made meanwhile is never written into (an *ExistsError with
// Meanwhile). The new folder is then renamed onto the empty dir just made
// (rename(2) replaces an empty folder, and fails on a folder that is not
// empty any more). A run killed in the instant between the two steps
// leaves dir empty: a folder without a record, which verify does not
// accept.
//
// With replace, an existing dir is renamed aside (".DIR.furrow-old-<hex>"),
// the new folder renamed in, and the old one removed: at every instant dir
// is the old run folder, the new one, or absent, never a mixture.
//
// A run killed at any point leaves no folder that verify accepts: dir is
// as before, absent, empty, or complete; the scratch folders beside it
// have recognisable names, which verify refuses (see ScratchKind), and
// are never removed by a later run (one may be in progress).
func WriteRun(dir string, r *Result, key ed25519.PrivateKey, replace bool, fill func(tmp string) error) error {
	if err := CheckRunDir(dir, replace); err != nil {
		return err
	}
	path := filepath.Clean(dir)
	parent := filepath.Dir(path)
	if err := os.MkdirAll(parent, 0o755); err != nil {
		return fmt.Errorf("creating %s: %w", parent, err)
	}
	tmp, err := makeScratch(path, partialTag)
	if err != nil {
		return err
	}
	committed := false
	defer func() {
		if !committed {
			os.RemoveAll(tmp)
		}
	}()
	if err := fill(tmp); err != nil {
		return err
	}
	files, err := hashFiles(tmp)
	if err != nil {
		return err
	}
	r.Files = files
	if err := WriteRecord(tmp, r, key); err != nil {
		return err
	}
	if err := syncTree(tmp); err != nil {
		return err
	}
	if err := commitRun(dir, path, tmp, replace); err != nil {
		return err
	}
	committed = true
	syncDir(parent)
	return nil
}

// commitRun puts the complete folder tmp in place at path (dir as given,
// for messages).
func commitRun(dir, path, tmp string, replace bool) error {
	for range 3 {
		err := os.Mkdir(path, 0o755)
		if err == nil {
			if err := os.Rename(tmp, path); err != nil {
				// A system whose rename does not replace an empty folder:
				// remove it (only while it is empty) and try once more.
				if os.Remove(path) == nil && os.Rename(tmp, path) == nil {
					return nil
				}
				return &ExistsError{Dir: dir, Meanwhile: true}
			}
			return nil
		}
		if !errors.Is(err, fs.ErrExist) {
			return fmt.Errorf("creating %s: %w", dir, err)
		}
		if !replace {
			return &ExistsError{Dir: dir, Meanwhile: true}
		}
		aside := scratchName(path, oldTag)
		if err := os.Rename(path, aside); err != nil {
			if errors.Is(err, fs.ErrNotExist) {
				continue // gone meanwhile: claim it afresh
			}
			return fmt.Errorf("replacing %s: %w", dir, err)
		}
		if err := os.Rename(tmp, path); err != nil {
			// Another run put its folder at dir meanwhile; that folder
			// stands, whole, and this run's is discarded.
			os.RemoveAll(aside)
			return &ExistsError{Dir: dir, Meanwhile: true}
		}
		syncDir(filepath.Dir(path))
		if err := os.RemoveAll(aside); err != nil {
			return fmt.Errorf("the new run folder is in place at %s, but the one it replaced, set aside as %s, could not be removed: %w", dir, aside, err)
		}
		return nil
	}
	return fmt.Errorf("replacing %s: it keeps appearing and disappearing; is another run writing it?", dir)
}

// scratchName is a fresh name for a scratch folder beside path.
func scratchName(path, tag string) string {
	var b [8]byte
	if _, err := rand.Read(b[:]); err != nil {
		panic("record: reading random bytes: " + err.Error())
	}
	return filepath.Join(filepath.Dir(path), "."+filepath.Base(path)+tag+hex.EncodeToString(b[:]))
}

// makeScratch creates a new, empty scratch folder beside path.
func makeScratch(path, tag string) (string, error) {
	for {
		name := scratchName(path, tag)
		err := os.Mkdir(name, 0o755)
		if err == nil {
			return name, nil
		}
		if !errors.Is(err, fs.ErrExist) {
			return "", fmt.Errorf("creating a folder beside %s: %w", path, err)
		}
	}
}

// hashFiles lists every regular file under root, by slash path, with the
// SHA-256 of its bytes, sorted by path.
func hashFiles(root string) ([]FileHash, error) {
	files := []FileHash{}
	err := filepath.WalkDir(root, func(p string, d fs.DirEntry, err error) error {
		if err != nil || d.IsDir() {
			return err
		}
		if !d.Type().IsRegular() {
			return fmt.Errorf("%s is not a regular file", p)
		}
		b, err := os.ReadFile(p)
		if err != nil {
			return err
		}
		rel, err := filepath.Rel(root, p)
		if err != nil {
			return err
		}
		files = append(files, FileHash{Path: filepath.ToSlash(rel), SHA256: SHA256Hex(b)})
		return nil
	})
	if err != nil {
		return nil, fmt.Errorf("listing the files of the run: %w", err)
	}
	sort.Slice(files, func(i, j int) bool { return files[i].Path < files[j].Path })
	return files, nil
}

// LocalPath reports whether p, a path from a record's file list, names a
// file inside the run folder: a clean, relative slash path that does not
// leave the folder and is not the record itself.
func LocalPath(p string) bool {
	return p != "" && p != AuditFileName && path.Clean(p) == p && !strings.Contains(p, `\`) &&
		filepath.IsLocal(filepath.FromSlash(p))
}

// syncTree flushes every folder under root to disk (the files were
// flushed as they were written), so that the folder is complete on disk
// before it is renamed into place.
func syncTree(root string) error {
	return filepath.WalkDir(root, func(p string, d fs.DirEntry, err error) error {
		if err != nil {
			return err
		}
		if d.IsDir() {
			syncDir(p)
		}
		return nil
	})
}

// syncDir flushes a folder's entries to disk, where the system allows it
// (best effort: some systems cannot sync a folder).
func syncDir(dir string) {
	if f, err := os.Open(dir); err == nil {
		f.Sync()
		f.Close()
	}
}
