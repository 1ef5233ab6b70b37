## Reference values for furrow/stats/multcomp and furrow/stats/infer.
## Run from this folder:  Rscript ref.R   (writes ref.json here)
## Inf degrees of freedom are written as null. R 4.2.2, multcomp 1.4.22, mvtnorm 1.1.3, emmeans 1.8.4.1, jsonlite 1.8.4
## (Debian 12 packages). Data: datasets::chickwts, datasets::warpbreaks,
## datasets::PlantGrowth, datasets::sleep, all shipped with R.
suppressPackageStartupMessages({library(multcomp); library(emmeans); library(jsonlite)})

out <- list(meta = list(
  R_version = R.version.string,
  packages = sapply(c("stats", "multcomp", "mvtnorm", "emmeans", "jsonlite"),
                    function(p) as.character(packageVersion(p)), simplify = FALSE)))

## 1. p.adjust, with ties and unsorted input
pv <- list(
  a = c(0.01, 0.04, 0.03, 0.005, 0.04, 0.2, 0.6, 0.04),
  b = c(0.5, 0.001, 0.02, 0.02, 0.9, 1, 0.0001, 0.049, 0.051, 0.3),
  c = c(0.8, 0.7, 0.9),
  d = c(1e-12, 3e-10, 0.5))
out$p_adjust <- lapply(pv, function(p) list(p = p,
  bonferroni = p.adjust(p, "bonferroni"), holm = p.adjust(p, "holm"),
  hochberg = p.adjust(p, "hochberg"), BH = p.adjust(p, "BH")))

## 2. studentised range: ptukey (upper and lower tails) at many points
grid <- expand.grid(q = c(0.2, 1, 2, 3.5, 5, 8, 12), k = c(2, 3, 4, 6, 10, 20),
                    df = c(2, 5, 10, 27, 60, 200, Inf))
grid$lower <- mapply(function(q, k, df) ptukey(q, k, df), grid$q, grid$k, grid$df)
grid$upper <- mapply(function(q, k, df) ptukey(q, k, df, lower.tail = FALSE), grid$q, grid$k, grid$df)
out$ptukey <- grid
## quantiles: R's qtukey (documented eps = 1e-4) and a tight root of R's ptukey
qg <- expand.grid(p = c(0.9, 0.95, 0.99, 0.999), k = c(2, 3, 5, 10), df = c(3, 10, 30, Inf))
qg$qtukey <- mapply(function(p, k, df) qtukey(p, k, df), qg$p, qg$k, qg$df)
qg$root <- mapply(function(p, k, df) uniroot(function(q) ptukey(q, k, df) - p, c(0.5, 60),
                                             tol = 1e-13)$root, qg$p, qg$k, qg$df)
out$qtukey <- qg

## 3. Tukey HSD on an unbalanced one-way layout (chickwts: 6 feeds, n 10..14)
fit <- aov(weight ~ feed, data = chickwts)
tk <- TukeyHSD(fit, conf.level = 0.95)$feed
out$chickwts <- list(weight = chickwts$weight, feed = as.character(chickwts$feed),
                     levels = levels(chickwts$feed), df_resid = fit$df.residual,
                     sigma = sqrt(sum(residuals(fit)^2) / fit$df.residual))
out$tukey_chickwts <- data.frame(comparison = rownames(tk), diff = tk[, "diff"], lwr = tk[, "lwr"],
                                 upr = tk[, "upr"], p_adj = tk[, "p adj"], row.names = NULL)

## 4. Dunnett on the same data, control = casein (first level)
g <- glht(lm(weight ~ feed, data = chickwts), linfct = mcp(feed = "Dunnett"))
set.seed(20260101)
sg <- summary(g, test = adjusted("single-step", algorithm = GenzBretz(maxpts = 2e6, abseps = 1e-9, releps = 0)))
set.seed(20260101)
sg1 <- summary(glht(lm(weight ~ feed, data = chickwts), linfct = mcp(feed = "Dunnett"), alternative = "greater"),
               test = adjusted("single-step", algorithm = GenzBretz(maxpts = 2e6, abseps = 1e-9, releps = 0)))
set.seed(20260101)
ci <- confint(g, level = 0.95)
R <- cov2cor(vcov(g))
## the same probabilities by deterministic quadrature over the product form
## rho_ij = lam_i lam_j, lam_i = sqrt(n_i/(n_i + n_0))
n <- table(chickwts$feed)
lam <- sqrt(n[-1] / (n[-1] + n[1]))
dfe <- g$df
fs <- function(s) exp(log(2) + (dfe / 2) * log(dfe / 2) - lgamma(dfe / 2) + (dfe - 1) * log(s) - dfe * s^2 / 2)
inside <- function(cc, s, two) integrate(function(z) dnorm(z) * apply(sapply(seq_along(lam), function(i) {
  sg <- sqrt(1 - lam[i]^2)
  if (two) pnorm((cc * s - lam[i] * z) / sg) - pnorm((-cc * s - lam[i] * z) / sg) else pnorm((cc * s - lam[i] * z) / sg)
}), 1, prod), -Inf, Inf, rel.tol = 1e-12, abs.tol = 0)$value
pquad <- function(cc, two) 1 - integrate(function(s) fs(s) * sapply(s, function(ss) inside(cc, ss, two)),
                                         0, Inf, rel.tol = 1e-11, abs.tol = 0)$value
out$dunnett_chickwts <- list(
  comparison = names(sg$test$coefficients), estimate = unname(sg$test$coefficients),
  se = unname(sg$test$sigma), t = unname(sg$test$tstat), df = dfe,
  corr = unname(R), lambda = as.numeric(lam), n = as.numeric(n),
  p_glht_genzbretz = unname(sg$test$pvalues),
  p_glht_greater_genzbretz = unname(sg1$test$pvalues),
  p_quadrature = sapply(abs(sg$test$tstat), pquad, two = TRUE),
  p_quadrature_greater = sapply(sg$test$tstat, pquad, two = FALSE),
  confint_lwr = unname(ci$confint[, "lwr"]), confint_upr = unname(ci$confint[, "upr"]),
  critical_confint = attr(ci$confint, "calpha"),
  critical_quadrature = uniroot(function(cc) pquad(cc, TRUE) - 0.05, c(2, 4), tol = 1e-12)$root,
  critical_quadrature_greater = uniroot(function(cc) pquad(cc, FALSE) - 0.05, c(1.5, 4), tol = 1e-12)$root)

## 5. emmeans on a small unbalanced lm fit with a log response
wb <- warpbreaks[-c(2, 11, 30, 47), ]
lfit <- lm(log(breaks) ~ wool * tension, data = wb)
em <- emmeans(lfit, ~ tension)
ems <- summary(em)
emr <- summary(em, type = "response")
pw <- summary(pairs(em, adjust = "none"), infer = TRUE)
pwr <- summary(pairs(em, adjust = "none"), infer = TRUE, type = "response")
tvc <- summary(contrast(em, "trt.vs.ctrl", ref = 1, adjust = "none"), infer = TRUE, type = "response")
jt <- test(contrast(em, "pairwise"), joint = TRUE)
sfit <- lm(sqrt(breaks) ~ wool * tension, data = wb)
ems2 <- summary(emmeans(sfit, ~ tension), type = "response")
out$warpbreaks <- list(breaks = wb$breaks, wool = as.character(wb$wool), tension = as.character(wb$tension),
                       coef = unname(coef(lfit)), df_resid = lfit$df.residual)
out$emmeans_log <- list(
  level = as.character(ems$tension), emmean = ems$emmean, SE = ems$SE, df = ems$df,
  lower = ems$lower.CL, upper = ems$upper.CL,
  response = emr$response, response_lower = emr$lower.CL, response_upper = emr$upper.CL,
  pairs = as.character(pw$contrast), pairs_estimate = pw$estimate, pairs_SE = pw$SE, pairs_t = pw$t.ratio,
  pairs_p = pw$p.value, pairs_lower = pw$lower.CL, pairs_upper = pw$upper.CL,
  ratio = pwr$ratio, ratio_lower = pwr$lower.CL, ratio_upper = pwr$upper.CL,
  trt_vs_ctrl = as.character(tvc$contrast), trt_vs_ctrl_ratio = tvc$ratio,
  trt_vs_ctrl_lower = tvc$lower.CL, trt_vs_ctrl_upper = tvc$upper.CL, trt_vs_ctrl_p = tvc$p.value,
  joint_F = jt$F.ratio, joint_df1 = jt$df1, joint_df2 = jt$df2, joint_p = jt$p.value)
out$emmeans_sqrt <- list(response = ems2$response, lower = ems2$lower.CL, upper = ems2$upper.CL)

## 6. TOST by two one-sided t tests (pooled variance)
a <- PlantGrowth$weight[PlantGrowth$group == "trt2"]
b <- PlantGrowth$weight[PlantGrowth$group == "ctrl"]
tost <- function(x, y, lo, hi, alpha = 0.05) {
  t1 <- t.test(x, y, mu = lo, alternative = "greater", var.equal = TRUE)
  t2 <- t.test(x, y, mu = hi, alternative = "less", var.equal = TRUE)
  ci <- t.test(x, y, var.equal = TRUE, conf.level = 1 - 2 * alpha)$conf.int
  list(x = x, y = y, lower_margin = lo, upper_margin = hi, t_lower = unname(t1$statistic),
       p_lower = t1$p.value, t_upper = unname(t2$statistic), p_upper = t2$p.value,
       df = unname(t1$parameter), ci_lower = ci[1], ci_upper = ci[2])
}
out$tost_plantgrowth <- tost(a, b, -0.6, 0.6)
out$tost_plantgrowth_log <- tost(log(a), log(b), log(0.8), log(1.25))
out$tost_plantgrowth_log$ratio_lower = 0.8
out$tost_plantgrowth_log$ratio_upper = 1.25

writeLines(toJSON(out, digits = I(17), auto_unbox = TRUE, dataframe = "columns", pretty = TRUE,
                  na = "null"), "ref.json")
