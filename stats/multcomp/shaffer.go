package multcomp

import (
	"fmt"
	"math"
	"sort"
)

// Limits on the number of means k of the pairwise procedures.
const (
	// MaxShafferClosedMeans bounds ShafferS2, ShafferClosed and
	// PairwiseConfigurations: the configurations are the Bell(k) - 1 set
	// partitions of the means with a group of two or more (115974 at
	// k = 10).
	MaxShafferClosedMeans = 10
	// MaxShafferMeans bounds ShafferS1 and PossibleTrueCounts (k = 100
	// has 4950 pairs).
	MaxShafferMeans = 100
)

// AllPairs returns the k(k-1)/2 pairs (i, j), i < j, of k means, ordered
// by i and then j: for means A, B, C, D the comparisons B-A, C-A, D-A,
// C-B, D-B, D-C, multcomp's order of Tukey contrasts. The p-values of
// ShafferS1 and ShafferClosed are in this order.
func AllPairs(k int) [][2]int {
	var out [][2]int
	for i := 0; i < k; i++ {
		for j := i + 1; j < k; j++ {
			out = append(out, [2]int{i, j})
		}
	}
	return out
}

// pairIndex is the position of (i, j), i < j, in AllPairs(k).
func pairIndex(i, j, k int) int { return i*(2*k-i-1)/2 + j - i - 1 }

// PossibleTrueCounts returns, in increasing order, the numbers of
// hypotheses μ_i = μ_j that can be true together among all pairwise
// comparisons of k means: the sums Σ C(k_g, 2) over the ways of splitting
// the k means into groups of equal means of sizes k_g. Shaffer's (1986
// JASA 81:826) recursion:
//
//	S(0) = S(1) = {0},   S(k) = ∪_{j=1..k} { C(j, 2) + x : x ∈ S(k-j) }
//
// (for k = 4: 0, 1, 2, 3, 6). k must be between 2 and MaxShafferMeans.
func PossibleTrueCounts(k int) ([]int, error) {
	if k < 2 || k > MaxShafferMeans {
		return nil, fmt.Errorf("possible numbers of true hypotheses: %d means, need 2 to %d", k, MaxShafferMeans)
	}
	s := make([][]bool, k+1)
	s[0] = []bool{true}
	for n := 1; n <= k; n++ {
		s[n] = make([]bool, n*(n-1)/2+1)
		for j := 1; j <= n; j++ {
			c := j * (j - 1) / 2
			for x, ok := range s[n-j] {
				if ok {
					s[n][c+x] = true
				}
			}
		}
	}
	var out []int
	for x, ok := range s[k] {
		if ok {
			out = append(out, x)
		}
	}
	return out, nil
}

// PairwiseConfigurations returns the configurations of true hypotheses
// that can occur among all pairwise comparisons of k means: for each way
// of splitting the means into groups of equal means, other than all
// groups of one, the indices (into AllPairs(k), sorted) of the pairs
// within a group. These are the distinct intersection hypotheses of the
// family (Shaffer 1986 §3), listed in the order of the restricted growth
// strings of the splits. k must be between 2 and MaxShafferClosedMeans.
func PairwiseConfigurations(k int) ([][]int, error) {
	if k < 2 || k > MaxShafferClosedMeans {
		return nil, fmt.Errorf("pairwise configurations: %d means, need 2 to %d", k, MaxShafferClosedMeans)
	}
	var out [][]int
	a := make([]int, k)   // group of each mean: a restricted growth string
	top := make([]int, k) // top[i] = max(a[0..i])
	var walk func(i int)
	walk = func(i int) {
		if i == k {
			var set []int
			for x := 0; x < k; x++ {
				for y := x + 1; y < k; y++ {
					if a[x] == a[y] {
						set = append(set, pairIndex(x, y, k))
					}
				}
			}
			if len(set) > 0 {
				out = append(out, set)
			}
			return
		}
		for g := 0; g <= top[i-1]+1; g++ {
			a[i] = g
			top[i] = max(top[i-1], g)
			walk(i + 1)
		}
	}
	walk(1)
	return out, nil
}

// ShafferResult is an adjustment of all pairwise comparisons of k means
// that uses their logical constraints.
type ShafferResult struct {
	K        int
	Pairs    [][2]int  // AllPairs(K), the order of P and Adjusted
	P        []float64 // unadjusted p-values (a copy)
	Adjusted []float64
	// T, for ShafferS1 and ShafferS2, is at each comparison the
	// multiplier t_j of its rank j (1 for the smallest p-value): for S1
	// the largest number of hypotheses that can be true when j - 1 of
	// them are false, for S2 the size of the largest configuration of
	// true hypotheses that contains it and none of lower rank.
	T []int
	// Closure, for ShafferClosed, is the closed test over the
	// configurations: each set, its Bonferroni p-value and the worst for
	// each comparison.
	Closure *Closure
}

// ShafferS1 is Shaffer's (1986) modified sequentially rejective Bonferroni
// procedure, method 1, for all pairwise comparisons of k means (p in the
// order of AllPairs(k)). Holm's step-down with the divisor m - j + 1 of
// step j replaced by
//
//	t_j = max{ t ∈ PossibleTrueCounts(k) : t <= m - j + 1 },
//
// the largest number of hypotheses that can be true given that j - 1 are
// false; the adjusted p-values are
//
//	p̃_(j) = max_{i<=j} min(1, t_i p_(i)).
//
// It depends only on the ordered p-values; ShafferS2, which uses which
// hypotheses were rejected, is never larger. k must be between 2 and
// MaxShafferMeans; p is not modified.
func ShafferS1(p []float64, k int) (*ShafferResult, error) {
	counts, err := PossibleTrueCounts(k)
	if err != nil {
		return nil, fmt.Errorf("shaffer: %w", err)
	}
	r, err := newShaffer(p, k)
	if err != nil {
		return nil, err
	}
	m := len(p)
	idx := make([]int, m)
	for i := range idx {
		idx[i] = i
	}
	sort.SliceStable(idx, func(a, b int) bool { return p[idx[a]] < p[idx[b]] })
	r.T = make([]int, m)
	run := 0.0
	c := len(counts) - 1
	for j, i := range idx {
		for counts[c] > m-j {
			c--
		}
		r.T[i] = counts[c]
		run = math.Max(run, math.Min(1, float64(counts[c])*p[i]))
		r.Adjusted[i] = run
	}
	return r, nil
}

// ShafferS2 is Shaffer's (1986) method 2 for all pairwise comparisons of
// k means (p in the order of AllPairs(k)) in its sharpened form: a
// step-down in which step j divides by the size of the largest
// configuration of true hypotheses that contains the j-th smallest
// p-value's hypothesis and none of those already rejected (Shaffer's t*_j
// counts configurations of the unrejected hypotheses; restricting them to
// those containing the hypothesis tested is the refinement of Royen 1989
// Biom J 31:905 and Westfall 1997 JASA 92:299, recalled from memory).
// With those multipliers t_j,
//
//	p̃_(j) = max_{i<=j} min(1, t_i p_(i)),
//
// which is what multcomp's summary(glht(...), test = adjusted("Shaffer"))
// computes. Hypotheses with exactly tied p-values all get the largest
// value of their tie, so the result does not depend on their order (a
// step-down would otherwise). k must be between 2 and
// MaxShafferClosedMeans; p is not modified.
func ShafferS2(p []float64, k int) (*ShafferResult, error) {
	sets, err := PairwiseConfigurations(k)
	if err != nil {
		return nil, fmt.Errorf("shaffer: %w", err)
	}
	r, err := newShaffer(p, k)
	if err != nil {
		return nil, err
	}
	m := len(p)
	idx := make([]int, m)
	for i := range idx {
		idx[i] = i
	}
	sort.SliceStable(idx, func(a, b int) bool { return p[idx[a]] < p[idx[b]] })
	rank := make([]int, m)
	for j, i := range idx {
		rank[i] = j
	}
	// A configuration is usable at step j exactly when its smallest rank
	// is j: it contains the j-th hypothesis and no earlier (rejected) one.
	t := make([]int, m)
	for _, s := range sets {
		lo := m
		for _, i := range s {
			lo = min(lo, rank[i])
		}
		t[lo] = max(t[lo], len(s))
	}
	r.T = make([]int, m)
	run := 0.0
	for j, i := range idx {
		r.T[i] = t[j]
		run = math.Max(run, math.Min(1, float64(t[j])*p[i]))
		r.Adjusted[i] = run
	}
	for j := m - 1; j > 0; j-- { // ties take the largest of their group
		if p[idx[j-1]] == p[idx[j]] {
			r.Adjusted[idx[j-1]] = r.Adjusted[idx[j]]
		}
	}
	return r, nil
}

// ShafferClosed is the full closed test of all pairwise comparisons of k
// means (p in the order of AllPairs(k)) with Bonferroni tests of the
// intersections that can occur, PairwiseConfigurations(k) (Marcus, Peritz
// & Gabriel 1976; Shaffer 1986 §3): the adjusted p-value of a comparison
// is the largest min(1, |I| min_{i∈I} p_i) over the configurations I
// that contain it. It rejects every hypothesis ShafferS2 rejects and
// sometimes more; unlike the step-down forms its adjusted p-values need
// not increase with the raw ones (a comparison whose configurations all
// hold a very small p-value can be rejected while one with a smaller
// p-value is not). k must be between 2 and MaxShafferClosedMeans; p is
// not modified.
func ShafferClosed(p []float64, k int) (*ShafferResult, error) {
	sets, err := PairwiseConfigurations(k)
	if err != nil {
		return nil, fmt.Errorf("shaffer: %w", err)
	}
	r, err := newShaffer(p, k)
	if err != nil {
		return nil, err
	}
	test, err := BonferroniIntersection(r.P)
	if err != nil {
		return nil, fmt.Errorf("shaffer: %w", err)
	}
	c, err := closure(len(p), sets, test)
	if err != nil {
		return nil, fmt.Errorf("shaffer: %w", err)
	}
	r.Closure = c
	copy(r.Adjusted, c.Adjusted)
	return r, nil
}

func newShaffer(p []float64, k int) (*ShafferResult, error) {
	m := k * (k - 1) / 2
	if len(p) != m {
		return nil, fmt.Errorf("shaffer: %d p-values, %d means have %d pairs", len(p), k, m)
	}
	if err := checkP("shaffer", p); err != nil {
		return nil, err
	}
	return &ShafferResult{K: k, Pairs: AllPairs(k), P: append([]float64(nil), p...), Adjusted: make([]float64, m)}, nil
}
