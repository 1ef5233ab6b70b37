# Reference values for the poisson model kind (checker/engine/engine_glm_test.go).
# R 4.2.2: stats::glm (poisson), drop1 LR Type III with sum contrasts,
# emmeans type = "response" (rates) and trt.vs.ctrl rate ratios, unadjusted.
library(emmeans); library(jsonlite)
d <- data.frame(
  block = factor(rep(c("B1","B2","B3","B4"), each = 3)),
  treatment = factor(rep(c("control","low","high"), 4), levels = c("control","low","high")),
  count = c(31, 22, 9, 40, 25, 14, 28, 19, 7, 36, 30, 12))
options(contrasts = c("contr.sum", "contr.poly"))
f <- glm(count ~ block + treatment, family = poisson, data = d)
lr <- drop1(f, test = "LRT")
em <- summary(emmeans(f, ~ treatment, type = "response"), infer = TRUE)
cc <- summary(contrast(emmeans(f, ~ treatment), "trt.vs.ctrl", ref = 1, type = "response", adjust = "none"), infer = TRUE)
out <- list(
  r = R.version.string, emmeans = as.character(packageVersion("emmeans")),
  deviance = deviance(f),
  lr_term = rownames(lr)[-1], lr_stat = lr$LRT[-1], lr_p = lr[["Pr(>Chi)"]][-1],
  rate = em$rate, rate_lo = em$asymp.LCL, rate_hi = em$asymp.UCL,
  ratio = cc$ratio, ratio_lo = cc$asymp.LCL, ratio_hi = cc$asymp.UCL, ratio_p = cc$p.value)
write_json(out, "ref.json", digits = NA, auto_unbox = TRUE, pretty = TRUE)
