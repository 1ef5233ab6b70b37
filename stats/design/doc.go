// Package design builds model matrices from factor and numeric variables.
//
// # Variables and terms
//
// A [Frame] holds [Factor] variables (level codes into a level list) and
// [Numeric] variables by name. A [Spec] lists the model terms in order; a
// [Term] of one variable is a main effect, a term of several variables is
// their interaction (of any order). Nesting is written as an interaction
// without the inner factor's main effect, e.g. block + block:plot.
//
// # Coding
//
// A factor inside a term is coded by contrasts when the term without that
// factor (the empty term being the intercept) appears earlier in the model;
// otherwise it gets one indicator column per level. Contrasts are either
// [Treatment] (reference level chosen by the caller, default the first) or
// [SumToZero] (the omitted level, default the last, is coded -1). The
// columns of an interaction are products of the per-variable codings, the
// first variable varying fastest. Column names say term and level:
// "(intercept)", "treatment[candidate]", "treatment[candidate]:time[harvest]",
// "dose", "treatment[candidate]:dose".
//
// # Rank deficiency
//
// Build does not drop columns: a missing cell or a term confounded with
// blocks leaves aliased columns in X. The least-squares fit in stats/lm
// finds them with a pivoted QR that keeps the model order, so the column
// reported as aliased is the later one (e.g. the three-factor interaction
// confounded with blocks), and names it through [Matrix.Names].
//
// # Marginal means and hypotheses
//
// [Matrix.MeansGrid] returns the rows L of estimated marginal means (equal
// weights over other factors, covariates at their mean; Searle, Speed &
// Milliken 1980). [Matrix.MeansGridBy] returns the conditional grid
// "factors | by" (emmeans' a | b): one [GridGroup] per level combination
// of the by factors, holding the means of the grid factors at that level
// with the other factors averaged the same way; averaged with equal
// weights over the by levels they give MeansGrid. Interaction contrasts
// over two factors use the joint grid MeansGrid(a, b), the first factor
// varying slowest. [Matrix.TypeIIIHypothesis] and [Matrix.TypeIIHypothesis]
// give per-term hypothesis matrices (Searle 1987; Langsrud 2003).
//
// # Speed
//
// Build writes X row by row from precomputed per-level coding rows;
// BenchmarkBuild1e6 measures 1e6 rows x 30 columns.
package design
