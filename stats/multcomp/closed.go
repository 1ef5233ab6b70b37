package multcomp

import (
	"fmt"
	"math"
	"sort"
)

// IntersectionTest returns the p-value of a local level-α test of the
// intersection hypothesis H_I = ∩_{i∈I} H_i; set holds the indices of I,
// sorted and never empty. It must not keep or modify set. An error, or a
// p-value outside [0, 1], stops the closed test with that error.
type IntersectionTest func(set []int) (float64, error)

// MaxClosedHypotheses is the largest number of hypotheses ClosedTest
// accepts: it tests and keeps all 2^m - 1 intersections (65535 at m = 16).
const MaxClosedHypotheses = 16

// Closure is the result of a closed test (Marcus, Peritz & Gabriel 1976
// Biometrika 63:655): H_i is rejected at level α when every intersection
// hypothesis H_I with i ∈ I is rejected by its local level-α test, which
// controls the family-wise error rate at α in the strong sense.
type Closure struct {
	// Adjusted[i] = max over the tested I ∋ i of p_I: the closed test at
	// level α rejects H_i exactly when Adjusted[i] <= α.
	Adjusted []float64
	// Sets are the intersections tested (each sorted) and P their local
	// p-values, in the order tested.
	Sets [][]int
	P    []float64
	// Worst[i] is the index in Sets of the first intersection whose
	// p-value is Adjusted[i].
	Worst []int
}

// ClosedTest is the closed test of m hypotheses with every one of the
// 2^m - 1 intersections tested by test (sets in the order of their bit
// masks: {0}, {1}, {0 1}, {2}, ...). With BonferroniIntersection it is
// Holm's procedure, with SidakIntersection Holm-Šidák's. m must be between
// 1 and MaxClosedHypotheses.
func ClosedTest(m int, test IntersectionTest) (*Closure, error) {
	if m < 1 || m > MaxClosedHypotheses {
		return nil, fmt.Errorf("closed test: %d hypotheses, need 1 to %d", m, MaxClosedHypotheses)
	}
	sets := make([][]int, 0, 1<<m-1)
	for mask := 1; mask < 1<<m; mask++ {
		var s []int
		for i := 0; i < m; i++ {
			if mask&(1<<i) != 0 {
				s = append(s, i)
			}
		}
		sets = append(sets, s)
	}
	return closure(m, sets, test)
}

// ClosedTestOver is the closed test of m hypotheses under logical
// constraints: only the intersections in sets are tested. sets must hold
// one index set for every distinct intersection hypothesis, that is every
// configuration of true hypotheses that can occur; an index set whose
// hypotheses being true forces others to be true stands for the same
// hypothesis as the larger set and may be left out (Shaffer 1986 JASA
// 81:826 §3; for all pairwise comparisons see PairwiseConfigurations).
// Every hypothesis must be in at least one set; indices must lie in
// [0, m) without repeats. sets is not modified.
func ClosedTestOver(m int, sets [][]int, test IntersectionTest) (*Closure, error) {
	if m < 1 {
		return nil, fmt.Errorf("closed test: %d hypotheses, need at least 1", m)
	}
	if len(sets) == 0 {
		return nil, fmt.Errorf("closed test: no intersections to test")
	}
	cover := make([]bool, m)
	own := make([][]int, len(sets))
	for k, s := range sets {
		if len(s) == 0 {
			return nil, fmt.Errorf("closed test: intersection %d is empty", k)
		}
		c := append([]int(nil), s...)
		sort.Ints(c)
		for n, i := range c {
			if i < 0 || i >= m {
				return nil, fmt.Errorf("closed test: intersection %d names hypothesis %d, outside 0..%d", k, i, m-1)
			}
			if n > 0 && c[n-1] == i {
				return nil, fmt.Errorf("closed test: intersection %d names hypothesis %d twice", k, i)
			}
			cover[i] = true
		}
		own[k] = c
	}
	for i, ok := range cover {
		if !ok {
			return nil, fmt.Errorf("closed test: hypothesis %d is in no intersection", i)
		}
	}
	return closure(m, own, test)
}

// closure tests the validated sets and takes the maxima.
func closure(m int, sets [][]int, test IntersectionTest) (*Closure, error) {
	c := &Closure{Adjusted: make([]float64, m), Sets: sets, P: make([]float64, len(sets)), Worst: make([]int, m)}
	for i := range c.Worst {
		c.Worst[i] = -1
	}
	arg := make([]int, 0, m)
	for k, s := range sets {
		arg = append(arg[:0], s...)
		p, err := test(arg)
		if err != nil {
			return nil, fmt.Errorf("closed test: intersection %v: %w", s, err)
		}
		if math.IsNaN(p) || p < 0 || p > 1 {
			return nil, fmt.Errorf("closed test: intersection %v has p-value %v, not in [0, 1]", s, p)
		}
		c.P[k] = p
		for _, i := range s {
			if c.Worst[i] < 0 || p > c.Adjusted[i] {
				c.Adjusted[i], c.Worst[i] = p, k
			}
		}
	}
	return c, nil
}

// checkP returns an error naming the first p-value that is NaN or outside
// [0, 1].
func checkP(what string, p []float64) error {
	for i, v := range p {
		if math.IsNaN(v) || v < 0 || v > 1 {
			return fmt.Errorf("%s: p-value %d is %v, not in [0, 1]", what, i, v)
		}
	}
	return nil
}

// BonferroniIntersection returns the Bonferroni test of intersections of
// the hypotheses with p-values p, p_I = min(1, |I| min_{i∈I} p_i); its
// closed test is Holm's procedure (Holm 1979). p is copied.
func BonferroniIntersection(p []float64) (IntersectionTest, error) {
	if err := checkP("bonferroni intersection test", p); err != nil {
		return nil, err
	}
	q := append([]float64(nil), p...)
	return func(set []int) (float64, error) {
		lo, err := minAt(q, set)
		if err != nil {
			return 0, err
		}
		return math.Min(1, float64(len(set))*lo), nil
	}, nil
}

// SidakIntersection returns the Šidák test of intersections,
// p_I = 1 - (1 - min_{i∈I} p_i)^|I| (Šidák 1967); its closed test is
// Holm-Šidák. p is copied.
func SidakIntersection(p []float64) (IntersectionTest, error) {
	if err := checkP("sidak intersection test", p); err != nil {
		return nil, err
	}
	q := append([]float64(nil), p...)
	return func(set []int) (float64, error) {
		lo, err := minAt(q, set)
		if err != nil {
			return 0, err
		}
		return sidakP(lo, len(set)), nil
	}, nil
}

// minAt is the smallest p[i] over set.
func minAt(p []float64, set []int) (float64, error) {
	lo := math.Inf(1)
	for _, i := range set {
		if i < 0 || i >= len(p) {
			return 0, fmt.Errorf("hypothesis %d outside the %d p-values", i, len(p))
		}
		lo = math.Min(lo, p[i])
	}
	return lo, nil
}
