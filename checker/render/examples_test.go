package render

import (
	"bytes"
	"encoding/json"
	"flag"
	"os"
	"path/filepath"
	"strconv"
	"strings"
	"testing"

	"furrow/checker/internal/fixture"
	"furrow/checker/method"

	"furrow/checker/engine"
	"furrow/checker/record"
	"furrow/plan"
)

// exampleRun copies one bundled example (plan and data files) to a
// temporary folder, registers it and runs it with a fixed clock and tool
// version, and returns the result and the run directory. The examples in
// the repository are never written to.
func exampleRun(t *testing.T, name string) (*record.Result, string) {
	t.Helper()
	src := filepath.Join("..", "..", "examples", name)
	dir := filepath.Join(t.TempDir(), name)
	if err := os.MkdirAll(dir, 0o755); err != nil {
		t.Fatal(err)
	}
	entries, err := os.ReadDir(src)
	if err != nil {
		t.Fatal(err)
	}
	for _, e := range entries {
		// The committed registration is checked by TestExampleRegistrations;
		// the copy is registered afresh with a fixed clock.
		if e.IsDir() || strings.HasSuffix(e.Name(), ".md") || strings.HasSuffix(e.Name(), ".png") || strings.HasSuffix(e.Name(), ".registration.json") {
			continue
		}
		b, err := os.ReadFile(filepath.Join(src, e.Name()))
		if err != nil {
			t.Fatal(err)
		}
		fixture.Write(t, filepath.Join(dir, e.Name()), string(b))
	}
	pp := filepath.Join(dir, "plan.yaml")
	fixture.Register(t, pp, fixture.T0)
	out := filepath.Join(dir, "run")
	if err := os.MkdirAll(out, 0o755); err != nil {
		t.Fatal(err)
	}
	r := run(t, pp, out, fixture.T0.Add(48*3600e9))
	if err := record.WriteRecord(out, r, nil); err != nil {
		t.Fatal(err)
	}
	if err := WriteReports(out, r); err != nil {
		t.Fatal(err)
	}
	return r, out
}

// update rewrites the golden reports and plan documents under
// testdata/golden (and, with Chromium, the README screenshot):
// go test ./checker/render -run TestExample -update
var update = flag.Bool("update", false, "rewrite the golden reports and plan documents (testdata/golden) and the README screenshot")

var exampleNames = []string{"soil-nematodes", "wheat-varieties", "irrigation-split-plot"}

// compareGolden compares got with testdata/golden/name, rewriting the file
// with -update.
func compareGolden(t *testing.T, name string, got []byte) {
	t.Helper()
	path := filepath.Join("testdata", "golden", name)
	if *update {
		if err := os.MkdirAll(filepath.Dir(path), 0o755); err != nil {
			t.Fatal(err)
		}
		if err := os.WriteFile(path, got, 0o644); err != nil {
			t.Fatal(err)
		}
		return
	}
	want, err := os.ReadFile(path)
	if err != nil {
		t.Fatalf("%v (create it with: go test ./checker/render -run %s -update)", err, t.Name())
	}
	if !bytes.Equal(got, want) {
		t.Errorf("%s differs from the golden file; if the change is intended, regenerate with: go test ./checker/render -run %s -update\n%s",
			path, t.Name(), lineDiff(string(want), string(got)))
	}
}

// lineDiff shows the first differing lines of two texts.
func lineDiff(want, got string) string {
	w, g := strings.Split(want, "\n"), strings.Split(got, "\n")
	var b strings.Builder
	shown := 0
	for i := 0; i < len(w) || i < len(g); i++ {
		var a, c string
		if i < len(w) {
			a = w[i]
		}
		if i < len(g) {
			c = g[i]
		}
		if a != c {
			b.WriteString("line " + strconv.Itoa(i+1) + ":\n  want: " + a + "\n  got:  " + c + "\n")
			if shown++; shown == 5 {
				break
			}
		}
	}
	return b.String()
}

// TestExampleReports runs every bundled example end to end and compares
// its Markdown report and its analysis-plan document with golden files.
func TestExampleReports(t *testing.T) {
	for _, name := range exampleNames {
		t.Run(name, func(t *testing.T) {
			r, out := exampleRun(t, name)
			md, err := os.ReadFile(filepath.Join(out, ReportMDName))
			if err != nil {
				t.Fatal(err)
			}
			compareGolden(t, name+".report.md", md)
			p, ds, err := plan.Load(filepath.Join(filepath.Dir(out), "plan.yaml"), method.Default)
			if err != nil || ds.HasErrors() {
				t.Fatalf("loading plan: %v %v", err, ds)
			}
			compareGolden(t, name+".explain.md", Explain(p, plan.Hash(p)).Markdown())
			if r.Inputs.PlanHash != plan.Hash(p) {
				t.Errorf("record plan hash %s, explain hash %s", r.Inputs.PlanHash, plan.Hash(p))
			}
			for _, e := range r.Endpoints {
				if e.Status == record.EndpointFailed {
					t.Errorf("endpoint %s failed: no step could be fitted", e.ID)
				}
			}
		})
	}
}

// TestExampleReportsInBrowser loads every example's report in headless
// Chromium and checks that every figure is drawn. With -update it also
// writes the screenshot the README shows.
func TestExampleReportsInBrowser(t *testing.T) {
	if chromiumPath() == "" {
		t.Skip("chromium not installed; the report browser test needs Debian's chromium package (.ci/run installs it)")
	}
	for _, name := range exampleNames {
		t.Run(name, func(t *testing.T) {
			r, out := exampleRun(t, name)
			page, err := os.ReadFile(filepath.Join(out, ReportHTMLName))
			if err != nil {
				t.Fatal(err)
			}
			rep := BuildReport(r)
			want := 0
			for _, f := range rep.Figures {
				want += len(f)
			}
			for _, f := range rep.DataFigures {
				want += len(f)
			}
			if want < 5 {
				t.Errorf("only %d figures built", want)
			}
			shot := filepath.Join(out, "report.png")
			if *update && name == "soil-nematodes" {
				shot = filepath.Join("..", "..", "examples", name, "report.png")
			}
			probe, errs := probeReport(t, page, shot)
			checkRenderedReport(t, probe, errs, want)
		})
	}
}

// TestExampleRegistrations checks that each example's committed
// registration record has an intact chain whose head registers the plan as
// it is now, so "furrow run" on a fresh checkout needs no --unregistered.
func TestExampleRegistrations(t *testing.T) {
	for _, name := range exampleNames {
		pp := filepath.Join("..", "..", "examples", name, "plan.yaml")
		p, ds, err := plan.Load(pp, method.Default)
		if err != nil || ds.HasErrors() {
			t.Fatalf("%s: %v %v", name, err, ds)
		}
		reg, _, err := record.ReadRegistration(record.RegistrationPath(pp))
		if err != nil {
			t.Fatalf("%s: %v (register the example with: go run ./cmd/furrow register %s)", name, err, filepath.ToSlash(pp)[3:])
		}
		if errs := reg.CheckChain(); len(errs) > 0 {
			t.Errorf("%s: registration chain broken: %v", name, errs)
		}
		if h := reg.Head(); h == nil || h.PlanHash != plan.Hash(p) {
			t.Errorf("%s: the registration does not register the current plan (re-register after an amendment)", name)
		}
	}
}

// TestExampleCSVAndXLSXAgree runs each example on its CSV and on its XLSX
// copy (given on the command line, so read by extension): the table hash
// and every endpoint result are the same.
func TestExampleCSVAndXLSXAgree(t *testing.T) {
	for _, name := range exampleNames {
		t.Run(name, func(t *testing.T) {
			csvRes, out := exampleRun(t, name)
			dir := filepath.Dir(out)
			xr, err := engine.Run(engine.RunOptions{PlanPath: filepath.Join(dir, "plan.yaml"), DataPath: filepath.Join(dir, "plots.xlsx"),
				OutDir: filepath.Join(dir, "run-xlsx"), Now: fixture.T0.Add(49 * 3600e9), Tool: record.ToolInfo{Name: "furrow", Version: "test"}})
			if err != nil {
				t.Fatal(err)
			}
			if xr.Inputs.TableHash != csvRes.Inputs.TableHash {
				t.Errorf("table hash: csv %s, xlsx %s", csvRes.Inputs.TableHash, xr.Inputs.TableHash)
			}
			a, _ := json.Marshal(csvRes.Endpoints)
			b, _ := json.Marshal(xr.Endpoints)
			if !bytes.Equal(a, b) {
				t.Errorf("endpoint results differ between the CSV and the XLSX data")
			}
		})
	}
}
