package testkit

import (
	"bufio"
	"encoding/json"
	"errors"
	"fmt"
	"io/fs"
	"os"
	"path/filepath"
	"sort"
	"strings"
	"sync"
	"testing"
)

// ModuleRoot returns the directory holding go.mod, found by walking up
// from the working directory (the package directory under go test).
func ModuleRoot() (string, error) {
	dir, err := os.Getwd()
	if err != nil {
		return "", err
	}
	for {
		if _, err := os.Stat(filepath.Join(dir, "go.mod")); err == nil {
			return dir, nil
		}
		up := filepath.Dir(dir)
		if up == dir {
			return "", errors.New("no go.mod above the working directory")
		}
		dir = up
	}
}

// SharedRef returns the path of the shared reference folder,
// <parent of the module root>/shared/reference. It is an error when the
// module root cannot be found; the folder itself may be absent.
func SharedRef() (string, error) {
	root, err := ModuleRoot()
	if err != nil {
		return "", err
	}
	return filepath.Join(filepath.Dir(root), "shared", "reference"), nil
}

// missingShared is the reason recorded when shared reference data are
// absent.
const missingShared = "../shared/reference not found beside the checkout"

// SharedPath returns the path of rel (slash-separated) under the shared
// reference folder, or records a skipped reference check and skips the
// test when it is absent.
func SharedPath(t testing.TB, rel string) string {
	t.Helper()
	dir, err := SharedRef()
	if err != nil {
		t.Fatalf("locating the shared reference folder: %v", err)
	}
	p := filepath.Join(dir, filepath.FromSlash(rel))
	if _, err := os.Stat(p); err != nil {
		if _, derr := os.Stat(dir); derr != nil {
			SkipRef(t, missingShared)
		}
		SkipRef(t, fmt.Sprintf("shared reference file %s not found", rel))
	}
	return p
}

// ReadShared returns the bytes of rel under the shared reference folder,
// skipping (and counting the skip) when it is absent.
func ReadShared(t testing.TB, rel string) []byte {
	t.Helper()
	b, err := os.ReadFile(SharedPath(t, rel))
	if err != nil {
		t.Fatalf("reading %s: %v", rel, err)
	}
	return b
}

// ReadJSON decodes the JSON file at path into v. An absent file is a
// recorded skip with a message naming it; any other read or decode error
// is fatal.
func ReadJSON(t testing.TB, path string, v any) {
	t.Helper()
	b, err := os.ReadFile(path)
	if errors.Is(err, fs.ErrNotExist) {
		SkipRef(t, fmt.Sprintf("reference file %s not found", filepath.ToSlash(path)))
	}
	if err != nil {
		t.Fatalf("reading %s: %v", path, err)
	}
	if err := json.Unmarshal(b, v); err != nil {
		t.Fatalf("decoding %s: %v", path, err)
	}
}

// DecodeFile decodes the JSON file at path into v, failing the test on any
// error. It is for reference values committed under a package's testdata,
// whose absence is a broken checkout rather than a skip.
func DecodeFile(t testing.TB, path string, v any) {
	t.Helper()
	b, err := os.ReadFile(path)
	if err != nil {
		t.Fatalf("reading committed reference values: %v", err)
	}
	if err := json.Unmarshal(b, v); err != nil {
		t.Fatalf("decoding %s: %v", path, err)
	}
}

var skips struct {
	sync.Mutex
	n       int
	reasons map[string]bool
}

// SkipRef records a skipped reference check and skips the test with the
// reason.
func SkipRef(t testing.TB, reason string) {
	t.Helper()
	skips.Lock()
	skips.n++
	if skips.reasons == nil {
		skips.reasons = map[string]bool{}
	}
	skips.reasons[reason] = true
	skips.Unlock()
	t.Skip(reason)
}

// Skipped returns the number of reference checks skipped so far and their
// distinct reasons, sorted.
func Skipped() (int, []string) {
	skips.Lock()
	defer skips.Unlock()
	var rs []string
	for r := range skips.reasons {
		rs = append(rs, r)
	}
	sort.Strings(rs)
	return skips.n, rs
}

// Main runs the tests and then, when reference checks were skipped, prints
// "<import path>: N reference checks skipped: <reasons>" to stdout. Use it
// as func TestMain(m *testing.M) { testkit.Main(m) }.
func Main(m *testing.M) {
	code := m.Run()
	if n, reasons := Skipped(); n > 0 {
		fmt.Printf("%s: %d reference checks skipped: %s\n", importPath(), n, strings.Join(reasons, "; "))
	}
	os.Exit(code)
}

// importPath returns the import path of the package under test: the
// module path from go.mod joined with the working directory's place below
// the module root ("." when that cannot be worked out).
func importPath() string {
	root, err := ModuleRoot()
	if err != nil {
		return "."
	}
	wd, err := os.Getwd()
	if err != nil {
		return "."
	}
	rel, err := filepath.Rel(root, wd)
	if err != nil {
		return "."
	}
	mod := modulePath(filepath.Join(root, "go.mod"))
	if rel == "." {
		return mod
	}
	return mod + "/" + filepath.ToSlash(rel)
}

// modulePath returns the module line of a go.mod file.
func modulePath(gomod string) string {
	f, err := os.Open(gomod)
	if err != nil {
		return "."
	}
	defer f.Close()
	sc := bufio.NewScanner(f)
	for sc.Scan() {
		if rest, ok := strings.CutPrefix(strings.TrimSpace(sc.Text()), "module "); ok {
			return strings.Trim(strings.TrimSpace(rest), `"`)
		}
	}
	return "."
}
