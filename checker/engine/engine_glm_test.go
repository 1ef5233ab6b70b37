package engine

import (
	"path/filepath"
	"testing"

	"furrow/checker/internal/fixture"
	"furrow/checker/record"
	"furrow/internal/testkit"
)

// A poisson step through a furrow plan against testdata/glm/ref.R
// (R 4.2.2 glm poisson, drop1 LR tests with sum contrasts, emmeans 1.8.4-1
// type = "response" rates and trt.vs.ctrl rate ratios, unadjusted), at
// 1e-7 relative.
func TestPoissonStepAgainstReference(t *testing.T) {
	var ref struct {
		Deviance                float64
		LRStat                  []float64 `json:"lr_stat"`
		LRP                     []float64 `json:"lr_p"`
		Rate, RateLo, RateHi    []float64
		Ratio, RatioLo, RatioHi []float64
		RatioP                  []float64 `json:"ratio_p"`
	}
	testkit.ReadJSON(t, "testdata/glm/ref.json", &ref)
	// encoding/json matches rate_lo to RateLo only through tags.
	var tagged struct {
		RateLo  []float64 `json:"rate_lo"`
		RateHi  []float64 `json:"rate_hi"`
		RatioLo []float64 `json:"ratio_lo"`
		RatioHi []float64 `json:"ratio_hi"`
	}
	testkit.ReadJSON(t, "testdata/glm/ref.json", &tagged)
	ref.RateLo, ref.RateHi, ref.RatioLo, ref.RatioHi = tagged.RateLo, tagged.RateHi, tagged.RatioLo, tagged.RatioHi
	dir := t.TempDir()
	fixture.Write(t, filepath.Join(dir, "counts.csv"), "block,treatment,count\n"+
		"B1,control,31\nB1,low,22\nB1,high,9\nB2,control,40\nB2,low,25\nB2,high,14\n"+
		"B3,control,28\nB3,low,19\nB3,high,7\nB4,control,36\nB4,low,30\nB4,high,12\n")
	pp := filepath.Join(dir, "plan.yaml")
	fixture.Write(t, pp, `furrow: 1
trial:
  id: POIS
  title: invented counts for the poisson step
  version: "1.0"
  amendments: []
data:
  file: counts.csv
  format: csv
columns:
  - name: block
    role: block
    levels: [B1, B2, B3, B4]
  - name: treatment
    role: treatment
    levels: [control, low, high]
    control: control
  - name: count
    role: response
    min: 0
design:
  layout: rcbd
endpoints:
  - id: count
    response: count
    primary: true
    not-computable: fail
    steps:
      - id: counts
        model: poisson
        fixed: [block, treatment]
    hypotheses:
      - id: vs
        kind: versus-control
        factor: treatment
        adjust: none
`)
	fixture.Register(t, pp, fixture.T0)
	r := run(t, pp, filepath.Join(dir, "out"), fixture.T0)
	ep := r.Endpoints[0]
	if ep.Status != record.EndpointAccepted || ep.Reported != "counts" {
		t.Fatalf("status %s reported %q", ep.Status, ep.Reported)
	}
	res := ep.Steps[0].Results
	const tol = 1e-7 // about 36 times the worst agreement measured: worst 2.8e-9 relative (the 3.9e-11 p-value of high vs control), the rest below 1e-9
	an := res.Anova
	if len(an) != 3 {
		t.Fatalf("anova rows %+v", an)
	}
	for i := 0; i < 2; i++ {
		testkit.CheckRelClose(t, "LR statistic "+an[i].Term, float64(an[i].SS), ref.LRStat[i], tol)
		testkit.CheckRelClose(t, "LR p "+an[i].Term, float64(an[i].P), ref.LRP[i], tol)
	}
	testkit.CheckRelClose(t, "deviance", float64(an[2].SS), ref.Deviance, tol)
	if len(res.MarginalMeans) != 3 {
		t.Fatalf("means %+v", res.MarginalMeans)
	}
	for i, m := range res.MarginalMeans {
		testkit.CheckRelClose(t, "rate "+m.Level, float64(m.Response), ref.Rate[i], tol)
		testkit.CheckRelClose(t, "rate lower "+m.Level, float64(m.ResponseLower), ref.RateLo[i], tol)
		testkit.CheckRelClose(t, "rate upper "+m.Level, float64(m.ResponseUpper), ref.RateHi[i], tol)
	}
	cs := ep.Hypotheses[0].Comparisons
	if len(cs) != 2 {
		t.Fatalf("comparisons %+v", cs)
	}
	for i, c := range cs {
		testkit.CheckRelClose(t, "rate ratio "+c.Label, float64(c.Ratio), ref.Ratio[i], tol)
		testkit.CheckRelClose(t, "rate ratio lower "+c.Label, float64(c.RatioLower), ref.RatioLo[i], tol)
		testkit.CheckRelClose(t, "rate ratio upper "+c.Label, float64(c.RatioUpper), ref.RatioHi[i], tol)
		testkit.CheckRelClose(t, "rate ratio p "+c.Label, float64(c.P), ref.RatioP[i], tol)
	}
}

// A level with all zero counts separates a Poisson fit: the step records
// a fit error rather than an infinite estimate.
func TestPoissonSeparationIsAFitError(t *testing.T) {
	dir := t.TempDir()
	fixture.Write(t, filepath.Join(dir, "counts.csv"), "block,treatment,count\n"+
		"B1,control,31\nB1,high,0\nB2,control,40\nB2,high,0\nB3,control,28\nB3,high,0\n")
	pp := filepath.Join(dir, "plan.yaml")
	fixture.Write(t, pp, `furrow: 1
trial:
  id: SEP
  title: invented separated counts
  version: "1.0"
  amendments: []
data:
  file: counts.csv
  format: csv
columns:
  - name: block
    role: block
    levels: [B1, B2, B3]
  - name: treatment
    role: treatment
    levels: [control, high]
    control: control
  - name: count
    role: response
    min: 0
design:
  layout: rcbd
endpoints:
  - id: count
    response: count
    primary: true
    not-computable: pass
    steps:
      - id: counts
        model: poisson
        fixed: [block, treatment]
    hypotheses:
      - id: vs
        kind: versus-control
        factor: treatment
        adjust: none
`)
	fixture.Register(t, pp, fixture.T0)
	r := run(t, pp, filepath.Join(dir, "out"), fixture.T0)
	st := r.Endpoints[0].Steps[0]
	if st.Error == "" {
		t.Fatalf("no fit error recorded: %+v", st)
	}
	t.Logf("fit error: %s", st.Error)
}
