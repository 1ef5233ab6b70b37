package multcomp

import (
	"fmt"
	"math"
	"sort"
)

// Method is a p-value adjustment for multiplicity.
type Method string

// Adjustment methods.
const (
	None       Method = "none"
	Bonferroni Method = "bonferroni"         // family-wise error rate, any dependence
	Holm       Method = "holm"               // step-down FWER; Holm (1979) Scand J Stat 6:65
	Hochberg   Method = "hochberg"           // step-up FWER for independent or positively dependent tests; Hochberg (1988) Biometrika 75:800
	BH         Method = "benjamini-hochberg" // false discovery rate; Benjamini & Hochberg (1995) JRSS B 57:289
	// Sidak is the single-step Šidák (1967) JASA 62:626 adjustment: FWER
	// for independent tests, and for two-sided tests of jointly normal (or
	// t) statistics with any correlation (Šidák's inequality).
	Sidak Method = "sidak"
	// HolmSidak is its step-down form (Holm 1979 §5; Holland & Copenhaver
	// 1987 Biometrics 43:417), valid where Šidák's single step is.
	HolmSidak Method = "holm-sidak"
)

// Adjust returns multiplicity-adjusted p-values in the order of p, for m =
// len(p) hypotheses. With p_(1) <= ... <= p_(m) the sorted values:
//
//	bonferroni          min(1, m p_i)
//	holm                max_{j<=i} min(1, (m-j+1) p_(j))
//	hochberg            min_{j>=i} min(1, (m-j+1) p_(j))
//	benjamini-hochberg  min_{j>=i} min(1, m/j · p_(j))
//	sidak               1 - (1 - p_i)^m
//	holm-sidak          max_{j<=i} 1 - (1 - p_(j))^(m-j+1)
//
// The Šidák forms are computed as -expm1(k·log1p(-p)), which keeps full
// relative accuracy for small p (where 1 - (1 - p)^k loses digits).
// The running max/min makes the adjusted values monotone in the raw ones, so
// tied raw p-values receive equal adjusted values. p is not modified. Values
// outside [0, 1] or NaN are an error.
func Adjust(p []float64, method Method) ([]float64, error) {
	switch method {
	case None, Bonferroni, Holm, Hochberg, BH, Sidak, HolmSidak:
	default:
		return nil, fmt.Errorf("adjusting p-values: unknown method %q", method)
	}
	m := len(p)
	for i, v := range p {
		if math.IsNaN(v) || v < 0 || v > 1 {
			return nil, fmt.Errorf("adjusting p-values: value %d is %v, not in [0, 1]", i, v)
		}
	}
	out := make([]float64, m)
	if m == 0 {
		return out, nil
	}
	fm := float64(m)
	switch method {
	case None:
		copy(out, p)
		return out, nil
	case Bonferroni:
		for i, v := range p {
			out[i] = math.Min(1, fm*v)
		}
		return out, nil
	case Sidak:
		for i, v := range p {
			out[i] = sidakP(v, m)
		}
		return out, nil
	}
	idx := make([]int, m)
	for i := range idx {
		idx[i] = i
	}
	sort.SliceStable(idx, func(a, b int) bool { return p[idx[a]] < p[idx[b]] })
	switch method {
	case Holm:
		run := 0.0
		for r, i := range idx {
			run = math.Max(run, math.Min(1, float64(m-r)*p[i]))
			out[i] = run
		}
	case HolmSidak:
		run := 0.0
		for r, i := range idx {
			run = math.Max(run, sidakP(p[i], m-r))
			out[i] = run
		}
	case Hochberg, BH:
		run := 1.0
		for r := m - 1; r >= 0; r-- {
			i := idx[r]
			var v float64
			if method == Hochberg {
				v = float64(m-r) * p[i]
			} else {
				v = fm / float64(r+1) * p[i]
			}
			run = math.Min(run, math.Min(1, v))
			out[i] = run
		}
	}
	return out, nil
}

// sidakP is 1 - (1 - p)^k, the probability that the smallest of k
// independent uniform p-values is at most p (Šidák 1967).
func sidakP(p float64, k int) float64 {
	switch {
	case p >= 1:
		return 1
	case k == 1:
		return p
	}
	return math.Min(1, -math.Expm1(float64(k)*math.Log1p(-p)))
}
