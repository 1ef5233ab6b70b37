## Reference values for stats/glm's GLMM (glmm_ref_test.go).
## Run from stats/glm:  Rscript testdata/glmm_ref.R
## Uses R 4.2.2, lme4 (glmer, Laplace nAGQ = 1 and adaptive Gauss-Hermite
## nAGQ = k) and jsonlite. Writes the data sets to testdata/glmm_*.csv and
## the fits to testdata/glmm_ref.json.
## Data: cbpp (contagious bovine pleuropneumonia, shipped with lme4);
## a Poisson count trial with plots within blocks and a binomial crossed
## site x genotype trial, both generated here with fixed seeds (invented).
## Fits are tightly converged: bobyqa with maxfun 1e5 and rhoend 1e-12,
## tolPwrss 1e-13, then the covariance of the fixed effects from the
## penalised system at the optimum (vcov(use.hessian = FALSE)), which is the
## one stats/glm reports; the Hessian-based one is recorded beside it.
suppressPackageStartupMessages({ library(lme4); library(jsonlite) })
ctl <- glmerControl(optimizer = "bobyqa", optCtrl = list(maxfun = 1e5, rhoend = 1e-12),
  tolPwrss = 1e-13, check.conv.grad = .makeCC("warning", tol = 1e-4))

data(cbpp, package = "lme4")
cb <- data.frame(herd = as.integer(cbpp$herd) - 1L, period = as.integer(cbpp$period) - 1L,
  incidence = cbpp$incidence, size = cbpp$size)
write.csv(cb, "testdata/glmm_cbpp.csv", row.names = FALSE)

set.seed(20261202)
blocks <- 6; plots <- 8; per <- 4
pd <- expand.grid(sub = 1:per, plot = 1:plots, block = 1:blocks)
pd$trt <- (pd$plot - 1) %% 4
pd$bp <- (pd$block - 1) * plots + pd$plot - 1
ub <- rnorm(blocks, sd = 0.4); up <- rnorm(blocks * plots, sd = 0.3)
pd$area <- round(runif(nrow(pd), 0.5, 2), 2)
eta <- 1 + c(0, 0.3, -0.5, 0.8)[pd$trt + 1] + ub[pd$block] + up[pd$bp + 1] + log(pd$area)
pd$y <- rpois(nrow(pd), exp(eta))
pois <- data.frame(block = pd$block - 1L, plot = pd$bp, trt = pd$trt, area = pd$area, y = pd$y)
write.csv(pois, "testdata/glmm_pois.csv", row.names = FALSE)

set.seed(7011)
sites <- 5; genos <- 12; reps <- 2
cd <- expand.grid(rep = 1:reps, geno = 1:genos, site = 1:sites)
cd$n <- sample(10:20, nrow(cd), replace = TRUE)
cd$x <- round(rnorm(nrow(cd)), 3)
us <- rnorm(sites, sd = 0.5); ug <- rnorm(genos, sd = 0.4)
p <- pnorm(-0.2 + 0.3 * cd$x + 0.2 * (cd$rep - 1) + us[cd$site] + ug[cd$geno])
cd$y <- rbinom(nrow(cd), cd$n, p)
cr <- data.frame(site = cd$site - 1L, geno = cd$geno - 1L, rep = cd$rep - 1L, x = cd$x, n = cd$n, y = cd$y)
write.csv(cr, "testdata/glmm_crossed.csv", row.names = FALSE)

out <- list()
rec <- function(name, fit, call) {
  vc <- as.data.frame(VarCorr(fit))
  h <- tryCatch(sqrt(diag(as.matrix(vcov(fit, use.hessian = TRUE)))), error = function(e) NULL)
  out[[name]] <<- list(call = call, nAGQ = fit@devcomp$dims[["nAGQ"]],
    coef = I(unname(fixef(fit))), coef_names = names(fixef(fit)),
    se = I(unname(sqrt(diag(as.matrix(vcov(fit, use.hessian = FALSE)))))),
    cov = unname(as.matrix(vcov(fit, use.hessian = FALSE))),
    se_hessian = unname(h),
    theta = I(unname(getME(fit, "theta"))), sd = I(vc$sdcor), groups = I(vc$grp),
    loglik = as.numeric(logLik(fit)), deviance_m2ll = -2 * as.numeric(logLik(fit)),
    modes = lapply(ranef(fit), function(r) unname(r[[1]])),
    optinfo = fit@optinfo$conv$opt, messages = fit@optinfo$conv$lme4$messages)
}
cbf <- function(k) glmer(cbind(incidence, size - incidence) ~ factor(period) + (1 | herd),
  data = transform(cb, herd = factor(herd)), family = binomial, nAGQ = k, control = ctl)
rec("cbpp_laplace", cbf(1), "glmer(cbind(incidence, size - incidence) ~ period + (1 | herd), binomial, nAGQ = 1)")
rec("cbpp_agq9", cbf(9), "same, nAGQ = 9")
rec("cbpp_agq25", cbf(25), "same, nAGQ = 25")
cbp <- glmer(cbind(incidence, size - incidence) ~ factor(period) + (1 | herd),
  data = transform(cb, herd = factor(herd)), family = binomial(link = "probit"), control = ctl)
rec("cbpp_probit", cbp, "same, binomial(link = probit), nAGQ = 1")
cbc <- glmer(cbind(incidence, size - incidence) ~ factor(period) + (1 | herd),
  data = transform(cb, herd = factor(herd)), family = binomial(link = "cloglog"), nAGQ = 7, control = ctl)
rec("cbpp_cloglog_agq7", cbc, "same, binomial(link = cloglog), nAGQ = 7")
pf <- glmer(y ~ factor(trt) + (1 | block) + (1 | plot) + offset(log(area)),
  data = transform(pois, block = factor(block), plot = factor(plot)), family = poisson, control = ctl)
rec("pois_nested", pf, "glmer(y ~ trt + (1 | block) + (1 | plot) + offset(log(area)), poisson)")
pf1 <- glmer(y ~ factor(trt) + (1 | plot) + offset(log(area)),
  data = transform(pois, plot = factor(plot)), family = poisson, nAGQ = 12, control = ctl)
rec("pois_plot_agq12", pf1, "glmer(y ~ trt + (1 | plot) + offset(log(area)), poisson, nAGQ = 12)")
cf <- glmer(cbind(y, n - y) ~ x + factor(rep) + (1 | site) + (1 | geno),
  data = transform(cr, site = factor(site), geno = factor(geno)), family = binomial(link = "probit"), control = ctl)
rec("crossed_probit", cf, "glmer(cbind(y, n - y) ~ x + rep + (1 | site) + (1 | geno), binomial(probit))")
cfl <- glmer(cbind(y, n - y) ~ x + factor(rep) + (1 | site) + (1 | geno),
  data = transform(cr, site = factor(site), geno = factor(geno)), family = binomial, control = ctl)
rec("crossed_logit", cfl, "same, binomial(logit)")
out$versions <- list(R = R.version.string, lme4 = as.character(packageVersion("lme4")),
  jsonlite = as.character(packageVersion("jsonlite")))
writeLines(toJSON(out, digits = NA, auto_unbox = TRUE, pretty = TRUE, null = "null"), "testdata/glmm_ref.json")
