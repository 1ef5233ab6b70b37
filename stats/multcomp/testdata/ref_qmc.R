## Reference values for the quasi-Monte Carlo fallback of furrow/stats/multcomp
## (MaxTUpperQMC) on correlation matrices that are not of the one-factor form.
## Run from this folder:  Rscript ref_qmc.R   (writes ref_qmc.json here)
## R 4.2.2, mvtnorm 1.1.3, jsonlite 1.8.4 (Debian 12 packages).
##
## pmvt's own randomised lattice rule needs far more points than its default
## to reach a tight target on these cases (5e6 points left errors of up to
## 7e-7 against abseps 1e-7), so every probability is computed with
## GenzBretz(maxpts = 1e8, abseps = 1e-7, releps = 0) and must complete
## normally, i.e. with mvtnorm's error estimate below 1e-7; that estimate is
## recorded per case and is what the Go test adds to furrow's.
##
## To confirm the estimates, rerun with another seed and file:
##   Rscript ref_qmc.R 7 /tmp/ref_qmc_seed7.json
## which also prints, per case, the difference from the committed
## ref_qmc.json against the sum of the two error estimates.
suppressPackageStartupMessages({library(mvtnorm); library(jsonlite)})

## Case A: many-to-one contrasts in an unbalanced two-way additive model
## (3 treatments + control crossed with 2 blocks, cell counts below), whose
## contrast correlation is not of the product form.
cells <- expand.grid(trt = factor(c("c", "a", "b", "d"), levels = c("c", "a", "b", "d")),
                     blk = factor(c("x", "y")))
counts <- c(4, 2, 6, 3, 1, 5, 2, 4)
d <- cells[rep(seq_len(nrow(cells)), counts), ]
X <- model.matrix(~ trt + blk, data = d)
V <- solve(crossprod(X))
L <- rbind(c(0, 1, 0, 0, 0), c(0, 0, 1, 0, 0), c(0, 0, 0, 1, 0))
corrA <- cov2cor(L %*% V %*% t(L))

## Case B: a 5x5 correlation with mixed signs (an AR(1)-like pattern plus a
## negative entry), positive definite.
corrB <- matrix(c(1, 0.5, 0.25, 0.1, -0.2,
                  0.5, 1, 0.5, 0.25, 0.1,
                  0.25, 0.5, 1, 0.5, 0.25,
                  0.1, 0.25, 0.5, 1, 0.5,
                  -0.2, 0.1, 0.25, 0.5, 1), 5)
stopifnot(all(eigen(corrB)$values > 0))

args <- commandArgs(trailingOnly = TRUE)
seed <- if (length(args) >= 1) as.integer(args[1]) else 20260101L
outfile <- if (length(args) >= 2) args[2] else "ref_qmc.json"
algCall <- "GenzBretz(maxpts = 1e8, abseps = 1e-7, releps = 0)"
alg <- eval(parse(text = algCall))
one <- function(R, cc, df, two) {
  set.seed(seed)
  m <- nrow(R)
  lo <- if (two) rep(-cc, m) else rep(-Inf, m)
  p <- pmvt(lower = lo, upper = rep(cc, m), corr = R, df = df, algorithm = alg)
  if (attr(p, "msg") != "Normal Completion" || !(attr(p, "error") <= 1e-7))
    stop(sprintf("pmvt c=%g df=%g: %s, error %g", cc, df, attr(p, "msg"), attr(p, "error")))
  list(c = cc, df = df, two_sided = two, p_upper = 1 - as.numeric(p), error = attr(p, "error"))
}
cases <- list()
for (nm in c("A", "B")) {
  R <- if (nm == "A") corrA else corrB
  for (df in c(6, 20)) for (two in c(TRUE, FALSE)) for (cc in c(1.2, 2.2, 3)) {
    v <- one(R, cc, df, two)
    v$case <- nm
    cases[[length(cases) + 1]] <- v
  }
}
## The critical values: qmvt's root search stops at ptol = 0.001 in
## probability, far coarser than pmvt's error, so they keep the earlier
## (cheaper) setting; the Go test allows 5e-4 on them.
qalgCall <- "GenzBretz(maxpts = 5e6, abseps = 1e-7, releps = 0)"
qalg <- eval(parse(text = qalgCall))
set.seed(seed)
qA <- qmvt(0.95, tail = "both.tails", corr = corrA, df = 20, algorithm = qalg)$quantile
set.seed(seed)
qB <- qmvt(0.95, tail = "lower.tail", corr = corrB, df = 20, algorithm = qalg)$quantile
out <- list(meta = list(R_version = R.version.string,
                        packages = list(mvtnorm = as.character(packageVersion("mvtnorm")),
                                        jsonlite = as.character(packageVersion("jsonlite"))),
                        algorithm = sprintf("pmvt(..., algorithm = %s), set.seed(%d) before each call", algCall, seed),
                        algorithm_qmvt = sprintf("qmvt(0.95, ..., algorithm = %s), set.seed(%d)", qalgCall, seed)),
            corr_A = unname(corrA), corr_B = unname(corrB), cases = cases,
            crit_A_two_df20 = qA, crit_B_greater_df20 = qB)
if (outfile != "ref_qmc.json" && file.exists("ref_qmc.json")) {
  ref <- fromJSON("ref_qmc.json")$cases
  for (i in seq_along(cases)) {
    v <- cases[[i]]
    d <- abs(v$p_upper - ref$p_upper[i])
    cat(sprintf("%s df=%2g two=%-5s c=%3g: |diff| %.2e, errors %.2e + %.2e%s\n", v$case, v$df, v$two_sided, v$c,
                d, v$error, ref$error[i], if (d > v$error + ref$error[i]) "  EXCEEDS" else ""))
  }
}
writeLines(toJSON(out, digits = I(17), auto_unbox = TRUE, pretty = TRUE), outfile)
