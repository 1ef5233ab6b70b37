package engine

import (
	"math"
	"os"
	"sort"
	"strings"
	"testing"
	"time"

	"furrow/checker/internal/fixture"

	"furrow/internal/testkit"
	"furrow/stats/dist"
)

// rewritePlan edits the plan file written by writeCascade.
func rewritePlan(t *testing.T, pp string, edits ...[2]string) {
	t.Helper()
	b, err := os.ReadFile(pp)
	if err != nil {
		t.Fatal(err)
	}
	s := string(b)
	for _, e := range edits {
		if !strings.Contains(s, e[0]) {
			t.Fatalf("plan lacks %q", e[0])
		}
		s = strings.Replace(s, e[0], e[1], 1)
	}
	fixture.Write(t, pp, s)
}

// The record holds what a reviewer needs to check a verdict: intervals of
// marginal means and comparisons at the endpoint's alpha (here 0.1), the
// level and kind of the intervals, n per group, the model equation, the
// declared margin, and the statistic of the test whose p decides an
// equivalence. The expected interval half-widths are R 4.2.2's
// qt(0.95, 14) times the SE the record holds (17 observations, 3 groups:
// 14 residual df); measured 1.5e-15 relative, held to 3e-14. The two
// one-sided p-values are checked as the t tails of the recorded t and df
// (stats/dist, itself checked against R's pt), which ties the record's
// numbers to each other, not to R.
func TestRecordStatesTheTermsOfEachVerdict(t *testing.T) {
	pp := fixture.WriteCascade(t, "0.0000001", "0.0000001", "0.0000001")
	rewritePlan(t, pp,
		[2]string{"    not-computable: fail\n", "    not-computable: fail\n    alpha: 0.1\n"},
		[2]string{"        adjust: holm\n", "        adjust: holm\n      - id: b-as-a\n        kind: equivalence\n        test: b\n        against: a\n        margin: {scale: difference, lower: -3, upper: 3}\n"})
	fixture.Register(t, pp, fixture.T0)
	r := run(t, pp, t.TempDir(), fixture.T0.Add(time.Hour))
	ep := r.Endpoints[0]
	s := ep.Steps[0]
	if ep.Reported != "first" || s.Results == nil {
		t.Fatalf("reported %q", ep.Reported)
	}
	if want := "y = intercept + treatment + residual"; s.Model.Equation != want {
		t.Errorf("equation %q, want %q", s.Model.Equation, want)
	}
	// R 4.2.2 qt(0.95, 14), printed with 17 significant digits.
	const qt95df14 = 1.7613101357748917
	d := s.Results
	testkit.CheckClose(t, "means level", float64(d.MeansLevel), 0.9, 1e-15)
	if len(d.MeansOver) != 0 || len(d.MeansAt) != 0 {
		t.Errorf("one-factor model: means over %v at %v", d.MeansOver, d.MeansAt)
	}
	if len(d.MarginalMeans) != 3 {
		t.Fatalf("%d marginal means, want 3", len(d.MarginalMeans))
	}
	for _, m := range d.MarginalMeans {
		if m.DF != 14 {
			t.Errorf("%s: mean df %v, want the 14 residual df", m.Level, m.DF)
		}
		testkit.CheckRelClose(t, m.Level+" mean upper", float64(m.Upper-m.Estimate), qt95df14*float64(m.SE), 3e-14)
	}
	counts := map[string]int{}
	for _, g := range d.GroupSummaries {
		counts[g.Level] = g.N
	}
	vs := ep.Hypotheses[0]
	testkit.CheckClose(t, "versus-control level", float64(vs.Level), 0.9, 1e-15)
	if vs.Intervals != "per-comparison" || vs.Margin != nil {
		t.Errorf("holm intervals %q, margin %+v", vs.Intervals, vs.Margin)
	}
	if len(vs.Comparisons) != 2 {
		t.Fatalf("%d comparisons, want 2", len(vs.Comparisons))
	}
	for _, c := range vs.Comparisons {
		if c.N != counts[c.Level] || c.NAgainst != counts[c.Against] || c.N == 0 {
			t.Errorf("%s: n %d / %d, groups %v", c.Label, c.N, c.NAgainst, counts)
		}
		if c.DF != 14 {
			t.Errorf("%s: df %v, want the 14 residual df", c.Label, c.DF)
		}
		testkit.CheckRelClose(t, c.Label+" upper", float64(c.Upper-c.Estimate), qt95df14*float64(c.SE), 3e-14)
	}
	eq := ep.Hypotheses[1]
	if eq.Margin == nil || eq.Margin.Scale != "difference" || eq.Margin.Lower != -3 || eq.Margin.Upper != 3 {
		t.Errorf("margin %+v", eq.Margin)
	}
	testkit.CheckClose(t, "equivalence level", float64(eq.Level), 0.8, 1e-15)
	c := eq.Comparisons[0]
	e := c.Equivalence
	// The reported statistic and p are one test: p is its t tail.
	if !(c.Statistic == e.TLower && c.P == e.PLower) && !(c.Statistic == e.TUpper && c.P == e.PUpper) {
		t.Fatalf("statistic %v and p %v are not one of the two one-sided tests %+v", c.Statistic, c.P, e)
	}
	testkit.CheckClose(t, "lower test p", float64(e.PLower), dist.TUpper(float64(e.TLower), float64(c.DF)), 1e-15)
	testkit.CheckClose(t, "upper test p", float64(e.PUpper), dist.TLower(float64(e.TUpper), float64(c.DF)), 1e-15)
	testkit.CheckClose(t, "lower test t", float64(e.TLower), (float64(c.Estimate)+3)/float64(c.SE), 1e-12)
	if math.Max(float64(e.PLower), float64(e.PUpper)) != float64(c.P) {
		t.Errorf("equivalence p %v is not the larger one-sided p", c.P)
	}
}

// Lint warnings are carried into the record.
func TestPlanWarningsInRecord(t *testing.T) {
	pp := fixture.WriteCascade(t, "0.0000001", "0.0000001", "0.0000001")
	rewritePlan(t, pp, [2]string{"  layout: crd\n", "  layout: rcbd\n"})
	fixture.Register(t, pp, fixture.T0)
	r := run(t, pp, t.TempDir(), fixture.T0.Add(time.Hour))
	if len(r.PlanWarnings) != 1 || r.PlanWarnings[0].Code != "layout-columns" || r.PlanWarnings[0].Severity != "warning" {
		t.Errorf("plan warnings %v", r.PlanWarnings)
	}
}

// A declared Šidák adjustment is applied as declared: 1 - (1 - p)^m over
// the family of m comparisons (Šidák 1967), written -expm1(m log1p(-p)) so
// that small p keep their digits (stats/multcomp checks its Šidák against
// R emmeans 1.8.4-1), and Holm-Šidák step-down.
func TestSidakAdjustmentsAsDeclared(t *testing.T) {
	for _, c := range []struct {
		adjust string
		want   func(ps []float64, i int) float64
	}{
		{"sidak", func(ps []float64, i int) float64 { return -math.Expm1(float64(len(ps)) * math.Log1p(-ps[i])) }},
		{"holm-sidak", func(ps []float64, i int) float64 {
			// Two comparisons: the smaller p gets m = 2, the larger m = 1,
			// and the larger adjusted value is at least the smaller one.
			lo, hi := min(ps[0], ps[1]), max(ps[0], ps[1])
			a := -math.Expm1(2 * math.Log1p(-lo))
			if ps[i] == lo {
				return a
			}
			return max(a, hi)
		}},
	} {
		t.Run(c.adjust, func(t *testing.T) {
			pp := fixture.WriteCascade(t, "0.0000001", "0.0000001", "0.0000001")
			rewritePlan(t, pp, [2]string{"        adjust: holm\n", "        adjust: " + c.adjust + "\n"})
			fixture.Register(t, pp, fixture.T0)
			r := run(t, pp, t.TempDir(), fixture.T0.Add(time.Hour))
			h := r.Endpoints[0].Hypotheses[0]
			if h.AdjustUsed != c.adjust || len(h.Comparisons) != 2 {
				t.Fatalf("hypothesis %+v", h)
			}
			ps := []float64{float64(h.Comparisons[0].P), float64(h.Comparisons[1].P)}
			for i, cm := range h.Comparisons {
				testkit.CheckRelClose(t, cm.Label+" adjusted p", float64(cm.PAdjusted), c.want(ps, i), 1e-14)
			}
		})
	}
}

// A declared Shaffer adjustment of all pairs is applied as declared. With
// three levels (by hand from Shaffer 1986, JASA 81:826): once one pair
// differs at most one of the other two hypotheses can be true, so the
// smallest p is multiplied by 3 and the others by 1, made monotone.
// (stats/multcomp checks its Shaffer S2 against R multcomp 1.4-22.)
func TestShafferAdjustmentAsDeclared(t *testing.T) {
	pp := fixture.WriteCascade(t, "0.0000001", "0.0000001", "0.0000001")
	rewritePlan(t, pp, [2]string{"        kind: versus-control\n        adjust: holm\n", "        kind: pairwise\n        adjust: shaffer\n"})
	fixture.Register(t, pp, fixture.T0)
	r := run(t, pp, t.TempDir(), fixture.T0.Add(time.Hour))
	h := r.Endpoints[0].Hypotheses[0]
	if h.AdjustUsed != "shaffer" || len(h.Comparisons) != 3 {
		t.Fatalf("hypothesis %+v", h)
	}
	var ps []float64
	for _, c := range h.Comparisons {
		ps = append(ps, float64(c.P))
	}
	order := []int{0, 1, 2}
	sort.Slice(order, func(a, b int) bool { return ps[order[a]] < ps[order[b]] })
	want := make([]float64, 3)
	prev := 0.0
	for r, i := range order {
		m := 1.0
		if r == 0 {
			m = 3
		}
		prev = math.Min(1, math.Max(prev, m*ps[i]))
		want[i] = prev
	}
	for i, c := range h.Comparisons {
		testkit.CheckRelClose(t, c.Label+" adjusted p", float64(c.PAdjusted), want[i], 1e-15)
		if float64(c.PAdjusted) < float64(c.P) {
			t.Errorf("%s: adjusted p %v below the raw p %v", c.Label, c.PAdjusted, c.P)
		}
	}
}
