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
)

// Adjust returns multiplicity-adjusted p-values in the order of p, for m =
// len(p) hypotheses. With p_(1) <= ... <= p_(m) the sorted values:
//
//	bonferroni          min(1, m p_i)
//	holm                max_{j<=i} min(1, (m-j+1) p_(j))
//	hochberg            min_{j>=i} min(1, (m-j+1) p_(j))
//	benjamini-hochberg  min_{j>=i} min(1, m/j · p_(j))
//
// The running max/min makes the adjusted values monotone in the raw ones, so
// tied raw p-values receive equal adjusted values. p is not modified. Values
// outside [0, 1] or NaN are an error.
func Adjust(p []float64, method Method) ([]float64, error) {
	switch method {
	case None, Bonferroni, Holm, Hochberg, BH:
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
