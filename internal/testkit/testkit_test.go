package testkit

import (
	"go/parser"
	"go/token"
	"io/fs"
	"math"
	"os"
	"path/filepath"
	"strconv"
	"strings"
	"testing"
)

func TestClose(t *testing.T) {
	nan, inf := math.NaN(), math.Inf(1)
	const tol = 1e-9
	cases := []struct {
		name       string
		got, want  float64
		close, rel bool
	}{
		{"absolute below 1", 1e-3 + 9e-10, 1e-3, true, false},
		{"relative above 1", 1e6 + 0.5e-3, 1e6, true, true},
		{"relative above 1, too far", 1e6 + 2e-3, 1e6, false, false},
		{"zero wants zero (relative)", 1e-300, 0, true, false},
		{"NaN equals NaN", nan, nan, true, true},
		{"NaN is not a number", nan, 1, false, false},
		{"equal infinities", inf, inf, true, true},
		{"opposite infinities", inf, -inf, false, false},
		{"finite is not infinite", 1e308, inf, false, false},
	}
	for _, c := range cases {
		if got := Close(c.got, c.want, tol); got != c.close {
			t.Errorf("%s: Close = %v, want %v", c.name, got, c.close)
		}
		if got := RelClose(c.got, c.want, tol); got != c.rel {
			t.Errorf("%s: RelClose = %v, want %v", c.name, got, c.rel)
		}
	}
	within := []struct {
		got, want, rel, abs float64
		ok                  bool
	}{
		{1e-13, 0, 1e-7, 1e-12, true},
		{2e-12, 0, 1e-7, 1e-12, false},
		{1 + 5e-8, 1, 1e-7, 0, true},
		{1 + 2e-7, 1, 1e-7, 0, false},
		{1e-20 * 1.5, 1e-20, 1e-7, 1e-12, true}, // absolute bound passes tiny values
		{1e-20 * 1.5, 1e-20, 1e-7, 0, false},
		{nan, nan, 0, 0, true},
	}
	for _, c := range within {
		if got := Within(c.got, c.want, c.rel, c.abs); got != c.ok {
			t.Errorf("Within(%g, %g, %g, %g) = %v, want %v", c.got, c.want, c.rel, c.abs, got, c.ok)
		}
	}
	if RelErr(1.5, 1) != 0.5 || RelErr(1e-3, 0) != 1e-3 {
		t.Error("RelErr")
	}
}

func TestSharedRefBesideModule(t *testing.T) {
	root, err := ModuleRoot()
	if err != nil {
		t.Fatal(err)
	}
	if _, err := os.Stat(filepath.Join(root, "go.mod")); err != nil {
		t.Fatalf("module root %s has no go.mod", root)
	}
	dir, err := SharedRef()
	if err != nil {
		t.Fatal(err)
	}
	if want := filepath.Join(filepath.Dir(root), "shared", "reference"); dir != want {
		t.Errorf("SharedRef = %s, want %s", dir, want)
	}
	if got := importPath(); got != "furrow/internal/testkit" {
		t.Errorf("importPath = %q, want furrow/internal/testkit", got)
	}
}

func TestMissingFileIsACountedSkip(t *testing.T) {
	before, _ := Skipped()
	t.Run("json", func(t *testing.T) {
		var v any
		ReadJSON(t, filepath.Join(t.TempDir(), "absent.json"), &v)
		t.Error("ReadJSON returned for an absent file")
	})
	t.Run("shared", func(t *testing.T) {
		SharedPath(t, "no/such/file.csv")
		t.Error("SharedPath returned for an absent file")
	})
	after, reasons := Skipped()
	if after-before != 2 {
		t.Errorf("skips counted: %d, want 2 (reasons %q)", after-before, reasons)
	}
}

// TestImports enforces the import rules of DEVELOPERS.md on the source
// (not the build graph): production files under stats/ import only the
// standard library, gonum.org/... and furrow/stats/...; no production file
// in the module imports this package; and this package imports only the
// standard library and gopkg.in/yaml.v3 (the plan mutator).
func TestImports(t *testing.T) {
	root, err := ModuleRoot()
	if err != nil {
		t.Fatal(err)
	}
	const self = "furrow/internal/testkit"
	checked := 0
	err = filepath.WalkDir(root, func(path string, d fs.DirEntry, err error) error {
		if err != nil {
			return err
		}
		if d.IsDir() {
			if n := d.Name(); path != root && (strings.HasPrefix(n, ".") || n == "testdata") {
				return filepath.SkipDir
			}
			return nil
		}
		if !strings.HasSuffix(path, ".go") || strings.HasSuffix(path, "_test.go") {
			return nil
		}
		f, err := parser.ParseFile(token.NewFileSet(), path, nil, parser.ImportsOnly)
		if err != nil {
			return err
		}
		rel, _ := filepath.Rel(root, path)
		rel = filepath.ToSlash(rel)
		inStats := strings.HasPrefix(rel, "stats/")
		inSelf := strings.HasPrefix(rel, "internal/testkit/")
		if inStats {
			checked++
		}
		for _, im := range f.Imports {
			p, _ := strconv.Unquote(im.Path.Value)
			std := !strings.Contains(strings.Split(p, "/")[0], ".") && p != "furrow" && !strings.HasPrefix(p, "furrow/")
			switch {
			case p == self:
				t.Errorf("%s: production code imports %s (test support only)", rel, self)
			case inStats && !std && !strings.HasPrefix(p, "gonum.org/") && p != "furrow/stats" && !strings.HasPrefix(p, "furrow/stats/"):
				t.Errorf("%s imports %s; stats packages may import only the standard library, gonum.org/... and furrow/stats/...", rel, p)
			case inSelf && !std && p != "gopkg.in/yaml.v3":
				t.Errorf("%s imports %s; testkit imports only the standard library and the YAML module (for the plan mutator)", rel, p)
			}
		}
		return nil
	})
	if err != nil {
		t.Fatal(err)
	}
	if checked == 0 {
		t.Fatal("no production files found under stats/")
	}
}
