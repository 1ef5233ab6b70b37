# Hodges-Lehmann estimates and intervals for the rank-step comparisons of
# checker/engine/engine_rank_test.go, on the data of ref.R (plots.csv) and of the
# soil-nematodes example. Two-sample and paired: R 4.2.2
# wilcox.test(conf.int = TRUE); stratified: the inversion of van Elteren's
# (1960) statistic written out from the formulas (as in
# stats/rank/testdata/ref_hl.R), evaluated with rank() at gap midpoints.
# Run from checker/engine/testdata/rank:  Rscript ref_hl.R  (writes ref_hl.json)
suppressPackageStartupMessages(library(jsonlite))

Sfun <- function(strata, cc) {
  t <- 0; v <- 0
  for (s in strata) {
    x <- s[[1]] - cc; y <- s[[2]]; m <- length(x); n <- length(y); N <- m + n
    if (m == 0 || n == 0) next
    r <- rank(c(x, y)); tt <- table(r)
    t <- t + (sum(r[1:m]) - m * (N + 1) / 2) / (N + 1)
    v <- v + m * n / 12 * ((N + 1) - sum(tt^3 - tt) / (N * (N - 1))) / (N + 1)^2
  }
  c(t, sqrt(v))
}
strat_hl <- function(strata, level, alt) {
  b <- sort(unique(unlist(lapply(strata, function(s) as.vector(outer(s[[1]], s[[2]], "-"))))))
  mids <- c(b[1] - 1, (b[-1] + b[-length(b)]) / 2, b[length(b)] + 1)
  sv <- t(sapply(mids, function(m) Sfun(strata, m)))
  S <- sv[, 1]; sd <- sv[1, 2]
  z <- if (alt == "two.sided") qnorm((1 + level) / 2) else qnorm(level)
  lo <- -Inf; hi <- Inf
  for (g in seq_along(b)) {
    if (S[g] > z * sd && S[g + 1] <= z * sd && lo == -Inf) lo <- b[g]
    if (S[g] >= -z * sd && S[g + 1] < -z * sd && hi == Inf) hi <- b[g]
  }
  S[abs(S) <= 1e-12 * max(abs(S))] <- 0
  g <- which(S[-length(S)] > 0 & S[-1] < 0)
  est <- if (length(g)) b[g[1]] else { z0 <- which(S == 0); (b[min(z0) - 1] + b[max(z0)]) / 2 }
  if (alt == "greater") hi <- Inf
  if (alt == "less") lo <- -Inf
  list(estimate = est, lower = lo, upper = hi)
}
strata_of <- function(x, z, sx, sz) lapply(unique(c(sx, sz)), function(s) list(x[sx == s], z[sz == s]))

d <- read.csv("plots.csv")
w <- reshape(d, idvar = c("site", "block", "plot", "treatment"), timevar = "time", direction = "wide")
w$change <- log(w$juveniles.harvest + 1) - log(w$juveniles.before + 1)
y <- w$change; g <- w$treatment

out <- list(source = paste(R.version.string, "stats::wilcox.test; van Elteren inversion from the formulas, see ref_hl.R"))
rs <- list(estimate = c(), upper = c()); ve <- list(estimate = c(), upper = c())
for (l in c("a", "b")) {
  x <- y[g == l]; z <- y[g == "control"]
  h <- wilcox.test(x, z, alternative = "less", conf.int = TRUE, conf.level = 0.95)
  rs$estimate <- c(rs$estimate, unname(h$estimate)); rs$upper <- c(rs$upper, h$conf.int[2])
  v <- strat_hl(strata_of(x, z, w$site[g == l], w$site[g == "control"]), 0.95, "less")
  ve$estimate <- c(ve$estimate, v$estimate); ve$upper <- c(ve$upper, v$upper)
}
out$vs_control_ranksum <- rs
out$vs_control_vanelteren <- ve
fr <- list(estimate = c(), lower = c(), upper = c())
for (l in c("a", "b")) {
  v <- strat_hl(strata_of(y[g == l], y[g == "control"], w$block[g == l], w$block[g == "control"]), 0.95, "two.sided")
  fr$estimate <- c(fr$estimate, v$estimate); fr$lower <- c(fr$lower, v$lower); fr$upper <- c(fr$upper, v$upper)
}
out$vs_control_friedman <- fr
bef <- log(w$juveniles.before + 1); har <- log(w$juveniles.harvest + 1)
# The paired differences contain zeros, so wilcox.test would drop them
# before forming its interval; the inversion keeps every difference
# (between breakpoints none is zero), written out here from the formulas:
# Walsh averages, normal approximation of V with the tie-corrected
# variance and continuity correction 1/2, one-sided 95%.
dd <- har - bef; n <- length(dd)
wa <- outer(dd, dd, "+") / 2; wa <- sort(wa[upper.tri(wa, diag = TRUE)]); M <- length(wa)
tt <- table(dd); sig <- sqrt(n * (n + 1) * (2 * n + 1) / 24 - sum(tt^3 - tt) / 48)
clo <- ceiling(M / 2 - qnorm(0.95) * sig - 0.5)
out$signed_paired_less <- list(estimate = median(wa), upper = wa[M - clo + 1], zeros = sum(dd == 0))

ex <- read.csv("../../../../examples/soil-nematodes/plots.csv", na.strings = c("", "NA"))
ew <- reshape(ex, idvar = c("site", "block", "plot", "treatment"), timevar = "time", direction = "wide")
ew <- ew[!is.na(ew$juveniles.before) & !is.na(ew$juveniles.harvest), ]
ew$change <- log(ew$juveniles.harvest + 1) - log(ew$juveniles.before + 1)
ey <- ew$change; eg <- ew$treatment; es <- ew$site
vs <- list(estimate = c(), upper = c())
for (l in c("reference", "candidate")) {
  v <- strat_hl(strata_of(ey[eg == l], ey[eg == "untreated"], es[eg == l], es[eg == "untreated"]), 0.95, "less")
  vs$estimate <- c(vs$estimate, v$estimate); vs$upper <- c(vs$upper, v$upper)
}
ni <- strat_hl(strata_of(ey[eg == "candidate"], ey[eg == "reference"], es[eg == "candidate"], es[eg == "reference"]), 0.90, "two.sided")
out$example <- list(vs_estimate = vs$estimate, vs_upper = vs$upper, ni_estimate = ni$estimate, ni_lower = ni$lower, ni_upper = ni$upper,
                    ni_margin_log = log(1.25), ni_verdict = if (ni$upper < log(1.25)) "non-inferior" else "not shown")
writeLines(toJSON(out, digits = NA, auto_unbox = TRUE, pretty = TRUE), "ref_hl.json")
