## Reference values for the conditional means, simple effects and declared
## contrasts of furrow/stats/infer (contrasts_test.go).
## Run from this folder:  Rscript ref_contrasts.R   (writes ref_contrasts.json)
## R 4.2.2 with emmeans 1.8.4.1 and jsonlite 1.8.4 (Debian 12 packages
## r-cran-emmeans, r-cran-jsonlite); the versions used are written into the
## JSON. Both data sets are invented and made here from a fixed seed:
##
##  nitrogen  a field trial, 4 blocks x 3 irrigation regimes x 5 nitrogen
##            rates (0, 60, 120, 180, 300 kg/ha, unequally spaced), 9 of
##            the 60 plots lost (unbalanced cells, every cell kept), soil
##            nitrate at sowing as a covariate;
##  products  an animal trial, 3 sites x 5 products (a control, two
##            reference products, two new ones), unequal numbers of pens.
##
## Tables are written column-wise in emmeans' row order; "by" columns name
## the by level of conditional summaries.
suppressPackageStartupMessages({library(emmeans); library(jsonlite)})

out <- list(meta = list(
  R_version = R.version.string,
  packages = sapply(c("stats", "emmeans", "jsonlite"),
                    function(p) as.character(packageVersion(p)), simplify = FALSE)))

## ---- data -----------------------------------------------------------------
set.seed(20250114)
rates <- c(0, 60, 120, 180, 300)
irr <- c("rainfed", "deficit", "full")
d <- expand.grid(nitrogen = rates, irrigation = irr, block = paste0("B", 1:4),
                 KEEP.OUT.ATTRS = FALSE, stringsAsFactors = FALSE)
d <- d[-sample(nrow(d), 9), ]
d$soiln <- round(runif(nrow(d), 8, 25), 1)
ie <- c(rainfed = 0, deficit = 0.35, full = 0.6)[d$irrigation]
be <- c(B1 = 0, B2 = 0.1, B3 = -0.08, B4 = 0.05)[d$block]
mu <- 3 + ie + be + 1.1 * (1 - exp(-d$nitrogen / (90 + 60 * ie))) + 0.015 * d$soiln
d$yield <- round(exp(mu + rnorm(nrow(d), 0, 0.12)), 2)
d$nitrogen <- factor(d$nitrogen, levels = rates)
d$irrigation <- factor(d$irrigation, levels = irr)
d$block <- factor(d$block)
stopifnot(all(table(d$irrigation, d$nitrogen) > 0))

prods <- c("control", "refA", "refB", "newX", "newY")
sites <- c("north", "central", "south")
p <- expand.grid(product = prods, site = sites, pen = 1:4,
                 KEEP.OUT.ATTRS = FALSE, stringsAsFactors = FALSE)
p <- p[-sample(nrow(p), 11), ]
pe <- c(control = 0, refA = 0.25, refB = 0.2, newX = 0.24, newY = 0.4)[p$product]
se <- c(north = 0, central = 0.15, south = -0.1)[p$site]
p$gain <- round(exp(5 + pe + se + 0.1 * (p$product == "newY" & p$site == "south") +
                    rnorm(nrow(p), 0, 0.15)), 1)
p$product <- factor(p$product, levels = prods)
p$site <- factor(p$site, levels = sites)
stopifnot(all(table(p$product, p$site) > 0))

out$nitrogen_data <- list(
  block = as.character(d$block), irrigation = as.character(d$irrigation),
  nitrogen = as.character(d$nitrogen), soiln = d$soiln, yield = d$yield,
  irrigation_levels = irr, nitrogen_levels = as.character(rates), rates = rates)
out$products_data <- list(
  product = as.character(p$product), site = as.character(p$site), gain = p$gain,
  product_levels = prods, site_levels = sites)

## ---- helpers --------------------------------------------------------------
## tab flattens an emmeans summary (a data frame) into named columns,
## written as arrays even when there is one row.
tab <- function(s) {
  s <- as.data.frame(s)
  r <- list()
  for (nm in c("contrast", "irrigation", "nitrogen", "product", "site",
               "irrigation_pairwise", "nitrogen_pairwise", "nitrogen_robson")) {
    if (!is.null(s[[nm]])) r[[nm]] <- I(as.character(s[[nm]]))
  }
  map <- c(emmean = "estimate", estimate = "estimate", response = "response",
           ratio = "ratio", SE = "SE", df = "df", lower.CL = "lower",
           upper.CL = "upper", t.ratio = "t", p.value = "p")
  for (nm in names(map)) if (!is.null(s[[nm]])) r[[map[[nm]]]] <- I(s[[nm]])
  r
}
full <- function(x, ...) summary(x, infer = c(TRUE, TRUE), ...)

## Orthogonal polynomial contrasts for the unequally spaced rates
## (R's contr.poly with scores, i.e. poly(): QR of the centred powers).
cp <- contr.poly(length(rates), scores = rates)
colnames(cp) <- c("linear", "quadratic", "cubic", "quartic")
robson.emmc <- function(levs, ...) {
  M <- as.data.frame(cp)
  row.names(M) <- levs
  M
}
out$poly <- list(values = rates, coef = unname(split(cp, col(cp))), names = colnames(cp))

## ---- 1. conditional means and simple effects (nitrogen trial) --------------
fit <- lm(yield ~ block + irrigation * nitrogen + soiln, data = d)
lfit <- lm(log(yield) ~ block + irrigation * nitrogen + soiln, data = d)
out$nitrogen_fit <- list(call = "lm(yield ~ block + irrigation * nitrogen + soiln)",
                         df_residual = fit$df.residual, coef = unname(coef(fit)),
                         log_call = "lm(log(yield) ~ block + irrigation * nitrogen + soiln)",
                         log_coef = unname(coef(lfit)))

e_nbi <- emmeans(fit, ~ nitrogen | irrigation)
e_ibn <- emmeans(fit, ~ irrigation | nitrogen)
out$means_n_by_i <- tab(full(e_nbi))
out$means_i_by_n <- tab(full(e_ibn))
out$means_n <- tab(full(emmeans(fit, ~ nitrogen)))
out$means_i <- tab(full(emmeans(fit, ~ irrigation)))

pw <- contrast(e_nbi, "pairwise")
out$pairs_n_by_i <- tab(full(pw, adjust = "none"))
out$pairs_n_by_i_tukey <- tab(full(pw, adjust = "tukey"))
out$pairs_n_by_i_holm <- tab(full(pw, adjust = "holm"))
out$pairs_n_by_i_bonferroni_across <- tab(full(pw, by = NULL, adjust = "bonferroni"))
out$pairs_n_by_i_holm_across <- tab(full(pw, by = NULL, adjust = "holm"))
out$pairs_i_by_n <- tab(full(contrast(e_ibn, "pairwise"), adjust = "none"))
out$ctrl_n_by_i <- tab(full(contrast(e_nbi, "trt.vs.ctrl", ref = 1), adjust = "none"))
out$ctrl_n_by_i_bonferroni <- tab(full(contrast(e_nbi, "trt.vs.ctrl", ref = 1), adjust = "bonferroni"))

## log scale, back-transformed: geometric means and ratios
le_nbi <- emmeans(lfit, ~ nitrogen | irrigation)
out$log_means_n_by_i <- tab(full(le_nbi))
out$log_means_n_by_i_response <- tab(full(le_nbi, type = "response"))
out$log_ctrl_n_by_i_response <- tab(full(contrast(le_nbi, "trt.vs.ctrl", ref = 1), adjust = "none",
                                         type = "response"))

## ---- 2. declared contrasts ---------------------------------------------------
## polynomial trends over the unequally spaced rates, marginal and within
## each irrigation regime
e_n <- emmeans(fit, ~ nitrogen)
out$poly_n <- tab(full(contrast(e_n, "robson"), adjust = "none"))
out$poly_n_by_i <- tab(full(contrast(e_nbi, "robson"), adjust = "none"))

## named contrasts over irrigation regimes within nitrogen rates
decl_i <- list(full_vs_rainfed = c(-1, 0, 1), deficit_vs_others = c(-0.5, 1, -0.5))
out$decl_i_by_n <- tab(full(contrast(e_ibn, decl_i), adjust = "none"))

## interaction contrasts on the irrigation x nitrogen cell means
e_in <- emmeans(fit, ~ irrigation * nitrogen)
out$int_pairwise <- tab(full(contrast(e_in, interaction = c("pairwise", "pairwise")), adjust = "none"))
out$int_pairwise_robson <- tab(full(contrast(e_in, interaction = c("pairwise", "robson")), adjust = "none"))
le_in <- emmeans(lfit, ~ irrigation * nitrogen)
li <- contrast(le_in, interaction = c("pairwise", "pairwise"))
out$log_int_pairwise <- tab(full(li, adjust = "none"))
out$log_int_pairwise_response <- tab(full(li, adjust = "none", type = "response"))

## products trial: products against the control, new products against the
## mean of the two references, and the mean of the references (not a
## comparison), on the log scale reported as ratios
pfit <- lm(log(gain) ~ site * product, data = p)
out$products_fit <- list(call = "lm(log(gain) ~ site * product)", df_residual = pfit$df.residual,
                         coef = unname(coef(pfit)))
e_p <- emmeans(pfit, ~ product)
decl_p <- list(newX_vs_control = c(-1, 0, 0, 1, 0), newY_vs_control = c(-1, 0, 0, 0, 1),
               newX_vs_refs = c(0, -0.5, -0.5, 1, 0), newY_vs_refs = c(0, -0.5, -0.5, 0, 1))
cp_p <- contrast(e_p, decl_p)
out$decl_p <- tab(full(cp_p, adjust = "none"))
out$decl_p_response <- tab(full(cp_p, adjust = "none", type = "response"))
out$refs_mean_p <- tab(full(contrast(e_p, list(refs_mean = c(0, 0.5, 0.5, 0, 0))), adjust = "none"))
out$decl_p_by_site <- tab(full(contrast(emmeans(pfit, ~ product | site), decl_p), adjust = "none"))

## equivalence (two one-sided tests, margin 0.80 to 1.25 as ratios) and
## non-inferiority (margin 0.80, higher is better) of the declared contrasts;
## emmeans: t = (|est| - delta)/SE, left-tailed, for equivalence and
## t = (est + delta)/SE, right-tailed, for non-inferiority; the 90%
## interval is the TOST interval.
delta <- log(1.25)
out$decl_p_equivalence <- c(tab(test(cp_p, delta = delta, side = "equivalence")), delta = delta)
out$decl_p_noninferiority <- c(tab(test(cp_p, delta = delta, side = ">")), delta = delta)
out$decl_p_ci90 <- tab(confint(cp_p, level = 0.90))
## the same on the identity scale of the nitrogen trial, margin +-5 yield units
ci_d <- contrast(emmeans(fit, ~ irrigation), decl_i)
out$decl_i_equivalence <- c(tab(test(ci_d, delta = 5, side = "equivalence")), delta = 5)
out$decl_i_nonsuperiority <- c(tab(test(ci_d, delta = 5, side = "<")), delta = 5)

## jsonlite 1.8.4 writes at most 15 significant digits whatever its digits
## argument says; numbers are therefore written here with 17 (%.17g, which
## round-trips a double), non-finite ones as null.
exact <- function(x) {
  if (is.list(x)) return(lapply(x, exact))
  if (!is.numeric(x)) return(x)
  v <- ifelse(is.finite(x), sprintf("%.17g", x), "null")
  if (length(x) == 1 && !inherits(x, "AsIs")) return(structure(v, class = "json"))
  structure(paste0("[", paste(v, collapse = ", "), "]"), class = "json")
}
writeLines(toJSON(exact(out), auto_unbox = TRUE, pretty = TRUE, json_verbatim = TRUE),
           "ref_contrasts.json")
