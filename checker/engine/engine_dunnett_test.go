package engine

import (
	"encoding/json"
	"math"
	"os"
	"path/filepath"
	"regexp"
	"strconv"
	"strings"
	"testing"

	"furrow/checker/internal/fixture"
)

// An unbalanced RCBD (five plots dropped unevenly, four comparisons) makes the correlation of the
// versus-control contrasts depart from the one-factor form, so the Dunnett
// family is computed by randomised quasi-Monte Carlo. Reference:
// testdata/published/dunnett_qmc.json from dunnett_qmc.R (R 4.2.2,
// multcomp 1.4.22, mvtnorm 1.1.3): pmvt on the correlation and df of
// glht(lm(y ~ block + trt), mcp(trt = "Dunnett")), two-sided single-step,
// GenzBretz(maxpts = 1e8, abseps = 1e-7, releps = 0), with the error pmvt
// reported per comparison. The tolerance is furrow's stated error (the
// note's "absolute error about", taken at the top of its rounding) plus
// that reference error.
func TestDunnettNonProductCorrelation(t *testing.T) {
	dir := t.TempDir()
	fixture.Write(t, filepath.Join(dir, "d.csv"), `block,trt,y
B1,ctrl,10.1
B1,c,13.2
B1,d,10.9
B2,ctrl,9.6
B2,a,11.1
B2,b,10.9
B2,d,10.1
B3,ctrl,10.8
B3,b,11.7
B3,c,13.9
B3,d,11.6
B4,ctrl,9.9
B4,a,11.8
B4,c,12.1
B4,d,10.4
`)
	pp := filepath.Join(dir, "plan.yaml")
	fixture.Write(t, pp, `furrow: 1
trial: {id: QMC-1, title: unbalanced blocks, version: "1.0"}
data: {file: d.csv}
columns:
  - {name: block, role: block, levels: [B1, B2, B3, B4]}
  - {name: trt, role: treatment, levels: [ctrl, a, b, c, d], control: ctrl}
  - {name: y, role: response}
endpoints:
  - id: y
    response: y
    primary: true
    not-computable: fail
    steps:
      - id: ols
        model: linear
        fixed: [block, trt]
    hypotheses:
      - id: vs-ctrl
        kind: versus-control
        factor: trt
        adjust: dunnett
`)
	fixture.Register(t, pp, fixture.T0)
	r := run(t, pp, filepath.Join(dir, "out"), fixture.T0.Add(3600e9))
	h := r.Endpoints[0].Hypotheses[0]
	if !strings.Contains(h.Note, "quasi-Monte Carlo") {
		t.Fatalf("expected the quasi-Monte Carlo route, note: %q", h.Note)
	}
	m := regexp.MustCompile(`absolute error about ([0-9.e+-]+)`).FindStringSubmatch(h.Note)
	if m == nil {
		t.Fatalf("no error estimate in the note: %q", h.Note)
	}
	stated, err := strconv.ParseFloat(m[1], 64)
	if err != nil || !(stated > 0) {
		t.Fatalf("error estimate %q in the note: %v", m[1], err)
	}
	stated += 0.5 * math.Pow(10, math.Floor(math.Log10(stated))) // printed to one digit
	b, err := os.ReadFile(filepath.Join("testdata", "published", "dunnett_qmc.json"))
	if err != nil {
		t.Fatal(err)
	}
	var ref struct {
		Comparisons []struct {
			Level     string
			T, Error  float64
			PAdjusted float64 `json:"p_adjusted"`
		}
	}
	if err := json.Unmarshal(b, &ref); err != nil {
		t.Fatal(err)
	}
	want := map[string]struct{ t, p, err float64 }{}
	for _, c := range ref.Comparisons {
		want[c.Level] = struct{ t, p, err float64 }{c.T, c.PAdjusted, c.Error}
	}
	if len(want) != len(h.Comparisons) {
		t.Fatalf("%d reference comparisons, %d computed", len(want), len(h.Comparisons))
	}
	for _, c := range h.Comparisons {
		w, ok := want[c.Level]
		if !ok {
			t.Fatalf("unexpected comparison %s", c.Label)
		}
		if math.Abs(float64(c.Statistic)-w.t) > 1e-8*w.t {
			t.Errorf("%s: t = %v, want %v (R lm)", c.Label, c.Statistic, w.t)
		}
		if math.Abs(float64(c.PAdjusted)-w.p) > stated+w.err {
			t.Errorf("%s: adjusted p = %v ± %.2g, want %v ± %.2g (R pmvt on the glht correlation)", c.Label, c.PAdjusted, stated, w.p, w.err)
		}
	}
}
