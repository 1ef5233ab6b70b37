// Package lmm fits linear mixed models with independent random intercepts
// for one or more grouping factors (nested or crossed) by REML or ML, and
// provides Satterthwaite and Kenward-Roger inference for the fixed effects.
//
// It takes a response, a full-rank model matrix and grouping factors; it
// knows nothing of plans.
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
// # Inference
//
// Satterthwaite df (Satterthwaite 1946; Giesbrecht & Burns 1985; Fai &
// Cornelius 1996 for multi-df tests) use the observed information of the
// unprofiled criterion in (theta, sigma) and the derivatives of Cov(beta),
// by central differences with Richardson extrapolation. Kenward-Roger
// (Kenward & Roger 1997, Biometrics 53:983) uses the expected information
// in the variance-component scale and analytic derivatives; all its traces
// are reduced to the random-effects space, never an N x N matrix.
package lmm
