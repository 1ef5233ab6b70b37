## Reference values for the covariate-scale robustness tests of stats/lmm
## (robust_test.go), produced with R's lme4 + lmerTest + pbkrtest.
## Run from stats/lmm:  Rscript testdata/robust.R   (writes testdata/robust.json)
##
## Each case is one data set with a covariate x = offset + scale * xb, where xb
## are seeded multiples of 1/64 in [-4, 4] (so offset + xb is exact in binary).
## lme4 does not centre or scale X, and with offsets of 1e5 and more its own
## fit degrades (at 1e7 it reports a degenerate Hessian, at 1e8 it drops x as
## rank deficient), so the reference is lme4's tight fit on the well-scaled
## covariate xs = (x - offset) / scale (computed here from the x written to
## the JSON; the subtraction is exact), mapped exactly to the parametrisation
## of x. With X_x b = X_s g, X_s = X_x A (A the identity except
## A[intercept, x] = -offset/scale and A[x, x] = 1/scale):
##   b = A g,  Cov(b) = A Cov(g) A',  l'b = (A'l)'g,
##   variance components, theta and the ML deviance are unchanged, and the
##   REML criterion gains log|A^{-1}|^2 = 2 log(scale)
## (the REML criterion has the term log|X'V^{-1}X|, Patterson & Thompson
## 1971). Satterthwaite and Kenward-Roger df of l'b are those of (A'l)'g,
## from lmerTest::contest on the well-scaled fit. Where lme4's direct fit on x
## is well conditioned (offset/scale <= 1e3) the script checks the mapping against it
## and stops on a difference above 1e-7 in the criterion; the direct fit's
## criterion and messages are recorded for every case (direct_*), for
## information only.
##
## Every fit uses bobyqa with rhoend 1e-12 and maxfun 1e6, then is polished
## from that optimum by nloptwrap's BOBYQA with xtol_abs 1e-14 and ftol_abs
## 1e-15; the lower criterion is kept and the difference of the two recorded
## (opt_diff) as a measure of how tightly the reference is converged.
##
## Designs (fixed effects in sum-to-zero coding):
##   nested  8 blocks x 3 whole plots (trt a/b/c) x 4 sub-plots, 10 rows
##           dropped: y ~ trt + x + (1|block) + (1|wplot)
##   crossed 6 sites x 10 genotypes x 2 reps, 25% of cells missing:
##           y ~ x + (1|site) + (1|geno)
##   single  15 plots x 5 visits, 12 rows dropped: y ~ x + (1|plot)
## with x at offsets 1e0..1e8 (scale 1), scales 1e-10..1e10 (offset 0), and a
## few offset-and-scale pairs. REML fits for all, ML fits too.
##
## random: 40 seeded random designs (one factor, two nested, two crossed, two
## crossed with their interaction; missing cells; some true variances zero;
## some with prior weights) with a covariate at a random offset 10^U(0,8) and
## scale 10^U(-10,10): the REML criterion of the reference's tight fit for the
## property test.
suppressPackageStartupMessages({
  library(lme4); library(lmerTest); library(pbkrtest)
})
options(contrasts = c("contr.sum", "contr.poly"))
ctl <- lmerControl(optimizer = "bobyqa", optCtrl = list(rhoend = 1e-12, maxfun = 1e6))
ctl2 <- lmerControl(optimizer = "nloptwrap",
  optCtrl = list(algorithm = "NLOPT_LN_BOBYQA", xtol_abs = 1e-14, ftol_abs = 1e-15,
                 xtol_rel = 0, ftol_rel = 0, maxeval = 1e6))

num <- function(x) {
  x <- as.numeric(x)
  vapply(x, function(v) {
    if (is.na(v)) return("null")
    if (is.infinite(v)) return(if (v > 0) "\"Inf\"" else "\"-Inf\"")
    for (d in 15:17) { s <- sprintf(paste0("%.", d, "g"), v); if (as.numeric(s) == v) break }
    s
  }, "")
}
js <- function(x) {
  if (is.null(x)) return("null")
  if (is.list(x)) {
    nm <- names(x)
    items <- vapply(x, js, "")
    if (is.null(nm)) return(paste0("[", paste(items, collapse = ","), "]"))
    return(paste0("{", paste0("\"", nm, "\":", items, collapse = ","), "}"))
  }
  if (is.logical(x) && length(x) == 1) return(if (is.na(x)) "null" else if (x) "true" else "false")
  if (is.character(x)) {
    s <- paste0("\"", gsub("[[:space:]]+", " ", gsub("[\\\"]", "'", x)), "\"")
    return(if (length(x) == 1 && is.null(attr(x, "vec"))) s else paste0("[", paste(s, collapse = ","), "]"))
  }
  v <- num(x)
  if (length(x) == 1 && is.null(attr(x, "vec"))) v else paste0("[", paste(v, collapse = ","), "]")
}
vec <- function(x) { attr(x, "vec") <- TRUE; x }

## tight fits the model by bobyqa, then polishes by nloptwrap from there.
tight <- function(form, dat, REML) {
  f1 <- lmer(form, data = dat, REML = REML, control = ctl, weights = .w)
  f2 <- lmer(form, data = dat, REML = REML, control = ctl2, weights = .w,
    start = list(theta = getME(f1, "theta")))
  c1 <- if (REML) REMLcrit(f1) else deviance(f1)
  c2 <- if (REML) REMLcrit(f2) else deviance(f2)
  f <- if (c2 < c1) f2 else f1
  attr(f, "opt_diff") <- abs(c1 - c2)
  f
}

## direct fits lme4's default-parametrisation model on the raw covariate
## (tight bobyqa only), for information.
direct <- function(form, dat, p) {
  msgs <- character(0)
  f <- withCallingHandlers(
    tryCatch(lmer(form, data = dat, REML = TRUE, control = ctl, weights = .w),
      error = function(e) { msgs <<- c(msgs, conditionMessage(e)); NULL }),
    warning = function(w) { msgs <<- c(msgs, conditionMessage(w)); invokeRestart("muffleWarning") },
    message = function(m) { msgs <<- c(msgs, trimws(conditionMessage(m))); invokeRestart("muffleMessage") })
  if (!is.null(f)) msgs <- c(msgs, f@optinfo$conv$lme4$messages)
  list(criterion = if (is.null(f) || ncol(getME(f, "X")) < p) NA else REMLcrit(f),
       messages = vec(if (length(msgs)) msgs else character(0)))
}

## mapped fits the well-scaled model and maps it to the parametrisation of x.
## xcol is the position of x among the columns of X (1-based), 1 the intercept.
mapped <- function(form, dat, offset, scale, xcol, REML, lrow = NULL) {
  f <- tight(form, dat, REML)
  X <- getME(f, "X")
  p <- ncol(X)
  A <- diag(p)
  A[1, xcol] <- -offset / scale
  A[xcol, xcol] <- 1 / scale
  g <- fixef(f)
  V <- as.matrix(vcov(f))
  vc <- as.data.frame(VarCorr(f))
  b <- as.vector(A %*% g)
  Vb <- A %*% V %*% t(A)
  out <- list(
    criterion = (if (REML) REMLcrit(f) + 2 * log(scale) else deviance(f)),
    opt_diff = attr(f, "opt_diff"),
    theta = vec(getME(f, "theta")), sigma = sigma(f),
    vc_group = vec(vc$grp), vc_var = vec(vc$vcov),
    beta = vec(b), vcov = vec(as.vector(Vb)), se = vec(sqrt(diag(Vb))))
  if (REML) {
    ## df of each original coefficient: contrast row j of A on the fit.
    sat <- t(vapply(seq_len(p), function(j) {
      r <- contest(f, L = A[j, ], joint = FALSE, ddf = "Satterthwaite")
      c(r$df, r[["Pr(>|t|)"]])
    }, c(0, 0)))
    kr <- t(vapply(seq_len(p), function(j) {
      r <- contest(f, L = A[j, ], joint = FALSE, ddf = "Kenward-Roger")
      c(r[["Std. Error"]], r$df)
    }, c(0, 0)))
    out$df <- vec(sat[, 1]); out$p <- vec(sat[, 2])
    out$kr_se <- vec(kr[, 1]); out$kr_df <- vec(kr[, 2])
    a3 <- anova(f, type = 3, ddf = "Satterthwaite")
    out$anova3 <- lapply(seq_len(nrow(a3)), function(i) list(term = rownames(a3)[i],
      F = a3[i, "F value"], NumDF = a3[i, "NumDF"], DenDF = a3[i, "DenDF"], p = a3[i, "Pr(>F)"]))
    if (!is.null(lrow)) {
      ## a marginal mean: l'b in the parametrisation of x is (A'l)'g, whose
      ## x entry (l_x - offset l_1)/scale is formed as written (the product
      ## t(A) %*% l would cancel two terms of size offset/scale).
      lb <- lrow
      lb[xcol] <- (lrow[xcol] - offset * lrow[1]) / scale
      r <- contest(f, L = lb, joint = FALSE, ddf = "Satterthwaite")
      out$emm <- list(l = vec(lrow), estimate = r$Estimate, se = r[["Std. Error"]], df = r$df)
    }
  }
  out
}

codes <- function(f) vec(as.integer(factor(f)) - 1L)

## design makes the fixed part without x (column-major) and the groupings.
design_of <- function(dat, fixed_rhs, groups) {
  X0 <- model.matrix(fixed_rhs, dat)
  list(n = nrow(dat), y = vec(dat$y), X0 = vec(as.vector(X0)), p0 = ncol(X0),
       colnames0 = vec(colnames(X0)), xb = vec(dat$xb),
       weights = if (all(dat$.w == 1)) NULL else vec(dat$.w),
       groups = lapply(groups, function(nm) list(name = nm, codes = codes(dat[[nm]]),
         levels = nlevels(factor(dat[[nm]])))))
}

transforms <- c(
  lapply(0:8, function(k) c(10^k, 1)),
  lapply(-10:10, function(k) c(0, 10^k)),
  list(c(1e3, 1e-3), c(1e5, 1e-2), c(1e6, 1e3), c(1e8, 1e-2)))

run_design <- function(label, dat, fixed_rhs, form, groups, xcol, lrow_fun = NULL) {
  des <- design_of(dat, fixed_rhs, groups)
  des$label <- label
  des$formula <- paste(deparse(form), collapse = " ")
  cases <- lapply(transforms, function(tr) {
    offset <- tr[1]; scale <- tr[2]
    dat$x <- offset + scale * dat$xb
    dat$xs <- (dat$x - offset) / scale
    fs <- update(form, . ~ . - x + xs)
    lrow <- if (is.null(lrow_fun)) NULL else lrow_fun(dat)
    d <- direct(form, dat, des$p0 + 1)
    if (offset / scale <= 1e3 && !is.na(d$criterion)) {
      m <- mapped(fs, dat, offset, scale, xcol, TRUE)
      if (abs(m$criterion - d$criterion) > 1e-7)
        stop(sprintf("%s offset %g scale %g: mapped criterion %.12g, direct %.12g", label, offset, scale, m$criterion, d$criterion))
    }
    list(offset = offset, scale = scale, x = vec(dat$x),
         reml = mapped(fs, dat, offset, scale, xcol, TRUE, lrow),
         ml = mapped(fs, dat, offset, scale, xcol, FALSE),
         direct_criterion = d$criterion, direct_messages = d$messages)
  })
  des$cases <- cases
  des
}

designs <- list()

## nested
set.seed(20250101)
d <- expand.grid(sub = 1:4, wp = 1:3, block = factor(1:8))
d$trt <- factor(c("a", "b", "c")[d$wp])
d$wplot <- interaction(d$block, d$wp, drop = TRUE)
d$xb <- round(runif(nrow(d), -4, 4) * 64) / 64
ub <- rnorm(8, sd = 2); uw <- rnorm(24, sd = 1.2)
d$y <- 10 + c(a = 0, b = 1, c = -0.5)[as.character(d$trt)] + 0.5 * d$xb +
  ub[as.integer(d$block)] + uw[as.integer(d$wplot)] + rnorm(nrow(d))
d <- d[-sample(nrow(d), 10), ]
d$wplot <- droplevels(d$wplot)
d$.w <- 1
## marginal mean of trt a at the mean covariate
lrow_nested <- function(dat) c(1, 1, 0, mean(dat$x))
designs$nested <- run_design("nested", d, ~ trt, y ~ trt + x + (1 | block) + (1 | wplot),
  c("block", "wplot"), 4, lrow_nested)

## crossed
set.seed(20250102)
d <- expand.grid(rep = 1:2, geno = factor(1:10), site = factor(1:6))
keep <- runif(60) > 0.25
d <- d[rep(keep, each = 2), ]
d$xb <- round(runif(nrow(d), -4, 4) * 64) / 64
us <- rnorm(6, sd = 1.5); ug <- rnorm(10, sd = 1)
d$y <- 20 + 0.3 * d$xb + us[as.integer(d$site)] + ug[as.integer(d$geno)] + rnorm(nrow(d), sd = 0.8)
d$.w <- 1
designs$crossed <- run_design("crossed", d, ~ 1, y ~ x + (1 | site) + (1 | geno), c("site", "geno"), 2,
  function(dat) c(1, mean(dat$x)))

## single
set.seed(20250103)
d <- expand.grid(visit = 1:5, plot = factor(1:15))
d$xb <- round(runif(nrow(d), -4, 4) * 64) / 64
up <- rnorm(15, sd = 1.3)
d$y <- 5 - 0.7 * d$xb + up[as.integer(d$plot)] + rnorm(nrow(d))
d <- d[-sample(nrow(d), 12), ]
d$.w <- 1
designs$single <- run_design("single", d, ~ 1, y ~ x + (1 | plot), "plot", 2,
  function(dat) c(1, mean(dat$x)))

## random designs for the property test
random_design <- function(seed) {
  set.seed(seed)
  kind <- sample(c("one", "nested", "crossed", "crossed_int"), 1)
  na <- sample(3:8, 1); nb <- sample(3:7, 1)
  ## the finest factor needs levels with more than one row
  nr <- if (kind %in% c("nested", "crossed_int")) sample(2:3, 1) else sample(1:3, 1)
  pmiss <- runif(1, 0, 0.3)
  sds <- runif(3, 0, 2); sds[runif(3) < 0.25] <- 0
  d <- expand.grid(r = 1:nr, b = 1:nb, a = 1:na)
  d <- d[runif(nrow(d)) > pmiss, ]
  d$A <- factor(d$a)
  d$B <- if (kind == "nested") interaction(d$a, d$b, drop = TRUE) else factor(d$b)
  d$AB <- interaction(d$a, d$b, drop = TRUE)
  ua <- rnorm(na, sd = sds[1]); ubb <- rnorm(na * nb, sd = sds[2]); uab <- rnorm(na * nb, sd = sds[3])
  bi <- if (kind == "nested") (d$a - 1) * nb + d$b else d$b
  d$xb <- round(runif(nrow(d), -4, 4) * 64) / 64
  d$y <- 3 + 0.5 * d$xb + ua[d$a] + ubb[bi] + uab[(d$a - 1) * nb + d$b] + rnorm(nrow(d))
  d$.w <- if (runif(1) < 0.25) round(runif(nrow(d), 0.5, 2), 2) else 1
  offset <- round(10^runif(1, 0, 8)); scale <- 10^runif(1, -10, 10)
  d$x <- offset + scale * d$xb
  d$xs <- (d$x - offset) / scale
  groups <- switch(kind, one = "A", nested = c("A", "B"), crossed = c("A", "B"), crossed_int = c("A", "B", "AB"))
  ## drop factor levels that lost all rows
  for (g in groups) d[[g]] <- droplevels(d[[g]])
  rterms <- paste0("(1 | ", groups, ")", collapse = " + ")
  form <- as.formula(paste("y ~ x +", rterms))
  fs <- as.formula(paste("y ~ xs +", rterms))
  f <- tight(fs, d, TRUE)
  list(seed = seed, kind = kind, n = nrow(d), y = vec(d$y), x = vec(d$x), offset = offset, scale = scale,
    weights = if (all(d$.w == 1)) NULL else vec(d$.w),
    groups = lapply(groups, function(nm) list(name = nm, codes = codes(d[[nm]]), levels = nlevels(d[[nm]]))),
    criterion = REMLcrit(f) + 2 * log(scale), opt_diff = attr(f, "opt_diff"),
    theta = vec(getME(f, "theta")), direct_criterion = direct(form, d, 2)$criterion)
}
random <- lapply(1:40, function(i) random_design(30000 + i))

meta <- list(R = R.version.string, lme4 = as.character(packageVersion("lme4")),
  lmerTest = as.character(packageVersion("lmerTest")), pbkrtest = as.character(packageVersion("pbkrtest")),
  nloptr = as.character(packageVersion("nloptr")),
  control = "lmerControl(optimizer='bobyqa', optCtrl=list(rhoend=1e-12, maxfun=1e6)), then nloptwrap NLOPT_LN_BOBYQA xtol_abs=1e-14 ftol_abs=1e-15 from its optimum; the lower criterion",
  contrasts = "contr.sum")
writeLines(js(list(meta = meta, designs = unname(designs), random = random)), "testdata/robust.json")
