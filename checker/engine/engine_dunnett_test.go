package engine

import (
	"math"
	"path/filepath"
	"strings"
	"testing"
)

// An unbalanced RCBD (five plots dropped unevenly, four comparisons) makes the correlation of the
// versus-control contrasts depart from the one-factor form, so the Dunnett
// family is computed by randomised quasi-Monte Carlo. Reference: R 4.2.2,
// multcomp 1.4.22 glht(lm(y ~ block + trt), mcp(trt = "Dunnett")),
// single-step, abseps 1e-6 (checker/engine/testdata/published/dunnett_qmc.R).
// Both sides are randomised with errors near 1e-4, so the tolerance is
// 1e-3 absolute.
func TestDunnettNonProductCorrelation(t *testing.T) {
	dir := t.TempDir()
	write(t, filepath.Join(dir, "d.csv"), `block,trt,y
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
	write(t, pp, `furrow: 1
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
	register(t, pp, t0)
	r := run(t, pp, filepath.Join(dir, "out"), t0.Add(3600e9))
	h := r.Endpoints[0].Hypotheses[0]
	if !strings.Contains(h.Note, "quasi-Monte Carlo") {
		t.Fatalf("expected the quasi-Monte Carlo route, note: %q", h.Note)
	}
	want := map[string]struct{ t, p float64 }{
		"a": {6.7723998180, 0.0008222273},
		"b": {4.1038978243, 0.0151301978},
		"c": {12.1187438250, 0.0000047674},
		"d": {3.1288234056, 0.0532727281},
	}
	for _, c := range h.Comparisons {
		w, ok := want[c.Level]
		if !ok {
			t.Fatalf("unexpected comparison %s", c.Label)
		}
		if math.Abs(float64(c.Statistic)-w.t) > 1e-8*w.t {
			t.Errorf("%s: t = %v, want %v (R lm)", c.Label, c.Statistic, w.t)
		}
		if math.Abs(float64(c.PAdjusted)-w.p) > 1e-3 {
			t.Errorf("%s: adjusted p = %v, want %v (R multcomp glht, randomised)", c.Label, c.PAdjusted, w.p)
		}
	}
}
