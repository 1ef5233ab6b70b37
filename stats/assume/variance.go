package assume

import (
	"fmt"
	"math"
	"sort"

	"furrow/stats/dist"
	"furrow/stats/internal/fsum"
)

// FTestResult is the outcome of a test whose statistic is referred to an F
// distribution (Levene, Brown-Forsythe).
type FTestResult struct {
	// F is the test statistic.
	F float64
	// DF1 and DF2 are the numerator (k-1) and denominator (N-k) degrees of
	// freedom.
	DF1, DF2 float64
	// P is the upper-tail p-value P(F > F).
	P float64
	// N is the total number of observations; K the number of groups.
	N, K int
}

// ChiSqTestResult is the outcome of a test whose statistic is referred to a
// chi-squared distribution.
type ChiSqTestResult struct {
	// Stat is the test statistic.
	Stat float64
	// DF is its degrees of freedom.
	DF float64
	// P is the upper-tail p-value.
	P float64
	// N is the number of observations.
	N int
}

// checkGroups validates groups for the k-sample variance tests.
func checkGroups(name string, groups [][]float64) (n int, err error) {
	if len(groups) < 2 {
		return 0, fmt.Errorf("%s: %w: %d groups, need at least 2", name, ErrTooFew, len(groups))
	}
	for g, x := range groups {
		if len(x) < 2 {
			return 0, fmt.Errorf("%s: %w: group %d has %d observation(s), need at least 2", name, ErrTooFew, g+1, len(x))
		}
		if err := checkFinite(x); err != nil {
			return 0, fmt.Errorf("%s: group %d: %w", name, g+1, err)
		}
		n += len(x)
	}
	return n, nil
}

// Levene tests equality of variances across groups by Levene's (1960) test:
// the one-way ANOVA F statistic of the absolute deviations |x_ij - x̄_i| from
// the group means, referred to F(k-1, N-k). Every group needs at least two
// observations. The inputs are not modified.
func Levene(groups [][]float64) (FTestResult, error) {
	return leveneLike("levene", groups, false)
}

// BrownForsythe is Levene's test with deviations from the group medians
// (Brown & Forsythe 1974, JASA 69:364), robust to skewed data.
func BrownForsythe(groups [][]float64) (FTestResult, error) {
	return leveneLike("brown-forsythe", groups, true)
}

func leveneLike(name string, groups [][]float64, median bool) (FTestResult, error) {
	n, err := checkGroups(name, groups)
	if err != nil {
		return FTestResult{}, err
	}
	dev := make([][]float64, len(groups))
	for g, x := range groups {
		var centre float64
		if median {
			centre = medianOf(x)
		} else {
			centre = fsum.Mean(x)
		}
		d := make([]float64, len(x))
		for i, v := range x {
			d[i] = math.Abs(v - centre)
		}
		dev[g] = d
	}
	f, df1, df2, err := oneWayF(dev)
	if err != nil {
		return FTestResult{}, fmt.Errorf("%s: %w", name, err)
	}
	return FTestResult{F: f, DF1: df1, DF2: df2, P: dist.FUpper(f, df1, df2), N: n, K: len(groups)}, nil
}

// oneWayF returns the one-way ANOVA F statistic and its degrees of freedom.
func oneWayF(groups [][]float64) (f, df1, df2 float64, err error) {
	var all []float64
	for _, g := range groups {
		all = append(all, g...)
	}
	grand := fsum.Mean(all)
	var ssb, ssw, scale float64
	for _, v := range all {
		scale += v * v
	}
	for _, g := range groups {
		m, ss := centredSS(g)
		ssw += ss
		ssb += float64(len(g)) * (m - grand) * (m - grand)
	}
	k, n := len(groups), len(all)
	df1, df2 = float64(k-1), float64(n-k)
	// Within-group variation at rounding level counts as none.
	if !(ssw > 1e-26*scale) {
		return 0, 0, 0, fmt.Errorf("%w: no variation within groups", ErrConstant)
	}
	return (ssb / df1) / (ssw / df2), df1, df2, nil
}

// medianOf returns the median of x without modifying it.
func medianOf(x []float64) float64 {
	s := append([]float64(nil), x...)
	sort.Float64s(s)
	n := len(s)
	if n%2 == 1 {
		return s[n/2]
	}
	return 0.5 * (s[n/2-1] + s[n/2])
}

// Bartlett tests equality of variances across groups (Bartlett 1937, Proc R
// Soc Lond A 160:268):
//
//	K² = [(N-k) log s²_p - Σ (n_i-1) log s²_i] / C
//	C  = 1 + (Σ 1/(n_i-1) - 1/(N-k)) / (3(k-1))
//
// referred to χ²(k-1). Every group needs at least two observations and a
// non-zero variance. The inputs are not modified.
func Bartlett(groups [][]float64) (ChiSqTestResult, error) {
	n, err := checkGroups("bartlett", groups)
	if err != nil {
		return ChiSqTestResult{}, err
	}
	k := len(groups)
	var sumLog, pooled, sumInv float64
	for g, x := range groups {
		_, ss := centredSS(x)
		dfi := float64(len(x) - 1)
		v := ss / dfi
		if !(v > 0) {
			return ChiSqTestResult{}, fmt.Errorf("bartlett: group %d: %w", g+1, ErrConstant)
		}
		sumLog += dfi * math.Log(v)
		pooled += ss
		sumInv += 1 / dfi
	}
	dfw := float64(n - k)
	pooled /= dfw
	c := 1 + (sumInv-1/dfw)/(3*float64(k-1))
	stat := (dfw*math.Log(pooled) - sumLog) / c
	if stat < 0 {
		stat = 0 // rounding when all variances are equal
	}
	df := float64(k - 1)
	return ChiSqTestResult{Stat: stat, DF: df, P: dist.ChiSqUpper(stat, df), N: n}, nil
}
