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
// # Conditional means and simple effects
//
// A conditional grid "a | b" (stats/design's MeansGridBy) is a list of
// Group values, one per level of b, each holding the rows of the means of
// a at that level with the model's other factors averaged with equal
// weights and covariates at their means (emmeans' emmeans(fit, ~ a | b)).
// MeansBy gives those means; PairwiseBy and VersusControlBy the simple
// effects of a within each level of b, every contrast with its SE, the
// model's df for that contrast (m.DF(l)), t, p and interval. AdjustBy
// applies Adjust within each level (PerGroup, emmeans' default) or to all
// levels' comparisons as one family (AcrossGroups, emmeans' by = NULL);
// Tukey's adjustment belongs to one set of means and is refused across
// levels, where Dunnett's single-step multivariate t (any correlation)
// and the p-value methods serve.
//
// # Declared contrasts
//
// A LevelContrast names coefficients over the levels (rows) of a means
// grid: products against the control, a new product against the mean of
// two references (1, -1/2, -1/2), or any linear combination. Declared a
// Comparison, its coefficients must sum to zero (to 1e-10 of the sum of
// their absolute values); a level not in the grid, a level given twice, a
// coefficient that is not finite or only zeros are errors too.
// LevelContrasts estimates them over a grid, LevelContrastsBy within each
// level of a conditional grid. PairwiseContrasts and ControlContrasts
// write the pairwise and versus-control comparisons as declared contrasts.
//
// PolynomialContrasts gives the orthogonal polynomial trends over
// quantitative levels with any spacing (OrthogonalPolynomials, Robson
// 1959 Biometrics 15:187): with equal weights the powers of the centred
// level values are orthogonalised by Gram-Schmidt and normalised, so the
// coefficients of each degree sum to zero, have unit length and are
// orthogonal to the other degrees (R's contr.poly(k, scores = x); they are
// not emmeans' integer "poly" coefficients, which assume equal spacing).
// A linear estimate is β·sqrt(Σ (x_i - x̄)²) for means exactly linear in x
// with slope β.
//
// InteractionContrasts gives interaction contrasts on a cell-means grid
// of two or more factors (MeansGrid(a, b), the first factor slowest): the
// Kronecker product of one contrast per factor, each summing to zero, so
// pairwise by pairwise is a difference of differences (Boik 1979 Psychol
// Bull 86:1084). On a log scale BackTransformDifferences reports it as a
// ratio of ratios, and a pairwise or declared comparison as a ratio.
//
// Every contrast is an Estimate, so TOST and NonInferiorityTest apply to
// declared, trend, interaction and conditional contrasts alike, and Adjust
// to any family of them. testdata/ref_contrasts.R writes the emmeans
// values (R 4.2.2, emmeans 1.8.4.1) that conditional means, simple
// effects and declared, trend and interaction contrasts are checked
// against, with their equivalence and non-inferiority tests.
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
