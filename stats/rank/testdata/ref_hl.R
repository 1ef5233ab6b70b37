# Reference values for the Hodges-Lehmann estimates and intervals of
# stats/rank (hodges.go), produced with R 4.2.2 base stats::wilcox.test
# (conf.int = TRUE). The stratified (van Elteren) inversion is not in base
# R; it is written out below from van Elteren (1960) and Hodges & Lehmann
# (1963) by evaluating the statistic with rank() on a grid of gap midpoints.
# Run from this folder:  Rscript ref_hl.R  (writes ref_hl.json)
# The data are invented by seeded R code and written into the JSON.
suppressPackageStartupMessages(library(jsonlite))
rn <- function(...) signif(stats::rnorm(...), 12)
set.seed(811)

two <- list()
add2 <- function(x, y, alt, level, exact, correct) {
  h <- suppressWarnings(wilcox.test(x, y, alternative = alt, conf.int = TRUE, conf.level = level,
                                    exact = exact, correct = correct))
  two[[length(two) + 1]] <<- list(x = x, y = y, alt = alt, level = level, exact = exact, correct = correct,
    estimate = unname(h$estimate), lower = h$conf.int[1], upper = h$conf.int[2],
    hl = median(outer(x, y, "-")))
}
x1 <- rn(8, 10.8); y1 <- rn(10, 10)
add2(x1, y1, "two.sided", 0.95, TRUE, TRUE)
add2(x1, y1, "greater", 0.90, TRUE, TRUE)
add2(x1, y1, "less", 0.95, TRUE, TRUE)
x2 <- rn(13, 5, 2); y2 <- rn(7, 3, 2)
add2(x2, y2, "two.sided", 0.99, TRUE, TRUE)
x3 <- rn(55, 1.3); y3 <- rn(61, 1)
add2(x3, y3, "two.sided", 0.95, FALSE, TRUE)
add2(x3, y3, "two.sided", 0.90, FALSE, FALSE)
add2(x3, y3, "greater", 0.95, FALSE, TRUE)
x4 <- round(rn(20, 12, 3)); y4 <- round(rn(17, 10, 3))
add2(x4, y4, "two.sided", 0.95, FALSE, TRUE)
add2(x4, y4, "two.sided", 0.90, FALSE, FALSE)
add2(x4, y4, "less", 0.95, FALSE, FALSE)

one <- list()
add1 <- function(d, alt, level, exact, correct) {
  h <- suppressWarnings(wilcox.test(d, alternative = alt, conf.int = TRUE, conf.level = level,
                                    exact = exact, correct = correct))
  w <- outer(d, d, "+") / 2
  one[[length(one) + 1]] <<- list(d = d, alt = alt, level = level, exact = exact, correct = correct,
    estimate = unname(h$estimate), lower = h$conf.int[1], upper = h$conf.int[2],
    hl = median(w[upper.tri(w, diag = TRUE)]))
}
d1 <- rn(12, 0.7)
add1(d1, "two.sided", 0.95, TRUE, TRUE)
add1(d1, "greater", 0.90, TRUE, TRUE)
d2 <- rn(60, 0.3)
add1(d2, "two.sided", 0.95, FALSE, TRUE)
add1(d2, "less", 0.90, FALSE, FALSE)
d3 <- round(rn(40, 0.6, 1.5), 1); d3 <- d3[d3 != 0]  # ties, no zeros
add1(d3, "two.sided", 0.95, FALSE, TRUE)
add1(d3, "two.sided", 0.95, FALSE, FALSE)

# Stratified: S(c) = sum_s (W_s(c) - m_s (N_s+1)/2)/(N_s+1) with W_s the rank
# sum of x - c in stratum s, sd from the tie-corrected van Elteren variance
# at c. Evaluated at the midpoints of the gaps between breakpoints.
Sfun <- function(strata, cc) {
  t <- 0; v <- 0
  for (s in strata) {
    x <- s[[1]] - cc; y <- s[[2]]; m <- length(x); n <- length(y); N <- m + n
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
  # gap g lies between b[g-1] and b[g]; the jump from gap g to g+1 is at b[g]
  for (g in seq_along(b)) {
    if (S[g] > z * sd && S[g + 1] <= z * sd && lo == -Inf) lo <- b[g]
    if (S[g] >= -z * sd && S[g + 1] < -z * sd && hi == Inf) hi <- b[g]
  }
  eps <- 1e-12 * sum(sapply(strata, function(s) length(s[[1]]) * length(s[[2]]) / (length(s[[1]]) + length(s[[2]]) + 1))) / 2
  S[abs(S) <= eps] <- 0
  est <- NA
  g <- which(S[-length(S)] > 0 & S[-1] < 0)
  if (length(g)) est <- b[g[1]] else {
    z0 <- which(S == 0); est <- (b[min(z0) - 1] + b[max(z0)]) / 2
  }
  if (alt == "greater") hi <- Inf
  if (alt == "less") lo <- -Inf
  list(estimate = est, lower = lo, upper = hi, sd = sd)
}
strat <- list()
addst <- function(strata, level, alt) {
  strat[[length(strat) + 1]] <<- c(list(strata = lapply(strata, function(s) lapply(s, I)), level = level, alt = alt),
                                   strat_hl(strata, level, alt))
}
st1 <- list(list(rn(5, 11), rn(6, 10)), list(rn(4, 14.2), rn(4, 13)), list(rn(7, 8.9), rn(5, 8)))
addst(st1, 0.95, "two.sided")
addst(st1, 0.90, "greater")
st2 <- list(list(round(rn(6, 20, 2)), round(rn(6, 18, 2))), list(round(rn(8, 25, 2)), round(rn(7, 24, 2))),
            list(round(rn(3, 15, 2)), round(rn(5, 13, 2))), list(round(rn(4, 22, 2)), round(rn(4, 21, 2))))
addst(st2, 0.95, "two.sided")
addst(st2, 0.90, "less")
# Friedman-like: one value per treatment in each of 9 blocks.
st3 <- lapply(1:9, function(i) { b <- rn(1, 0, 3); list(b + rn(1, 1.1), b + rn(1, 0)) })
addst(st3, 0.90, "two.sided")
# One stratum equals wilcox.test's normal interval without continuity correction.
h1 <- wilcox.test(x4, y4, conf.int = TRUE, conf.level = 0.9, exact = FALSE, correct = FALSE)
one_stratum <- list(x = x4, y = y4, level = 0.9, lower = h1$conf.int[1], upper = h1$conf.int[2])

out <- list(r_version = R.version.string, two_sample = two, one_sample = one, stratified = strat,
            one_stratum_wilcox = one_stratum)
writeLines(toJSON(out, digits = NA, auto_unbox = TRUE, pretty = FALSE), "ref_hl.json")
