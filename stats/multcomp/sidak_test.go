package multcomp

import (
	"math"
	"sort"
	"testing"

	"furrow/internal/testkit"
	"furrow/stats/dist"
)

// emmeans 1.8.4.1 summary(pairs(em, adjust = "sidak")) on the invented
// one-way layouts of testdata/ref_multiplicity.R, from its unadjusted
// p-values. emmeans computes 1 - (1 - p)^m directly, which loses about
// 1e-16/p relative; agreement measured 8.8e-15 relative at worst
// (linux/amd64): tolerance 1e-13.
func TestSidakAgainstEmmeans(t *testing.T) {
	for name, c := range loadRefMult(t).Sidak {
		got, err := Adjust(c.P, Sidak)
		if err != nil {
			t.Fatal(err)
		}
		worst := 0.0
		for i := range got {
			worst = math.Max(worst, testkit.RelErr(got[i], c.PSidak[i]))
			testkit.CheckRelClose(t, name+" sidak "+c.Contrast[i], got[i], c.PSidak[i], 1e-13)
		}
		t.Logf("%s: sidak p worst relative error %.2g", name, worst)
	}
}

// The Bonferroni and Šidák simultaneous intervals of emmeans (confidence
// 0.95 adjusted for m estimates) are the ordinary t intervals at
// PerComparisonLevel: estimate ± t_{1-α'/2, df} SE with stats/dist's t
// quantile. Agreement measured 1.1e-14 absolute at worst on limits of
// order 1: tolerance 1e-12 (stats/dist's t quantile is checked to 1e-12
// against R in its own tests).
func TestPerComparisonLevelAgainstEmmeans(t *testing.T) {
	for name, c := range loadRefMult(t).Sidak {
		m := len(c.P)
		for _, k := range []struct {
			method       Method
			lower, upper []float64
		}{{Sidak, c.LowerSidak, c.UpperSidak}, {Bonferroni, c.LowerBonferroni, c.UpperBonferroni}} {
			a, err := PerComparisonLevel(k.method, 1-c.Level, m)
			if err != nil {
				t.Fatal(err)
			}
			worst := 0.0
			for i := range c.P {
				crit := dist.TUpperQuantile(a/2, c.DF[i])
				lo, hi := c.Estimate[i]-crit*c.SE[i], c.Estimate[i]+crit*c.SE[i]
				worst = math.Max(worst, math.Max(math.Abs(lo-k.lower[i]), math.Abs(hi-k.upper[i])))
				testkit.CheckClose(t, name+" "+string(k.method)+" lower "+c.Contrast[i], lo, k.lower[i], 1e-12)
				testkit.CheckClose(t, name+" "+string(k.method)+" upper "+c.Contrast[i], hi, k.upper[i], 1e-12)
			}
			t.Logf("%s %s: limits worst absolute error %.2g", name, k.method, worst)
		}
		// The Bonferroni p-values of emmeans are min(1, m p) of its own
		// unadjusted p, recomputed from t: measured 3.1e-15 relative at
		// worst, tolerance 1e-14.
		got, err := Adjust(c.P, Bonferroni)
		if err != nil {
			t.Fatal(err)
		}
		for i := range got {
			testkit.CheckRelClose(t, name+" bonferroni p "+c.Contrast[i], got[i], c.PBonferroni[i], 1e-14)
		}
	}
}

// Hand-computed Šidák values (exact decimal arithmetic).
func TestSidakHand(t *testing.T) {
	for _, c := range []struct {
		name   string
		p      []float64
		method Method
		want   []float64
	}{
		// 1 - 0.9^3 = 0.271; 1 - 0.5^2 = 0.75 (m = 2 each below)
		{"single 3", []float64{0.1, 0.1, 0.1}, Sidak, []float64{0.271, 0.271, 0.271}},
		{"single 2", []float64{0.5, 0}, Sidak, []float64{0.75, 0}},
		{"single one", []float64{0.3}, Sidak, []float64{0.3}},
		{"ones", []float64{1, 1}, Sidak, []float64{1, 1}},
		// sorted 0.01 (k=3): 1 - 0.99^3 = 0.029701; 0.03 (k=2):
		// 1 - 0.97^2 = 0.0591; 0.04 (k=1): 0.04, raised to 0.0591.
		{"step-down", []float64{0.01, 0.04, 0.03}, HolmSidak, []float64{0.029701, 0.0591, 0.0591}},
		// a tie keeps equal values: 1 - 0.98^3 = 0.058808 for both.
		{"tie", []float64{0.02, 0.02, 0.5}, HolmSidak, []float64{0.058808, 0.058808, 0.5}},
	} {
		got, err := Adjust(c.p, c.method)
		if err != nil {
			t.Fatal(err)
		}
		testkit.CheckSlice(t, c.name, got, c.want, 1e-15)
	}
	// Small p keep their digits: 1 - (1 - p)^5 = 5p - 10p² + ... = 5e-300.
	got, err := Adjust([]float64{1e-300, 0.5, 0.5, 0.5, 0.5}, Sidak)
	if err != nil {
		t.Fatal(err)
	}
	testkit.CheckRelClose(t, "sidak of 1e-300", got[0], 5e-300, 1e-15)
	// 1 - sqrt(0.95) = 0.025320565519103...; 0.05/4 = 0.0125.
	a, err := PerComparisonLevel(Sidak, 0.05, 2)
	if err != nil {
		t.Fatal(err)
	}
	testkit.CheckRelClose(t, "sidak level m=2", a, 1-math.Sqrt(0.95), 1e-14)
	a, err = PerComparisonLevel(Bonferroni, 0.05, 4)
	if err != nil {
		t.Fatal(err)
	}
	testkit.CheckRelClose(t, "bonferroni level m=4", a, 0.0125, 1e-15)
}

// Šidák is below Bonferroni, Holm-Šidák below both Holm and single-step
// Šidák, and all are monotone in the raw p-values (seeded random sets).
func TestSidakOrdering(t *testing.T) {
	rng := newRand(1)
	for rep := 0; rep < 500; rep++ {
		m := 1 + rng.IntN(12)
		p := make([]float64, m)
		for i := range p {
			p[i] = math.Pow(rng.Float64(), 3)
		}
		get := func(method Method) []float64 {
			v, err := Adjust(p, method)
			if err != nil {
				t.Fatal(err)
			}
			return v
		}
		s, b, hs, h := get(Sidak), get(Bonferroni), get(HolmSidak), get(Holm)
		idx := make([]int, m)
		for i := range idx {
			idx[i] = i
		}
		sort.Slice(idx, func(a, b int) bool { return p[idx[a]] < p[idx[b]] })
		for r, i := range idx {
			if s[i] > b[i]*(1+1e-15) || hs[i] > h[i]*(1+1e-15) || hs[i] > s[i]*(1+1e-15) || hs[i] < p[i] {
				t.Fatalf("rep %d: p %v: sidak %v bonferroni %v holm-sidak %v holm %v", rep, p[i], s[i], b[i], hs[i], h[i])
			}
			if r > 0 && hs[i] < hs[idx[r-1]] {
				t.Fatalf("rep %d: holm-sidak not monotone", rep)
			}
		}
	}
}

func TestPerComparisonLevelErrors(t *testing.T) {
	for _, c := range []struct {
		method Method
		alpha  float64
		m      int
	}{{Holm, 0.05, 3}, {BH, 0.05, 3}, {HolmSidak, 0.05, 3}, {Hochberg, 0.05, 3}, {Method("x"), 0.05, 3},
		{Sidak, 0, 3}, {Sidak, 1, 3}, {Sidak, math.NaN(), 3}, {Bonferroni, 0.05, 0}} {
		if _, err := PerComparisonLevel(c.method, c.alpha, c.m); err == nil {
			t.Errorf("%s alpha %v m %d accepted", c.method, c.alpha, c.m)
		}
	}
	if a, err := PerComparisonLevel(None, 0.05, 7); err != nil || a != 0.05 {
		t.Errorf("none: %v %v", a, err)
	}
}
