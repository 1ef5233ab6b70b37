// Package engine runs a plan's analysis on its data: it derives each
// endpoint's outcome, applies the declared exclusions, runs each step's
// fit and checks, follows the cascade of fallbacks, answers the
// hypotheses, and assembles the record ([Run]).
//
// # The cascade
//
// For each endpoint the steps run in plan order starting with the first.
// A step derives its outcome (the transform is applied to each measured
// value before a change or baseline derivation, after averaging for a unit
// mean), fits, and runs each declared check against its threshold. All
// checks passing accepts the step; a failing check (or a check that
// cannot be computed) moves to the check's on-fail, else the step's; a
// step that cannot be fitted moves to the step's on-fail. A failing last
// step is reported with status assumptions-unmet. Every decision is
// recorded with a Reason code and the plan position of the rule that
// caused it; nothing the plan does not declare is run.
//
// # Lost units and rows
//
// Before the cascades, the units the exclusions removed whole are judged,
// with those missing from the data, by the plan's design.least-units
// (contract.CheckKept): below its count with below: stop, Run returns a
// DataError; otherwise every lost unit is listed in Result.LostUnits. Each
// fitted step accounts for every row read: StepResult.Rows are the rows
// behind its N observations, StepResult.Unused every other row with its
// reason (excluded by a rule, missing response, missing covariate of the
// step, missing unit or another time point for a per-unit outcome, a unit
// without its second time point, a block a friedman or paired signed-rank
// test left out), so Rows + len(Unused) = Inputs.Rows; the endpoint's
// RowsAnalysed is the reported step's Rows.
//
// # Linear and mixed steps
//
// The fixed part uses sum-to-zero coding, so Type III tests are the
// marginal tests of each term. Linear steps are fitted by pivoted QR
// (stats/lm); mixed steps by REML or ML (stats/lmm) with one random
// intercept per random term: a term of several columns groups by the
// combination of their levels (nesting), separate terms are crossed.
// Fixed columns aliased by empty cells are found by the least-squares QR,
// left out and reported. Checks use the conditional residuals. Marginal
// means weight the other factors' levels equally. Single contrasts use
// their own Satterthwaite or Kenward-Roger df; a Dunnett or Tukey family
// on a mixed step uses the smallest df of its comparisons (the Note says
// so), and when the contrasts' correlation is not of the one-factor form
// the Dunnett probabilities come from randomised quasi-Monte Carlo with a
// fixed seed, whose seed and error the Note records.
//
// # Rank and Welch steps
//
// Steps of kind kruskal-wallis, friedman (blocks: within), signed-rank,
// rank-sum, van-elteren (strata: within) and welch run the stats/rank test
// on the derived outcome. The step's results carry the global test
// (method, statistic, df, p) and, per level of the compared factor, n,
// mean, median and SD; Welch steps add the level means with t intervals.
// A signed-rank step without compare tests the per-unit outcome (H0:
// median 0); with compare and within it tests the paired differences,
// first declared level minus second. A van-elteren step with two levels
// gives van Elteren's Z, with more the k-sample statistic; Friedman and
// paired signed-rank steps leave out blocks that lack a level (the method
// text counts them) and refuse a block with two values at one level.
//
// There is no model, so checks declared on such a step run on
// deviations that centre the analysed values: from the level means
// (welch, the residuals of the cell-means model), from the level medians
// (kruskal-wallis, rank-sum), from the level medians within each stratum
// (van-elteren), after one median-polish sweep over blocks and levels
// (friedman, paired signed-rank), or from the median difference
// (one-sample signed-rank).
//
// Hypotheses on a rank or Welch step are answered by separate two-sample
// tests with the declared sides: Welch t tests (Welch-Satterthwaite df) on
// a Welch step; van Elteren's stratified test within the step's within on
// van-elteren and friedman steps; the signed-rank test of the paired
// differences on a paired signed-rank step; the rank-sum test otherwise.
// Rank comparisons report the Hodges & Lehmann (1963) estimate (the median
// of the pairwise differences; the median of the Walsh averages of the
// paired differences; the common shift within strata from inverting van
// Elteren's statistic) with its distribution-free interval from inverting
// the same test (Moses 1953; Bauer 1972) at 1 - alpha on the declared
// sides, no standard error, and on log scales the ratio with its interval.
// The intervals are per comparison, also under an adjustment. Adjustments bonferroni,
// holm, hochberg and benjamini-hochberg apply as declared; a declared
// dunnett or tukey, which rests on the joint distribution of a model's
// contrasts, is replaced by holm (AdjustUsed and Note say so).
// Equivalence and non-inferiority are two one-sided tests with the Welch
// df on a Welch step; on a rank step the two-sided 1 - 2 alpha
// Hodges-Lehmann interval is compared with the margins, the one-sided
// p-values being the rank test of the shift at each margin. Term
// hypotheses are not assessable on either.
package engine
