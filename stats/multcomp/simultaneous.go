package multcomp

import (
	"fmt"
	"math"
)

// PerComparisonLevel returns the level α' at which each of m comparisons
// is tested by a single-step procedure that controls the family-wise error
// rate at alpha, and so the level of its simultaneous intervals: each
// interval is an ordinary interval at confidence 1 - α' (two-sided:
// estimate ± t_{1-α'/2, ν} SE; one-sided: t_{1-α'}).
//
//	bonferroni  α' = alpha/m                 (any dependence)
//	sidak       α' = 1 - (1 - alpha)^(1/m)   (Šidák 1967 JASA 62:626: independent
//	                                          tests, or two-sided tests of jointly
//	                                          normal or t statistics)
//	none        α' = alpha                   (no family-wise control)
//
// The Šidák level is computed as -expm1(log1p(-alpha)/m).
//
// Step-wise procedures (holm, holm-sidak, hochberg, benjamini-hochberg,
// Shaffer's, closed tests, fixed-sequence, fallback and graphical tests)
// have no per-comparison level: the level of a comparison depends on the
// others' outcomes, and in general no simultaneous intervals are
// compatible with their decisions (the compatible intervals that exist,
// e.g. Strassburger & Bretz 2008 Stat Med 27:4914, recalled from memory,
// give only the bound 0 for rejected hypotheses). PerComparisonLevel
// returns an error for them; Tukey and Dunnett families carry their own
// simultaneous intervals (Family).
func PerComparisonLevel(method Method, alpha float64, m int) (float64, error) {
	if math.IsNaN(alpha) || alpha <= 0 || alpha >= 1 {
		return 0, fmt.Errorf("per-comparison level: alpha is %v, not in (0, 1)", alpha)
	}
	if m < 1 {
		return 0, fmt.Errorf("per-comparison level: %d comparisons, need at least 1", m)
	}
	switch method {
	case None:
		return alpha, nil
	case Bonferroni:
		return alpha / float64(m), nil
	case Sidak:
		return -math.Expm1(math.Log1p(-alpha) / float64(m)), nil
	case Holm, HolmSidak, Hochberg, BH:
		return 0, fmt.Errorf("per-comparison level: %s is step-wise and has no compatible simultaneous intervals", method)
	}
	return 0, fmt.Errorf("per-comparison level: unknown method %q", method)
}
