package plan_test

import (
	"furrow/checker/method"
	"furrow/plan"

	"bytes"
	"fmt"
	"os"
	"path/filepath"
	"strconv"
	"strings"
	"testing"
)

func readFixture(t *testing.T, path string) []byte {
	t.Helper()
	src, err := os.ReadFile(path)
	if err != nil {
		t.Fatal(err)
	}
	return src
}

const basePlan = "testdata/base.yaml"

// TestExamplePlans loads every examples/*/plan.yaml; each must decode and
// carry the yaml-language-server schema comment. Semantic findings are
// logged, since the examples are maintained elsewhere.
func TestExamplePlans(t *testing.T) {
	files, _ := filepath.Glob("../examples/*/plan.yaml")
	if len(files) == 0 {
		t.Skip("no example plans in ../examples")
	}
	for _, f := range files {
		t.Run(filepath.Base(filepath.Dir(f)), func(t *testing.T) {
			src := readFixture(t, f)
			if !bytes.HasPrefix(src, []byte("# yaml-language-server: $schema=../../schema/plan.schema.json\n")) {
				t.Errorf("%s does not start with the yaml-language-server schema comment", f)
			}
			p, ds, err := plan.Load(f, method.Default)
			if err != nil {
				t.Fatal(err)
			}
			if p == nil {
				t.Fatalf("plan not decoded:\n%s", formatDiags(ds))
			}
			for _, d := range ds {
				t.Logf("finding: %s: %s", d.Severity, d.Error())
			}
			if p.Path != f || p.Pos.File != f {
				t.Errorf("path %q / pos file %q, want %q", p.Path, p.Pos.File, f)
			}
		})
	}
}

func TestParseValidBase(t *testing.T) {
	p, ds, err := plan.Parse("base.yaml", readFixture(t, basePlan), method.Default)
	if err != nil || p == nil || len(ds) != 0 {
		t.Fatalf("base plan: err %v, plan %v, findings:\n%s", err, p != nil, formatDiags(ds))
	}
	// Positions: line:col of values as written in testdata/base.yaml.
	checks := []struct {
		path       string
		line, col  int
		wantString string
	}{
		{"trial.id", 5, 7, "base.yaml:5:7"},
		{"columns[2].control", 23, 14, "base.yaml:23:14"},
		{"endpoints[0].steps[0].fixed[3]", 51, 41, "base.yaml:51:41"},
		{"endpoints[0].steps[0].fixed[3][1]", 51, 53, "base.yaml:51:53"},
		{"endpoints[0].steps[0].on-fail", 56, 18, "base.yaml:56:18"},
		// Not written: falls back to the enclosing step.
		{"endpoints[0].steps[0].df", 48, 9, "base.yaml:48:9"},
	}
	for _, c := range checks {
		if got := p.PosOf(c.path); got.Line != c.line || got.Column != c.col || got.String() != c.wantString {
			t.Errorf("PosOf(%q) = %v, want %s", c.path, got, c.wantString)
		}
	}
	if got := p.Columns[2].Pos; got.Line != 20 || got.Column != 5 {
		t.Errorf("column pos %v, want 20:5", got)
	}
	if got := p.Endpoints[0].Steps[0].Fixed[3]; got.Pos.Line != 51 || strings.Join(got.Columns, ":") != "treatment:time" {
		t.Errorf("interaction term %+v", got)
	}
	// Defaults.
	e := p.Endpoints[0]
	s0, s1 := e.Steps[0], e.Steps[1]
	h := e.Hypotheses[0]
	for _, c := range []struct{ name, got, want string }{
		{"data.format", p.Data.Format, "csv"},
		{"data.delimiter", p.Data.Delimiter, ","},
		{"data.decimal", p.Data.Decimal, "."},
		{"data.missing", strings.Join(p.Data.Missing, "|"), ""},
		{"step0.outcome", s0.Outcome.Derive, plan.DeriveRaw},
		{"step0.df", s0.DF, plan.DFSatterthwaite},
		{"step0.estimation", s0.Estimation, "reml"},
		{"step1.transform", s1.Transform.Kind, plan.TransformNone},
		{"step1.df", s1.DF, ""},
		{"hyp.factor", h.Factor, "treatment"},
		{"hyp.adjust", h.Adjust, plan.AdjustDunnett},
	} {
		if c.got != c.want {
			t.Errorf("default %s = %q, want %q", c.name, c.got, c.want)
		}
	}
	if len(p.Data.Missing) != 1 || s0.Anova != 3 || s1.Anova != 0 {
		t.Errorf("defaults: missing %q, anova %d/%d", p.Data.Missing, s0.Anova, s1.Anova)
	}
	if !near(e.Alpha, 0.05) || !near(h.Alpha, 0.05) {
		t.Errorf("alpha defaults %v %v, want 0.05", e.Alpha, h.Alpha)
	}
	if s0.Transform.Kind != plan.TransformLogOffset || !near(s0.Transform.Offset, 1) || !s0.Transform.HasOffset {
		t.Errorf("transform %+v", s0.Transform)
	}
	if *p.Columns[4].Min != 0 || !near(*p.Columns[4].Max, 5000) {
		t.Errorf("range %v %v", *p.Columns[4].Min, *p.Columns[4].Max)
	}
}

// near compares decoded constants (exactly representable values read from
// YAML) with a tight absolute tolerance.
func near(a, b float64) bool { d := a - b; return d < 1e-12 && d > -1e-12 }

func TestParseDoesNotModifyInput(t *testing.T) {
	src := readFixture(t, basePlan)
	cp := bytes.Clone(src)
	if _, _, err := plan.Parse("base.yaml", src, method.Default); err != nil {
		t.Fatal(err)
	}
	if !bytes.Equal(src, cp) {
		t.Fatal("Parse modified its input")
	}
}

func TestLoadMissingFile(t *testing.T) {
	_, _, err := plan.Load(filepath.Join(t.TempDir(), "nope.yaml"), method.Default)
	if err == nil || !strings.HasPrefix(err.Error(), "reading plan: ") {
		t.Fatalf("err = %v, want a reading error", err)
	}
}

func TestParseHugeInput(t *testing.T) {
	src := bytes.Repeat([]byte("# padding line\n"), plan.MaxSize/15+10)
	p, ds, err := plan.Parse("huge.yaml", src, method.Default)
	if err != nil || p != nil || len(ds) != 1 || ds[0].Code != "too-large" {
		t.Fatalf("got plan %v err %v diags %v", p != nil, err, ds)
	}
	path := filepath.Join(t.TempDir(), "huge.yaml")
	if err := os.WriteFile(path, src, 0o644); err != nil {
		t.Fatal(err)
	}
	if _, ds, err := plan.Load(path, method.Default); err != nil || len(ds) != 1 || ds[0].Code != "too-large" {
		t.Fatalf("Load: err %v diags %v", err, ds)
	}
}

func TestParseAliasBomb(t *testing.T) {
	var b strings.Builder
	b.WriteString("furrow: 1\na0: &a0 [x, x, x, x, x, x, x, x, x]\n")
	for i := 1; i < 30; i++ {
		prev := "a" + strconv.Itoa(i-1)
		cur := "a" + strconv.Itoa(i)
		fmt.Fprintf(&b, "%s: &%s [*%s, *%s, *%s, *%s, *%s, *%s, *%s, *%s]\n", cur, cur, prev, prev, prev, prev, prev, prev, prev, prev)
	}
	p, ds, err := plan.Parse("bomb.yaml", []byte(b.String()), method.Default)
	if err != nil || p != nil || !ds.HasErrors() {
		t.Fatalf("alias bomb: plan %v err %v", p != nil, err)
	}
	found := false
	for _, d := range ds {
		found = found || d.Code == "yaml-alias"
	}
	if !found {
		t.Errorf("no yaml-alias finding:\n%s", formatDiags(ds))
	}
}

func TestParseDeepNesting(t *testing.T) {
	src := "furrow: 1\ntrial: " + strings.Repeat("[", 5000) + strings.Repeat("]", 5000) + "\n"
	p, ds, _ := plan.Parse("deep.yaml", []byte(src), method.Default)
	if p != nil || !ds.HasErrors() {
		t.Fatalf("deep nesting accepted")
	}
}

func TestParseCRLFAndBOM(t *testing.T) {
	src := readFixture(t, basePlan)
	crlf := append([]byte("\ufeff"), bytes.ReplaceAll(src, []byte("\n"), []byte("\r\n"))...)
	p, ds, _ := plan.Parse("crlf.yaml", crlf, method.Default)
	if p == nil || len(ds) != 0 {
		t.Fatalf("CRLF plan with BOM: %s", formatDiags(ds))
	}
}

// TestDataDecimalComma pins the lint rule for a decimal comma: a CSV file
// must then declare another delimiter; an XLSX file has no delimiter, so
// decimal: "," alone is sound.
func TestDataDecimalComma(t *testing.T) {
	base := string(readFixture(t, basePlan))
	cases := []struct {
		name, data string
		want       bool // a data-decimal finding
	}{
		{"csv with the default delimiter", "  file: plots.csv\n  decimal: \",\"\n", true},
		{"csv with a semicolon", "  file: plots.csv\n  delimiter: \";\"\n  decimal: \",\"\n", false},
		{"xlsx", "  file: plots.xlsx\n  decimal: \",\"\n", false},
		{"xlsx declared", "  file: plots.xlsx\n  format: xlsx\n  sheet: plots\n  decimal: \",\"\n", false},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			src := strings.Replace(base, "  file: plots.csv\n", c.data, 1)
			_, ds, err := plan.Parse("base.yaml", []byte(src), method.Default)
			if err != nil {
				t.Fatal(err)
			}
			got := false
			for _, d := range ds {
				if d.Severity == plan.Error {
					got = got || d.Code == "data-decimal"
					if d.Code != "data-decimal" {
						t.Errorf("unexpected error: %v", d)
					}
				}
			}
			if got != c.want {
				t.Errorf("data-decimal finding %v, want %v (%v)", got, c.want, ds)
			}
		})
	}
}
