package multcomp

import (
	"math"
	"sort"
	"testing"

	"furrow/internal/testkit"
)

// multcomp 1.4.22 summary(glht(lm(y ~ g), mcp(g = "Tukey")), test =
// adjusted("Shaffer")) on the invented layouts of
// testdata/ref_multiplicity.R (k = 4 and 5 means), from the unadjusted
// p-values of adjusted("none"). multcomp forms the same products
// min(1, |I| p) (step-wise over the configurations containing the j-th
// smallest p among the unrejected), so agreement is to rounding: measured
// 2.8e-15 relative at worst on linux/amd64; relative tolerance 1e-14.
func TestShafferS2AgainstMultcomp(t *testing.T) {
	for name, c := range loadRefMult(t).Shaffer {
		k := len(c.Levels)
		pairs := AllPairs(k)
		for n, pr := range pairs {
			if want := c.Levels[pr[1]] + " - " + c.Levels[pr[0]]; c.Contrast[n] != want {
				t.Fatalf("%s: contrast %d is %q, AllPairs gives %q", name, n, c.Contrast[n], want)
			}
		}
		r, err := ShafferS2(c.P, k)
		if err != nil {
			t.Fatal(err)
		}
		worst := 0.0
		for i := range r.Adjusted {
			worst = math.Max(worst, testkit.RelErr(r.Adjusted[i], c.PShaffer[i]))
			testkit.CheckRelClose(t, name+" shaffer "+c.Contrast[i], r.Adjusted[i], c.PShaffer[i], 1e-14)
		}
		t.Logf("%s: worst relative error %.2g", name, worst)
		// S1 is never below S2; on d4 it is above at D - B (rank 4: S1
		// multiplies by t_4 = 3, S2 by 1, since with C - A, D - A and C - B
		// rejected no configuration holds D - B and another unrejected
		// hypothesis: B = D with A or C would make D - A or C - B true).
		s1, err := ShafferS1(c.P, k)
		if err != nil {
			t.Fatal(err)
		}
		for i := range s1.Adjusted {
			if s1.Adjusted[i] < r.Adjusted[i]*(1-1e-15) {
				t.Errorf("%s %s: S1 %v below S2 %v", name, c.Contrast[i], s1.Adjusted[i], r.Adjusted[i])
			}
		}
		if name == "d4" {
			// D - B is pair 4; raw p 0.107949739300187 (R), S1 3·p.
			testkit.CheckRelClose(t, "d4 S1 D - B", s1.Adjusted[4], 3*c.P[4], 1e-15)
			if s1.T[4] != 3 || r.T[4] != 1 || s1.Adjusted[4] <= r.Adjusted[4] {
				t.Errorf("d4 D - B: S1 %v (t %d), S2 %v (t %d)", s1.Adjusted[4], s1.T[4], r.Adjusted[4], r.T[4])
			}
		}
		// Here the full closed test gives the same values.
		cl, err := ShafferClosed(c.P, k)
		if err != nil {
			t.Fatal(err)
		}
		testkit.CheckSlice(t, name+" closed", cl.Adjusted, r.Adjusted, 1e-15)
	}
}

// Hand-derived cases.
func TestShafferHand(t *testing.T) {
	// k = 3, pairs AB, AC, BC. S(3) = {0, 1, 3}: t = 3, 1, 1.
	// S1: 3·0.01 = 0.03; max(0.03, 0.02) = 0.03; 0.04. S2 and the closed
	// test over {AB}, {AC}, {BC}, {AB AC BC} give the same; Holm gives
	// 0.03, 0.04, 0.04.
	p3 := []float64{0.01, 0.02, 0.04}
	s1, err := ShafferS1(p3, 3)
	if err != nil {
		t.Fatal(err)
	}
	s2, err := ShafferS2(p3, 3)
	if err != nil {
		t.Fatal(err)
	}
	cl, err := ShafferClosed(p3, 3)
	if err != nil {
		t.Fatal(err)
	}
	testkit.CheckSlice(t, "k=3 S1", s1.Adjusted, []float64{0.03, 0.03, 0.04}, 1e-15)
	testkit.CheckSlice(t, "k=3 S2", s2.Adjusted, []float64{0.03, 0.03, 0.04}, 1e-15)
	testkit.CheckSlice(t, "k=3 closed", cl.Adjusted, []float64{0.03, 0.03, 0.04}, 1e-15)
	if s1.T[0] != 3 || s1.T[1] != 1 || s1.T[2] != 1 {
		t.Errorf("k=3 t = %v", s1.T)
	}
	// k = 4, pairs AB AC AD BC BD CD with p .001 .01 .2 .3 .4 .002.
	// S(4) = {0, 1, 2, 3, 6}; by rank AB CD AC AD BC BD, t = 6 3 3 3 2 1:
	// S1 = .006 .03 .6 .6 .6 .006 (products .006 .006 .03 .6 .6 .4, run
	// max). S2 multipliers by rank: AB 6; CD 3 ({A C D}); AC 2
	// ({AC BD}); AD 2 ({AD BC}); BC 1; BD 1: products .006 .006 .02 .4
	// .3 .4, run max .006 .006 .02 .4 .4 .4. Closed, worst configuration
	// of each (by hand from the 14 configurations): AB {all} .006; AC
	// {AC BD} 2·.01 = .02; AD, BC {AD BC} 2·.2 = .4; BD {BD} .4; CD {all}
	// .006: here the same as S2.
	p4 := []float64{0.001, 0.01, 0.2, 0.3, 0.4, 0.002}
	s1, err = ShafferS1(p4, 4)
	if err != nil {
		t.Fatal(err)
	}
	s2, err = ShafferS2(p4, 4)
	if err != nil {
		t.Fatal(err)
	}
	cl, err = ShafferClosed(p4, 4)
	if err != nil {
		t.Fatal(err)
	}
	testkit.CheckSlice(t, "k=4 S1", s1.Adjusted, []float64{0.006, 0.03, 0.6, 0.6, 0.6, 0.006}, 1e-15)
	testkit.CheckSlice(t, "k=4 S2", s2.Adjusted, []float64{0.006, 0.02, 0.4, 0.4, 0.4, 0.006}, 1e-15)
	if !equalInts(s2.T, []int{6, 2, 2, 1, 1, 3}) {
		t.Errorf("k=4 S2 multipliers %v", s2.T)
	}
	testkit.CheckSlice(t, "k=4 closed", cl.Adjusted, []float64{0.006, 0.02, 0.4, 0.4, 0.4, 0.006}, 1e-15)
	if len(cl.Closure.Sets) != 14 {
		t.Errorf("k=4: %d configurations, want Bell(4) - 1 = 14", len(cl.Closure.Sets))
	}
	// k = 4 where the closed test is below S2 and not monotone: p for AB
	// AC AD BC BD CD = .84 .985 .124 0 .558 .243. Ranks BC AD CD BD AB
	// AC; S2 at BD can only use {AC BD}: 2·.558 > 1, so AB and AC get 1.
	// Closed for AB: {all} 0, {A B C} 0, {A B D} 3·.124 = .372,
	// {AB CD} 2·.243 = .486, {AB} .84: .84, below BD's 1 (BD: {AC BD}
	// 1) although AB's raw p is larger.
	pn := []float64{0.84, 0.985, 0.124, 0, 0.558, 0.243}
	s2, err = ShafferS2(pn, 4)
	if err != nil {
		t.Fatal(err)
	}
	cl, err = ShafferClosed(pn, 4)
	if err != nil {
		t.Fatal(err)
	}
	testkit.CheckSlice(t, "non-monotone S2", s2.Adjusted, []float64{1, 1, 0.372, 0, 1, 0.486}, 1e-15)
	testkit.CheckSlice(t, "non-monotone closed", cl.Adjusted, []float64{0.84, 1, 0.372, 0, 1, 0.486}, 1e-15)
	// Exact ties take the largest value of their tie whatever the order:
	// k = 3, p = (.02, .02, .5): 3·.02 = .06 for both.
	s2, err = ShafferS2([]float64{0.02, 0.02, 0.5}, 3)
	if err != nil {
		t.Fatal(err)
	}
	testkit.CheckSlice(t, "tie", s2.Adjusted, []float64{0.06, 0.06, 0.5}, 1e-15)
}

// Hand-derived S(k) from the splits of k (for k = 6: 6 → 15; 5+1 → 10;
// 4+2 → 7; 4+1+1, 3+3 → 6; 3+2+1 → 4; 3+1+1+1, 2+2+2 → 3; 2+2+1+1 → 2;
// 2+1+1+1+1 → 1; all ones → 0), and the recursion against a brute-force
// count over the set partitions (PairwiseConfigurations) up to k = 9.
func TestPossibleTrueCounts(t *testing.T) {
	for k, want := range map[int][]int{
		2: {0, 1}, 3: {0, 1, 3}, 4: {0, 1, 2, 3, 6}, 5: {0, 1, 2, 3, 4, 6, 10},
		6: {0, 1, 2, 3, 4, 6, 7, 10, 15},
	} {
		got, err := PossibleTrueCounts(k)
		if err != nil {
			t.Fatal(err)
		}
		if !equalInts(got, want) {
			t.Errorf("S(%d) = %v, want %v", k, got, want)
		}
	}
	bell := []int{1, 1, 2, 5, 15, 52, 203, 877, 4140, 21147}
	for k := 2; k <= 9; k++ {
		sets, err := PairwiseConfigurations(k)
		if err != nil {
			t.Fatal(err)
		}
		if len(sets) != bell[k]-1 {
			t.Errorf("k=%d: %d configurations, want Bell(k) - 1 = %d", k, len(sets), bell[k]-1)
		}
		seen := map[int]bool{0: true}
		for _, s := range sets {
			seen[len(s)] = true
		}
		var brute []int
		for n := range seen {
			brute = append(brute, n)
		}
		sort.Ints(brute)
		got, _ := PossibleTrueCounts(k)
		if !equalInts(got, brute) {
			t.Errorf("k=%d: recursion %v, partitions %v", k, got, brute)
		}
	}
	if got, err := PossibleTrueCounts(MaxShafferMeans); err != nil || got[len(got)-1] != MaxShafferMeans*(MaxShafferMeans-1)/2 {
		t.Errorf("k=%d: %v", MaxShafferMeans, err)
	}
}

func equalInts(a, b []int) bool {
	if len(a) != len(b) {
		return false
	}
	for i := range a {
		if a[i] != b[i] {
			return false
		}
	}
	return true
}

// Seeded random p-values, k = 3..6: unadjusted <= closed <= S2 <= S1 <=
// Holm, S1 and S2 monotone in the raw p-values; for k = 3 all three
// coincide (after the first rejection no two unrejected hypotheses can
// be true together).
func TestShafferProperties(t *testing.T) {
	rng := newRand(3)
	for rep := 0; rep < 200; rep++ {
		k := 3 + rng.IntN(4)
		p := randomP(rng, k*(k-1)/2)
		s1, err := ShafferS1(p, k)
		if err != nil {
			t.Fatal(err)
		}
		s2, err := ShafferS2(p, k)
		if err != nil {
			t.Fatal(err)
		}
		cl, err := ShafferClosed(p, k)
		if err != nil {
			t.Fatal(err)
		}
		h, _ := Adjust(p, Holm)
		const r = 1e-15
		for i := range p {
			if cl.Adjusted[i] < p[i] || s2.Adjusted[i] < cl.Adjusted[i]*(1-r) || s1.Adjusted[i] < s2.Adjusted[i]*(1-r) || s1.Adjusted[i] > h[i]*(1+r) {
				t.Fatalf("rep %d k %d: p %v closed %v S2 %v S1 %v holm %v", rep, k, p[i], cl.Adjusted[i], s2.Adjusted[i], s1.Adjusted[i], h[i])
			}
			if k == 3 && (!testkit.RelClose(s1.Adjusted[i], cl.Adjusted[i], r) || !testkit.RelClose(s2.Adjusted[i], cl.Adjusted[i], r)) {
				t.Fatalf("rep %d k 3: S1 %v S2 %v closed %v", rep, s1.Adjusted, s2.Adjusted, cl.Adjusted)
			}
			for j := range p {
				if p[i] < p[j] && (s2.Adjusted[i] > s2.Adjusted[j] || s1.Adjusted[i] > s1.Adjusted[j]) {
					t.Fatalf("rep %d: not monotone", rep)
				}
			}
		}
	}
}

func TestShafferErrors(t *testing.T) {
	if _, err := ShafferS1([]float64{0.1, 0.2}, 3); err == nil {
		t.Error("wrong count accepted")
	}
	if _, err := ShafferClosed([]float64{0.1, math.NaN(), 0.2}, 3); err == nil {
		t.Error("NaN accepted")
	}
	if _, err := ShafferS1(nil, 1); err == nil {
		t.Error("one mean accepted")
	}
	if _, err := ShafferClosed(make([]float64, 55), 11); err == nil {
		t.Error("k above MaxShafferClosedMeans accepted")
	}
	if _, err := ShafferS2([]float64{0.1, 0.2, 1.5}, 3); err == nil {
		t.Error("p above 1 accepted")
	}
	if _, err := PairwiseConfigurations(1); err == nil {
		t.Error("one mean accepted")
	}
}

func BenchmarkShafferS2K10(b *testing.B) {
	p := randomP(newRand(4), 45)
	for b.Loop() {
		if _, err := ShafferS2(p, 10); err != nil {
			b.Fatal(err)
		}
	}
}

func BenchmarkShafferClosedK10(b *testing.B) {
	p := randomP(newRand(4), 45)
	for b.Loop() {
		if _, err := ShafferClosed(p, 10); err != nil {
			b.Fatal(err)
		}
	}
}
