package multcomp

import (
	"fmt"
	"math"
)

// Tukey returns Tukey's honestly-significant-difference inference for
// pairwise differences among k means (Tukey 1953; the Tukey-Kramer form for
// unequal replication, Kramer 1956 Biometrics 12:307): est and se are the
// estimated differences and their standard errors (for a general model
// covariance use the SE of each difference), df the error degrees of freedom
// and level the simultaneous confidence level. The adjusted p-value of a
// difference is P(Q_{k,df} >= √2 |est/se|) and the intervals are
// est ± q_{level;k,df}/√2 · se. The family may hold any subset of the k(k-1)/2
// pairs; k is the number of means the range is taken over.
func Tukey(est, se []float64, k int, df, level float64) (*Family, error) {
	if len(est) != len(se) {
		return nil, fmt.Errorf("tukey: %d estimates and %d standard errors", len(est), len(se))
	}
	if !(level > 0 && level < 1) {
		return nil, fmt.Errorf("tukey: confidence level must be in (0, 1), got %v", level)
	}
	if err := checkTukeyArgs(k, df); err != nil {
		return nil, fmt.Errorf("tukey: %w", err)
	}
	for i := range se {
		if !(se[i] > 0) || math.IsInf(se[i], 0) || math.IsNaN(est[i]) {
			return nil, fmt.Errorf("tukey: comparison %d has estimate %v and standard error %v", i, est[i], se[i])
		}
	}
	td := newTukeyDist(k, df)
	q, err := td.quantile(1 - level)
	if err != nil {
		return nil, fmt.Errorf("tukey: studentised range quantile for k=%d, df=%v: %w", k, df, err)
	}
	crit := q / math.Sqrt2
	f := &Family{Method: "tukey", Side: TwoSided, Level: level, DF: df, Critical: crit}
	for i := range est {
		t := est[i] / se[i]
		qs := math.Sqrt2 * math.Abs(t)
		p := math.Exp(td.logUpper(qs))
		f.Comparisons = append(f.Comparisons, Comparison{
			Estimate: est[i], SE: se[i], T: t, PAdjusted: math.Min(1, math.Max(0, p)),
			Lower: est[i] - crit*se[i], Upper: est[i] + crit*se[i],
		})
	}
	return f, nil
}
