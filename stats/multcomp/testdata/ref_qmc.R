## Reference values for the quasi-Monte Carlo fallback of furrow/stats/multcomp
## (MaxTUpperQMC) on correlation matrices that are not of the one-factor form.
## Run from this folder:  Rscript ref_qmc.R   (writes ref_qmc.json here)
## R 4.2.2, mvtnorm 1.1.3, jsonlite 1.8.4 (Debian 12 packages).
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

alg <- GenzBretz(maxpts = 5e6, abseps = 1e-7, releps = 0)
one <- function(R, cc, df, two) {
  set.seed(20260101)
  m <- nrow(R)
  lo <- if (two) rep(-cc, m) else rep(-Inf, m)
  p <- pmvt(lower = lo, upper = rep(cc, m), corr = R, df = df, algorithm = alg)
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
set.seed(20260101)
qA <- qmvt(0.95, tail = "both.tails", corr = corrA, df = 20, algorithm = alg)$quantile
set.seed(20260101)
qB <- qmvt(0.95, tail = "lower.tail", corr = corrB, df = 20, algorithm = alg)$quantile
out <- list(meta = list(R_version = R.version.string,
                        packages = list(mvtnorm = as.character(packageVersion("mvtnorm")),
                                        jsonlite = as.character(packageVersion("jsonlite"))),
                        algorithm = "GenzBretz(maxpts = 5e6, abseps = 1e-7, releps = 0), set.seed(20260101)"),
            corr_A = unname(corrA), corr_B = unname(corrB), cases = cases,
            crit_A_two_df20 = qA, crit_B_greater_df20 = qB)
writeLines(toJSON(out, digits = I(17), auto_unbox = TRUE, pretty = TRUE), "ref_qmc.json")
