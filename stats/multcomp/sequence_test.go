package multcomp

import (
	"math"
	"testing"

	"furrow/internal/testkit"
)

// Hand-computed fixed-sequence and fallback tests.
func TestSequenceHand(t *testing.T) {
	// Fixed sequence, p = .01 .04 .03 .2: adjusted = running max =
	// .01 .04 .04 .2. At α = .05 H1-H3 are rejected; at α = .035 only H1:
	// H2 fails and H3 (p .03 < .035) is not reached.
	p := []float64{0.01, 0.04, 0.03, 0.2}
	s, err := FixedSequence(p, 0.05)
	if err != nil {
		t.Fatal(err)
	}
	testkit.CheckSlice(t, "fixed adjusted", s.Adjusted, []float64{0.01, 0.04, 0.04, 0.2}, 0)
	wantBools(t, "fixed .05", s.Rejected, true, true, true, false)
	s, err = FixedSequence(p, 0.035)
	if err != nil {
		t.Fatal(err)
	}
	wantBools(t, "fixed .035", s.Rejected, true, false, false, false)
	testkit.CheckSlice(t, "fixed levels", s.Level, []float64{0.035, 0.035, 0, 0}, 1e-15)

	// Fallback, w = .5 .25 .25, α = .05, p = .03 .01 .04: levels .025
	// (H1 kept), .0125 (H2 rejected), .05·(.25 + .25) = .025 (H3 kept).
	// Adjusted: H1 .03/.5 = .06; H2 min(.01/.25, max(.01/.75, .06)) =
	// .04; H3 min(.04/.25, max(.04/.5, .04), max(.04/1, .06)) = .06.
	f, err := Fallback([]float64{0.03, 0.01, 0.04}, []float64{0.5, 0.25, 0.25}, 0.05)
	if err != nil {
		t.Fatal(err)
	}
	wantBools(t, "fallback", f.Rejected, false, true, false)
	testkit.CheckSlice(t, "fallback levels", f.Level, []float64{0.025, 0.0125, 0.025}, 1e-15)
	testkit.CheckSlice(t, "fallback adjusted", f.Adjusted, []float64{0.06, 0.04, 0.06}, 1e-15)

	// A rejected run carries its whole level: w = .2 .3 .5, p = .005
	// .012 .04, α = .05: .01 (rejected), .025 (rejected), .05 (rejected).
	f, err = Fallback([]float64{0.005, 0.012, 0.04}, []float64{0.2, 0.3, 0.5}, 0.05)
	if err != nil {
		t.Fatal(err)
	}
	wantBools(t, "fallback run", f.Rejected, true, true, true)
	testkit.CheckSlice(t, "fallback run levels", f.Level, []float64{0.01, 0.025, 0.05}, 1e-15)
	// .005/.2 = .025; min(.012/.3 = .04, max(.012/.5 = .024, .025)) = .025;
	// min(.04/.5 = .08, max(.04/.8, .025) = .05, max(.04/1, .025) = .04) = .04.
	testkit.CheckSlice(t, "fallback run adjusted", f.Adjusted, []float64{0.025, 0.025, 0.04}, 1e-15)
}

func wantBools(t *testing.T, what string, got []bool, want ...bool) {
	t.Helper()
	for i := range want {
		if got[i] != want[i] {
			t.Errorf("%s: rejected %v, want %v", what, got, want)
			return
		}
	}
}

// The fallback's adjusted p-values are the smallest α that rejects: at
// random α, Rejected agrees with Adjusted <= α (seeded random sets, away
// from ties within 1e-12).
func TestFallbackAdjustedIsSmallestAlpha(t *testing.T) {
	rng := newRand(5)
	for rep := 0; rep < 2000; rep++ {
		m := 1 + rng.IntN(6)
		p := randomP(rng, m)
		w := randomWeights(rng, m)
		alpha := 0.001 + 0.2*rng.Float64()
		f, err := Fallback(p, w, alpha)
		if err != nil {
			t.Fatal(err)
		}
		for i := range p {
			if math.Abs(f.Adjusted[i]-alpha) < 1e-12 {
				continue
			}
			if f.Rejected[i] != (f.Adjusted[i] <= alpha) {
				t.Fatalf("rep %d: p %v w %v α %v: rejected %v adjusted %v", rep, p, w, alpha, f.Rejected, f.Adjusted)
			}
		}
	}
}

func TestSequenceErrors(t *testing.T) {
	for name, c := range map[string]struct {
		p, w  []float64
		alpha float64
	}{
		"empty":        {nil, nil, 0.05},
		"lengths":      {[]float64{0.1, 0.2}, []float64{0.5}, 0.05},
		"sum above 1":  {[]float64{0.1, 0.2}, []float64{0.6, 0.5}, 0.05},
		"negative":     {[]float64{0.1, 0.2}, []float64{1.1, -0.1}, 0.05},
		"NaN weight":   {[]float64{0.1, 0.2}, []float64{math.NaN(), 0.5}, 0.05},
		"NaN p":        {[]float64{math.NaN(), 0.2}, []float64{0.5, 0.5}, 0.05},
		"alpha 0":      {[]float64{0.1, 0.2}, []float64{0.5, 0.5}, 0},
		"alpha 1":      {[]float64{0.1, 0.2}, []float64{0.5, 0.5}, 1},
		"p above 1":    {[]float64{0.1, 1.2}, []float64{0.5, 0.5}, 0.05},
		"inf weight":   {[]float64{0.1, 0.2}, []float64{math.Inf(1), 0}, 0.05},
		"alpha is NaN": {[]float64{0.1, 0.2}, []float64{0.5, 0.5}, math.NaN()},
	} {
		if _, err := Fallback(c.p, c.w, c.alpha); err == nil {
			t.Errorf("%s accepted", name)
		}
	}
	if _, err := FixedSequence(nil, 0.05); err == nil {
		t.Error("empty fixed sequence accepted")
	}
	// Decimal weights that sum to 1 only to rounding are accepted.
	if _, err := Fallback([]float64{0.1, 0.2, 0.3}, []float64{0.1, 0.2, 0.7}, 0.05); err != nil {
		t.Errorf("0.1 + 0.2 + 0.7: %v", err)
	}
}
