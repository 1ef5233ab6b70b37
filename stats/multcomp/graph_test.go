package multcomp

import (
	"fmt"
	"math"
	"math/rand/v2"
	"testing"

	"gonum.org/v1/gonum/mat"

	"furrow/internal/testkit"
)

// randomGraph has random weights and a random transition matrix with
// zero diagonal, some zero entries and rows summing to 1 or less.
func randomGraph(t testing.TB, rng *rand.Rand, m int) *Graph {
	g := mat.NewDense(m, m, nil)
	for j := 0; j < m; j++ {
		if m == 1 {
			break
		}
		row := randomWeights(rng, m-1)
		for l, k := 0, 0; l < m; l++ {
			if l != j {
				g.Set(j, l, row[k])
				k++
			}
		}
	}
	gr, err := NewGraph(randomWeights(rng, m), g)
	if err != nil {
		t.Fatal(err)
	}
	return gr
}

// Holm's procedure as a graph reproduces Holm: the same rejections at
// α and adjusted p-values equal to rounding (1e-13 relative; the graph's
// weights 1/m + ... reach 1/(m-j) through sums, a few ulps off), against
// Adjust(p, Holm) over seeded random p-values.
func TestHolmGraphIsHolm(t *testing.T) {
	rng := newRand(6)
	for rep := 0; rep < 1000; rep++ {
		m := 1 + rng.IntN(10)
		p := randomP(rng, m)
		alpha := 0.001 + 0.1*rng.Float64()
		gr, err := HolmGraph(m)
		if err != nil {
			t.Fatal(err)
		}
		r, err := gr.Test(p, alpha)
		if err != nil {
			t.Fatal(err)
		}
		h, err := Adjust(p, Holm)
		if err != nil {
			t.Fatal(err)
		}
		for i := range p {
			if !testkit.RelClose(r.Adjusted[i], h[i], 1e-13) {
				t.Fatalf("rep %d: p %v: graph %v, holm %v", rep, p, r.Adjusted, h)
			}
			if r.Rejected[i] != (h[i] <= alpha) {
				t.Fatalf("rep %d: p %v α %v: graph rejects %v, holm adjusted %v", rep, p, alpha, r.Rejected, h)
			}
		}
	}
}

// The graph check against R: p.adjust "holm" on the sets of
// testdata/ref_multiplicity.R (ties, 0 and 1 included): 1e-13 relative.
func TestHolmGraphAgainstR(t *testing.T) {
	for name, c := range loadRefMult(t).Holm {
		gr, err := HolmGraph(len(c.P))
		if err != nil {
			t.Fatal(err)
		}
		got, err := gr.AdjustedP(c.P)
		if err != nil {
			t.Fatal(err)
		}
		for i := range got {
			if !testkit.Within(got[i], c.Holm[i], 1e-13, 0) {
				t.Errorf("set %s: graph p[%d] = %.15g, R p.adjust holm %.15g", name, i, got[i], c.Holm[i])
			}
		}
	}
}

// The fixed sequence and the fallback as graphs reproduce FixedSequence
// and Fallback: the same rejections and adjusted p-values to 1e-14
// relative, over seeded random p-values and weights.
func TestSequenceGraphsAreSequences(t *testing.T) {
	rng := newRand(7)
	for rep := 0; rep < 2000; rep++ {
		m := 1 + rng.IntN(8)
		p := randomP(rng, m)
		alpha := 0.001 + 0.2*rng.Float64()
		w := randomWeights(rng, m)
		for _, c := range []struct {
			name  string
			graph func() (*Graph, error)
			seq   func() (*Sequence, error)
		}{
			{"fixed sequence", func() (*Graph, error) { return FixedSequenceGraph(m) }, func() (*Sequence, error) { return FixedSequence(p, alpha) }},
			{"fallback", func() (*Graph, error) { return FallbackGraph(w) }, func() (*Sequence, error) { return Fallback(p, w, alpha) }},
		} {
			gr, err := c.graph()
			if err != nil {
				t.Fatal(err)
			}
			r, err := gr.Test(p, alpha)
			if err != nil {
				t.Fatal(err)
			}
			s, err := c.seq()
			if err != nil {
				t.Fatal(err)
			}
			for i := range p {
				if !testkit.RelClose(r.Adjusted[i], s.Adjusted[i], 1e-14) || r.Rejected[i] != s.Rejected[i] {
					t.Fatalf("rep %d %s: p %v w %v α %v: graph %v %v, sequence %v %v", rep, c.name, p, w, alpha, r.Rejected, r.Adjusted, s.Rejected, s.Adjusted)
				}
			}
		}
	}
}

// The graphical test is the closed test of its weighted Bonferroni
// intersection tests (Bretz et al. 2009 §3): the adjusted p-values of
// AdjustedP and of ClosedTest with IntersectionTest agree to 1e-12
// relative (the two reach the weights through different sequences of
// updates) on random graphs; and the intersection weights do not depend
// on the order hypotheses are removed in.
func TestGraphIsClosedTest(t *testing.T) {
	rng := newRand(8)
	for rep := 0; rep < 300; rep++ {
		m := 1 + rng.IntN(6)
		gr := randomGraph(t, rng, m)
		p := randomP(rng, m)
		adj, err := gr.AdjustedP(p)
		if err != nil {
			t.Fatal(err)
		}
		it, err := gr.IntersectionTest(p)
		if err != nil {
			t.Fatal(err)
		}
		c, err := ClosedTest(m, it)
		if err != nil {
			t.Fatal(err)
		}
		alpha := 0.001 + 0.2*rng.Float64()
		r, err := gr.Test(p, alpha)
		if err != nil {
			t.Fatal(err)
		}
		for i := range p {
			if !testkit.Within(adj[i], c.Adjusted[i], 1e-12, 1e-15) {
				t.Fatalf("rep %d: w %v G %v p %v: graph %v, closed %v", rep, gr.w, gr.g, p, adj, c.Adjusted)
			}
			if math.Abs(adj[i]-alpha) > 1e-12 && r.Rejected[i] != (adj[i] <= alpha) {
				t.Fatalf("rep %d: α %v: rejected %v, adjusted %v", rep, alpha, r.Rejected, adj)
			}
		}
		// removal order
		set := []int{}
		for i := 0; i < m; i++ {
			if rng.IntN(2) == 0 {
				set = append(set, i)
			}
		}
		w1, err := gr.IntersectionWeights(set)
		if err != nil {
			t.Fatal(err)
		}
		s := gr.state()
		in := map[int]bool{}
		for _, i := range set {
			in[i] = true
		}
		for _, i := range rng.Perm(m) {
			if !in[i] {
				s.remove(i)
			}
		}
		sum := 0.0
		for i := range w1 {
			sum += w1[i]
			if !testkit.Within(w1[i], s.w[i], 1e-12, 1e-15) || (!in[i] && w1[i] != 0) {
				t.Fatalf("rep %d: weights of %v: %v in one order, %v in another", rep, set, w1, s.w)
			}
		}
		if sum > 1+1e-12 {
			t.Fatalf("rep %d: intersection weights sum to %v", rep, sum)
		}
	}
}

// A graph of Bretz et al. (2009) for two primary hypotheses H1, H2
// (weights 1/2) each with a secondary one, H3 after H1 and H4 after H2
// (weights 0): H1 → H3, H2 → H4, H3 → H2, H4 → H1, all 1. The graph is
// recalled from memory (the paper's figures were not available here to
// check); the p-values and every number below are worked by hand.
//
// p = (.01, .005, .015, .022), α = .025, levels .0125 .0125 0 0.
// Step 1: H1 and H2 both pass; H2 has the smaller p/w (.01 < .02) and
// goes first: level .0125 passes to H4. Weights 1/2 0 0 1/2; removing H2
// makes H3 → H4 (through H2) and leaves H1 → H3, H4 → H1.
// Step 2: H1 (.01 <= .0125) is rejected, .0125 passes to H3; weights
// 0 0 1/2 1/2, H3 → H4 and H4 → H3. Step 3: .015 and .022 exceed .0125:
// stop. Adjusted p-values: H2 .005/.5 = .01; H1 max(.01/.5, .01) = .02;
// then H3 (.015/.5 = .03 < .022/.5 = .044) .03; H4 receives all weight:
// max(.022, .03) = .03.
func TestBretzGatekeepingHand(t *testing.T) {
	g := mat.NewDense(4, 4, []float64{
		0, 0, 1, 0,
		0, 0, 0, 1,
		0, 1, 0, 0,
		1, 0, 0, 0,
	})
	gr, err := NewGraph([]float64{0.5, 0.5, 0, 0}, g)
	if err != nil {
		t.Fatal(err)
	}
	r, err := gr.Test([]float64{0.01, 0.005, 0.015, 0.022}, 0.025)
	if err != nil {
		t.Fatal(err)
	}
	wantBools(t, "rejected", r.Rejected, true, true, false, false)
	testkit.CheckSlice(t, "adjusted", r.Adjusted, []float64{0.02, 0.01, 0.03, 0.03}, 1e-15)
	if len(r.Steps) != 2 || r.Steps[0].Rejected != 1 || r.Steps[1].Rejected != 0 {
		t.Fatalf("steps %+v", r.Steps)
	}
	s1, s2 := r.Steps[0], r.Steps[1]
	testkit.CheckClose(t, "step 1 level", s1.Level, 0.0125, 1e-15)
	testkit.CheckSlice(t, "step 1 passed", s1.Passed, []float64{0, 0, 0, 0.0125}, 1e-15)
	testkit.CheckSlice(t, "step 1 weights", s1.Weights, []float64{0.5, 0, 0, 0.5}, 1e-15)
	wantG(t, "step 1 graph", s1.Transitions, [][]float64{{0, 0, 1, 0}, {0, 0, 0, 0}, {0, 0, 0, 1}, {1, 0, 0, 0}})
	testkit.CheckSlice(t, "step 2 passed", s2.Passed, []float64{0, 0, 0.0125, 0}, 1e-15)
	testkit.CheckSlice(t, "step 2 weights", s2.Weights, []float64{0, 0, 0.5, 0.5}, 1e-15)
	wantG(t, "step 2 graph", s2.Transitions, [][]float64{{0, 0, 0, 0}, {0, 0, 0, 0}, {0, 0, 0, 1}, {0, 0, 1, 0}})
	testkit.CheckSlice(t, "final levels", r.Levels, []float64{0, 0, 0.0125, 0.0125}, 1e-15)

	// Same graph, p = (.02, .015, .01, .023): by hand H2 .03, H1
	// max(.04, .03) = .04, H3 max(.01/.5, .04) = .04, H4 .04; nothing is
	// rejected at .025 (.015 > .0125, .02 > .0125).
	r, err = gr.Test([]float64{0.02, 0.015, 0.01, 0.023}, 0.025)
	if err != nil {
		t.Fatal(err)
	}
	wantBools(t, "second rejected", r.Rejected, false, false, false, false)
	testkit.CheckSlice(t, "second adjusted", r.Adjusted, []float64{0.04, 0.03, 0.04, 0.04}, 1e-15)
	if len(r.Steps) != 0 {
		t.Errorf("second: %d steps", len(r.Steps))
	}
}

func wantG(t *testing.T, what string, got, want [][]float64) {
	t.Helper()
	for j := range want {
		testkit.CheckSlice(t, fmt.Sprintf("%s row %d", what, j), got[j], want[j], 1e-15)
	}
}

// Holm with three hypotheses, by hand: p = .01 .04 .03, α = .05. Step 1:
// H1 (.01 <= .05/3) rejected at .05/3, passing .05/6 to each of H2, H3:
// weights 1/2 1/2, edges 1 between them. Step 2: H3 (.03 <= .025)? no;
// H2? no: stop. Adjusted (Holm): .03, .06, .06.
func TestHolmGraphHand(t *testing.T) {
	gr, err := HolmGraph(3)
	if err != nil {
		t.Fatal(err)
	}
	r, err := gr.Test([]float64{0.01, 0.04, 0.03}, 0.05)
	if err != nil {
		t.Fatal(err)
	}
	wantBools(t, "holm", r.Rejected, true, false, false)
	if len(r.Steps) != 1 {
		t.Fatalf("steps %+v", r.Steps)
	}
	testkit.CheckClose(t, "level", r.Steps[0].Level, 0.05/3, 1e-15)
	testkit.CheckSlice(t, "passed", r.Steps[0].Passed, []float64{0, 0.05 / 6, 0.05 / 6}, 1e-15)
	testkit.CheckSlice(t, "weights", r.Steps[0].Weights, []float64{0, 0.5, 0.5}, 1e-15)
	wantG(t, "graph", r.Steps[0].Transitions, [][]float64{{0, 0, 0}, {0, 0, 1}, {0, 1, 0}})
	testkit.CheckSlice(t, "adjusted", r.Adjusted, []float64{0.03, 0.06, 0.06}, 1e-15)
	// at α = .07 all three go: .01, then .03 <= .035, then .04 <= .07.
	r, err = gr.Test([]float64{0.01, 0.04, 0.03}, 0.07)
	if err != nil {
		t.Fatal(err)
	}
	wantBools(t, "holm .07", r.Rejected, true, true, true)
	if len(r.Steps) != 3 || r.Steps[1].Rejected != 2 || r.Steps[2].Rejected != 1 {
		t.Fatalf("steps %+v", r.Steps)
	}
	testkit.CheckClose(t, "last level", r.Steps[2].Level, 0.07, 1e-15)
}

// Edge cases: a zero-weight hypothesis with p = 0 is not rejected until
// weight reaches it; g_lj g_jl = 1 cycles; inputs not modified.
func TestGraphEdges(t *testing.T) {
	gr, err := FixedSequenceGraph(3)
	if err != nil {
		t.Fatal(err)
	}
	p := []float64{0.5, 0, 0}
	r, err := gr.Test(p, 0.05)
	if err != nil {
		t.Fatal(err)
	}
	wantBools(t, "not reached", r.Rejected, false, false, false)
	testkit.CheckSlice(t, "not reached adjusted", r.Adjusted, []float64{0.5, 0.5, 0.5}, 0)
	if p[1] != 0 || p[0] != 0.5 {
		t.Error("p modified")
	}
	// Two hypotheses passing all to each other (g12 g21 = 1): after one is
	// rejected the other has weight 1 and no edges.
	w := []float64{0.5, 0.5}
	g := mat.NewDense(2, 2, []float64{0, 1, 1, 0})
	gr, err = NewGraph(w, g)
	if err != nil {
		t.Fatal(err)
	}
	w[0] = 7
	g.Set(0, 1, 9)
	if gw := gr.Weights(); gw[0] != 0.5 || gr.Transitions().At(0, 1) != 1 {
		t.Error("graph keeps the caller's slices")
	}
	r, err = gr.Test([]float64{0.02, 0.04}, 0.05)
	if err != nil {
		t.Fatal(err)
	}
	wantBools(t, "pair", r.Rejected, true, true)
	testkit.CheckSlice(t, "pair weights", r.Steps[0].Weights, []float64{0, 1}, 0)
	wantG(t, "pair graph", r.Steps[0].Transitions, [][]float64{{0, 0}, {0, 0}})
	// One hypothesis.
	gr, err = HolmGraph(1)
	if err != nil {
		t.Fatal(err)
	}
	r, err = gr.Test([]float64{0.03}, 0.05)
	if err != nil {
		t.Fatal(err)
	}
	wantBools(t, "one", r.Rejected, true)
	testkit.CheckSlice(t, "one adjusted", r.Adjusted, []float64{0.03}, 0)
}

func TestGraphErrors(t *testing.T) {
	ok := mat.NewDense(2, 2, []float64{0, 1, 1, 0})
	for name, c := range map[string]struct {
		w []float64
		g mat.Matrix
	}{
		"no hypotheses":   {nil, mat.NewDense(1, 1, nil)},
		"dims":            {[]float64{0.5, 0.5}, mat.NewDense(3, 3, nil)},
		"weights above 1": {[]float64{0.6, 0.5}, ok},
		"negative weight": {[]float64{1.2, -0.2}, ok},
		"NaN weight":      {[]float64{math.NaN(), 0.5}, ok},
		"row above 1":     {[]float64{0.5, 0.5}, mat.NewDense(3, 3, []float64{0, 0.6, 0.5, 0, 0, 0, 0, 0, 0})},
		"negative edge":   {[]float64{0.5, 0.5}, mat.NewDense(2, 2, []float64{0, -0.1, 1, 0})},
		"NaN edge":        {[]float64{0.5, 0.5}, mat.NewDense(2, 2, []float64{0, math.NaN(), 1, 0})},
		"diagonal":        {[]float64{0.5, 0.5}, mat.NewDense(2, 2, []float64{0.2, 0.8, 1, 0})},
	} {
		if name == "row above 1" {
			c.w = []float64{0.3, 0.3, 0.3}
		}
		if _, err := NewGraph(c.w, c.g); err == nil {
			t.Errorf("%s accepted", name)
		} else {
			t.Logf("%s: %v", name, err)
		}
	}
	gr, _ := NewGraph([]float64{0.5, 0.5}, ok)
	for name, p := range map[string][]float64{"NaN p": {math.NaN(), 0.1}, "length": {0.1}, "above 1": {0.1, 2}} {
		if _, err := gr.Test(p, 0.05); err == nil {
			t.Errorf("%s accepted", name)
		}
	}
	for _, a := range []float64{0, 1, math.NaN(), -0.1} {
		if _, err := gr.Test([]float64{0.1, 0.1}, a); err == nil {
			t.Errorf("alpha %v accepted", a)
		}
	}
	if _, err := gr.IntersectionWeights([]int{2}); err == nil {
		t.Error("hypothesis outside the graph accepted")
	}
	if _, err := HolmGraph(0); err == nil {
		t.Error("empty holm graph accepted")
	}
	if _, err := FallbackGraph(nil); err == nil {
		t.Error("empty fallback graph accepted")
	}
}
