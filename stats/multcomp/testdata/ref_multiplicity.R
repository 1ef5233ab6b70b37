## Reference values for the multiplicity procedures of furrow/stats/multcomp
## (Šidák, Holm-as-a-graph, Shaffer's closed pairwise test).
## Run from this folder:  Rscript ref_multiplicity.R   (writes ref_multiplicity.json here)
## R 4.2.2, multcomp 1.4.22, emmeans 1.8.4.1, jsonlite 1.8.4 (Debian 12 packages).
## The one-way layouts are invented here: normal data from a fixed seed.
suppressPackageStartupMessages({library(multcomp); library(emmeans); library(jsonlite)})

out <- list(meta = list(
  R_version = R.version.string,
  packages = sapply(c("stats", "multcomp", "mvtnorm", "emmeans", "jsonlite"),
                    function(p) as.character(packageVersion(p)), simplify = FALSE)))

## 1. p.adjust "holm" on sets with ties, zeros and ones: the graphical
##    procedure with the Holm graph must give these.
pv <- list(
  a = c(0.01, 0.04, 0.03, 0.005, 0.04, 0.2, 0.6, 0.04),
  b = c(0.5, 0.001, 0.02, 0.02, 0.9, 1, 0.0001, 0.049, 0.051, 0.3),
  c = c(0.8, 0.7, 0.9),
  d = c(0, 0.012, 1, 0.3),
  e = I(0.021))
out$holm <- lapply(pv, function(p) list(p = I(p), holm = I(p.adjust(p, "holm"))))

## Invented one-way layouts: group means mu, group sizes n, unit variance.
set.seed(20260214)
layout <- function(mu, n) {
  data.frame(g = factor(rep(LETTERS[seq_along(mu)], n)), y = round(rnorm(sum(n), rep(mu, n), 1), 3))
}
d4 <- layout(c(10, 10.4, 11.6, 12.1), c(6, 7, 6, 8))
d5 <- layout(c(5, 5.2, 6.3, 6.5, 7.6), c(5, 6, 5, 7, 6))

## 2. Šidák single-step p-values and intervals by emmeans (adjust = "sidak"),
##    with the unadjusted p-values they start from and Bonferroni intervals.
sidak <- function(d) {
  em <- emmeans(lm(y ~ g, data = d), ~ g)
  raw <- summary(pairs(em, adjust = "none"), infer = TRUE)
  sd <- summary(pairs(em, adjust = "sidak"), infer = TRUE, level = 0.95)
  bf <- summary(pairs(em, adjust = "bonferroni"), infer = TRUE, level = 0.95)
  list(contrast = as.character(raw$contrast), estimate = raw$estimate, se = raw$SE, df = raw$df,
       p = raw$p.value, p_sidak = sd$p.value, lower_sidak = sd$lower.CL, upper_sidak = sd$upper.CL,
       p_bonferroni = bf$p.value, lower_bonferroni = bf$lower.CL, upper_bonferroni = bf$upper.CL,
       level = 0.95)
}
out$sidak <- list(d4 = sidak(d4), d5 = sidak(d5))

## 3. All pairwise comparisons (Tukey contrasts, in multcomp's order B-A, C-A,
##    ..., that is pairs (i, j), i < j, by i then j) with Shaffer's logical
##    constraints: summary(glht, test = adjusted("Shaffer")), the Bonferroni
##    closed test over the configurations of true hypotheses that can occur.
##    The unadjusted p-values (adjusted("none")) are the input of the Go test.
shaffer <- function(d) {
  g <- glht(lm(y ~ g, data = d), linfct = mcp(g = "Tukey"))
  raw <- summary(g, test = adjusted("none"))
  sh <- summary(g, test = adjusted("Shaffer"))
  list(levels = levels(d$g), g = as.character(d$g), y = d$y,
       contrast = names(raw$test$coefficients), t = unname(raw$test$tstat), df = g$df,
       p = unname(raw$test$pvalues), p_shaffer = as.numeric(sh$test$pvalues))
}
out$shaffer <- list(d4 = shaffer(d4), d5 = shaffer(d5))

writeLines(toJSON(out, digits = I(17), auto_unbox = TRUE, dataframe = "columns", pretty = TRUE,
                  na = "null"), "ref_multiplicity.json")
