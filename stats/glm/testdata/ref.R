## Reference values for stats/glm tests. Run from stats/glm/testdata:
##   Rscript ref.R
## Writes ref.json. Requires R (stats, datasets), MASS, car and jsonlite
## (Debian packages r-base, r-cran-mass, r-cran-car, r-cran-jsonlite).
##
## Data: three invented, seeded trials generated below (counts in a blocked
## trial with plot areas as an offset; germination proportions with trials;
## over-dispersed trap counts with trap nights as an offset) and three data
## sets shipped with R: datasets::InsectSprays (Beall 1942, Biometrika
## 32:243), MASS::menarche (Milicer & Szczotka 1966) and MASS::quine
## (Quine's school absences; Aitkin 1978). The data are written into
## ref.json with the fits, so the Go tests never run R.
##
## Every glm is fitted with glm.control(epsilon = 1e-14, maxit = 100), far
## tighter than R's default 1e-8, and then refitted from its own estimates
## (start = coef) until they change by less than 1e-15 relative (tglm):
## with a non-canonical link IRLS converges only linearly, and R's
## deviance criterion alone leaves the menarche cloglog fit off by 2e-9.
## R clamps fitted probabilities to [eps, 1 - eps] (eps = 2.2e-16); the
## oldest menarche group under the cloglog link is fitted at that clamp,
## and the Go test leaves such rows out of the per-row comparisons. MASS::glm.nb stops its inner Newton
## steps for theta at |step| <= 1.2e-4 (theta.ml's default eps); its fit is
## recorded as "raw" and then refined by alternating MASS::theta.ml with
## eps = 1e-10 (an absolute Newton step) and glm(family = MASS::negative.binomial(theta)) until theta
## changes by less than 1e-13 relative ("refined"; see refine_nb).
suppressMessages(library(MASS))
suppressMessages(library(car))
library(jsonlite)

ctl <- glm.control(epsilon = 1e-14, maxit = 100)

out <- list(meta = list(
  R = R.version.string, MASS = as.character(packageVersion("MASS")),
  car = as.character(packageVersion("car")),
  jsonlite = as.character(packageVersion("jsonlite")),
  control = "glm.control(epsilon = 1e-14, maxit = 100)"))

num <- function(x) unname(as.numeric(x))

## glm, then refits from its own estimates until they settle.
tglm <- function(formula, family, data, weights = NULL, start = NULL) {
  data$.w <- if (is.null(weights)) rep(1, nrow(data)) else weights
  f <- glm(formula, family = family, data = data, weights = .w, start = start, control = ctl)
  nd <- f$null.deviance # the refits' maxit = 3 would cut short the null fit of a model with an offset
  for (k in 1:20) {
    g <- suppressWarnings(glm(formula, family = family, data = data, weights = .w, start = coef(f),
                              control = glm.control(epsilon = 1e-16, maxit = 3)))
    d <- max(abs(coef(g) - coef(f)) / pmax(abs(coef(f)), 1e-300), na.rm = TRUE)
    f <- g
    if (d < 1e-15) break
  }
  f$call$formula <- formula
  f$null.deviance <- nd
  f
}

## Everything the Go Result reports, for one glm or negbin fit.
## dispersion = 1 for glm(family = negative.binomial(theta)), whose
## summary would otherwise estimate it (glm.nb's summary takes 1).
fitinfo <- function(fit, dispersion = NULL) {
  s <- summary(fit, dispersion = dispersion)
  cf <- coef(fit)
  ct <- s$coefficients
  pick <- function(k) { v <- rep(NA_real_, length(cf)); names(v) <- names(cf); v[rownames(ct)] <- ct[, k]; unname(v) }
  fam <- family(fit)$family
  quasi <- grepl("^quasi", fam)
  ll <- if (quasi) NA_real_ else as.numeric(logLik(fit))
  list(
    family = fam, link = family(fit)$link, converged = fit$converged, iter = fit$iter,
    coef_names = names(cf), coef = unname(cf), se = pick(2), stat = pick(3), p = pick(4),
    aliased = names(cf)[is.na(cf)],
    dispersion = s$dispersion, deviance = fit$deviance, null_deviance = fit$null.deviance,
    df_residual = fit$df.residual, df_null = fit$df.null, rank = fit$rank,
    logLik = ll, AIC = if (quasi) NA_real_ else AIC(fit),
    pearson = sum(residuals(fit, type = "pearson")^2),
    fitted = num(fitted(fit)), eta = num(fit$linear.predictors),
    resid_working = num(residuals(fit, type = "working")),
    resid_pearson = num(residuals(fit, type = "pearson")),
    resid_deviance = num(residuals(fit, type = "deviance")),
    hat = num(hatvalues(fit)),
    cov_unscaled = unname(s$cov.unscaled))
}

## Alternate theta.ml (tight) and glm at fixed theta until theta settles.
refine_nb <- function(fit, formula, data) {
  y <- fit$y; w <- rep(1, length(y))
  th <- fit$theta; b <- coef(fit)
  for (i in 1:200) {
    g <- tglm(formula, negative.binomial(th), data, start = b)
    th1 <- theta.ml(y, fitted(g), sum(w), w, limit = 200, eps = 1e-10)
    b <- coef(g)
    done <- abs(th1 - th) <= 1e-13 * th1
    th <- as.numeric(th1)
    if (done) break
  }
  g <- tglm(formula, negative.binomial(th), data, start = b)
  mu <- fitted(g)
  info <- sum(w * (-trigamma(th + y) + trigamma(th) - 1 / th + 2 / (mu + th) - (y + th) / (mu + th)^2))
  ll <- sum(w * (lgamma(th + y) - lgamma(th) - lgamma(y + 1) + th * log(th) +
                 y * log(mu + (y == 0)) - (th + y) * log(th + mu)))
  r <- fitinfo(g, dispersion = 1)
  r$theta <- th; r$SE_theta <- sqrt(1 / info); r$logLik <- ll
  r$AIC <- -2 * ll + 2 * g$rank + 2
  r$theta_score <- sum(w * (digamma(th + y) - digamma(th) + log(th) + 1 - log(th + mu) - (y + th) / (mu + th)))
  r$alternations <- i
  r
}
nbinfo <- function(fit) {
  r <- fitinfo(fit)
  r$theta <- fit$theta; r$SE_theta <- fit$SE.theta
  r$logLik <- fit$twologlik / 2; r$AIC <- fit$aic
  r
}

## Bounds of the randomised quantile residuals (Dunn & Smyth 1996):
## a = F(y - 1), b = F(y) and the upper tails P(Y >= y), P(Y > y).
bounds <- function(lo, hi, up_lo, up_hi) list(a = num(lo), b = num(hi), sa = num(up_lo), sb = num(up_hi))

## The zero-inflation score statistic of van den Broek (1995), Biometrics
## 51:738, by its formula: U = sum((1{y=0} - p0)/p0), V = sum((1 - p0)/p0)
## - a' (X'WX)^-1 a - c^2 / i_theta with a = sum x_i mu_i (dmu/deta)_i / V_i
## (count scale) and, for the negative binomial, c = sum d/dtheta log p0_i
## and i_theta the observed information of theta.
zeroinfl <- function(fit, y, n = NULL, theta = NULL, info_theta = NULL) {
  mu <- fitted(fit); X <- model.matrix(fit)[, !is.na(coef(fit)), drop = FALSE]
  eta <- fit$linear.predictors; me <- family(fit)$mu.eta(eta)
  if (!is.null(n)) {                       # binomial, count scale
    p0 <- (1 - mu)^n; a <- colSums(X * (n * me / (1 - mu)))
  } else if (!is.null(theta)) {            # negative binomial
    p0 <- (theta / (theta + mu))^theta; a <- colSums(X * (mu * me / (mu + mu^2 / theta)))
  } else {                                 # Poisson
    p0 <- exp(-mu); a <- colSums(X * (mu * me / mu))
  }
  U <- sum(((y == 0) - p0) / p0)
  V <- sum((1 - p0) / p0) - drop(t(a) %*% summary(fit)$cov.unscaled %*% a)
  if (!is.null(theta)) {
    cth <- sum(log(theta / (theta + mu)) + mu / (theta + mu))
    V <- V - cth^2 / info_theta
  }
  list(observed = sum(y == 0), expected = sum(p0), U = U, V = V, score = U^2 / V,
       p = pchisq(U^2 / V, 1, lower.tail = FALSE), z = U / sqrt(V),
       p_one_sided = pnorm(U / sqrt(V), lower.tail = FALSE))
}
disp <- function(fit) {
  x2 <- sum(residuals(fit, type = "pearson")^2)
  list(pearson = x2, df = fit$df.residual, ratio = x2 / fit$df.residual,
       p = pchisq(x2, fit$df.residual, lower.tail = FALSE))
}
lrt <- function(a) list(df = a$Df[2], deviance = a$Deviance[2],
                        p = if (!is.null(a[["Pr(>Chi)"]])) a[["Pr(>Chi)"]][2] else a[["Pr(>F)"]][2],
                        F = if (!is.null(a$F)) a$F[2] else NA_real_)
wald <- function(h) list(df = h$Df[2], stat = if (!is.null(h$Chisq)) h$Chisq[2] else h$F[2],
                         p = if (!is.null(h[["Pr(>Chisq)"]])) h[["Pr(>Chisq)"]][2] else h[["Pr(>F)"]][2])

## 1. Counts in a blocked trial: 6 treatments x 5 blocks, plot areas as an
## offset; one treatment (T6) nearly clean.
set.seed(20250113)
counts <- expand.grid(trt = paste0("T", 1:6), block = paste0("B", 1:5), stringsAsFactors = TRUE)
counts$area <- round(runif(nrow(counts), 8, 12), 1)
beff <- c(0, 0.3, -0.2, 0.1, 0.4)[as.integer(counts$block)]
teff <- c(0, -0.4, -0.9, 0.2, -1.5, -3)[as.integer(counts$trt)]
counts$y <- rpois(nrow(counts), counts$area * exp(0.8 + beff + teff))
counts$w <- round(runif(nrow(counts), 0.5, 2), 2)
fp <- tglm(y ~ block + trt + offset(log(area)), poisson, counts)
fq <- tglm(y ~ block + trt + offset(log(area)), quasipoisson, counts)
fp0 <- tglm(y ~ block + offset(log(area)), poisson, counts)
fq0 <- tglm(y ~ block + offset(log(area)), quasipoisson, counts)
fw <- tglm(y ~ block + trt + offset(log(area)), poisson, counts, weights = counts$w)
L <- rbind(c(0, 0, 0, 0, 0, 1, -1, 0, 0, 0), c(0, 0, 0, 0, 0, 0, 0, 1, -1, 0))
colnames(L) <- names(coef(fp))
mu <- fitted(fp); y <- counts$y
out$counts <- list(
  data = list(trt = as.integer(counts$trt) - 1L, block = as.integer(counts$block) - 1L,
              area = counts$area, y = counts$y, w = counts$w),
  call = "glm(y ~ block + trt + offset(log(area)), family = poisson / quasipoisson); weights = w; anova(fit0, fit, test = 'Chisq' / 'F'); car::linearHypothesis(fit, L, test = 'Chisq' / 'F')",
  poisson = fitinfo(fp), quasipoisson = fitinfo(fq), weighted = fitinfo(fw),
  lrt_poisson = lrt(anova(fp0, fp, test = "Chisq")), lrt_quasi = lrt(anova(fq0, fq, test = "F")),
  L = unname(L),
  wald_poisson = wald(linearHypothesis(fp, L, test = "Chisq")),
  wald_quasi = wald(linearHypothesis(fq, L, test = "F")),
  bounds = bounds(ppois(y - 1, mu), ppois(y, mu), ppois(y - 1, mu, lower.tail = FALSE), ppois(y, mu, lower.tail = FALSE)),
  dispersion = disp(fp), zero = zeroinfl(fp, y))

## 2. Germination: 5 seed treatments x 4 blocks, trials 20-50 seeds a dish.
set.seed(20250114)
germ <- expand.grid(trt = paste0("S", 1:5), block = paste0("B", 1:4), stringsAsFactors = TRUE)
germ$n <- sample(20:50, nrow(germ), replace = TRUE)
lp <- 0.6 + c(0, 0.5, -0.7, 1.2, 0.2)[as.integer(germ$trt)] + c(0, -0.3, 0.2, 0.1)[as.integer(germ$block)]
germ$y <- rbinom(nrow(germ), germ$n, plogis(lp))
gf <- function(link, fam = binomial) tglm(cbind(y, n - y) ~ block + trt, fam(link = link), germ)
gl <- gf("logit"); gp <- gf("probit"); gc <- gf("cloglog"); gq <- gf("logit", quasibinomial)
gl0 <- tglm(cbind(y, n - y) ~ block, binomial, germ)
gq0 <- tglm(cbind(y, n - y) ~ block, quasibinomial, germ)
mu <- fitted(gl); y <- germ$y; n <- germ$n
out$germ <- list(
  data = list(trt = as.integer(germ$trt) - 1L, block = as.integer(germ$block) - 1L, n = germ$n, y = germ$y),
  call = "glm(cbind(y, n - y) ~ block + trt, family = binomial(link = logit / probit / cloglog) / quasibinomial); anova(fit0, fit)",
  logit = fitinfo(gl), probit = fitinfo(gp), cloglog = fitinfo(gc), quasi = fitinfo(gq),
  lrt_logit = lrt(anova(gl0, gl, test = "Chisq")), lrt_quasi = lrt(anova(gq0, gq, test = "F")),
  bounds = bounds(pbinom(y - 1, n, mu), pbinom(y, n, mu), pbinom(y - 1, n, mu, lower.tail = FALSE), pbinom(y, n, mu, lower.tail = FALSE)),
  dispersion = disp(gl), zero = zeroinfl(gl, y, n = n))

## 3. Over-dispersed trap counts: 5 treatments x 8 blocks, negative
## binomial with size 2.5, trap nights 3-7 as an offset.
set.seed(20250115)
traps <- expand.grid(trt = paste0("T", 1:5), block = paste0("B", 1:8), stringsAsFactors = TRUE)
traps$nights <- sample(3:7, nrow(traps), replace = TRUE)
m <- traps$nights * exp(0.9 + c(0, -0.5, -1.1, 0.3, -1.6)[as.integer(traps$trt)] + rnorm(8, 0, 0.3)[as.integer(traps$block)])
traps$y <- rnbinom(nrow(traps), mu = m, size = 2.5)
fnb <- glm.nb(y ~ block + trt + offset(log(nights)), data = traps, control = ctl)
fnb0 <- glm.nb(y ~ block + offset(log(nights)), data = traps, control = ctl)
rnb <- refine_nb(fnb, y ~ block + trt + offset(log(nights)), traps)
rnb0 <- refine_nb(fnb0, y ~ block + offset(log(nights)), traps)
fpt <- tglm(y ~ block + trt + offset(log(nights)), poisson, traps)
gnb <- tglm(y ~ block + trt + offset(log(nights)), negative.binomial(rnb$theta), traps)
th <- rnb$theta; mu <- rnb$fitted; y <- traps$y
out$traps <- list(
  data = list(trt = as.integer(traps$trt) - 1L, block = as.integer(traps$block) - 1L, nights = traps$nights, y = traps$y),
  call = "MASS::glm.nb(y ~ block + trt + offset(log(nights))), refined; anova(nb0, nb) (MASS anova.negbin); glm(..., poisson) on the same data",
  negbin_raw = nbinfo(fnb), negbin = rnb, negbin0 = rnb0,
  lrt_negbin_raw = list(stat = anova(fnb0, fnb)[2, "LR stat."], df = anova(fnb0, fnb)[2, "   df"], p = anova(fnb0, fnb)[2, "Pr(Chi)"]),
  lrt_negbin = list(stat = 2 * (rnb$logLik - rnb0$logLik), df = rnb$rank - rnb0$rank,
                    p = pchisq(2 * (rnb$logLik - rnb0$logLik), rnb$rank - rnb0$rank, lower.tail = FALSE)),
  poisson = fitinfo(fpt),
  bounds = bounds(pnbinom(y - 1, size = th, mu = mu), pnbinom(y, size = th, mu = mu),
                  pnbinom(y - 1, size = th, mu = mu, lower.tail = FALSE), pnbinom(y, size = th, mu = mu, lower.tail = FALSE)),
  dispersion_poisson = disp(fpt), zero_poisson = zeroinfl(fpt, y),
  zero_negbin = zeroinfl(gnb, y, theta = th, info_theta = 1 / rnb$SE_theta^2))

## 4. Excess zeros: Poisson counts (4 treatments x 15 plots) with a fifth
## of the plots empty whatever the treatment.
set.seed(20250116)
zip <- data.frame(trt = factor(rep(paste0("T", 1:4), each = 15)))
zip$y <- rpois(60, exp(1.2 + c(0, 0.3, -0.4, 0.5)[as.integer(zip$trt)])) * rbinom(60, 1, 0.8)
zp <- tglm(y ~ trt, poisson, zip)
out$zip <- list(
  data = list(trt = as.integer(zip$trt) - 1L, y = zip$y),
  call = "glm(y ~ trt, poisson); van den Broek score statistic by its formula",
  poisson = fitinfo(zp), zero = zeroinfl(zp, zip$y), dispersion = disp(zp))

## 5. Published data shipped with R.
ins <- InsectSprays
ip <- tglm(count ~ spray, poisson, ins)
iq <- tglm(count ~ spray, quasipoisson, ins)
inb <- glm.nb(count ~ spray, data = ins, control = ctl)
ip0 <- tglm(count ~ 1, poisson, ins)
out$insects <- list(
  source = "datasets::InsectSprays (Beall 1942, Biometrika 32:243)",
  data = list(spray = as.integer(ins$spray) - 1L, count = ins$count),
  call = "glm(count ~ spray, poisson / quasipoisson); MASS::glm.nb(count ~ spray), refined; anova(glm(count ~ 1), fit)",
  poisson = fitinfo(ip), quasipoisson = fitinfo(iq),
  negbin = refine_nb(inb, count ~ spray, ins),
  lrt_poisson = lrt(anova(ip0, ip, test = "Chisq")), dispersion = disp(ip), zero = zeroinfl(ip, ins$count))

men <- menarche
mf <- function(link) tglm(cbind(Menarche, Total - Menarche) ~ Age, binomial(link = link), men)
out$menarche <- list(
  source = "MASS::menarche (Milicer & Szczotka 1966, Hum Biol 38:199)",
  data = list(age = men$Age, total = men$Total, menarche = men$Menarche),
  call = "glm(cbind(Menarche, Total - Menarche) ~ Age, binomial(link = logit / probit / cloglog))",
  logit = fitinfo(mf("logit")), probit = fitinfo(mf("probit")), cloglog = fitinfo(mf("cloglog")))

qn <- quine
qnb <- glm.nb(Days ~ Eth + Sex + Age + Lrn, data = qn, control = ctl)
out$quine <- list(
  source = "MASS::quine (Quine's school absences; Aitkin 1978, JRSS A 141:195)",
  data = list(eth = as.integer(qn$Eth) - 1L, sex = as.integer(qn$Sex) - 1L, age = as.integer(qn$Age) - 1L,
              lrn = as.integer(qn$Lrn) - 1L, days = qn$Days),
  call = "MASS::glm.nb(Days ~ Eth + Sex + Age + Lrn), refined",
  negbin_raw = nbinfo(qnb), negbin = refine_nb(qnb, Days ~ Eth + Sex + Age + Lrn, qn))

writeLines(toJSON(out, digits = I(17), auto_unbox = TRUE, na = "null", pretty = TRUE), "ref.json")
