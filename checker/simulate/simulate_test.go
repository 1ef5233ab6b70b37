package simulate

import (
	"encoding/json"
	"math"
	"math/rand/v2"
	"os"
	"path/filepath"
	"reflect"
	"strings"
	"testing"

	"furrow/checker/method"

	"furrow/checker/contract"
	"furrow/plan"
)

// simPlan is a completely randomised trial with a control and two
// treatments, one linear step without checks, and two versus-control
// hypotheses: one unadjusted, one with Dunnett's adjustment.
const simPlan = `furrow: 1
trial: {id: SIM-1, title: simulated test trial, version: "1.0"}
data: {file: none.csv, format: csv}
columns:
  - {name: plot, role: unit}
  - {name: trt, role: treatment, levels: [C, A, B], control: C}
  - {name: y, role: response}
design: {layout: crd, replicates: 5, least-units: {per: cell, count: 4, below: stop}}
endpoints:
  - id: e
    response: y
    primary: true
    not-computable: fail
    alpha: 0.05
    steps:
      - id: lin
        model: linear
        outcome: {derive: raw}
        fixed: [trt]
    hypotheses:
      - {id: raw, kind: versus-control, factor: trt, sides: two-sided, adjust: none}
      - {id: dunnett, kind: versus-control, factor: trt, sides: two-sided, adjust: dunnett}
`

func loadSimPlan(t *testing.T, src string) *plan.Plan {
	t.Helper()
	p, ds, err := plan.Parse("sim.yaml", []byte(src), method.Default)
	if err != nil {
		t.Fatal(err)
	}
	if ds.HasErrors() {
		t.Fatalf("test plan has errors: %v", ds)
	}
	return p
}

func loadExample(t *testing.T, name string) *plan.Plan {
	t.Helper()
	p, ds, err := plan.Load("../../examples/"+name+"/plan.yaml", method.Default)
	if err != nil {
		t.Fatal(err)
	}
	if ds.HasErrors() {
		t.Fatalf("example %s has errors: %v", name, ds)
	}
	return p
}

// nearRate reports whether a simulated rate lies within k Monte Carlo
// standard errors of the true probability want (binomial SE at want).
func nearRate(r SimRate, want, k float64) bool {
	se := math.Sqrt(want * (1 - want) / float64(r.Of))
	return math.Abs(r.Rate-want) <= k*se
}

func hyp(t *testing.T, ep SimEndpoint, id string) SimHypothesis {
	t.Helper()
	for _, h := range ep.Hypotheses {
		if h.ID == id {
			return h
		}
	}
	t.Fatalf("no hypothesis %s", id)
	return SimHypothesis{}
}

func TestSimulateDeterministic(t *testing.T) {
	p := loadExample(t, "soil-nematodes")
	a, err := Simulate(p, SimOptions{Runs: 6, Seed: 11, Workers: 1})
	if err != nil {
		t.Fatal(err)
	}
	b, err := Simulate(p, SimOptions{Runs: 6, Seed: 11, Workers: 2})
	if err != nil {
		t.Fatal(err)
	}
	if !reflect.DeepEqual(a, b) {
		t.Error("same seed, different worker count: results differ")
	}
	if a.Seed != 11 || a.Runs != 6 {
		t.Errorf("seed/runs recorded as %d/%d, want 11/6", a.Seed, a.Runs)
	}
	c, err := Simulate(p, SimOptions{Runs: 6, Seed: 12})
	if err != nil {
		t.Fatal(err)
	}
	if reflect.DeepEqual(a.Endpoints, c.Endpoints) && reflect.DeepEqual(a.Responses, c.Responses) {
		t.Error("different seeds gave identical tallies")
	}
}

// Under the null with Gaussian errors the t test of a contrast in a
// linear model has exactly size alpha (Student 1908, Biometrika 6:1-25),
// and Dunnett's many-to-one procedure has family-wise error exactly alpha
// (Dunnett 1955, JASA 50:1096-1121). Tolerance: 4 binomial MC SE.
func TestSimulateNullTypeIError(t *testing.T) {
	p := loadSimPlan(t, simPlan)
	const runs = 1000
	r, err := Simulate(p, SimOptions{Runs: runs, Seed: 3})
	if err != nil {
		t.Fatal(err)
	}
	ep := r.Endpoints[0]
	if ep.Steps[0].Reported.Count != runs {
		t.Fatalf("single step without checks reported in %d of %d runs", ep.Steps[0].Reported.Count, runs)
	}
	raw := hyp(t, ep, "raw")
	if len(raw.Comparisons) != 2 {
		t.Fatalf("want 2 comparisons, got %d", len(raw.Comparisons))
	}
	for _, c := range raw.Comparisons {
		if !c.TrueNull || c.Rejected.Of != runs {
			t.Errorf("%s: true null %v, of %d", c.Label, c.TrueNull, c.Rejected.Of)
		}
		if !nearRate(c.Rejected, 0.05, 4) {
			t.Errorf("%s unadjusted type I error %.4f ± %.4f, want 0.05 (Student 1908)", c.Label, c.Rejected.Rate, c.Rejected.SE)
		}
	}
	// two unadjusted tests: the family-wise rate is above alpha (between
	// alpha and 2 alpha, by the Bonferroni inequality).
	if raw.Any.Rate <= 0.05 || raw.Any.Rate > 0.1+4*raw.Any.SE {
		t.Errorf("unadjusted any-rejection %.4f, want in (0.05, 0.10]", raw.Any.Rate)
	}
	dn := hyp(t, ep, "dunnett")
	if !nearRate(dn.Any, 0.05, 4) {
		t.Errorf("dunnett family-wise error %.4f ± %.4f, want 0.05 (Dunnett 1955)", dn.Any.Rate, dn.Any.SE)
	}
	// the endpoint family is the union of both hypotheses' rejections, the
	// unadjusted ones included, so it equals the unadjusted any-rate
	// (Dunnett rejects only where the raw test does).
	if ep.FamilyWiseOf != 4 || ep.FamilyWise.Count != raw.Any.Count {
		t.Errorf("family-wise %d of %d tests, want %d of 4", ep.FamilyWise.Count, ep.FamilyWiseOf, raw.Any.Count)
	}
}

// A shift of 10 residual SD with 5 units per group: the t test has power
// 1 to many digits (noncentrality 10*sqrt(5/2) = 15.8).
func TestSimulatePower(t *testing.T) {
	p := loadSimPlan(t, simPlan)
	r, err := Simulate(p, SimOptions{Runs: 200, Seed: 5, Effects: map[string]float64{"A": 10}})
	if err != nil {
		t.Fatal(err)
	}
	ep := r.Endpoints[0]
	for _, c := range hyp(t, ep, "dunnett").Comparisons {
		switch c.Label {
		case "A - C":
			if c.TrueNull || c.Delta != 10 {
				t.Errorf("A - C: true null %v, delta %g, want false, 10", c.TrueNull, c.Delta)
			}
			if c.Rejected.Count != 200 {
				t.Errorf("A - C power %.3f, want 1", c.Rejected.Rate)
			}
		case "B - C":
			if !c.TrueNull || c.Rejected.Rate > 0.15 {
				t.Errorf("B - C: true null %v, rejection %.3f, want true, near 0.05", c.TrueNull, c.Rejected.Rate)
			}
		default:
			t.Errorf("unexpected comparison %s", c.Label)
		}
	}
	if ep.FamilyWiseOf != 2 {
		t.Errorf("family covers %d tests, want the 2 with zero true effect", ep.FamilyWiseOf)
	}
}

// The tallies add up: every run ends at exactly one reported step or
// fails, a step is reached exactly when its predecessor in the chain fell
// back, and a step never reached has share 0.
func TestSimulateTalliesConsistent(t *testing.T) {
	p := loadExample(t, "soil-nematodes")
	const runs = 12
	r, err := Simulate(p, SimOptions{Runs: runs, Seed: 2, Errors: SimLognormal})
	if err != nil {
		t.Fatal(err)
	}
	ep := r.Endpoints[0]
	total := ep.Failed.Count
	for _, s := range ep.Steps {
		total += s.Reported.Count
		if s.Unmet.Count > s.Reported.Count || s.Reported.Count > s.Reached.Count {
			t.Errorf("step %s: unmet %d, reported %d, reached %d out of order", s.ID, s.Unmet.Count, s.Reported.Count, s.Reached.Count)
		}
		for _, c := range s.Checks {
			if c.NotMet.Of != s.Reached.Count-s.FitFailed.Count {
				t.Errorf("step %s check %s run %d times, step fitted %d times", s.ID, c.Test, c.NotMet.Of, s.Reached.Count-s.FitFailed.Count)
			}
		}
	}
	if total != runs {
		t.Errorf("reported shares and failures sum to %d runs, want %d", total, runs)
	}
	if ep.Steps[0].Reached.Count != runs {
		t.Errorf("first step reached %d times, want every run", ep.Steps[0].Reached.Count)
	}
	for i := 1; i < len(ep.Steps); i++ {
		if want := ep.Steps[i-1].Reached.Count - ep.Steps[i-1].Reported.Count; ep.Steps[i].Reached.Count != want {
			t.Errorf("step %s reached %d times, its predecessor fell back %d times", ep.Steps[i].ID, ep.Steps[i].Reached.Count, want)
		}
	}
	// Lognormal errors on the log scale are strongly skewed (skewness about
	// 6.2); with 144 residuals the Shapiro-Wilk test of the mixed step
	// rejects almost always, so the cascade leaves the first step.
	sw := ep.Steps[0].Checks[0]
	if sw.Test != method.ShapiroWilk.Name || sw.NotMet.Rate < 0.8 {
		t.Errorf("first step %s not met in %.2f of runs, want most", sw.Test, sw.NotMet.Rate)
	}
	if ep.Steps[0].Reported.Rate > 0.2 {
		t.Errorf("mixed step reported in %.2f of runs under lognormal errors, want few", ep.Steps[0].Reported.Rate)
	}

	// A plan whose first step has no checks never reaches the others.
	p2 := loadSimPlan(t, strings.Replace(simPlan, "        fixed: [trt]\n", "        fixed: [trt]\n        on-fail: ranks\n      - {id: ranks, model: kruskal-wallis, outcome: {derive: raw}, compare: trt, answers: [{hypothesis: raw, estimate: hodges-lehmann}, {hypothesis: dunnett, adjust: holm, estimate: hodges-lehmann}]}\n", 1))
	r2, err := Simulate(p2, SimOptions{Runs: 5, Seed: 1})
	if err != nil {
		t.Fatal(err)
	}
	if s := r2.Endpoints[0].Steps[1]; s.Reached.Count != 0 || s.Reported.Count != 0 || s.Reported.Rate != 0 {
		t.Errorf("unreachable step: reached %d, reported %d", s.Reached.Count, s.Reported.Count)
	}
}

// The simulated layout meets the plan's data contract and its values stay
// inside the declared range.
func TestSimulateLayoutAndRange(t *testing.T) {
	for _, name := range []string{"wheat-varieties", "soil-nematodes", "irrigation-split-plot"} {
		p := loadExample(t, name)
		lay, err := buildLayout(p)
		if err != nil {
			t.Fatalf("%s: %v", name, err)
		}
		var models []SimResponse
		for i := range p.Columns {
			if c := &p.Columns[i]; c.Role == plan.RoleResponse {
				// a residual sd of half the range forces redraws at the bounds
				sd := 5.0
				m, err := responseModel(p, c, SimOptions{ResidualSD: &sd}, lay)
				if err != nil {
					t.Fatalf("%s: %v", name, err)
				}
				models = append(models, m)
			}
		}
		tab, _ := simTable(p, lay, models, nil, SimT3, rand.New(rand.NewPCG(1, 2)))
		if diags, _ := contract.CheckData(p, tab); diags.HasErrors() {
			t.Errorf("%s: simulated data break the contract: %v", name, diags)
		}
		for _, m := range models {
			for i, y := range tab.Floats(m.Column) {
				if math.IsNaN(y) || (m.Min != nil && y < *m.Min) || (m.Max != nil && y > *m.Max) {
					t.Fatalf("%s: row %d: %s = %g outside the declared range", name, i, m.Column, y)
				}
			}
		}
	}
	p := loadExample(t, "wheat-varieties")
	lay, _ := buildLayout(p)
	// 8 varieties x 4 replicates, each variety once per block
	if len(lay.unit) != 32 || lay.nUnit != 32 || lay.nBlock != 4 {
		t.Errorf("wheat layout: %d rows, %d units, %d blocks; want 32, 32, 4", len(lay.unit), lay.nUnit, lay.nBlock)
	}
}

// Each error shape is standardised to mean 0 and variance 1 (by
// construction: lognormal moments e^(1/2), (e-1)e; contaminated 0.9+0.1*9;
// t3 variance 3). The tolerances are about 5 SE for 200000 draws (wider
// for t3, whose fourth moment is infinite).
func TestSimErrorMoments(t *testing.T) {
	for _, shape := range SimErrorShapes {
		r := rand.New(rand.NewPCG(9, 9))
		const n = 200000
		var s, ss float64
		for range n {
			e := simError(r, shape)
			s += e
			ss += e * e
		}
		mean := s / n
		v := ss/n - mean*mean
		tolV := 0.05
		if shape == SimT3 || shape == SimLognormal {
			tolV = 0.15
		}
		if math.Abs(mean) > 0.02 || math.Abs(v-1) > tolV {
			t.Errorf("%s errors: mean %.4f variance %.4f, want 0 and 1", shape, mean, v)
		}
	}
}

func TestSimulateRefusesBadOptions(t *testing.T) {
	p := loadSimPlan(t, simPlan)
	neg := -1.0
	for _, tc := range []struct {
		opt  SimOptions
		want string
	}{
		{SimOptions{Runs: -3}, "runs -3"},
		{SimOptions{Errors: "cauchy"}, "unknown error shape"},
		{SimOptions{Effects: map[string]float64{"Z": 1}}, `effect level "Z" is not a declared level of trt`},
		{SimOptions{Effects: map[string]float64{"A": math.NaN()}}, "not a finite number"},
		{SimOptions{Scale: "probit"}, "unknown scale"},
		{SimOptions{ResidualSD: &neg}, "residual sd -1"},
	} {
		_, err := Simulate(p, tc.opt)
		if err == nil || !strings.Contains(err.Error(), tc.want) {
			t.Errorf("%+v: error %v, want one containing %q", tc.opt, err, tc.want)
		}
	}
	if _, err := Simulate(nil, SimOptions{}); err == nil {
		t.Error("nil plan: no error")
	}
}

// The check tallies agree with a direct simulation in R: the size of
// Levene's and the Brown-Forsythe test for 8 groups of 4 normal values
// (checker/simulate/testdata/ref.R, R 4.2.2; Levene's mean-centred test
// is far above its nominal 0.05 at this group size). Tolerance: 4
// combined binomial standard errors of the two simulations.
func TestSimulateCheckSizeMatchesR(t *testing.T) {
	b, err := os.ReadFile(filepath.Join("testdata", "ref.json"))
	if err != nil {
		t.Fatal(err)
	}
	var ref struct {
		Source     string  `json:"source"`
		Replicates int     `json:"replicates"`
		Levene     float64 `json:"levene_mean_size"`
		BF         float64 `json:"brown_forsythe_size"`
	}
	if err := json.Unmarshal(b, &ref); err != nil {
		t.Fatal(err)
	}
	src := strings.Replace(simPlan, "replicates: 5", "replicates: 4", 1)
	src = strings.Replace(src, "levels: [C, A, B]", "levels: [C, A, B, D, E, F, G, H]", 1)
	src = strings.Replace(src, "        fixed: [trt]\n", "        fixed: [trt]\n        checks:\n          - {test: levene, by: [trt], fail-below: 0.05}\n          - {test: brown-forsythe, by: [trt], fail-below: 0.05}\n", 1)
	src = src[:strings.Index(src, "    hypotheses:")] + "    hypotheses:\n      - {id: t, kind: term, term: [trt]}\n"
	p := loadSimPlan(t, src)
	const runs = 1000
	r, err := Simulate(p, SimOptions{Runs: runs, Seed: 4})
	if err != nil {
		t.Fatal(err)
	}
	checks := r.Endpoints[0].Steps[0].Checks
	for i, want := range []float64{ref.Levene, ref.BF} {
		got := checks[i].NotMet
		se := math.Sqrt(want * (1 - want) * (1/float64(runs) + 1/float64(ref.Replicates)))
		if got.Of != runs || math.Abs(got.Rate-want) > 4*se {
			t.Errorf("%s not met in %.4f of %d runs, want %.4f ± %.4f (%s)", checks[i].Test, got.Rate, got.Of, want, 4*se, ref.Source)
		}
	}
	// the F test of the treatment term has exact size alpha under the null
	// (Fisher's F distribution of the ANOVA ratio)
	if f := r.Endpoints[0].Hypotheses[0].Any; !nearRate(f, 0.05, 4) {
		t.Errorf("F test size %.4f ± %.4f, want 0.05", f.Rate, f.SE)
	}
}
