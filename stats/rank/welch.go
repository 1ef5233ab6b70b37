package rank

import (
	"fmt"
	"math"

	"furrow/stats/dist"
)

// WelchResult is the outcome of Welch's heteroscedastic one-way ANOVA.
type WelchResult struct {
	// F is Welch's statistic.
	F float64
	// DF1 = k-1 and DF2 the (non-integer) denominator degrees of freedom.
	DF1, DF2 float64
	// P is the upper-tail F(DF1, DF2) p-value.
	P float64
	// N is the total number of observations; K the number of groups.
	N, K int
}

// Welch tests equality of k >= 2 group means without assuming equal
// variances (Welch 1951, Biometrika 38:330). With w_i = n_i/s²_i,
// W = Σ w_i, x̃ = Σ w_i x̄_i / W and Λ = Σ (1 - w_i/W)²/(n_i - 1):
//
//	F   = [Σ w_i (x̄_i - x̃)² / (k-1)] / [1 + 2(k-2)Λ/(k²-1)]
//	ν₂  = (k²-1) / (3Λ)
//
// referred to F(k-1, ν₂). Every group needs at least two observations and a
// non-zero variance. The inputs are not modified.
func Welch(groups [][]float64) (WelchResult, error) {
	k := len(groups)
	if k < 2 {
		return WelchResult{}, fmt.Errorf("welch: %w: %d groups, need at least 2", ErrTooFew, k)
	}
	means := make([]float64, k)
	w := make([]float64, k)
	var sw float64
	n := 0
	for g, x := range groups {
		if len(x) < 2 {
			return WelchResult{}, fmt.Errorf("welch: %w: group %d has %d observation(s), need at least 2", ErrTooFew, g+1, len(x))
		}
		if err := checkFinite(x); err != nil {
			return WelchResult{}, fmt.Errorf("welch: group %d: %w", g+1, err)
		}
		m, ss := meanSS(x)
		v := ss / float64(len(x)-1)
		if !(v > 0) || math.Sqrt(v) <= 1e-14*math.Abs(m) {
			return WelchResult{}, fmt.Errorf("welch: group %d has zero variance", g+1)
		}
		means[g] = m
		w[g] = float64(len(x)) / v
		sw += w[g]
		n += len(x)
	}
	var xt float64
	for g := range means {
		xt += w[g] * means[g]
	}
	xt /= sw
	var num, lam float64
	for g, x := range groups {
		d := means[g] - xt
		num += w[g] * d * d
		h := 1 - w[g]/sw
		lam += h * h / float64(len(x)-1)
	}
	kf := float64(k)
	res := WelchResult{DF1: kf - 1, N: n, K: k}
	res.F = (num / (kf - 1)) / (1 + 2*(kf-2)*lam/(kf*kf-1))
	res.DF2 = (kf*kf - 1) / (3 * lam)
	res.P = dist.FUpper(res.F, res.DF1, res.DF2)
	return res, nil
}

// meanSS returns the mean and the sum of squared deviations by two passes
// with a correction term.
func meanSS(x []float64) (mean, ss float64) {
	var s float64
	for _, v := range x {
		s += v
	}
	mean = s / float64(len(x))
	var c float64
	for _, v := range x {
		d := v - mean
		ss += d * d
		c += d
	}
	return mean, ss - c*c/float64(len(x))
}
