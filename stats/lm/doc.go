// Package lm fits linear models by ordinary or weighted least squares and
// builds ANOVA tables of Type I, II and III.
//
// # Method
//
// [Fit] centres the columns of X (when X has a constant column) and the
// response, scales every column to unit norm, and factorises the result by
// Householder QR (Golub 1965, Numer Math 7:206) with column pivoting for
// rank detection (Businger & Golub 1965, Numer Math 7:269). The pivot rule
// keeps the model order and defers a column whose remaining norm is at most
// Tol times its own norm: that column is aliased and reported by name. The
// solution and residual are then refined on the augmented system (Björck
// 1967, BIT 7:257) with residuals in twice the working precision (Ogita,
// Rump & Oishi 2005, SIAM J Sci Comput 26:1955), and mapped back to the
// original columns with the full covariance matrix. Normal equations are
// never formed.
//
// # Results
//
// A [Result] holds coefficients with SE, t, p and confidence limits;
// residual SE and df; R² and adjusted R² (uncentred without intercept);
// the overall F test; log-likelihood, AIC and BIC (as R's logLik.lm);
// fitted values and residuals. [Result.Influence] adds leverage,
// standardised and externally studentised residuals and Cook's distance.
// [Result.Coefficients], [Result.CoefCov] and [Result.DF] are the method
// set stats/infer uses; aliased coefficients are 0 there with zero rows
// and columns in the covariance, and [Result.Estimable] tells whether a
// contrast avoids them.
//
// # ANOVA
//
// [Result.ANOVA] builds Type I (sequential), Type II (Langsrud 2003, Stat
// Comput 13:163) and Type III (sum-to-zero coding; Searle 1987) tables from
// extra sums of squares computed on the small R factor, never by
// subtracting two large sums of squares. Terms with aliased columns are
// flagged; Type III is refused with aliased columns or with treatment
// coding in a model with interactions.
//
// # Errors and panics
//
// Data problems are errors: non-finite values, negative weights, no
// nonzero column, no residual degrees of freedom. A constant response is
// fine (zero residuals, Sigma 0, R² NaN). Mismatched lengths of y or the
// weights and X are programmer misuse and panic with a message starting
// "lm:".
//
// # Accuracy (NIST StRD, LRE = -log10 relative error, capped at 15)
//
// Minimum LRE over coefficients / their SDs / residual SD, from
// TestNISTLinear -v:
//
//	Norris   14.1 / 13.9 / 14.0    Longley  14.6 / 14.9 / 15.0
//	Pontius  13.5 / 13.8 / 13.8    Filip     7.9 /  7.3 /  8.5
//	NoInt1   14.7 / 15.0 / 15.0    Wampler1 15.0 / 15.0 / 15.0 (exact fit; absolute)
//	NoInt2   15.0 / 14.9 / 15.0    Wampler2 13.2 / 14.9 / 15.0
//	Wampler3 15.0 / 13.7 / 14.8    Wampler4 15.0 / 13.6 / 14.8
//	Wampler5 15.0 / 13.7 / 14.8
//
// One-way ANOVA sets (TestNISTANOVA): between/within SS and MS and F have
// LRE >= 13.1 on all eleven sets, SmLs07-09 included. Those three carry 13
// constant leading digits, which float64 cannot hold with the decimals; the
// test subtracts the first observation exactly (decimal arithmetic) before
// conversion, which leaves every ANOVA quantity unchanged.
//
// # Speed
//
// go test -bench Fit -benchtime 2x, 30 columns (intercept + 29 normal
// covariates), on the shared 2-core development machine under a load of
// about 3, so these are upper bounds:
//
//	BenchmarkFit1e3    1.4-1.8 ms
//	BenchmarkFit1e5    0.19 s
//	BenchmarkFit1e6    1.6-2.1 s
//
// design.Build for 1e6 rows x 35 columns: 0.34 s (BenchmarkBuild1e6).
// The QR is unblocked (about 2np² flops on a column-major copy of X); a
// blocked or tall-skinny QR would be the next step for very large n.
package lm
