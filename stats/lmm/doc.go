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

// # Measured speed
//
// go test -run XXX -bench . -benchtime=1x ./stats/lmm on the shared 2-core
// machine (AMD EPYC) while the rest of the team was compiling and testing
// (load average 5-12, so wall times are inflated; CPU time in brackets where
// taken with /usr/bin/time). Fit + Satterthwaite preparation + Type III table:
//
//	repeated measures N=1e3        2.3 ms
//	repeated measures N=1e4         25 ms
//	repeated measures N=1e5        0.14 s    (78 MB allocated)
//	repeated measures N=1e6        1.1-2.5 s (0.7 s CPU incl. data generation; peak RSS 0.55 GB incl. the 200 MB X)
//	same with Kenward-Roger, 1e5   0.13 s
//	same with Kenward-Roger, 1e6   1.1 s
//	crossed 50x200x3 (3e4 rows)    0.67-0.89 s (about 0.35 s CPU)
//	crossed 50x1000x3 (1.5e5 rows) 7.8 s (about 3 s CPU)
//
// testdata/bench_ref.R (R 4.2.2 with the reference mixed-model packages named
// in that script, same machine, same load, data of the same design from R's
// generator): repeated measures
// 1e3 fit 0.18 s + Type III 0.017 s; 1e4 1.7 s + 0.12 s; 1e5 10.4 s + 1.0 s;
// crossed 3e4 rows 4.0 s; 1.5e5 rows 19.3 s. Ratios under this load: about
// 75x at 1e5 rows for the repeated-measures trial, 5x for the crossed 3e4
// case and 2.5x for the crossed 1.5e5 case. The crossed cases are dominated by
// the number of criterion evaluations (about 300, numerical derivatives);
// an analytic gradient would cut them severalfold.
