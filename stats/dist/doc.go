// Package dist gives upper tails, two-sided p-values and quantiles of the
// normal, Student t, F and chi-squared distributions, computed so that small
// upper-tail probabilities keep their relative accuracy.
//
// # Accuracy
//
// Upper tails are computed directly, never as 1 - CDF:
//
//	P(Z > z)      = erfc(z/√2)/2
//	P(T > t)      = I_{ν/(ν+t²)}(ν/2, 1/2)/2          for t > 0
//	P(F > f)      = I_{ν2/(ν2+ν1 f)}(ν2/2, ν1/2)
//	P(X²_ν > x)   = Q(ν/2, x/2)
//
// where I is the regularised incomplete beta function and Q the upper
// regularised incomplete gamma function (gonum mathext, which wraps the Cephes
// routines). The argument of I is formed so that it is small, and hence
// exact to rounding, when the tail is small. gonum's distuv Normal.Survival
// (1 - erf) and F.Survival (1 - CDF) lose all digits below about 1e-16, so
// they are not used; StudentsT and ChiSquared survival functions already use
// the direct forms above.
//
// The Log* functions return the natural logarithm of the tail and keep
// working where the tail underflows float64: the normal tail uses the
// asymptotic series for erfc, the t and F tails a power series for the
// incomplete beta evaluated in log space, and the chi-squared tail Legendre's
// continued fraction for the incomplete gamma, also in log space.
//
// For ν >= 1e4 and |t| >= 2 the t tail is taken from the log-space
// continued fraction as well, because Cephes loses about 1e-10 (relative)
// there; near the centre at such ν the relative error is about 2e-10.
//
// Degrees of freedom may be non-integer (Satterthwaite or Kenward-Roger
// degrees of freedom). Infinite df for t gives the normal distribution.
//
// # Checks
//
// The tests compare against values produced by R 4.2 (pt, pf, pchisq, pnorm
// with lower.tail = FALSE and log.p = TRUE, and the corresponding quantile
// functions) by the committed script testdata/ref.R, down to tails of 1e-300
// and in log space beyond.
//
// # Misuse
//
// Non-positive degrees of freedom or probabilities outside [0, 1] are
// programmer errors and return NaN (not a panic), so that a NaN propagates to
// a visible result rather than stopping a run.
package dist
