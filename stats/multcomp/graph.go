package multcomp

import (
	"fmt"
	"math"

	"gonum.org/v1/gonum/mat"
)

// Graph is a Bonferroni-based graphical multiple test procedure (Bretz,
// Maurer, Brannath & Posch 2009 Stat Med 28:586): each hypothesis H_i
// holds a share w_i of the level α, and when H_j is rejected its share
// moves to the others along the edges of a directed graph, g_jl of it to
// H_l. The weights satisfy w_i >= 0, Σ w_i <= 1; the transition matrix
// G = (g_jl) has g_jl >= 0, a zero diagonal and rows summing to at most
// 1. A Graph is built by NewGraph (or HolmGraph, FixedSequenceGraph,
// FallbackGraph) and never changes.
type Graph struct {
	w []float64
	g [][]float64
}

// NewGraph validates and copies initial weights w and transition matrix
// g (m×m for m = len(w) >= 1). It refuses negative, NaN or infinite
// entries, weights summing above 1, rows of g summing above 1 and a
// non-zero diagonal; sums may exceed 1 by 1e-12, the rounding of decimal
// inputs.
func NewGraph(w []float64, g mat.Matrix) (*Graph, error) {
	m := len(w)
	if m == 0 {
		return nil, fmt.Errorf("graph: no hypotheses")
	}
	if r, c := g.Dims(); r != m || c != m {
		return nil, fmt.Errorf("graph: %d weights, transition matrix is %d×%d", m, r, c)
	}
	if err := checkWeights("graph", w); err != nil {
		return nil, err
	}
	gr := &Graph{w: append([]float64(nil), w...), g: make([][]float64, m)}
	for j := 0; j < m; j++ {
		gr.g[j] = make([]float64, m)
		sum := 0.0
		for l := 0; l < m; l++ {
			v := g.At(j, l)
			switch {
			case math.IsNaN(v) || math.IsInf(v, 0):
				return nil, fmt.Errorf("graph: transition %d→%d is %v, not a finite number", j, l, v)
			case v < 0:
				return nil, fmt.Errorf("graph: transition %d→%d is %v, negative", j, l, v)
			case j == l && v != 0:
				return nil, fmt.Errorf("graph: transition %d→%d (diagonal) is %v, must be 0", j, l, v)
			}
			gr.g[j][l] = v
			sum += v
		}
		if sum > 1+weightSlack {
			return nil, fmt.Errorf("graph: transitions from %d sum to %v, above 1", j, sum)
		}
	}
	return gr, nil
}

// HolmGraph is Holm's procedure as a graph: weights 1/m, g_jl = 1/(m-1).
func HolmGraph(m int) (*Graph, error) {
	if m < 1 {
		return nil, fmt.Errorf("holm graph: %d hypotheses, need at least 1", m)
	}
	w := make([]float64, m)
	g := mat.NewDense(m, m, nil)
	for j := range w {
		w[j] = 1 / float64(m)
		for l := 0; l < m; l++ {
			if l != j {
				g.Set(j, l, 1/float64(m-1))
			}
		}
	}
	return NewGraph(w, g)
}

// FixedSequenceGraph is the fixed-sequence test as a graph: weights
// 1, 0, ..., 0 and g_{j,j+1} = 1.
func FixedSequenceGraph(m int) (*Graph, error) {
	if m < 1 {
		return nil, fmt.Errorf("fixed sequence graph: %d hypotheses, need at least 1", m)
	}
	w := make([]float64, m)
	w[0] = 1
	return FallbackGraph(w)
}

// FallbackGraph is Wiens's fallback procedure with weights w as a graph:
// g_{j,j+1} = 1, nothing leaves the last hypothesis.
func FallbackGraph(w []float64) (*Graph, error) {
	m := len(w)
	if m == 0 {
		return nil, fmt.Errorf("fallback graph: no hypotheses")
	}
	g := mat.NewDense(m, m, nil)
	for j := 0; j+1 < m; j++ {
		g.Set(j, j+1, 1)
	}
	return NewGraph(w, g)
}

// Len is the number of hypotheses.
func (gr *Graph) Len() int { return len(gr.w) }

// Weights returns a copy of the initial weights.
func (gr *Graph) Weights() []float64 { return append([]float64(nil), gr.w...) }

// Transitions returns a copy of the transition matrix.
func (gr *Graph) Transitions() *mat.Dense {
	m := len(gr.w)
	d := mat.NewDense(m, m, nil)
	for j := range gr.g {
		d.SetRow(j, gr.g[j])
	}
	return d
}

// graphState is a graph while hypotheses are being removed.
type graphState struct {
	w      []float64
	g      [][]float64
	active []bool
}

func (gr *Graph) state() *graphState {
	s := &graphState{w: append([]float64(nil), gr.w...), g: make([][]float64, len(gr.w)), active: make([]bool, len(gr.w))}
	for j := range gr.g {
		s.g[j] = append([]float64(nil), gr.g[j]...)
		s.active[j] = true
	}
	return s
}

// remove takes H_j out of the graph, Bretz et al. (2009) Algorithm 1,
// step (ii): for l, k still in the graph, l != k,
//
//	w_l ← w_l + w_j g_jl
//	g_lk ← (g_lk + g_lj g_jk) / (1 - g_lj g_jl)   (0 when g_lj g_jl = 1)
//
// and H_j's weight, row and column become 0.
func (s *graphState) remove(j int) {
	m := len(s.w)
	wj := s.w[j]
	ng := make([][]float64, m)
	for l := 0; l < m; l++ {
		ng[l] = make([]float64, m)
		if !s.active[l] || l == j {
			continue
		}
		s.w[l] += wj * s.g[j][l]
		d := 1 - s.g[l][j]*s.g[j][l]
		for k := 0; k < m; k++ {
			if k == l || k == j || !s.active[k] || d <= 0 {
				continue
			}
			ng[l][k] = (s.g[l][k] + s.g[l][j]*s.g[j][k]) / d
		}
	}
	s.w[j] = 0
	s.active[j] = false
	s.g = ng
}

// ratio is p_j / w_j, +Inf for a zero weight (such a hypothesis cannot
// be rejected).
func ratio(p, w float64) float64 {
	if w <= 0 {
		return math.Inf(1)
	}
	return p / w
}

// GraphStep is one rejection of the sequentially rejective algorithm.
type GraphStep struct {
	Rejected int     // the hypothesis rejected (index)
	P        float64 // its p-value
	Weight   float64 // its weight when rejected
	Level    float64 // α·Weight, the level it was rejected at (P <= Level)
	// Passed[l] = α·Weight·g_jl is the level passed on to H_l (0 for
	// hypotheses not in the graph any more).
	Passed []float64
	// Weights and Transitions are the graph after the step; rejected
	// hypotheses have weight 0 and zero rows and columns.
	Weights     []float64
	Transitions [][]float64
}

// GraphResult is a graphical test at level Alpha.
type GraphResult struct {
	Alpha    float64
	P        []float64 // unadjusted p-values (a copy)
	Rejected []bool
	// Adjusted[i] is the smallest α at which the procedure rejects H_i
	// (Bretz et al. 2009, adjusted p-values), at most 1; H_i is rejected
	// at Alpha exactly when Adjusted[i] <= Alpha, to rounding.
	Adjusted []float64
	// Steps are the rejections in the order made: at each step the
	// hypothesis with the smallest p_j/w_j among those with
	// p_j <= α w_j, the lowest index on a tie. (The set rejected does not
	// depend on the order; Bretz et al. 2009.)
	Steps []GraphStep
	// Levels[i] = α w_i in the final graph: the level each hypothesis not
	// rejected was last tested at (0 for rejected ones).
	Levels []float64
}

// Test runs the sequentially rejective graphical test, Bretz et al.
// (2009) Algorithm 1, at level alpha (in (0, 1)): while some H_j in the
// graph has p_j <= α w_j (w_j > 0), reject it and remove it from the
// graph, which passes its weight on. It records each step and the
// adjusted p-values. p must hold one value in [0, 1] per hypothesis; it
// is not modified.
func (gr *Graph) Test(p []float64, alpha float64) (*GraphResult, error) {
	if err := checkAlpha("graphical test", alpha); err != nil {
		return nil, err
	}
	adj, err := gr.AdjustedP(p)
	if err != nil {
		return nil, err
	}
	m := len(gr.w)
	r := &GraphResult{Alpha: alpha, P: append([]float64(nil), p...), Rejected: make([]bool, m), Adjusted: adj, Levels: make([]float64, m)}
	s := gr.state()
	for {
		j, best := -1, math.Inf(1)
		for i := 0; i < m; i++ {
			if s.active[i] && s.w[i] > 0 && p[i] <= alpha*s.w[i] {
				if q := ratio(p[i], s.w[i]); q < best {
					j, best = i, q
				}
			}
		}
		if j < 0 {
			break
		}
		st := GraphStep{Rejected: j, P: p[j], Weight: s.w[j], Level: alpha * s.w[j], Passed: make([]float64, m)}
		for l := 0; l < m; l++ {
			if s.active[l] && l != j {
				st.Passed[l] = alpha * s.w[j] * s.g[j][l]
			}
		}
		s.remove(j)
		r.Rejected[j] = true
		st.Weights = append([]float64(nil), s.w...)
		st.Transitions = make([][]float64, m)
		for l := range s.g {
			st.Transitions[l] = append([]float64(nil), s.g[l]...)
		}
		r.Steps = append(r.Steps, st)
	}
	for i := range r.Levels {
		r.Levels[i] = alpha * s.w[i]
	}
	return r, nil
}

// AdjustedP returns the adjusted p-values of the graphical test (Bretz et
// al. 2009, adjusted p-values): repeatedly take the hypothesis with the
// smallest p_j/w_j in the current graph, give it
// max(p_j/w_j, the previous value), capped at 1, and remove it from the
// graph. A hypothesis left with weight 0 gets 1. p is not modified.
func (gr *Graph) AdjustedP(p []float64) ([]float64, error) {
	m := len(gr.w)
	if len(p) != m {
		return nil, fmt.Errorf("graphical test: %d p-values for %d hypotheses", len(p), m)
	}
	if err := checkP("graphical test", p); err != nil {
		return nil, err
	}
	out := make([]float64, m)
	s := gr.state()
	run := 0.0
	for n := 0; n < m; n++ {
		j, best := -1, math.Inf(1)
		for i := 0; i < m; i++ {
			if s.active[i] && (j < 0 || ratio(p[i], s.w[i]) < best) {
				j, best = i, ratio(p[i], s.w[i])
			}
		}
		run = math.Min(1, math.Max(run, best))
		out[j] = run
		s.remove(j)
	}
	return out, nil
}

// IntersectionWeights returns the weights w_j(J) of the intersection
// hypothesis H_J, J the sorted or unsorted indices in set: the weights
// after every hypothesis outside J has been removed from the graph (in
// any order; Bretz et al. 2009 §3). They are 0 outside J and sum to at
// most 1. The graphical test is the closed test of these weighted
// Bonferroni tests (IntersectionTest).
func (gr *Graph) IntersectionWeights(set []int) ([]float64, error) {
	m := len(gr.w)
	in := make([]bool, m)
	for _, i := range set {
		if i < 0 || i >= m {
			return nil, fmt.Errorf("graph: hypothesis %d outside 0..%d", i, m-1)
		}
		in[i] = true
	}
	s := gr.state()
	for i := 0; i < m; i++ {
		if !in[i] {
			s.remove(i)
		}
	}
	return s.w, nil
}

// IntersectionTest returns the weighted Bonferroni test of the
// intersection hypotheses of the graph: p_J = min(1, min_{j∈J}
// p_j / w_j(J)), 1 when every weight is 0. ClosedTest with it gives the
// graph's adjusted p-values. p is copied.
func (gr *Graph) IntersectionTest(p []float64) (IntersectionTest, error) {
	if len(p) != len(gr.w) {
		return nil, fmt.Errorf("graph intersection test: %d p-values for %d hypotheses", len(p), len(gr.w))
	}
	if err := checkP("graph intersection test", p); err != nil {
		return nil, err
	}
	q := append([]float64(nil), p...)
	return func(set []int) (float64, error) {
		w, err := gr.IntersectionWeights(set)
		if err != nil {
			return 0, err
		}
		lo := 1.0
		for _, j := range set {
			lo = math.Min(lo, ratio(q[j], w[j]))
		}
		return lo, nil
	}, nil
}
