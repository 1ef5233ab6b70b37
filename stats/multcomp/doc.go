// Package multcomp adjusts for multiplicity: p-value adjustments, closed
// testing (with Shaffer's logical constraints for pairwise comparisons),
// fixed-sequence, fallback and graphical procedures across endpoints and
// families, the studentised range distribution with Tukey's simultaneous
// comparisons, and many-to-one (Dunnett) comparisons through multivariate
// t probabilities.
//
// Hypotheses are numbered from 0 in the order of the p-values given, in
// results and in error messages. Inputs are never modified; invalid
// p-values (NaN, outside [0, 1]), levels outside (0, 1), weights and
// graphs that break their rules are returned errors. The reference values
// of the multiplicity procedures come from testdata/ref_multiplicity.R
// (R 4.2.2: p.adjust, multcomp 1.4-22, emmeans 1.8.4.1) and from
// hand-computed cases written out beside each test.
//
// # Adjustments
//
// Adjust implements Bonferroni, Holm (1979) Scand J Stat 6:65, Hochberg
// (1988) Biometrika 75:800, Benjamini & Hochberg (1995) JRSS B 57:289, and
// Šidák's (1967) JASA 62:626 single-step adjustment 1 - (1 - p)^m with its
// step-down form Holm-Šidák (Holm 1979; Holland & Copenhaver 1987
// Biometrics 43:417). The Šidák forms are computed as -expm1(k log1p(-p)),
// accurate for the smallest p. Šidák controls the family-wise error rate
// for independent tests and for two-sided tests of jointly normal or t
// statistics with any correlation (Šidák's inequality); Bonferroni for any
// dependence.
//
// # Simultaneous intervals
//
// Only single-step procedures have simultaneous intervals compatible with
// their tests. PerComparisonLevel gives the level α' of each comparison
// for Bonferroni (α/m) and Šidák (1 - (1 - α)^(1/m)): the simultaneous
// intervals are the ordinary ones at confidence 1 - α'. Tukey and Dunnett
// families carry their own (Family). Step-wise procedures (Holm,
// Holm-Šidák, Hochberg, Benjamini-Hochberg, Shaffer's, closed tests in
// general, fixed-sequence, fallback and graphical tests) have no
// compatible simultaneous intervals in general: the level a comparison is
// tested at depends on the outcome of the others, and PerComparisonLevel
// returns an error for them. Their reports give adjusted p-values and
// decisions, with unadjusted intervals labelled as such.
//
// # Closed testing
//
// ClosedTest is the closed test of Marcus, Peritz & Gabriel (1976)
// Biometrika 63:655 for any local test of intersection hypotheses (an
// IntersectionTest: a function from an index set to a p-value): H_i is
// rejected at α when every intersection containing it is, so its adjusted
// p-value is the largest local p-value over those intersections. It tests
// all 2^m - 1 intersections (m <= MaxClosedHypotheses = 16) and returns
// each with its p-value (Closure). ClosedTestOver tests a given family of
// intersections instead, for hypotheses with logical constraints, where an
// index set whose truth forces others to be true stands for the same
// hypothesis as the larger set. BonferroniIntersection and
// SidakIntersection are the local tests whose closures are Holm and
// Holm-Šidák (the tests check both equalities on random p-values).
//
// # Pairwise comparisons with logical constraints
//
// Among the k(k-1)/2 hypotheses μ_i = μ_j (AllPairs: B-A, C-A, ..., the
// order of multcomp's Tukey contrasts) only some sets can be true
// together: those of a split of the means into groups of equal means
// (PairwiseConfigurations: the Bell(k) - 1 splits with a group of two or
// more), and only some numbers (PossibleTrueCounts, Shaffer's 1986
// recursion; for k = 4: 0, 1, 2, 3, 6). Shaffer (1986) JASA 81:826 uses
// them to sharpen Holm's divisors; three forms, from the most
// conservative:
//
//   - ShafferS1, method 1: step j divides by t_j, the largest possible
//     number of true hypotheses not above m - j + 1. It needs only the
//     ordered p-values (k <= MaxShafferMeans = 100).
//   - ShafferS2, method 2 sharpened: step j divides by the size of the
//     largest configuration that holds the hypothesis tested and none
//     already rejected (Royen 1989; Westfall 1997). This is what
//     multcomp's summary(glht(...), test = adjusted("Shaffer")) computes;
//     it is checked against multcomp 1.4-22 on two invented one-way
//     layouts (k = 4, 5) to 1e-14 relative (2.8e-15 measured).
//   - ShafferClosed: the full closed test over the configurations with
//     Bonferroni local tests. It rejects all that S2 rejects and
//     sometimes more, but its adjusted p-values need not increase with
//     the raw ones.
//
// Adjusted p-values: closed <= S2 <= S1 <= Holm. S2 and the closed test
// enumerate the configurations (k <= MaxShafferClosedMeans = 10; about
// 50 ms at k = 10, BenchmarkShafferS2K10 and BenchmarkShafferClosedK10).
// S1 and S2 differ when the rejections so far leave fewer hypotheses that
// can still be true together than their number allows (in the committed
// k = 4 layout: D - B, 0.324 by S1, 0.207 by S2).
//
// # Fixed-sequence and fallback tests
//
// FixedSequence tests hypotheses in their declared order at the full
// level and stops at the first not rejected; adjusted p-values are the
// running maximum of the raw ones. Fallback (Wiens 2003 Pharm Stat
// 2:211; Wiens & Dmitrienko 2005 J Biopharm Stat 15:929) gives each
// hypothesis a declared share w_i of α (Σ w_i <= 1) and adds to it the
// level of the unbroken run of rejected hypotheses just before it; its
// adjusted p-value is the smallest α that rejects, by a recursion over
// where that run starts (see Fallback). Sequence records the level each
// hypothesis was tested at.
//
// # Graphical procedures
//
// Graph is the Bonferroni-based graphical approach of Bretz, Maurer,
// Brannath & Posch (2009) Stat Med 28:586: weights w (w_i >= 0,
// Σ w_i <= 1) and a transition matrix G (non-negative, zero diagonal,
// rows summing to at most 1), refused with a plain error otherwise
// (NewGraph; sums may exceed 1 by 1e-12, the rounding of decimal inputs).
// Test runs their Algorithm 1: while some hypothesis has p_j <= α w_j,
// reject it (the smallest p_j/w_j first, then the lowest index) and
// remove it, updating for the others
//
//	w_l ← w_l + w_j g_jl,   g_lk ← (g_lk + g_lj g_jk) / (1 - g_lj g_jl).
//
// GraphResult keeps each step (the hypothesis, its p-value and level,
// the level passed to each other hypothesis, the weights and graph
// after it), the final levels and the adjusted p-values of their
// section on adjusted p-values (AdjustedP: the smallest α at which each
// hypothesis is rejected). A hypothesis with weight 0 is never rejected
// at that step, even with p = 0. HolmGraph, FixedSequenceGraph and
// FallbackGraph build the classical procedures; the tests check, on
// seeded random p-values, weights and levels, that they reproduce Adjust
// (Holm), FixedSequence and Fallback: the same rejections and adjusted
// p-values to 1e-13 relative (Holm: R's p.adjust as well). The graph is
// the closed test of weighted Bonferroni tests with the weights
// IntersectionWeights (all hypotheses outside the intersection removed);
// the tests check that ClosedTest with Graph.IntersectionTest gives the
// same adjusted p-values on random graphs (1e-12 relative). The numbers
// of the paper's own examples were not available to check; the graphs
// tested (Holm, fixed sequence, fallback, two primary hypotheses each
// with a secondary) follow its figures as recalled from memory, with
// hand-computed values.
//
// # Studentised range
//
// PTukey, PTukeyUpper, QTukey and QTukeyUpper evaluate the distribution of
// the range of k means over an independent χ-based scale estimate,
//
//	P(Q > q) = ∫ f_ν(s) P(R > q s) ds,   s = sqrt(χ²_ν/ν),
//
// as a double integral (Copenhaver & Holland 1988 J Stat Comput Simul
// 30:1) with our own layout:
//
//   - the inner tails log P(R > w) and log P(R <= w) are integrals over z
//     with fixed 16-point Gauss-Legendre panels, summed in log space;
//   - they are held in piecewise Chebyshev tables in w (32 nodes on pieces
//     of width 2, width 8 beyond w = 12; Mason & Handscomb 2003), built on
//     first use and kept per k for the process, since they do not depend
//     on df; the tables reproduce the direct integrals to about 3e-13 in
//     the logarithm;
//   - the outer integral is taken in u = log s, where the integrand is
//     smooth and unimodal; its peak is located from cheap bounds (one pair,
//     union of pairs) by golden-section search, the range is cut where the
//     bound is below e^{-42} of the peak, and panels laid out from the peak
//     width are refined to 1e-12 relative.
//
// Upper tails are computed directly and keep about 1e-10 relative accuracy
// or better however small they are (the tests check this for k = 2, where
// the values equal two-sided t tails, down to 1e-250); df may be
// non-integer or +Inf. Quantiles use the Illinois root finder on the log
// tail, bracketed by the single-pair and Bonferroni quantiles.
//
// # Many-to-one comparisons
//
// When the correlation of the statistics has the one-factor form
// ρ_ij = λ_i λ_j (comparisons of independent means with a common control,
// any group sizes), MaxTUpper reduces the multivariate t probability to a
// double integral over the common normal factor and the χ variable
// (Dunnett 1955 JASA 50:1096; Genz & Bretz 2009, Computation of
// Multivariate Normal and t Probabilities, Springer), computed the same
// way: a Chebyshev table of the normal maximum's log tail (fixed panels in
// z sized from the λ_i, equal λ_i grouped) shared by all p-values of a
// family and by the search for its critical value (DunnettCritical), and
// the peak-located outer integral. Family.Algorithm is then "quadrature".
//
// Other correlation structures (unbalanced multi-factor models) go to a
// randomised quasi-Monte Carlo fallback, MaxTUpperQMC (Genz 1992 J Comput
// Graph Stat 1:141; Genz & Bretz 2002 J Comput Graph Stat 11:950): the
// separation-of-variables transformation with greedy variable ordering, a
// Richtmyer lattice with 12 random shifts from the fixed seed QMCSeed,
// antithetic points and the baker's transformation, the χ variable as one
// more coordinate. Its error is absolute, about QMCTolerance (1e-4 at 3
// standard errors); Family records Algorithm "randomised quasi-Monte
// Carlo", AbsError and the rule (points, shifts, seed).
//
// # Cost
//
// Measured with go test -bench . -benchtime=20x on the team's 2-core
// machine (load about 1):
//
//	BenchmarkDunnett10        21 ms   10 comparisons, unequal sizes: critical value and 10 p-values
//	BenchmarkTukey8            4 ms   8 means, 28 pairs: critical value and 28 p-values (tables built)
//	BenchmarkTukey8Cold        5 ms   the same, tables built in the call
//	BenchmarkPTukeyUpper     0.11 ms  one upper tail, k = 5, df = 20 (tables built)
//	BenchmarkPTukeyUpperCold  1.5 ms  the same, tables built in the call
//	BenchmarkQTukey          0.8 ms   one quantile, k = 5, df = 20 (tables built)
//	BenchmarkQTukeyCold       2.2 ms  the same, tables built in the call
//	BenchmarkDunnettQMC      0.5 s    fallback, 5 comparisons, non-product correlation
//
// The former nested adaptive quadrature took about 22 s for
// BenchmarkDunnett10, 11 ms for one PTukeyUpper and 0.2 s for QTukey.
package multcomp
