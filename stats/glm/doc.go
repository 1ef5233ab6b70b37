// Package glm fits generalised linear models for counts and proportions:
// Poisson (log link), binomial with trials (logit, probit or
// complementary log-log) and negative binomial (log link, θ estimated or
// fixed), with an optional offset, prior weights and a quasi-likelihood
// dispersion, and tests them: likelihood-ratio tests of nested models,
// Wald tests of L b = 0, randomised quantile residuals, the Pearson
// dispersion statistic and a score test for zero inflation.
//
// # Method
//
// [Fit] maximises the likelihood by iteratively reweighted least squares
// (McCullagh & Nelder 1989, Generalized Linear Models, 2nd ed., sec. 2.5):
// each step regresses the working response z = η - offset + (y - μ) dη/dμ
// on X with working weights w (dμ/dη)²/V(μ) by stats/lm's Householder QR
// (never normal equations), whose pivoted QR also decides aliasing: a
// column dependent on earlier ones is named in [Result.Aliased] and its
// coefficient is NaN, as in stats/lm. The rank decision is taken on the
// first step and must not change later (an error says the model is too
// close to singular). The iterations start from μ = y + 0.5 for counts
// and μ = (y + 0.5)/(trials + 1) for proportions. A step that increases
// the deviance by more than its rounding (1e-12 relative) or leaves the
// range of the means is halved in η towards the previous point, up to 40
// times (Marschner 2011, R Journal 3(2):12).
//
// Convergence is declared when the relative change of the deviance,
// |D - D_old|/(|D| + 0.1), is below Options.Tol (default 1e-12; the
// criterion of R's glm.fit, whose default is 1e-8). With a non-canonical
// link (probit, cloglog, the negative binomial's log) IRLS is Fisher
// scoring and converges only linearly, and a small deviance change can
// still leave the estimates off in their eighth digit; so the steps then
// continue while their size Σ w (Δη)² shrinks, until it is below 1e-24
// (|D| + 0.1) or has stopped shrinking (at most 30 such steps). The
// covariance φ (X'WX)⁻¹ and the leverages come from the last step, whose
// weights are those of the converged means.
//
// The negative binomial with θ estimated starts from a Poisson fit, then
// alternates θ by Newton's method on log θ for the current means (score
// and observed information from Lawless 1987, Can J Stat 15:209, sec. 2)
// with IRLS for the coefficients at the current θ, until the
// log-likelihood changes by less than Tol (relative) and θ by less than
// 1e-9 (relative): alternation, not a joint Newton step (the two blocks
// are asymptotically orthogonal, so the alternation converges in a few
// rounds; it is the scheme of MASS's glm.nb, Venables & Ripley 2002,
// Modern Applied Statistics with S, 4th ed., sec. 7.4). The standard
// error of θ is from its observed information. A θ that keeps growing
// past [ThetaMax] means no over-dispersion, and is [ErrThetaInfinite].
//
// [PearsonDispersion] gives the quasi-likelihood fit (Wedderburn 1974,
// Biometrika 61:439): the same estimates, φ = X²/(N - Rank) with X² the
// Pearson statistic, standard errors scaled by √φ, t tests on N - Rank
// degrees of freedom, F tests in [LRTest] and [Result.Wald], no
// likelihood.
//
// # Separation
//
// Before iterating, the fit checks that the maximum likelihood estimate
// exists (see checkSeparation): observations away from the boundary (a
// positive count, a binomial count strictly between 0 and the trials)
// must determine every coefficient, or no direction of the coefficients
// may move the fitted means of the boundary observations all towards
// their boundary (Albert & Anderson 1984, Biometrika 71:1; Santos Silva &
// Tenreyro 2010, Econ Lett 107:310). The first is a rank test by
// stats/lm; the second a small linear programme (gonum's simplex) on the
// distinct boundary rows. A treatment with all counts zero, or whose
// seeds all germinated, or a covariate that splits successes from
// failures, gives a [*SeparationError] naming the coefficients that
// diverge and the direction (-Inf, +Inf), and the observations fitted at
// the boundary. The estimates are never returned infinite or huge.
//
// # Results
//
// Definitions follow R's glm and MASS's glm.nb. The deviance is
// 2 Σ w_i [log f(y_i; y_i) - log f(y_i; μ_i)]; the null deviance is that
// of the intercept-only model with the offset (the offset alone without
// an intercept), at the fit's θ. LogLik is Σ w_i log f(y_i; μ_i) and AIC
// -2 LogLik + 2 (Rank, plus 1 when θ is estimated). Binomial quantities
// are on the count scale with the trials as part of the weights (the
// response of residuals and Fitted is the proportion, as in R). Working,
// Pearson and deviance residuals and the leverage are R's residuals.glm
// types and hatvalues.
//
// # Tests and diagnostics
//
// [LRTest] refers the deviance difference (2 Δℓ for a negative binomial
// with θ estimated in both models) to χ², or (ΔD/df)/φ to F for quasi
// fits. [Result.Wald] tests L b = 0 by (Lb)'(LVL')⁻¹(Lb). The randomised
// quantile residuals of Dunn & Smyth (1996, J Comput Graph Stat 5:236)
// take an explicit seed (math/rand/v2 PCG). [Result.DispersionTest] is X²
// over the residual df with its χ² p-value; [Result.ZeroInflation] compares
// the observed zeros with Σ P(Y_i = 0) and gives the score test of van
// den Broek (1995, Biometrics 51:738) for the Poisson, and its analogues
// for the binomial and negative binomial derived in the same way (see the
// method's documentation).
//
// # Errors and panics
//
// Data problems are returned errors: non-finite values; negative or
// non-integer counts (non-integer values are allowed in a quasi fit);
// trials that are 0, non-integer, or below the successes; negative
// weights; no observation with a positive weight; separation; θ without a
// finite estimate; no residual degrees of freedom (a saturated model);
// non-convergence. Unsupported combinations of family, link and options
// are errors too. Lengths of y, Trials, Offset or Weights that differ
// from the rows of X, and an unknown family, are programmer misuse and
// panic with a message starting "glm:". Inputs are never modified.
//
// # Accuracy
//
// Against R 4.2.2 and MASS 7.3-58.2 (testdata/ref.R; glm fits converged
// far past R's default and refined from their own estimates, glm.nb
// refined by theta.ml and negative.binomial) on three invented trials
// (counts with an offset, germination with trials, over-dispersed trap
// counts), a zero-inflated set and datasets::InsectSprays, MASS::menarche
// and MASS::quine, the largest disagreements (go test -run Ref -v) are:
//
//	coefficients      1.3e-12 relative to max(|b|, SE)
//	standard errors   9.8e-13 relative
//	z / t, p          1.2e-12 (p relative, divided by max(1, z²))
//	deviance          3.4e-10 absolute (on about 190)
//	log-likelihood    3.4e-12 absolute (logLik and AIC)
//	Pearson X²        1.9e-12 relative
//	fitted means      2.5e-13 relative
//	residuals         3.6e-12, leverage 6.4e-14
//	θ and its SE      2.8e-12 relative
//	LR statistics     3.2e-15 relative, Wald 1.0e-15, their p 4.3e-14
//	cdf bounds        2.9e-12 relative (quantile residuals)
//	zero inflation    1.3e-11 relative (score statistic and p)
//
// The tests' tolerances are 10-100 times these. R's own glm.fit stopping
// at epsilon = 1e-14 leaves the menarche cloglog fit off by 1.6e-9; its
// default 1e-8 leaves more.
//
// # Speed
//
// go test -bench . -benchtime 5x on the shared 2-core development machine
// (Intel Xeon), whose load of other work (6-13) dominates the spread:
//
//	BenchmarkPoisson1e5       0.35-0.77 s at load 6-8 (1.3-2.6 s at load 13)
//	                          1e5 rows, 29 columns (20 blocks, 10 treatments), offset
//	BenchmarkNegBinomial1e5   0.97-2.7 s, the same design, θ estimated
//
// A Poisson fit there is 6 IRLS steps and the separation check's one
// extra weighted least-squares fit, each a stats/lm fit of the 1e5 x 29
// matrix; the rest is linear in the rows.
package glm
