package rank

import (
	"errors"
	"fmt"
	"math"
	"sort"
)

// ErrTooFew is returned when there are too few observations for a test.
var ErrTooFew = errors.New("too few observations")

// ErrAllTied is returned when every value is tied, so the rank statistic
// has zero variance.
var ErrAllTied = errors.New("all values are tied")

// Alternative selects the alternative hypothesis of a one- or two-sample
// test.
type Alternative int

const (
	// TwoSided tests for a shift in either direction.
	TwoSided Alternative = iota
	// Greater tests whether the first sample (or the differences) is
	// shifted upwards.
	Greater
	// Less tests whether the first sample (or the differences) is shifted
	// downwards.
	Less
)

// String returns the name of the alternative.
func (a Alternative) String() string {
	switch a {
	case TwoSided:
		return "two-sided"
	case Greater:
		return "greater"
	case Less:
		return "less"
	}
	return fmt.Sprintf("Alternative(%d)", int(a))
}

// Method selects how the p-value of SignedRank and RankSum is computed.
type Method int

const (
	// MethodAuto uses the exact distribution for small samples without
	// ties and the normal approximation otherwise.
	MethodAuto Method = iota
	// MethodExact forces the exact distribution.
	MethodExact
	// MethodNormal forces the normal approximation.
	MethodNormal
)

// ExactMaxN is the largest sample size for which MethodAuto uses the exact
// distribution.
const ExactMaxN = 50

// Options controls SignedRank, RankSum and VanElteren.
type Options struct {
	// Alternative is the alternative hypothesis (default TwoSided).
	Alternative Alternative
	// Method chooses exact or normal p-values (default MethodAuto).
	Method Method
	// NoContinuity turns off the continuity correction of the normal
	// approximation (it is on by default). VanElteren never applies one.
	NoContinuity bool
	// Mu is the location shift under the null hypothesis (signed-rank:
	// median of the differences; rank-sum: shift of x relative to y).
	Mu float64
}

// checkFinite returns an error naming the first value that is NaN or
// infinite.
func checkFinite(x []float64) error {
	for i, v := range x {
		if math.IsNaN(v) || math.IsInf(v, 0) {
			return fmt.Errorf("value %d is %v", i+1, v)
		}
	}
	return nil
}

// midranks returns the ranks of x (1-based, ties get the mean of their
// ranks) and Σ(t³ - t) over the tie groups. x is not modified.
func midranks(x []float64) (r []float64, ties float64) {
	n := len(x)
	idx := make([]int, n)
	for i := range idx {
		idx[i] = i
	}
	sort.SliceStable(idx, func(a, b int) bool { return x[idx[a]] < x[idx[b]] })
	r = make([]float64, n)
	for i := 0; i < n; {
		j := i + 1
		for j < n && x[idx[j]] == x[idx[i]] {
			j++
		}
		mid := float64(i+j+1) / 2 // mean of ranks i+1..j
		for k := i; k < j; k++ {
			r[idx[k]] = mid
		}
		if t := float64(j - i); t > 1 {
			ties += t*t*t - t
		}
		i = j
	}
	return r, ties
}

// normalP returns the p-value of a standard normal z for the alternative.
func normalP(z float64, alt Alternative) float64 {
	switch alt {
	case Greater:
		return 0.5 * math.Erfc(z/math.Sqrt2)
	case Less:
		return 0.5 * math.Erfc(-z/math.Sqrt2)
	default:
		return math.Min(1, math.Erfc(math.Abs(z)/math.Sqrt2))
	}
}

// continuity returns the continuity correction for a statistic whose
// centred value is d.
func continuity(d float64, alt Alternative, off bool) float64 {
	if off {
		return 0
	}
	switch alt {
	case Greater:
		return 0.5
	case Less:
		return -0.5
	default:
		switch {
		case d > 0:
			return 0.5
		case d < 0:
			return -0.5
		}
		return 0
	}
}
