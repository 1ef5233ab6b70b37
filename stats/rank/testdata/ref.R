# Reference values for stats/rank, produced with R 4.2.2 (base stats:
# kruskal.test, friedman.test, wilcox.test, oneway.test). van Elteren's
# statistics are not in base R; they are written out below by hand from
# van Elteren (1960) and Landis, Heyman & Koch (1978).
# Run from this folder:  Rscript ref.R  (writes ref.json)
# The data are invented by seeded R code and written into the JSON.
suppressPackageStartupMessages(library(jsonlite))
# Data are rounded to 12 significant digits so the JSON (15 digits) holds
# exactly the values R used.
rn <- function(...) signif(stats::rnorm(...), 12)
ht <- function(h) list(stat = unname(h$statistic), df = if (is.null(h$parameter)) NULL else unname(h$parameter), p = h$p.value)

# Kruskal-Wallis: continuous data, and rounded data with ties and a group of size one.
set.seed(301)
kw <- list()
g1 <- list(rn(6, 10), rn(8, 11), rn(5, 12.5))
kw[[1]] <- list(groups = lapply(g1, I), res = ht(kruskal.test(g1)))
g2 <- list(round(rn(9, 20, 3)), round(rn(7, 22, 3)), c(25), round(rn(10, 19, 3)))
kw[[2]] <- list(groups = lapply(g2, I), res = ht(kruskal.test(g2)))

# Friedman: blocks x treatments, continuous and with ties.
set.seed(302)
fr <- list()
m1 <- matrix(rn(7 * 4) + rep(c(0, 0.5, 1, 0.2), each = 7), 7, 4)
fr[[1]] <- list(data = m1, res = ht(friedman.test(m1)))
m2 <- matrix(round(rn(9 * 3, 5, 1.2) + rep(c(0, 1, 0.5), each = 9)), 9, 3)
fr[[2]] <- list(data = m2, res = ht(friedman.test(m2)))

# Signed rank: exact (n = 10, 45), normal with and without continuity, ties.
set.seed(303)
sr <- list()
addsr <- function(d, alt, exact, correct, mu = 0) {
  h <- suppressWarnings(wilcox.test(d, mu = mu, alternative = alt, exact = exact, correct = correct))
  sr[[length(sr) + 1]] <<- list(d = d, alt = alt, exact = exact, correct = correct, mu = mu, V = unname(h$statistic), p = h$p.value)
}
d10 <- rn(10, 0.6)
for (a in c("two.sided", "greater", "less")) addsr(d10, a, TRUE, TRUE)
d45 <- rn(45, 0.3)
addsr(d45, "two.sided", TRUE, TRUE)
addsr(d45, "less", TRUE, TRUE)
d60 <- rn(60, 0.25)
addsr(d60, "two.sided", FALSE, TRUE)
addsr(d60, "greater", FALSE, FALSE)
dt <- round(rn(30, 0.5), 1)
addsr(dt, "two.sided", FALSE, TRUE)
addsr(dt, "less", FALSE, FALSE)
addsr(d10, "two.sided", TRUE, TRUE, mu = 0.4)

# Rank sum: exact (7 vs 9, 40 vs 45), normal, ties, shift.
set.seed(304)
rs <- list()
addrs <- function(x, y, alt, exact, correct, mu = 0) {
  h <- suppressWarnings(wilcox.test(x, y, mu = mu, alternative = alt, exact = exact, correct = correct))
  rs[[length(rs) + 1]] <<- list(x = x, y = y, alt = alt, exact = exact, correct = correct, mu = mu, U = unname(h$statistic), p = h$p.value)
}
x7 <- rn(7, 1); y9 <- rn(9)
for (a in c("two.sided", "greater", "less")) addrs(x7, y9, a, TRUE, TRUE)
x40 <- rn(40, 0.4); y45 <- rn(45)
addrs(x40, y45, "two.sided", TRUE, TRUE)
addrs(x40, y45, "greater", FALSE, TRUE)
addrs(x40, y45, "less", FALSE, FALSE)
xt <- round(rn(12, 3)); yt <- round(rn(15, 2.4))
addrs(xt, yt, "two.sided", FALSE, TRUE)
addrs(xt, yt, "greater", FALSE, FALSE)
addrs(x7, y9, "two.sided", TRUE, TRUE, mu = 0.5)

# van Elteren, two treatments in 4 strata of unequal size, with ties.
set.seed(305)
ve_strata <- list()
for (s in 1:4) {
  m <- c(4, 6, 3, 8)[s]; n <- c(5, 4, 6, 7)[s]
  ve_strata[[s]] <- list(round(rn(m, 10 + s + 0.8), 1), round(rn(n, 10 + s), 1))
}
vanelteren <- function(strata) {
  T <- 0; E <- 0; V <- 0
  for (st in strata) {
    x <- st[[1]]; y <- st[[2]]; m <- length(x); n <- length(y); N <- m + n
    r <- rank(c(x, y)); tj <- table(c(x, y))
    W <- sum(r[1:m])
    T <- T + W / (N + 1); E <- E + m / 2
    V <- V + m * n / 12 * ((N + 1) - sum(tj^3 - tj) / (N * (N - 1))) / (N + 1)^2
  }
  z <- (T - E) / sqrt(V)
  list(T = T, E = E, Var = V, Z = z, p_two = 2 * pnorm(-abs(z)), p_greater = pnorm(z, lower.tail = FALSE), p_less = pnorm(z))
}
ve <- list(strata = ve_strata, res = vanelteren(ve_strata))

# k-treatment version: Landis-Heyman-Koch mean-score statistic with van
# Elteren weights, 3 treatments in 5 strata.
set.seed(306)
vk_strata <- list()
for (s in 1:5) {
  sizes <- c(3 + s %% 3, 4, 2 + s)
  vk_strata[[s]] <- lapply(1:3, function(j) round(rn(sizes[j], 5 + s + c(0, 0.6, 1.1)[j]), 1))
}
vanelterenk <- function(strata) {
  k <- length(strata[[1]]); D <- rep(0, k); V <- matrix(0, k, k)
  for (st in strata) {
    y <- unlist(st); nj <- sapply(st, length); N <- length(y)
    a <- rank(y) / (N + 1)                      # van Elteren (modified ridit) scores
    g <- rep(seq_len(k), nj)
    D <- D + tapply(a, factor(g, levels = 1:k), sum) - nj * mean(a)
    v <- mean((a - mean(a))^2)
    V <- V + N / (N - 1) * v * (diag(nj) - outer(nj, nj) / N)
  }
  i <- 1:(k - 1)
  Q <- drop(t(D[i]) %*% solve(V[i, i], D[i]))
  list(Q = Q, df = k - 1, p = pchisq(Q, k - 1, lower.tail = FALSE))
}
vk <- list(strata = vk_strata, res = vanelterenk(vk_strata))
vk2 <- vanelterenk(lapply(ve_strata, identity))

# Welch one-way ANOVA.
set.seed(307)
wg <- list(rn(6, 10, 1), rn(11, 11, 3), rn(8, 10.5, 0.5), rn(5, 12, 2))
welch <- list(groups = wg, res = ht(oneway.test(y ~ g, data.frame(y = unlist(wg), g = factor(rep(1:4, sapply(wg, length)))), var.equal = FALSE)))
wg2 <- wg[1:2]
welch2 <- list(groups = wg2, res = ht(oneway.test(y ~ g, data.frame(y = unlist(wg2), g = factor(rep(1:2, sapply(wg2, length)))), var.equal = FALSE)),
  t = ht(t.test(wg2[[1]], wg2[[2]], var.equal = FALSE)))

out <- list(generator = paste(R.version.string, "base stats"), kruskal = kw, friedman = fr,
  signed_rank = sr, rank_sum = rs, van_elteren = ve, van_elteren_k = vk, van_elteren_k2_on_two = vk2,
  welch = list(welch, welch2))
writeLines(toJSON(out, digits = NA, auto_unbox = TRUE, pretty = FALSE, matrix = "rowmajor"), "ref.json")
