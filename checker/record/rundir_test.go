package record

import (
	"errors"
	"os"
	"path/filepath"
	"sort"
	"sync"
	"testing"
)

// fillReports is a stand-in for the report writer: two files, one in a
// sub-folder.
func fillReports(tmp string) error {
	if err := os.WriteFile(filepath.Join(tmp, "report.md"), []byte("# report\n"), 0o644); err != nil {
		return err
	}
	if err := os.MkdirAll(filepath.Join(tmp, "tables"), 0o755); err != nil {
		return err
	}
	return os.WriteFile(filepath.Join(tmp, "tables", "checks.csv"), []byte("test,p\n"), 0o644)
}

// names lists a folder's entries.
func names(t *testing.T, dir string) []string {
	t.Helper()
	es, err := os.ReadDir(dir)
	if err != nil {
		t.Fatal(err)
	}
	var out []string
	for _, e := range es {
		out = append(out, e.Name())
	}
	sort.Strings(out)
	return out
}

func TestWriteRunWritesTheWholeFolder(t *testing.T) {
	parent := t.TempDir()
	dir := filepath.Join(parent, "run1")
	if err := WriteRun(dir, sampleResult(), nil, false, fillReports); err != nil {
		t.Fatal(err)
	}
	if got := names(t, dir); len(got) != 3 || got[0] != AuditFileName {
		t.Errorf("run folder holds %v", got)
	}
	if got := names(t, parent); len(got) != 1 {
		t.Errorf("left beside the run folder: %v", got)
	}
	// It exists now: refused, untouched.
	var ee *ExistsError
	if err := WriteRun(dir, sampleResult(), nil, false, fillReports); !errors.As(err, &ee) || ee.Meanwhile {
		t.Errorf("second run into the folder: %v", err)
	}
	if got := names(t, parent); len(got) != 1 {
		t.Errorf("left beside the run folder: %v", got)
	}
}

// A folder made by someone else while the run was writing is never
// written into or over, empty or not.
func TestWriteRunClaimsTheFolderInOneStep(t *testing.T) {
	for _, with := range []string{"", "theirs.txt"} {
		parent := t.TempDir()
		dir := filepath.Join(parent, "run1")
		fill := func(tmp string) error {
			if err := os.Mkdir(dir, 0o755); err != nil {
				return err
			}
			if with != "" {
				if err := os.WriteFile(filepath.Join(dir, with), []byte("x"), 0o644); err != nil {
					return err
				}
			}
			return fillReports(tmp)
		}
		var ee *ExistsError
		err := WriteRun(dir, sampleResult(), nil, false, fill)
		if !errors.As(err, &ee) || !ee.Meanwhile {
			t.Errorf("folder made meanwhile (holding %q): %v", with, err)
		}
		got := names(t, dir)
		if (with == "" && len(got) != 0) || (with != "" && (len(got) != 1 || got[0] != with)) {
			t.Errorf("folder made meanwhile (holding %q) now holds %v", with, got)
		}
		if got := names(t, parent); len(got) != 1 {
			t.Errorf("left beside the run folder: %v", got)
		}
	}
}

func TestWriteRunConcurrent(t *testing.T) {
	parent := t.TempDir()
	dir := filepath.Join(parent, "run1")
	const n = 8
	errs := make([]error, n)
	var wg sync.WaitGroup
	for i := range n {
		wg.Add(1)
		go func() {
			defer wg.Done()
			errs[i] = WriteRun(dir, sampleResult(), nil, false, fillReports)
		}()
	}
	wg.Wait()
	ok := 0
	for _, err := range errs {
		var ee *ExistsError
		switch {
		case err == nil:
			ok++
		case !errors.As(err, &ee):
			t.Errorf("unexpected error: %v", err)
		}
	}
	if ok != 1 {
		t.Errorf("%d of %d concurrent runs into one folder succeeded, want 1", ok, n)
	}
	if got := names(t, parent); len(got) != 1 {
		t.Errorf("left beside the run folder: %v", got)
	}
}

func TestWriteRunReplacesWhole(t *testing.T) {
	parent := t.TempDir()
	dir := filepath.Join(parent, "run1")
	if err := WriteRun(dir, sampleResult(), nil, false, fillReports); err != nil {
		t.Fatal(err)
	}
	os.WriteFile(filepath.Join(dir, "old-only.txt"), []byte("x"), 0o644)
	if err := WriteRun(dir, sampleResult(), nil, true, fillReports); err != nil {
		t.Fatal(err)
	}
	for _, n := range names(t, dir) {
		if n == "old-only.txt" {
			t.Error("a file of the replaced folder is still there")
		}
	}
	if got := names(t, parent); len(got) != 1 {
		t.Errorf("left beside the run folder: %v", got)
	}
	// Only a run folder is replaced.
	other := filepath.Join(parent, "notarun")
	os.Mkdir(other, 0o755)
	os.WriteFile(filepath.Join(other, "plan.yaml"), []byte("x"), 0o644)
	if err := WriteRun(other, sampleResult(), nil, true, fillReports); err == nil {
		t.Error("--replace replaced a folder that holds no record")
	}
	if got := names(t, other); len(got) != 1 {
		t.Errorf("the folder that is not a run folder now holds %v", got)
	}
}

func TestWriteRunFailureLeavesNothing(t *testing.T) {
	parent := t.TempDir()
	dir := filepath.Join(parent, "run1")
	boom := errors.New("boom")
	if err := WriteRun(dir, sampleResult(), nil, false, func(string) error { return boom }); !errors.Is(err, boom) {
		t.Fatalf("got %v", err)
	}
	if got := names(t, parent); len(got) != 0 {
		t.Errorf("a failed run left %v", got)
	}
}

func TestScratchKind(t *testing.T) {
	for name, want := range map[string]string{
		".run1.furrow-partial-0a1b": "partial",
		".run1.furrow-old-0a1b":     "old",
		"run1":                      "",
		"run1.furrow-partial-0a1b":  "",
		".hidden":                   "",
	} {
		if got := ScratchKind(name); got != want {
			t.Errorf("ScratchKind(%q) = %q, want %q", name, got, want)
		}
	}
}
