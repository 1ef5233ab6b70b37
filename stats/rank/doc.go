// Package rank provides the rank tests a statistical analysis plan may fall
// back to, and Welch's heteroscedastic one-way ANOVA.
//
// All functions take plain slices, never modify them, and return a result
// struct with the statistic, its degrees of freedom where relevant, the
// p-value and the number of observations used. Tied values get mid-ranks.
// Data problems (too few observations, empty groups, all values tied, NaN)
// are returned as errors.
//
// # Tests
//
//   - KruskalWallis: Kruskal & Wallis (1952, JASA 47:583), H divided by the
//     tie correction 1 - Σ(t³-t)/(N³-N), referred to χ²(k-1).
//   - Friedman: Friedman (1937, JASA 32:675) for a blocks × treatments
//     table, with the within-block tie correction, referred to χ²(k-1).
//   - SignedRank: Wilcoxon (1945, Biometrics Bull 1:80) signed-rank test of
//     a location shift; zero differences are dropped (Wilcoxon's method).
//   - RankSum: Wilcoxon (1945) / Mann & Whitney (1947, Ann Math Stat
//     18:50) two-sample test, reported as the Mann-Whitney U of the first
//     sample.
//   - VanElteren: van Elteren (1960, Bull Int Stat Inst 37:351) stratified
//     rank-sum test of two treatments within strata (sites), each stratum's
//     rank sum weighted by 1/(N_s+1).
//   - VanElterenK: the k-treatment extension, the mean-score statistic of
//     Landis, Heyman & Koch (1978, Int Stat Rev 46:237) with van Elteren's
//     weights: Q = Dᵀ V⁻¹ D on the first k-1 weighted rank-sum deviations,
//     referred to χ²(k-1). For k = 2 it equals the square of VanElteren's Z.
//   - Welch: Welch (1951, Biometrika 38:330) one-way ANOVA for unequal
//     variances, F referred to F(k-1, ν) with ν non-integer.
//
// # Estimates and intervals
//
//   - HLShift: Hodges & Lehmann (1963, Ann Math Stat 34:598) two-sample
//     shift, the median of the differences x_i - y_j, with the interval of
//     Moses (1953; Bauer 1972, JASA 67:687) from inverting RankSum.
//   - HLLocation: the one-sample estimate, the median of the Walsh averages,
//     with the Tukey/Wilcoxon interval from inverting SignedRank.
//   - HLStratified: a common shift within strata from inverting
//     VanElteren's statistic (van Elteren 1960; Hodges & Lehmann 1963).
//
// The bounds are exact order statistics when the test's exact distribution
// applies (same rule as the test at o.Mu), else from the normal
// approximation with the tie-corrected variance and, for HLShift and
// HLLocation unless NoContinuity, a continuity correction of 1/2
// (HLStratified uses none). Order statistics of the m·n differences and of
// the Walsh averages are found by bisection over the float64 ordering with
// a linear count, without forming them. Checked against R 4.2.2
// wilcox.test(conf.int = TRUE) (testdata/ref_hl.R).
//
// # Exact and approximate p-values
//
// SignedRank and RankSum use the exact permutation distribution when the
// method is MethodAuto and there are no ties, no zero differences, and
// n <= ExactMaxN (50) for the signed-rank test or both samples <= ExactMaxN
// for the rank-sum test; otherwise the normal approximation with the tie
// correction to the variance and, unless NoContinuity is set, a continuity
// correction of 1/2 towards the mean. MethodExact forces the exact
// distribution (an error with ties or zeros; allowed up to n = 1000 for the
// signed-rank test and m·n <= 250000 for the rank-sum test); MethodNormal
// forces the approximation. Two-sided exact p-values are twice the smaller
// tail, capped at 1.
//
// The distributions are computed by the recursions
//
//	signed rank:  P_k(v) = [P_{k-1}(v) + P_{k-1}(v-k)] / 2
//	rank sum:     c(u; m, n) = c(u-n; m-1, n) + c(u; m, n-1)
//
// (Mann & Whitney 1947, eq. 2.2).
package rank
