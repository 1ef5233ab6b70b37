// Package multcomp adjusts for multiplicity: p-value adjustments, the
// studentised range distribution with Tukey's simultaneous comparisons, and
// many-to-one (Dunnett) comparisons through multivariate t probabilities.
//
// # Adjustments
//
// Adjust implements Bonferroni, Holm (1979) Scand J Stat 6:65, Hochberg
// (1988) Biometrika 75:800 and Benjamini & Hochberg (1995) JRSS B 57:289.
//
// # Studentised range
//
// PTukey, PTukeyUpper, QTukey and QTukeyUpper evaluate the distribution of
// the range of k means over an independent χ-based scale estimate as a
// double integral (Copenhaver & Holland 1988 J Stat Comput Simul 30:1) with
// Gauss-Legendre panels: fixed 16-point panels of width 1.5 for the inner
// range integral, adaptive bisection for the outer one. Upper tails are
// computed directly and keep about 1e-10 relative accuracy down to 1e-15
// (absolute below that); df may be non-integer or +Inf. For k = 2 the
// values equal two-sided t tails to 1e-12, which the tests check.
//
// # Many-to-one comparisons
//
// When the correlation of the statistics has the one-factor form
// ρ_ij = λ_i λ_j (comparisons of independent means with a common control,
// any group sizes), MaxTUpper reduces the multivariate t probability to a
// deterministic double integral over the common normal factor and the χ
// variable (Dunnett 1955 JASA 50:1096; Genz & Bretz 2009, Computation of
// Multivariate Normal and t Probabilities, Springer). DunnettCritical
// finds the simultaneous critical value by root finding on it. Other
// correlation structures are refused with an error; there is no
// Monte-Carlo fallback yet.
//
// # Cost
//
// One upper-tail evaluation takes milliseconds, not microseconds: accuracy
// was preferred. See the benchmarks.
package multcomp
