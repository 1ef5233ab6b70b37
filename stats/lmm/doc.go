// Package lmm fits linear mixed models with independent random intercepts
// for one or more grouping factors (nested or crossed) by REML or ML, and
// provides Satterthwaite and Kenward-Roger inference for the fixed effects.
//
// It takes a response, a full-rank model matrix and grouping factors; it
// knows nothing of plans.
//
// # Centring and scaling
//
// As in stats/lm, the fit works on the fixed-effect columns centred by
// their weighted means (the columns after a constant column, and the
// response, when there is one) and scaled to unit weighted norm, so a
// covariate with a large offset or in very small or large units costs no
// digits and the rank decision is relative to each column's own norm.
// Coefficients, their covariance, SEs, df, tests and contrasts are
// reported for the columns as given: b = M g for the coefficients g of the
// scaled columns X M, and l'b, L b are tested as (M'l)'g, (L M) g. Only
// the REML criterion depends on the parametrisation of X (through
// log|X'V^{-1}X|), and is reported for X as given.
//
// # Model and criterion
//
// y = X b + sum_k Z_k u_k + e, u_k ~ N(0, sigma^2 theta_k^2 I),
// e ~ N(0, sigma^2 W^{-1}). The REML criterion (Patterson & Thompson 1971,
// Biometrika 58:545; Harville 1977, JASA 72:320) or the deviance is profiled
// over sigma and beta and minimised over the relative standard deviations
// theta, using the penalised least-squares form of Henderson's mixed model
// equations (Bates, Maechler, Bolker & Walker 2015, J Stat Softw 67(1)).
// A theta at zero is a boundary fit and is reported, not treated as an error.
//
// # Structure
//
// Cross-products of the data are formed once; each criterion evaluation
// works on per-level sums only. Grouping factors are ordered by number of
// levels; the longest run of nested factors is eliminated level by level
// (finest first), which causes no fill-in, and the remaining crossed factors
// share a dense Schur complement with X and y. With one grouping factor,
// levels with equal weighted counts are merged, so an evaluation costs
// O(distinct group sizes x p^2) whatever the number of rows.
//
// # Optimisation
//
// The gradient of the profiled criterion is analytic: with P the REML
// projection, d/d tau_k of log|V| + log|X'V^{-1}X| is tr(Z_k'PZ_k) and that
// of the penalised residual sum of squares is -||Z_k'Py||^2 (Harville 1977),
// where Lambda'Z'PZ Lambda = I - (C^{-1})_uu for the scaled mixed-model
// matrix C and Z_k'Py = u_k/theta_k. The diagonal blocks of C^{-1} come
// from the selected-inversion recurrences of Takahashi, Fagan & Chin (1973)
// run backwards through the same elimination, at about the cost of one
// evaluation; the trace terms are formed so that they keep full relative
// precision as theta goes to zero. The search is quasi-Newton (BFGS updates
// of a difference Hessian of the gradient, Levenberg shift, Armijo
// backtracking, a step limit away from zero and a probe at zero for
// boundary fits); the derivative-free Newton search on differences of the
// criterion remains as fallback. Both start from moment estimates of the
// variance components (Henderson's 1953 Method 1 on the least-squares
// residuals, from the per-level sums and cross counts), which for balanced
// data are the REML estimates themselves.
//
// The result of a search is verified before it is reported as converged
// (optimum.go): off the boundary the Newton decrement g'H^{-1}g/2, with a
// fresh difference Hessian of the analytic gradient, must be below 1e-9
// (criterion units) with H positive definite, and Newton steps polish the
// point until it is; at a variance at zero the criterion is even in theta,
// so its first derivative is zero whatever the data, and the check is on
// tau = theta^2: the derivative into the feasible region and the curvature
// there must not let the criterion fall by more than 1e-9. A saddle, at
// the boundary or off it (negative curvature), restarts the search from a
// perturbed point, at most three times, and the derivative-free search is
// the last resort. Status is Success only for a verified minimum, else
// Failure or IterationLimit (never a gonum status such as
// FunctionConvergence that a caller could take for convergence). Fits
// typically need 7-50 evaluations, the check included.
//
// # Inference
//
// Satterthwaite df (Satterthwaite 1946; Giesbrecht & Burns 1985; Fai &
// Cornelius 1996 for multi-df tests) use the observed information of the
// unprofiled criterion in (theta, sigma) and the derivatives of Cov(beta):
// the theta block is a central difference of the analytic gradient; the
// sigma terms and d Cov(beta)/d theta_k = sigma^2 (2/theta_k) sum_a
// Sigma_aX Sigma_aX' are analytic (Sigma_aX from the selected inversion).
// Kenward-Roger (Kenward & Roger 1997, Biometrics 53:983) uses the expected
// information in the variance-component scale and analytic derivatives; all
// its traces are reduced to the random-effects space, never an N x N
// matrix. With several grouping factors the largest factor is inverted
// level by level and the others enter by the Woodbury identity, so only
// matrices over the levels outside the largest factor are dense; more than
// 2500 such levels is an error that points to Satterthwaite.
package lmm

// # Measured speed
//
// go test -run XXX -bench . -benchtime=3x ./stats/lmm on the shared 2-core
// machine (AMD EPYC) while the rest of the team was compiling and testing
// (load average 3-4, so wall times are inflated). Fit + Satterthwaite
// preparation + Type III table:
//
//	repeated measures N=1e3         1.9 ms
//	repeated measures N=1e4         8.6 ms
//	repeated measures N=1e5          51 ms  (78 MB allocated)
//	repeated measures N=1e6     0.40-0.54 s (peak RSS 0.55 GB incl. the 200 MB X and data generation)
//	same with Kenward-Roger, 1e5     45 ms
//	same with Kenward-Roger, 1e6 0.36-0.50 s
//	crossed 50x200x3 (3e4 rows)      66 ms  (about 19 evaluations + 7 for Satterthwaite)
//	crossed 50x1000x3 (1.5e5)   0.45-0.48 s (peak RSS 0.13 GB)
//	crossed 50x200x3, KR             86 ms
//	crossed 50x1000x3, KR        1.4-1.9 s
//
// testdata/bench_ref.R right after, same machine and load, with that output
// as its second argument (R 4.2.2 with the reference mixed-model packages
// named in that script; data of the same design from R's generator; ratio =
// (reference fit + Type III table) / Go): repeated measures 1e3 0.18 +
// 0.026 s (111x), 1e4 0.72 + 0.071 s (93x), 1e5 6.6 + 1.0 s (150x); crossed
// 3e4 rows 3.3 s (50x), 1.5e5 rows 17.5 s (36x; the reference also warns
// that its default search stopped with gradient 3e-3). The 1e6 reference
// fit (85 s, issue 4) was not rerun. Before the analytic gradient the
// crossed fits needed about 400 evaluations and were only 5x and 2.5x
// faster than the reference.
