// Package infer draws inference from a fitted linear model given as its
// coefficients β, their covariance V and a df rule (the Model interface,
// met by stats/lm and stats/lmm fits).
//
// # Contrasts and tests
//
// Contrast and Contrasts give l'β with SE sqrt(l'Vl), t, one- or two-sided
// p-values and intervals. WaldF tests Lβ = 0 with F = (Lβ)'(LVL')⁻(Lβ)/q and
// a caller-given denominator df (or a df function, WaldFWith).
//
// # Marginal means
//
// MarginalMeans takes the L matrix of a reference grid (from stats/design)
// and labels; VersusControl and Pairwise form differences of its rows.
// Adjust turns a family of such rows into adjusted p-values (Bonferroni,
// Holm, Hochberg, Benjamini-Hochberg, Tukey-Kramer, Dunnett) through
// stats/multcomp.
//
// # Back-transformation
//
// BackTransformMeans maps means and interval endpoints one by one to the
// response scale for every transform of the ladder (none, log, log-offset,
// log10, sqrt, reciprocal with its order reversal, arcsine-sqrt, Box-Cox with
// fixed λ). BackTransformDifferences turns log-scale differences into
// ratios of geometric means. SEs are never back-transformed.
//
// # Equivalence and non-inferiority
//
// TOST is Schuirmann's (1987) two one-sided tests with the matching
// (1 - 2α) interval; NonInferiorityTest is its one-sided half. Margins are
// given on the analysis scale or as ratios for log-type scales.
package infer
