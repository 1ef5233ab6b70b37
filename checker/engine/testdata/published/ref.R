# Reference values for the published end-to-end checks of the engine
# (checker/engine/engine_ref_test.go) and the simultaneous comparisons on linear
# and mixed steps (checker/engine/engine_mixed_test.go).
#
# Run from this folder with Debian's R packages:
#   Rscript ref.R
# It writes chickwts.csv (R datasets::chickwts, exported), unbalanced.csv
# (an invented, seeded repeated-measures set with missing observations)
# and ref.json. Tests read ref.json; they never run R.
#
# Libraries: R 4.2.2, lme4 1.1-31, lmerTest 3.1-3, pbkrtest 0.5.2,
# emmeans 1.8.4-1, multcomp 1.4-22, mvtnorm 1.1-3, MASS 7.3-58.2 (Debian 12
# r-cran-* packages).
#
# Every number is written with 17 significant digits, and each is meant to
# be accurate to far better than the tests' tolerances:
# - the mixed models are fitted to the REML optimum to about 1e-14 (see
#   reml_theta below), so lmerTest, pbkrtest and emmeans work at the
#   optimum rather than where bobyqa stopped (about 1e-8 away);
# - the balanced sets (oats, npk) also get their error-strata ANOVA from
#   aov, which the REML F tests equal there exactly (df 10, 45, 12, 4);
# - the simultaneous p-values and critical values of the Dunnett and Tukey
#   families come from deterministic quadrature of their defining integrals
#   with integrands that keep relative accuracy in the far tail (R's
#   integrate at rel.tol 1e-12), not from mvtnorm's randomised lattice rule
#   (whose tails, about 1e-9 absolute, were below the unadjusted p-value at
#   1e-13) nor from ptukey/qtukey (about 1e-11 absolute; qtukey to 4
#   decimals as documented). multcomp's glht and emmeans' own Tukey
#   p-values stay as second sources at their own accuracy.
suppressPackageStartupMessages({
  library(lme4); library(lmerTest); library(pbkrtest); library(emmeans)
  library(multcomp); library(mvtnorm); library(jsonlite); library(MASS)
})
options(contrasts = c("contr.sum", "contr.poly"))
emm_options(lmerTest.limit = 1e6, pbkrtest.limit = 1e6)

ver <- function(p) as.character(packageVersion(p))
meta <- list(R = R.version.string,
             packages = sapply(c("lme4", "lmerTest", "pbkrtest", "emmeans", "multcomp", "mvtnorm", "MASS"), ver))

GB <- GenzBretz(maxpts = 1e6, abseps = 1e-9, releps = 0)

# reml_theta returns lme4's theta (random-effect SDs over the residual SD)
# at the REML optimum, polished from the bobyqa fit by Newton's method on
# the analytic REML score and Hessian of the dense marginal model
# y ~ N(X b, s_0 I + sum_k s_k Z_k Z_k'):
#   score_i = -tr(P G_i)/2 + y'P G_i P y/2,
#   H_ij    =  tr(P G_i P G_j)/2 - y'P G_i P G_j P y,
# P = V^-1 - V^-1 X (X'V^-1 X)^-1 X'V^-1 (Harville 1977, JASA 72:320).
reml_theta <- function(fit) {
  X <- getME(fit, "X"); y <- getME(fit, "y")
  G <- c(lapply(getME(fit, "Ztlist"), function(z) as.matrix(crossprod(z))), list(diag(length(y))))
  m <- length(G)
  s2 <- sigma(fit)^2
  psi <- c(getME(fit, "theta")^2 * s2, s2)
  for (it in 1:50) {
    V <- Reduce(`+`, Map(`*`, psi, G))
    Vi <- solve(V)
    ViX <- Vi %*% X
    P <- Vi - ViX %*% solve(crossprod(X, ViX), t(ViX))
    Py <- drop(P %*% y)
    PG <- lapply(G, function(g) P %*% g)
    sc <- sapply(1:m, function(i) -0.5 * sum(diag(PG[[i]])) + 0.5 * sum(Py * (G[[i]] %*% Py)))
    H <- matrix(0, m, m)
    for (i in 1:m) for (j in 1:m) H[i, j] <- 0.5 * sum(PG[[i]] * t(PG[[j]])) - sum((G[[i]] %*% Py) * (P %*% (G[[j]] %*% Py)))
    step <- -solve(H, sc)
    psi <- psi + step
    if (max(abs(step / psi)) < 1e-14) break
  }
  stopifnot(max(abs(step / psi)) < 1e-13, all(psi > 0))
  sqrt(psi[-m] / psi[m])
}

# fixedopt is an lme4 optimiser that returns its start: lmer(...,
# start = list(theta = reml_theta(fit)), control = fixed) builds the fit at
# the polished optimum.
fixedopt <- function(par, fn, lower, upper, control) list(par = par, fval = fn(par), conv = 0, message = "theta from reml_theta")
fixed <- lmerControl(optimizer = fixedopt)
bobyqa <- lmerControl(optimizer = "bobyqa", optCtrl = list(rhobeg = 0.2, rhoend = 1e-12))

# strata is the error-strata ANOVA of an aov(... + Error()) fit: in a
# balanced design with positive variance components the REML F tests equal
# it, so its F, df and p are exact references for both df methods.
strata <- function(a) {
  out <- list(term = character(), F = numeric(), NumDF = numeric(), DenDF = numeric(), p = numeric())
  for (st in summary(a)) {
    tab <- st[[1]]
    rn <- trimws(rownames(tab))
    r <- which(rn == "Residuals")
    for (i in setdiff(seq_len(nrow(tab)), r)) {
      out$term <- c(out$term, rn[i]); out$F <- c(out$F, tab[i, "F value"])
      out$NumDF <- c(out$NumDF, tab[i, "Df"]); out$DenDF <- c(out$DenDF, tab[r, "Df"])
      out$p <- c(out$p, pf(tab[i, "F value"], tab[i, "Df"], tab[r, "Df"], lower.tail = FALSE))
    }
  }
  out
}

# log1mexp(d) is log(1 - exp(d)) for d < 0, accurate on the whole range
# (Maechler 2012, Accurately computing log(1 - exp(-|a|))).
log1mexp <- function(d) ifelse(d > -log(2), log(-expm1(d)), log1p(-exp(d)))

# ds is the density of s = sqrt(chi2_df / df).
ds <- function(ss, df) exp(log(2) + (df / 2) * log(df / 2) - lgamma(df / 2) + (df - 1) * log(ss) - df * ss^2 / 2)

# outer integrates f(s) against the density of s, on panels around its
# mode 1 (width about 1/sqrt(2 df)).
outer_s <- function(f, df) {
  w <- 1 / sqrt(2 * df)
  br <- c(0, pmax(0, 1 + w * c(-8, -4, -2, -1, 0, 1, 2, 4, 8)), Inf)
  br <- unique(br)
  g <- function(s) sapply(s, function(ss) f(ss) * ds(ss, df))
  sum(sapply(seq_len(length(br) - 1), function(i) integrate(g, br[i], br[i + 1], rel.tol = 1e-12, subdivisions = 1000L)$value))
}

# dunnett_tail is P(max |T_i| >= c) (two-sided) or P(max T_i >= c) for the
# multivariate t with one-factor correlation R_ij = l_i l_j: conditioning
# on the common normal factor z and the chi scale s (Dunnett 1955, JASA
# 50:1096),
#   E_s E_z [1 - prod_i (1 - q_i(z, s))],  q_i the tail of the i-th normal
# given z, summed as -expm1(sum log1p(-q_i)) so that tiny tails keep their
# relative accuracy.
dunnett_tail <- function(c, lam, df, two) {
  inner <- function(ss) {
    g <- function(z) {
      lp <- 0
      for (l in lam) {
        sd <- sqrt(1 - l^2)
        q <- pnorm((c * ss - l * z) / sd, lower.tail = FALSE)
        if (two) q <- q + pnorm((-c * ss - l * z) / sd)
        lp <- lp + log1p(-q)
      }
      -expm1(lp) * dnorm(z)
    }
    br <- c(-Inf, -10, -5, -2, 0, 2, 5, 10, Inf)
    sum(sapply(1:(length(br) - 1), function(i) integrate(g, br[i], br[i + 1], rel.tol = 1e-12, subdivisions = 1000L)$value))
  }
  outer_s(inner, df)
}

# tukey_tail is P(Q >= q) for the studentized range of k means on df
# degrees of freedom, with the range tail of k standard normals written
# without cancellation:
#   P(W >= w) = k int phi(z) {(1 - Phi(z))^(k-1) - (Phi(z + w) - Phi(z))^(k-1)} dz
#             = k int phi(z) a^(k-1) [1 - (1 - c/a)^(k-1)] dz,
# a = 1 - Phi(z), c = 1 - Phi(z + w) (the minimum of the k normals is z).
tukey_tail <- function(q, k, df) {
  inner <- function(ss) {
    w <- q * ss
    g <- function(z) {
      la <- pnorm(z, lower.tail = FALSE, log.p = TRUE)
      lc <- pnorm(z + w, lower.tail = FALSE, log.p = TRUE)
      k * dnorm(z) * exp((k - 1) * la) * -expm1((k - 1) * log1mexp(lc - la))
    }
    br <- c(-Inf, -10, -5, -2, 0, 2, 5, 10, Inf)
    sum(sapply(1:(length(br) - 1), function(i) integrate(g, br[i], br[i + 1], rel.tol = 1e-12, subdivisions = 1000L)$value))
  }
  outer_s(inner, df)
}

# Single-step Dunnett family from emmeans contrasts (adjust none), common
# df = min(df) as furrow documents, by the Dunnett integral: adjusted
# p-values, the critical value (uniroot to 1e-13) and the limits from it.
dunnett <- function(con, side = "two-sided", level = 0.95) {
  sd <- switch(side, "two-sided" = 0, greater = 1, less = -1)
  s <- as.data.frame(summary(con, adjust = "none", infer = c(TRUE, TRUE), side = sd))
  R <- cov2cor(vcov(con))
  df <- min(s$df)
  t <- s$estimate / s$SE
  lam <- onefactor(R)
  two <- side == "two-sided"
  sg <- switch(side, "two-sided" = 1, greater = 1, less = -1)
  x <- if (two) abs(t) else sg * t
  p <- sapply(x, function(xx) dunnett_tail(xx, lam, df, two))
  crit <- uniroot(function(x) dunnett_tail(x, lam, df, two) - (1 - level), c(1, 6), tol = 1e-13)$root
  if (two) { lo <- s$estimate - crit * s$SE; hi <- s$estimate + crit * s$SE }
  else if (side == "greater") { lo <- s$estimate - crit * s$SE; hi <- rep(Inf, length(t)) }
  else { lo <- rep(-Inf, length(t)); hi <- s$estimate + crit * s$SE }
  list(contrast = as.character(s$contrast), estimate = s$estimate, SE = s$SE, df = s$df,
       p = s$p.value, p_adj = p, lower = lo, upper = hi, critical = crit, family_df = df)
}

# onefactor returns l with R_ij = l_i l_j (i != j), checking the structure.
onefactor <- function(R) {
  m <- nrow(R)
  if (m == 1) return(0)
  if (m == 2) return(rep(sqrt(R[1, 2]), 2))
  l <- sapply(1:m, function(i) { o <- setdiff(1:m, i); sqrt(R[i, o[1]] * R[i, o[2]] / R[o[1], o[2]]) })
  L <- outer(l, l); diag(L) <- 1
  stopifnot(max(abs(L - R)) < 1e-8)
  l
}

# Tukey family on the common df = min(df): p-values and the critical value
# (uniroot to 1e-13) from tukey_tail.
tukey <- function(con, k, level = 0.95) {
  s <- as.data.frame(summary(con, adjust = "none", infer = c(TRUE, TRUE)))
  df <- min(s$df)
  t <- s$estimate / s$SE
  crit <- uniroot(function(x) tukey_tail(x, k, df) - (1 - level), c(1, 10), tol = 1e-13)$root / sqrt(2)
  list(contrast = as.character(s$contrast), estimate = s$estimate, SE = s$SE, df = s$df, p = s$p.value,
       p_adj = sapply(sqrt(2) * abs(t), function(x) tukey_tail(x, k, df)),
       lower = s$estimate - crit * s$SE, upper = s$estimate + crit * s$SE, critical = crit, family_df = df)
}

emm <- function(e) {
  s <- as.data.frame(summary(e))
  list(level = as.character(s[[1]]), emmean = s$emmean, SE = s$SE, df = s$df, lower = s$lower.CL, upper = s$upper.CL)
}

# an is the type III F table with this ddf: lmerTest's contest on each
# term's own columns of the sum-to-zero model matrix (all cells present:
# exactly the hypotheses of anova(fit, type = 3)). anova() itself builds
# its contrasts numerically; in lmerTest 3.1-3 that put -2e-7 on
# treatment1:time1 in the time contrast of the unbalanced set (and moved
# the oats N F by 3.5e-9), which the exact unit rows avoid.
an <- function(fit, ddf) {
  X <- getME(fit, "X")
  labs <- attr(terms(fit), "term.labels")
  rows <- lapply(seq_along(labs), function(i) {
    L <- diag(ncol(X))[attr(X, "assign") == i, , drop = FALSE]
    contest(fit, L, ddf = ddf)
  })
  pick <- function(col) sapply(rows, function(r) r[[col]])
  list(term = labs, F = pick("F value"), NumDF = pick("NumDF"), DenDF = pick("DenDF"), p = pick("Pr(>F)"))
}

vc <- function(fit) {
  v <- as.data.frame(VarCorr(fit))
  list(group = v$grp, variance = v$vcov)
}

out <- list(meta = meta)

# ---- Oats split-plot (Yates 1935; MASS::oats) -----------------------------
oats <- MASS::oats
fo <- lmer(Y ~ V * N + (1 | B) + (1 | B:V), data = oats, REML = TRUE, control = bobyqa)
fo <- lmer(Y ~ V * N + (1 | B) + (1 | B:V), data = oats, REML = TRUE, start = list(theta = reml_theta(fo)), control = fixed)
o <- list(calls = c("lmer(Y ~ V * N + (1 | B) + (1 | B:V), data = MASS::oats, REML = TRUE), contr.sum, at reml_theta",
                    "anova(fit, type = 3, ddf = 'Satterthwaite' / 'Kenward-Roger')",
                    "emmeans(fit, ~ N / ~ V, lmer.df = ...); contrasts trt.vs.ctrl, pairwise",
                    "summary(aov(Y ~ V * N + Error(B/V), data = MASS::oats))"),
          varcomp = vc(fo), reml = REMLcrit(fo),
          strata = strata(aov(Y ~ V * N + Error(B / V), data = oats)))
for (m in c("satterthwaite", "kenward-roger")) {
  ddf <- if (m == "satterthwaite") "Satterthwaite" else "Kenward-Roger"
  eN <- emmeans(fo, ~N, lmer.df = m)
  eV <- emmeans(fo, ~V, lmer.df = m)
  hv <- summary(contrast(eV, "trt.vs.ctrl", ref = 3), adjust = "holm")
  o[[m]] <- list(anova = an(fo, ddf), emm_N = emm(eN),
                 dunnett_N = dunnett(contrast(eN, "trt.vs.ctrl", ref = 1)),
                 dunnett_N_greater = dunnett(contrast(eN, "trt.vs.ctrl", ref = 1), side = "greater"),
                 tukey_N = tukey(contrast(eN, "pairwise"), 4),
                 tukey_V = tukey(contrast(eV, "pairwise"), 3),
                 holm_V = list(contrast = as.character(hv$contrast), p_adj = hv$p.value))
}
out$oats <- o

# ---- npk with random blocks (R datasets::npk) ------------------------------
fn <- lmer(yield ~ N * P * K + (1 | block), data = npk, REML = TRUE, control = bobyqa)
fn <- lmer(yield ~ N * P * K + (1 | block), data = npk, REML = TRUE, start = list(theta = reml_theta(fn)), control = fixed)
out$npk <- list(call = "lmer(yield ~ N * P * K + (1 | block), data = npk, REML = TRUE), contr.sum, at reml_theta; summary(aov(yield ~ N * P * K + Error(block)))",
                varcomp = vc(fn), reml = REMLcrit(fn),
                strata = strata(aov(yield ~ N * P * K + Error(block), data = npk)),
                satterthwaite = list(anova = an(fn, "Satterthwaite")),
                `kenward-roger` = list(anova = an(fn, "Kenward-Roger")))

# ---- chickwts one-way, unequal replication (R datasets::chickwts) ----------
write.csv(chickwts[, c("feed", "weight")], "chickwts.csv", row.names = FALSE, quote = FALSE)
fc <- lm(weight ~ feed, data = chickwts)
ec <- emmeans(fc, ~feed)
g <- glht(fc, linfct = mcp(feed = "Dunnett"))
set.seed(1)
gs <- summary(g, test = adjusted("single-step", algorithm = GB))
cc <- contrast(ec, "trt.vs.ctrl", ref = 1)
out$chickwts <- list(call = "lm(weight ~ feed, data = chickwts); emmeans; glht(mcp(feed = 'Dunnett'))",
                     emm = emm(ec), dunnett = dunnett(cc), dunnett_less = dunnett(cc, side = "less"),
                     glht_dunnett = list(contrast = names(gs$test$coefficients), p_adj = as.numeric(gs$test$pvalues)),
                     tukey = tukey(contrast(ec, "pairwise"), 6),
                     emmeans_tukey = as.data.frame(summary(contrast(ec, "pairwise"), adjust = "tukey"))$p.value,
                     bonferroni = summary(cc, adjust = "bonferroni")$p.value,
                     holm = summary(cc, adjust = "holm")$p.value,
                     hochberg = summary(cc, adjust = "hochberg")$p.value,
                     bh = summary(cc, adjust = "BH")$p.value)

# ---- invented unbalanced repeated measures (seeded) ------------------------
set.seed(20260301)
blocks <- sprintf("B%02d", 1:8)
trts <- c("ctrl", "low", "high")
d <- expand.grid(time = c("t1", "t2"), treatment = trts, block = blocks, stringsAsFactors = FALSE)
d$plot <- paste0(d$block, "-", d$treatment)
bef <- rnorm(8, 0, 2); names(bef) <- blocks
pef <- rnorm(24, 0, 1.5); names(pef) <- unique(d$plot)
eff <- c(ctrl = 0, low = 1.2, high = 2.5)
d$y <- round(20 + bef[d$block] + pef[d$plot] + eff[d$treatment] + ifelse(d$time == "t2", 1, 0) +
             ifelse(d$time == "t2" & d$treatment == "high", 1, 0) + rnorm(nrow(d), 0, 1), 3)
d <- d[-sample(nrow(d), 7), ]
d <- d[, c("block", "plot", "treatment", "time", "y")]
write.csv(d, "unbalanced.csv", row.names = FALSE, quote = FALSE)
d$treatment <- factor(d$treatment, levels = trts)
fu <- lmer(y ~ treatment * time + (1 | block) + (1 | plot), data = d, REML = TRUE, control = bobyqa)
fu <- lmer(y ~ treatment * time + (1 | block) + (1 | plot), data = d, REML = TRUE, start = list(theta = reml_theta(fu)), control = fixed)
u <- list(call = "lmer(y ~ treatment * time + (1 | block) + (1 | plot), REML = TRUE), contr.sum, at reml_theta",
          varcomp = vc(fu), reml = REMLcrit(fu))
for (m in c("satterthwaite", "kenward-roger")) {
  ddf <- if (m == "satterthwaite") "Satterthwaite" else "Kenward-Roger"
  et <- emmeans(fu, ~treatment, lmer.df = m)
  u[[m]] <- list(anova = an(fu, ddf), emm = emm(et),
                 vs_ctrl = as.data.frame(summary(contrast(et, "trt.vs.ctrl", ref = 1), adjust = "none", infer = c(TRUE, TRUE))),
                 tukey = tukey(contrast(et, "pairwise"), 3),
                 dunnett = dunnett(contrast(et, "trt.vs.ctrl", ref = 1)))
}
out$unbalanced <- u

# full17 turns every number into JSON text with 17 significant digits
# (jsonlite writes at most 15); non-finite values become the strings "Inf",
# "-Inf" and "NA", and data frames lists of rows, as jsonlite writes them.
full17 <- function(x) {
  num <- function(v) if (is.finite(v)) sprintf("%.17g", v) else if (is.na(v)) '"NA"' else if (v > 0) '"Inf"' else '"-Inf"'
  if (is.data.frame(x)) return(lapply(seq_len(nrow(x)), function(i) full17(lapply(x[i, , drop = FALSE], function(col) if (is.factor(col)) as.character(col) else col))))
  if (is.list(x)) return(lapply(x, full17))
  if (is.numeric(x)) {
    v <- vapply(unname(x), num, "")
    return(structure(if (length(v) == 1) v else paste0("[", paste(v, collapse = ", "), "]"), class = "json"))
  }
  x
}
writeLines(toJSON(full17(out), auto_unbox = TRUE, pretty = TRUE, json_verbatim = TRUE), "ref.json")
