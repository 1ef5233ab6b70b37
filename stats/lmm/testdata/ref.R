## Reference values for stats/lmm, produced with R's lme4 + lmerTest + pbkrtest.
## Run from stats/lmm:  Rscript testdata/ref.R   (writes testdata/ref.json)
## Every fit uses the tight optimiser setting
##   lmerControl(optimizer = "bobyqa", optCtrl = list(rhoend = 1e-12, maxfun = 1e5))
## so the values sit on the REML (or ML) optimum, not lme4's default stopping point.
## Fixed effects use sum-to-zero coding; the model matrix, response and grouping codes
## are written into the JSON so the Go tests fit exactly the same data.
## Cases:
##   npk    datasets::npk, yield ~ N*P*K - N:P:K + (1|block)  (read from ../shared/reference)
##   oats   Yates (1935) split-plot, yield ~ nitro*gen + (1|block) + (1|block:gen)
##   unbal1 seeded invented repeated-measures trial, plots missing some visits
##   unbal2 seeded invented split-plot, one whole plot and several sub-plots missing
##   weighted unbal1 with seeded prior weights
##   unbal3 seeded invented crossed site x genotype trial, 30% of cells missing
suppressPackageStartupMessages({
  library(lme4); library(lmerTest); library(pbkrtest)
})
options(contrasts = c("contr.sum", "contr.poly"))
ctl <- lmerControl(optimizer = "bobyqa", optCtrl = list(rhoend = 1e-12, maxfun = 1e5))
ref_dir <- "../../../shared/reference"

num <- function(x) {
  x <- as.numeric(x)
  s <- vapply(x, function(v) {
    if (is.na(v)) return("null")
    if (is.infinite(v)) return(if (v > 0) "\"Inf\"" else "\"-Inf\"")
    for (d in 15:17) { s <- sprintf(paste0("%.", d, "g"), v); if (as.numeric(s) == v) break }
    s
  }, "")
  s
}
js <- function(x) {
  if (is.null(x)) return("null")
  if (is.list(x)) {
    nm <- names(x)
    items <- vapply(x, js, "")
    if (is.null(nm)) return(paste0("[", paste(items, collapse = ","), "]"))
    return(paste0("{", paste0("\"", nm, "\":", items, collapse = ","), "}"))
  }
  if (is.character(x)) {
    s <- paste0("\"", x, "\"")
    return(if (length(x) == 1 && is.null(attr(x, "vec"))) s else paste0("[", paste(s, collapse = ","), "]"))
  }
  v <- num(x)
  if (length(x) == 1 && is.null(attr(x, "vec"))) v else paste0("[", paste(v, collapse = ","), "]")
}
vec <- function(x) { attr(x, "vec") <- TRUE; x }

anova_rows <- function(a) {
  lapply(seq_len(nrow(a)), function(i) list(term = rownames(a)[i], F = a[i, "F value"],
    NumDF = a[i, "NumDF"], DenDF = a[i, "DenDF"], p = a[i, "Pr(>F)"]))
}

one_case <- function(dat, form, groups, label, w = NULL) {
  dat$.w <- if (is.null(w)) rep(1, nrow(dat)) else w
  fit <- lmerTest::lmer(form, data = dat, REML = TRUE, control = ctl, weights = .w)
  fitml <- lmerTest::lmer(form, data = dat, REML = FALSE, control = ctl, weights = .w)
  X <- getME(fit, "X")
  vc <- as.data.frame(VarCorr(fit))
  vcml <- as.data.frame(VarCorr(fitml))
  cs <- summary(fit)$coefficients
  ckr <- summary(fit, ddf = "Kenward-Roger")$coefficients
  csml <- summary(fitml)$coefficients
  re <- ranef(fit)
  g <- lapply(groups, function(nm) list(name = nm, codes = vec(as.integer(factor(dat[[nm]])) - 1L),
    levels = nlevels(factor(dat[[nm]])), blup = vec(re[[nm]][, 1])))
  out <- list(
    label = label,
    formula = paste(deparse(form), collapse = " "),
    n = nrow(X), p = ncol(X),
    y = vec(model.response(model.frame(fit))),
    weights = if (is.null(w)) NULL else vec(w),
    X = vec(as.vector(X)), colnames = vec(colnames(X)),
    assign = vec(attr(X, "assign")), terms = vec(attr(terms(fit), "term.labels")),
    groups = g,
    reml = list(
      criterion = REMLcrit(fit), logLik = as.numeric(logLik(fit)),
      AIC = AIC(fit), BIC = BIC(fit), sigma = sigma(fit), theta = vec(getME(fit, "theta")),
      vc_group = vec(vc$grp), vc_var = vec(vc$vcov),
      beta = vec(cs[, "Estimate"]), se = vec(cs[, "Std. Error"]), df = vec(cs[, "df"]),
      t = vec(cs[, "t value"]), p = vec(cs[, "Pr(>|t|)"]),
      kr_se = vec(ckr[, "Std. Error"]), kr_df = vec(ckr[, "df"]), kr_p = vec(ckr[, "Pr(>|t|)"]),
      kr_vcov = vec(as.vector(as.matrix(vcovAdj(fit)))),
      anova3_sat = anova_rows(anova(fit, type = 3, ddf = "Satterthwaite")),
      anova3_kr = anova_rows(anova(fit, type = 3, ddf = "Kenward-Roger")),
      anova1_sat = anova_rows(anova(fit, type = 1, ddf = "Satterthwaite")),
      fitted = vec(fitted(fit)), resid = vec(residuals(fit))
    ),
    ml = list(
      deviance = deviance(fitml), logLik = as.numeric(logLik(fitml)),
      AIC = AIC(fitml), BIC = BIC(fitml), theta = vec(getME(fitml, "theta")),
      vc_group = vec(vcml$grp), vc_var = vec(vcml$vcov),
      beta = vec(csml[, "Estimate"]), se = vec(csml[, "Std. Error"]), df = vec(csml[, "df"])
    )
  )
  out
}

cases <- list()

npk <- read.csv(file.path(ref_dir, "agri/npk.csv"))
for (v in c("block", "N", "P", "K")) npk[[v]] <- factor(npk[[v]])
cases$npk <- one_case(npk, yield ~ N * P * K - N:P:K + (1 | block), "block", "npk")

oats <- read.delim(file.path(ref_dir, "agri/agridat_yates.oats.txt"))
oats$nitro <- factor(oats$nitro); oats$gen <- factor(oats$gen); oats$block <- factor(oats$block)
oats$wplot <- interaction(oats$block, oats$gen, drop = TRUE)
cases$oats <- one_case(oats, yield ~ nitro * gen + (1 | block) + (1 | wplot), c("block", "wplot"), "oats")

## unbal1: 18 plots, 3 treatments, 4 visits; each plot misses 0-2 visits at random.
set.seed(20240401)
d1 <- expand.grid(visit = factor(1:4), plot = factor(1:18))
d1$trt <- factor(c("a", "b", "c")[(as.integer(d1$plot) - 1) %% 3 + 1])
u <- rnorm(18, sd = 2)
d1$y <- 10 + c(a = 0, b = 1.5, c = -1)[as.character(d1$trt)] + 0.4 * as.integer(d1$visit) +
  u[as.integer(d1$plot)] + rnorm(nrow(d1), sd = 1.3)
d1 <- d1[runif(nrow(d1)) > 0.22, ]
cases$unbal1 <- one_case(d1, y ~ trt * visit + (1 | plot), "plot", "unbal1")
## weighted: the same trial with seeded prior weights between 0.5 and 2.
set.seed(20240404)
cases$weighted <- one_case(d1, y ~ trt * visit + (1 | plot), "plot", "weighted", w = round(runif(nrow(d1), 0.5, 2), 2))

## unbal2: 6 blocks x 3 whole-plot levels x 4 sub-plot levels; whole plot (block 2, A=c)
## missing entirely and 9 sub-plots dropped at random.
set.seed(20240402)
d2 <- expand.grid(B = factor(1:4), A = factor(c("a", "b", "c")), block = factor(1:6))
ub <- rnorm(6, sd = 3); uw <- rnorm(18, sd = 2)
d2$wp <- interaction(d2$block, d2$A, drop = TRUE)
d2$y <- 50 + c(a = 0, b = 2, c = 3)[as.character(d2$A)] + c(0, 1, 3, 4)[as.integer(d2$B)] +
  ub[as.integer(d2$block)] + uw[as.integer(d2$wp)] + rnorm(nrow(d2), sd = 1.5)
d2 <- d2[!(d2$block == "2" & d2$A == "c"), ]
d2 <- d2[-sample(nrow(d2), 9), ]
d2$wp <- droplevels(d2$wp)
cases$unbal2 <- one_case(d2, y ~ A * B + (1 | block) + (1 | wp), c("block", "wp"), "unbal2")

## unbal3: crossed 7 sites x 16 genotypes, 2 reps, 30% of site x genotype cells missing,
## fixed covariate x.
set.seed(20240403)
d3 <- expand.grid(rep = 1:2, geno = factor(1:16), site = factor(1:7))
keep <- runif(7 * 16) > 0.3
d3 <- d3[rep(keep, each = 2), ]
d3$x <- round(runif(nrow(d3), 0, 10), 1)
us <- rnorm(7, sd = 2); ug <- rnorm(16, sd = 1)
d3$y <- 20 + 0.3 * d3$x + us[as.integer(d3$site)] + ug[as.integer(d3$geno)] + rnorm(nrow(d3), sd = 1)
cases$unbal3 <- one_case(d3, y ~ x + (1 | site) + (1 | geno), c("site", "geno"), "unbal3")

meta <- list(R = R.version.string, lme4 = as.character(packageVersion("lme4")),
  lmerTest = as.character(packageVersion("lmerTest")), pbkrtest = as.character(packageVersion("pbkrtest")),
  control = "lmerControl(optimizer='bobyqa', optCtrl=list(rhoend=1e-12, maxfun=1e5))",
  contrasts = "contr.sum")
writeLines(js(list(meta = meta, cases = unname(cases))), "testdata/ref.json")
