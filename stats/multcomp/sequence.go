package multcomp

import (
	"fmt"
	"math"
)

// weightSlack is how far declared weights (or the weights leaving one
// hypothesis) may sum above 1 and still be accepted: the rounding of
// decimal inputs such as 0.1 + 0.2 + 0.7.
const weightSlack = 1e-12

// Sequence is the result of a fixed-sequence or fallback test of
// hypotheses H_1, ..., H_m in their declared order.
type Sequence struct {
	Alpha   float64
	P       []float64 // unadjusted p-values (a copy)
	Weights []float64 // declared weights (a copy); fixed sequence: 1, 0, ..., 0
	// Level[i] is the level H_i is tested at: α times its weight plus
	// the weights of the unbroken run of rejected hypotheses just before
	// it. 0 means H_i is not tested (a fixed sequence stopped before it).
	Level []float64
	// Rejected[i] is p_i <= Level[i] with Level[i] > 0.
	Rejected []bool
	// Adjusted[i] is the smallest α at which H_i is rejected (1 when no
	// α below 1 rejects it).
	Adjusted []float64
}

// FixedSequence tests H_1, H_2, ... in order, each at the full level
// alpha, and stops at the first that is not rejected (hierarchical
// testing; Maurer, Hothorn & Lehmacher 1995, and Westfall & Krishen 2001
// J Stat Plan Inference 99:25, recalled from memory). The adjusted
// p-values are p̃_i = max_{j<=i} p_j. It is the fallback procedure with
// weights 1, 0, ..., 0. alpha must be in (0, 1); p is not modified.
func FixedSequence(p []float64, alpha float64) (*Sequence, error) {
	if len(p) == 0 {
		return nil, fmt.Errorf("fixed sequence: no hypotheses")
	}
	w := make([]float64, len(p))
	w[0] = 1
	s, err := fallback("fixed sequence", p, w, alpha)
	if err != nil {
		return nil, err
	}
	return s, nil
}

// Fallback is Wiens's (2003) Pharm Stat 2:211 fallback procedure with
// declared weights w (w_i >= 0, Σ w_i <= 1): H_1 is tested at α w_1, and
// H_i at α w_i plus the level of H_{i-1} when H_{i-1} is rejected, so the
// level of a rejected hypothesis passes down the sequence:
//
//	α_i = α (w_r + ... + w_i),   H_r, ..., H_{i-1} rejected, H_{r-1} not.
//
// It is a closed test (Wiens & Dmitrienko 2005 J Biopharm Stat 15:929)
// and the graphical test of FallbackGraph(w). The adjusted p-value is the
// smallest α that rejects H_i,
//
//	p̃_i = min_{r<=i} max( p_i / (w_r + ... + w_i), max_{r<=j<i} p̃_j ),
//
// capped at 1 (a zero sum gives 1). alpha must be in (0, 1); p and w are
// not modified.
func Fallback(p, w []float64, alpha float64) (*Sequence, error) {
	return fallback("fallback", p, w, alpha)
}

func fallback(what string, p, w []float64, alpha float64) (*Sequence, error) {
	m := len(p)
	if m == 0 {
		return nil, fmt.Errorf("%s: no hypotheses", what)
	}
	if len(w) != m {
		return nil, fmt.Errorf("%s: %d weights for %d p-values", what, len(w), m)
	}
	if err := checkAlpha(what, alpha); err != nil {
		return nil, err
	}
	if err := checkP(what, p); err != nil {
		return nil, err
	}
	if err := checkWeights(what, w); err != nil {
		return nil, err
	}
	s := &Sequence{Alpha: alpha, P: append([]float64(nil), p...), Weights: append([]float64(nil), w...),
		Level: make([]float64, m), Rejected: make([]bool, m), Adjusted: make([]float64, m)}
	carry := 0.0 // weight of the run of rejected hypotheses just before i
	for i := range p {
		s.Level[i] = alpha * (carry + w[i])
		s.Rejected[i] = s.Level[i] > 0 && p[i] <= s.Level[i]
		if s.Rejected[i] {
			carry += w[i]
		} else {
			carry = 0
		}
	}
	for i := range p {
		best := math.Inf(1)
		sum, before := 0.0, 0.0 // w_r + ... + w_i, max_{r<=j<i} p̃_j
		for r := i; r >= 0; r-- {
			sum += w[r]
			if r < i {
				before = math.Max(before, s.Adjusted[r])
			}
			q := math.Inf(1)
			if sum > 0 {
				q = p[i] / sum
			}
			best = math.Min(best, math.Max(q, before))
		}
		s.Adjusted[i] = math.Min(1, best)
	}
	return s, nil
}

// checkAlpha refuses a level outside (0, 1).
func checkAlpha(what string, alpha float64) error {
	if math.IsNaN(alpha) || alpha <= 0 || alpha >= 1 {
		return fmt.Errorf("%s: alpha is %v, not in (0, 1)", what, alpha)
	}
	return nil
}

// checkWeights refuses weights that are negative, not finite or sum above
// 1 (beyond weightSlack).
func checkWeights(what string, w []float64) error {
	sum := 0.0
	for i, v := range w {
		switch {
		case math.IsNaN(v) || math.IsInf(v, 0):
			return fmt.Errorf("%s: weight %d is %v, not a finite number", what, i, v)
		case v < 0:
			return fmt.Errorf("%s: weight %d is %v, negative", what, i, v)
		}
		sum += v
	}
	if sum > 1+weightSlack {
		return fmt.Errorf("%s: weights sum to %v, above 1", what, sum)
	}
	return nil
}
