package multcomp

import (
	"errors"
	"math"
	"testing"

	"furrow/internal/testkit"
)

func randomP(rng interface{ Float64() float64 }, m int) []float64 {
	p := make([]float64, m)
	for i := range p {
		p[i] = math.Pow(rng.Float64(), 4) // many small p-values
	}
	return p
}

// The closed test with Bonferroni local tests is Holm's procedure, with
// Šidák local tests Holm-Šidák's (Holm 1979; Marcus, Peritz & Gabriel
// 1976): both equalities hold exactly in the formulas, the floating-point
// values agree to rounding (1e-14 relative), over seeded random sets.
func TestClosedTestIsHolm(t *testing.T) {
	rng := newRand(2)
	for rep := 0; rep < 300; rep++ {
		m := 1 + rng.IntN(8)
		p := randomP(rng, m)
		in := append([]float64(nil), p...)
		for _, c := range []struct {
			method Method
			local  func([]float64) (IntersectionTest, error)
		}{{Holm, BonferroniIntersection}, {HolmSidak, SidakIntersection}} {
			test, err := c.local(p)
			if err != nil {
				t.Fatal(err)
			}
			got, err := ClosedTest(m, test)
			if err != nil {
				t.Fatal(err)
			}
			want, err := Adjust(p, c.method)
			if err != nil {
				t.Fatal(err)
			}
			if len(got.Sets) != 1<<m-1 || len(got.P) != len(got.Sets) {
				t.Fatalf("%d hypotheses: %d sets tested", m, len(got.Sets))
			}
			for i := range want {
				if !testkit.RelClose(got.Adjusted[i], want[i], 1e-14) {
					t.Fatalf("rep %d %s: p %v: closed %v, Adjust %v", rep, c.method, p, got.Adjusted, want)
				}
				if got.P[got.Worst[i]] != got.Adjusted[i] {
					t.Fatalf("rep %d: worst set of %d does not give its adjusted p-value", rep, i)
				}
			}
		}
		for i := range in {
			if in[i] != p[i] {
				t.Fatal("input modified")
			}
		}
	}
}

// Hand-computed closed test of three hypotheses with a local test that
// is not consonant (p_I = the largest p in I, like an intersection–union
// rule applied to every set): adjusted p_i = max over I ∋ i of max p_I =
// the largest p overall.
func TestClosedTestHand(t *testing.T) {
	p := []float64{0.01, 0.2, 0.03}
	c, err := ClosedTest(3, func(set []int) (float64, error) {
		hi := 0.0
		for _, i := range set {
			hi = math.Max(hi, p[i])
		}
		return hi, nil
	})
	if err != nil {
		t.Fatal(err)
	}
	testkit.CheckSlice(t, "max rule", c.Adjusted, []float64{0.2, 0.2, 0.2}, 0)
	// Sets in bit-mask order.
	want := [][]int{{0}, {1}, {0, 1}, {2}, {0, 2}, {1, 2}, {0, 1, 2}}
	for k := range want {
		if len(c.Sets[k]) != len(want[k]) {
			t.Fatalf("sets %v, want %v", c.Sets, want)
		}
		for n := range want[k] {
			if c.Sets[k][n] != want[k][n] {
				t.Fatalf("sets %v, want %v", c.Sets, want)
			}
		}
	}
	// Restricted family: only {0}, {1 2}, {0 1 2} (as if 1 and 2 could be
	// false only together): Bonferroni, p = (0.01, 0.2, 0.03):
	// {0} 0.01, {1 2} 2·0.03 = 0.06, {0 1 2} 3·0.01 = 0.03.
	b, err := BonferroniIntersection(p)
	if err != nil {
		t.Fatal(err)
	}
	sets := [][]int{{0}, {2, 1}, {0, 1, 2}}
	r, err := ClosedTestOver(3, sets, b)
	if err != nil {
		t.Fatal(err)
	}
	testkit.CheckSlice(t, "restricted", r.Adjusted, []float64{0.03, 0.06, 0.06}, 1e-15)
	if sets[1][0] != 2 {
		t.Error("sets modified")
	}
	if r.Sets[1][0] != 1 || r.Worst[0] != 2 || r.Worst[1] != 1 {
		t.Errorf("sets %v worst %v", r.Sets, r.Worst)
	}
}

func TestClosedTestErrors(t *testing.T) {
	ok := func([]int) (float64, error) { return 0.5, nil }
	if _, err := ClosedTest(0, ok); err == nil {
		t.Error("no hypotheses accepted")
	}
	if _, err := ClosedTest(MaxClosedHypotheses+1, ok); err == nil {
		t.Error("too many hypotheses accepted")
	}
	for name, f := range map[string]IntersectionTest{
		"NaN":   func([]int) (float64, error) { return math.NaN(), nil },
		"above": func([]int) (float64, error) { return 1.5, nil },
		"error": func([]int) (float64, error) { return 0, errors.New("no test") },
	} {
		if _, err := ClosedTest(3, f); err == nil {
			t.Errorf("local test %s accepted", name)
		}
	}
	for name, sets := range map[string][][]int{
		"none":      nil,
		"empty":     {{0}, {}},
		"outside":   {{0, 3}},
		"negative":  {{-1}},
		"repeat":    {{0, 0, 1}, {2}},
		"uncovered": {{0, 1}},
	} {
		if _, err := ClosedTestOver(3, sets, ok); err == nil {
			t.Errorf("sets %s accepted", name)
		}
	}
	if _, err := BonferroniIntersection([]float64{0.1, math.NaN()}); err == nil {
		t.Error("NaN p-value accepted")
	}
	if _, err := SidakIntersection([]float64{-0.1}); err == nil {
		t.Error("negative p-value accepted")
	}
	b, _ := BonferroniIntersection([]float64{0.1})
	if _, err := ClosedTest(2, b); err == nil {
		t.Error("local test over missing p-values accepted")
	}
}
