# Reference values for stats/assume, produced with R 4.2.2 (stats, car,
# lmtest); Anderson-Darling values come from ref_ad.py (statsmodels). Run from this folder:  Rscript ref.R  (writes ref.json)
# The data are invented by seeded R code below and are written into the JSON
# beside the results, so the Go tests need neither R nor this script.
suppressPackageStartupMessages({ library(jsonlite); library(car); library(lmtest) })
ver <- function(p) as.character(packageVersion(p))
cases <- list()

# Shapiro-Wilk at n = 7, 100, 1000 (shapiro.test, AS R94).
sw <- list()
for (n in c(7, 100, 1000)) {
  set.seed(7000 + n)
  x <- rgamma(n, shape = 4) + rnorm(n)
  h <- shapiro.test(x)
  sw[[length(sw) + 1]] <- list(n = n, x = x, W = unname(h$statistic), p = h$p.value)
}
# a clearly non-normal sample with small p
set.seed(99); x <- rexp(200)^2
h <- shapiro.test(x)
sw[[length(sw) + 1]] <- list(n = 200, x = x, W = unname(h$statistic), p = h$p.value)

# Levene / Brown-Forsythe (car::leveneTest) and Bartlett (bartlett.test)
# on unbalanced groups with unequal spread.
set.seed(55)
sizes <- c(5, 9, 12, 7)
g <- factor(rep(seq_along(sizes), sizes))
y <- rnorm(sum(sizes), mean = rep(c(10, 12, 11, 15), sizes), sd = rep(c(1, 2, 0.5, 3), sizes))
lm_mean <- leveneTest(y ~ g, center = mean)
lm_med <- leveneTest(y ~ g, center = median)
bt <- bartlett.test(y ~ g)
var_case <- list(sizes = sizes, y = y,
  levene_mean = list(F = lm_mean[1, "F value"], df1 = lm_mean[1, "Df"], df2 = lm_mean[2, "Df"], p = lm_mean[1, "Pr(>F)"]),
  levene_median = list(F = lm_med[1, "F value"], df1 = lm_med[1, "Df"], df2 = lm_med[2, "Df"], p = lm_med[1, "Pr(>F)"]),
  bartlett = list(stat = unname(bt$statistic), df = unname(bt$parameter), p = bt$p.value))

# Breusch-Pagan, Koenker's studentised form (lmtest::bptest, studentize = TRUE)
set.seed(77)
n <- 60
x1 <- runif(n, 0, 10); x2 <- rnorm(n)
yb <- 2 + 0.5 * x1 - x2 + rnorm(n, sd = 0.3 + 0.2 * x1)
fit <- lm(yb ~ x1 + x2)
bp_x <- bptest(fit, studentize = TRUE)
bp_f <- bptest(fit, varformula = ~ fitted(fit), studentize = TRUE)
bp_case <- list(x1 = x1, x2 = x2, resid = unname(residuals(fit)), fitted = unname(fitted(fit)),
  regressors = list(stat = unname(bp_x$statistic), df = unname(bp_x$parameter), p = bp_x$p.value),
  fitted_only = list(stat = unname(bp_f$statistic), df = unname(bp_f$parameter), p = bp_f$p.value))

# Moments: adjusted skewness and kurtosis with standard errors, written out
# by hand from Joanes & Gill (1998) types G1/G2 (base R only).
mom <- function(x) {
  n <- length(x); d <- x - mean(x)
  m2 <- mean(d^2); m3 <- mean(d^3); m4 <- mean(d^4)
  g1 <- m3 / m2^1.5; g2 <- m4 / m2^2 - 3
  ses <- sqrt(6 * n * (n - 1) / ((n - 2) * (n + 1) * (n + 3)))
  list(n = n, x = x, g1 = g1, g2 = g2,
       G1 = g1 * sqrt(n * (n - 1)) / (n - 2),
       G2 = ((n + 1) * g2 + 6) * (n - 1) / ((n - 2) * (n - 3)),
       ses = ses, sek = 2 * ses * sqrt((n^2 - 1) / ((n - 3) * (n + 5))))
}
set.seed(88)
moments <- list(mom(rexp(25)), mom(c(rnorm(40), 6, 7)), mom(c(1, 2, 3, 4, 10)))

out <- list(
  generator = sprintf("%s; car %s; lmtest %s", R.version.string, ver("car"), ver("lmtest")),
  shapiro = sw, variance = var_case, breusch_pagan = bp_case, moments = moments)
writeLines(toJSON(out, digits = NA, auto_unbox = TRUE, pretty = FALSE), "ref.json")
