package checker

import (
	"flag"
	"go/parser"
	"go/token"
	"os"
	"path"
	"path/filepath"
	"strconv"
	"strings"
	"testing"
)

// update is accepted, and ignored, so that go test ./checker/... -args
// -update also runs this package's tests: it has no golden files.
var _ = flag.Bool("update", false, "ignored: this package has no golden files")

// layers gives each package of the module its place in the import order
// (DEVELOPERS.md): a package may import only packages of a higher number,
// apart from the edges in sideways.
var layers = map[string]int{
	"furrow/cmd/furrow":       0,
	"furrow/checker":          1,
	"furrow/checker/verify":   2,
	"furrow/checker/simulate": 2,
	"furrow/checker/render":   2,
	"furrow/checker/engine":   3,
	"furrow/checker/contract": 4,
	"furrow/checker/table":    4,
	"furrow/checker/record":   4,
	"furrow/checker/method":   5, // the registry of checks and model kinds
	"furrow/plan":             6,
	"furrow/schema":           6,
	"furrow/stats/...":        6, // any stats package
}

// sideways are the imports allowed between packages of one layer.
var sideways = map[[2]string]bool{
	{"furrow/checker/render", "furrow/checker/simulate"}: true, // the text of simulation results
	{"furrow/checker/contract", "furrow/checker/table"}:  true, // the contract checks a table
}

const (
	enginePath = "furrow/checker/engine"
	facadePath = "furrow/checker"
	// fixturePath is the checker tests' shared support; production code
	// never imports it.
	fixturePath = "furrow/checker/internal/fixture"
	maxFacade   = 5 // non-test files of the facade package
)

// layer returns the layer of an import path of the module, and false for
// paths outside the module or not in layers.
func layer(imp string) (int, bool) {
	if strings.HasPrefix(imp, "furrow/stats/") {
		return layers["furrow/stats/..."], true
	}
	l, ok := layers[imp]
	return l, ok
}

// isPlot tells whether imp is gonum.org/v1/plot or one of its packages.
func isPlot(imp string) bool {
	return imp == "gonum.org/v1/plot" || strings.HasPrefix(imp, "gonum.org/v1/plot/")
}

// TestLayout parses every non-test Go file under checker/ and cmd/ and
// checks the import order of DEVELOPERS.md: checker's sub-packages never
// import the facade or a package above them, only figures may draw (no
// file imports both gonum.org/v1/plot and the engine), the plan document
// (render's explain files) needs no engine, and the facade stays small.
func TestLayout(t *testing.T) {
	fset := token.NewFileSet()
	module, err := filepath.Abs("..")
	if err != nil {
		t.Fatal(err)
	}
	facadeFiles := 0
	for _, root := range []string{".", filepath.Join("..", "cmd")} {
		err := filepath.WalkDir(root, func(p string, d os.DirEntry, err error) error {
			if err != nil {
				return err
			}
			if d.IsDir() && (d.Name() == "testdata" || strings.HasPrefix(d.Name(), ".")) && p != root {
				return filepath.SkipDir
			}
			if d.IsDir() || !strings.HasSuffix(p, ".go") || strings.HasSuffix(p, "_test.go") {
				return nil
			}
			f, err := parser.ParseFile(fset, p, nil, parser.ImportsOnly)
			if err != nil {
				return err
			}
			abs, err := filepath.Abs(filepath.Dir(p))
			if err != nil {
				return err
			}
			rel, err := filepath.Rel(module, abs)
			if err != nil {
				return err
			}
			pkg := path.Join("furrow", filepath.ToSlash(rel))
			if pkg == facadePath {
				facadeFiles++
			}
			from, known := layer(pkg)
			var plot, engine bool
			for _, is := range f.Imports {
				imp, err := strconv.Unquote(is.Path.Value)
				if err != nil {
					return err
				}
				plot = plot || isPlot(imp)
				engine = engine || imp == enginePath
				if strings.HasPrefix(pkg, facadePath+"/") && imp == facadePath {
					t.Errorf("%s imports the facade %s", p, facadePath)
				}
				if imp == fixturePath && pkg != fixturePath {
					t.Errorf("%s imports %s, which is test support for _test.go files only", p, fixturePath)
				}
				to, ok := layer(imp)
				if !known || !ok || imp == pkg {
					continue
				}
				if to < from || (to == from && !sideways[[2]string{pkg, imp}]) {
					t.Errorf("%s (%s) imports %s, which is not below it", p, pkg, imp)
				}
			}
			if plot && engine {
				t.Errorf("%s imports both gonum.org/v1/plot and %s", p, enginePath)
			}
			if pkg == "furrow/checker/render" && strings.HasPrefix(d.Name(), "explain") && engine {
				t.Errorf("%s: the plan document needs only the plan, but it imports %s", p, enginePath)
			}
			return nil
		})
		if err != nil {
			t.Fatal(err)
		}
	}
	if facadeFiles == 0 {
		t.Fatal("found no files of the facade package; is the test run from checker/?")
	}
	if facadeFiles > maxFacade {
		t.Errorf("the facade package %s has %d non-test files, want at most %d: put the code in a sub-package", facadePath, facadeFiles, maxFacade)
	}
}
