// Package lm fits linear models by ordinary or weighted least squares and
// builds ANOVA tables of Type I, II and III.
//
// # Method
//
// [Fit] centres the columns of X (when X has a constant column) and the
// response, and factorises the weighted [X y] by an unpivoted Householder
// QR (Golub 1965, Numer Math 7:206) computed as a tall-skinny QR over row
// blocks (Demmel, Grigori, Hoemmen & Langou 2012, SIAM J Sci Comput
// 34:A206): blocks of 256 rows are reduced one after another against a
// running triangle while they sit in cache, chunks of 16384 rows run in
// parallel, and the chunk triangles are combined in chunk order. Chunks and
// blocks are fixed by n alone, so results are bit-for-bit the same on any
// number of cores. The small R factor, its columns scaled to unit norm, then
// gets the Householder QR with column pivoting that detects rank (Businger
// & Golub 1965, Numer Math 7:269; pivoting on R as in Chan 1987, Linear
// Algebra Appl 88/89:67). The pivot rule keeps the model order and defers a
// column whose remaining norm is at most Tol times its own norm: that
// column is aliased and reported by name. The solution and residual are
// then refined on the augmented system (Björck 1967, BIT 7:257) with
// residuals in twice the working precision (Ogita, Rump & Oishi 2005, SIAM
// J Sci Comput 26:1955), applying Q through its stored reflectors, and
// mapped back to the original columns with the full covariance matrix.
// Normal equations are never formed.
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
//	Pontius  13.5 / 13.8 / 13.8    Filip     7.9 /  9.0 /  8.5
//	NoInt1   14.7 / 15.0 / 15.0    Wampler1 15.0 / 15.0 / 15.0 (exact fit; absolute)
//	NoInt2   15.0 / 14.9 / 15.0    Wampler2 13.2 / 14.9 / 15.0
//	Wampler3 15.0 / 13.8 / 14.8    Wampler4 15.0 / 13.8 / 14.8
//	Wampler5 15.0 / 13.8 / 14.8
//
// The same floors hold when sets are stacked thousands of times over
// several row chunks with zero-weight junk rows between the copies
// (TestNISTReplicated: Longley 14.6 / 14.7 / 15.0, Filip 7.9 / 8.2 / 8.5).
//
// One-way ANOVA sets (TestNISTANOVA): between/within SS and MS and F have
// LRE >= 14.5 on all eleven sets, SmLs07-09 included. Those three carry 13
// constant leading digits, which float64 cannot hold with the decimals; the
// test subtracts the first observation exactly (decimal arithmetic) before
// conversion, which leaves every ANOVA quantity unchanged.
//
// # Speed
//
// go test -bench 'Fit1e|Influence' -benchtime 2x (or 3x), 30 columns
// (intercept + 29 normal covariates), on the shared 2-core development
// machine (AMD EPYC) at a load of about 0.3-0.6:
//
//	BenchmarkFit1e3          0.6-1.1 ms
//	BenchmarkFit1e5          44-50 ms    (unblocked QR before: 0.12-0.19 s)
//	BenchmarkFit1e6          0.46-0.57 s (unblocked QR before: 1.4-2.1 s)
//	BenchmarkInfluence1e6    0.28 s
//
// Of a 1e6 fit, about 0.2 s is the factorisation (about 2np² flops, in
// cache), 0.05 s the scan of X for non-finite values and column means, and
// the rest the refinement: each step is one pass over the rows of X for the
// twice-precision residuals and X'r, and one application of Q' and Q. The
// working copy of [X y] takes n(p+1) values (one more copy of X); its chunk
// buffers are kept in a pool for the next fit, since fresh memory of that
// size costs page faults of about a third of the copying time.
//
// design.Build for 1e6 rows x 35 columns: 0.34 s (BenchmarkBuild1e6).
package lm
