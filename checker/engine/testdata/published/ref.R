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
# emmeans 1.8.4-1, multcomp 1.4-22, mvtnorm 1.1-3, MASS 7.3-58.2.
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

# critical solves tail(c) = alpha with uniroot at a tight tolerance (the
# lattice rule is re-seeded on every call so that tail is a fixed function).
critical <- function(tail, alpha) {
  uniroot(function(x) { set.seed(1); tail(x) - alpha }, c(1, 6), tol = 1e-9)$root
}

# Single-step Dunnett family from emmeans contrasts (adjust none) with the
# multivariate t of mvtnorm at a tight tolerance, common df = min(df).
dunnett <- function(con, side = "two-sided", level = 0.95) {
  sd <- switch(side, "two-sided" = 0, greater = 1, less = -1)
  s <- as.data.frame(summary(con, adjust = "none", infer = c(TRUE, TRUE), side = sd))
  R <- cov2cor(vcov(con))
  df <- min(s$df)
  # mvtnorm needs an integer df: the balanced cases have the stratum df to
  # 1e-6; any other df is an error here.
  stopifnot(abs(df - round(df)) < 1e-4)
  df <- round(df)
  t <- s$estimate / s$SE
  set.seed(1)
  if (side == "two-sided") {
    p <- sapply(abs(t), function(x) 1 - pmvt(lower = rep(-x, length(t)), upper = rep(x, length(t)),
                                             df = df, corr = R, algorithm = GB)[1])
    crit <- critical(function(x) 1 - pmvt(lower = rep(-x, length(t)), upper = rep(x, length(t)),
                                          df = df, corr = R, algorithm = GB)[1], 1 - level)
    lo <- s$estimate - crit * s$SE; hi <- s$estimate + crit * s$SE
  } else {
    sg <- if (side == "greater") 1 else -1
    p <- sapply(sg * t, function(x) 1 - pmvt(lower = rep(-Inf, length(t)), upper = rep(x, length(t)),
                                             df = df, corr = R, algorithm = GB)[1])
    crit <- critical(function(x) 1 - pmvt(lower = rep(-Inf, length(t)), upper = rep(x, length(t)),
                                          df = df, corr = R, algorithm = GB)[1], 1 - level)
    if (side == "greater") { lo <- s$estimate - crit * s$SE; hi <- rep(Inf, length(t)) }
    else { lo <- rep(-Inf, length(t)); hi <- s$estimate + crit * s$SE }
  }
  # The same critical value from the Dunnett (1955) integral for the
  # one-factor correlation R_ij = l_i l_j, by R's adaptive quadrature
  # (deterministic; the lattice-rule value above carries its own noise).
  lam <- onefactor(R)
  ci <- uniroot(function(x) dunnett_tail(x, lam, df, side == "two-sided") - (1 - level), c(1, 6), tol = 1e-13)$root
  list(contrast = as.character(s$contrast), estimate = s$estimate, SE = s$SE, df = s$df,
       p = s$p.value, p_adj = p, lower = lo, upper = hi, critical = crit, critical_integral = ci, family_df = df)
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

# dunnett_tail is P(max |T_i| >= c) (two-sided) or P(max T_i >= c) for the
# multivariate t with one-factor correlation: conditioning on the common
# normal factor z and the chi scale s (Dunnett 1955, JASA 50:1096),
#   1 - E_s E_z prod_i [Phi((c s - l_i z)/sqrt(1 - l_i^2)) - Phi((-c s - l_i z)/sqrt(1 - l_i^2))].
dunnett_tail <- function(c, lam, df, two) {
  inner <- function(ss) {
    g <- function(z) {
      v <- dnorm(z)
      for (l in lam) {
        sd <- sqrt(1 - l^2)
        v <- v * (if (two) pnorm((c * ss - l * z) / sd) - pnorm((-c * ss - l * z) / sd) else pnorm((c * ss - l * z) / sd))
      }
      v
    }
    integrate(g, -Inf, Inf, rel.tol = 1e-12)$value
  }
  # density of s = sqrt(chi2_df / df)
  ds <- function(ss) exp(log(2) + (df / 2) * log(df / 2) - lgamma(df / 2) + (df - 1) * log(ss) - df * ss^2 / 2)
  1 - integrate(function(s) sapply(s, function(ss) inner(ss) * ds(ss)), 0, Inf, rel.tol = 1e-12)$value
}

# Tukey family on the common df = min(df) with R's ptukey/qtukey.
tukey <- function(con, k, level = 0.95) {
  s <- as.data.frame(summary(con, adjust = "none", infer = c(TRUE, TRUE)))
  df <- min(s$df)
  t <- s$estimate / s$SE
  crit <- qtukey(level, k, df) / sqrt(2)
  list(contrast = as.character(s$contrast), estimate = s$estimate, SE = s$SE, df = s$df, p = s$p.value,
       p_adj = ptukey(sqrt(2) * abs(t), k, df, lower.tail = FALSE),
       lower = s$estimate - crit * s$SE, upper = s$estimate + crit * s$SE, critical = crit, family_df = df)
}

emm <- function(e) {
  s <- as.data.frame(summary(e))
  list(level = as.character(s[[1]]), emmean = s$emmean, SE = s$SE, df = s$df, lower = s$lower.CL, upper = s$upper.CL)
}

an <- function(fit, ddf) {
  a <- anova(fit, type = 3, ddf = ddf)
  list(term = rownames(a), F = a[["F value"]], NumDF = a$NumDF, DenDF = a$DenDF, p = a[["Pr(>F)"]])
}

vc <- function(fit) {
  v <- as.data.frame(VarCorr(fit))
  list(group = v$grp, variance = v$vcov)
}

out <- list(meta = meta)

# ---- Oats split-plot (Yates 1935; MASS::oats) -----------------------------
oats <- MASS::oats
fo <- lmer(Y ~ V * N + (1 | B) + (1 | B:V), data = oats, REML = TRUE,
           control = lmerControl(optimizer = "bobyqa", optCtrl = list(rhobeg = 0.2, rhoend = 1e-12)))
o <- list(calls = c("lmer(Y ~ V * N + (1 | B) + (1 | B:V), data = MASS::oats, REML = TRUE), contr.sum",
                    "anova(fit, type = 3, ddf = 'Satterthwaite' / 'Kenward-Roger')",
                    "emmeans(fit, ~ N / ~ V, lmer.df = ...); contrasts trt.vs.ctrl, pairwise"),
          varcomp = vc(fo), reml = REMLcrit(fo))
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
fn <- lmer(yield ~ N * P * K + (1 | block), data = npk, REML = TRUE,
           control = lmerControl(optimizer = "bobyqa", optCtrl = list(rhobeg = 0.2, rhoend = 1e-12)))
out$npk <- list(call = "lmer(yield ~ N * P * K + (1 | block), data = npk, REML = TRUE), contr.sum",
                varcomp = vc(fn), reml = REMLcrit(fn),
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
fu <- lmer(y ~ treatment * time + (1 | block) + (1 | plot), data = d, REML = TRUE,
           control = lmerControl(optimizer = "bobyqa", optCtrl = list(rhobeg = 0.2, rhoend = 1e-12)))
u <- list(call = "lmer(y ~ treatment * time + (1 | block) + (1 | plot), REML = TRUE), contr.sum",
          varcomp = vc(fu), reml = REMLcrit(fu))
for (m in c("satterthwaite", "kenward-roger")) {
  ddf <- if (m == "satterthwaite") "Satterthwaite" else "Kenward-Roger"
  et <- emmeans(fu, ~treatment, lmer.df = m)
  u[[m]] <- list(anova = an(fu, ddf), emm = emm(et),
                 vs_ctrl = as.data.frame(summary(contrast(et, "trt.vs.ctrl", ref = 1), adjust = "none", infer = c(TRUE, TRUE))),
                 tukey = tukey(contrast(et, "pairwise"), 3))
}
out$unbalanced <- u

writeLines(toJSON(out, digits = NA, auto_unbox = TRUE, pretty = TRUE), "ref.json")
