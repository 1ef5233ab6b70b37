## Timing reference for BenchmarkMixedPoisson (glmm_bench_test.go): the same
## design (1e5 rows, 1e4 plots, 4 treatments, random plot intercept sd 0.4,
## Poisson counts) fitted with lme4's glmer (Laplace, bobyqa), R's generator,
## so the numbers differ but the fit has the same size and structure.
## Run from stats/glm:
##   go test -run XXX -bench MixedPoisson -benchtime=1x ./ > go.txt
##   Rscript testdata/glmm_bench_ref.R go.txt
## Prints the glmer time, the Go time and the ratio glmer / Go.
suppressPackageStartupMessages(library(lme4))
args <- commandArgs(trailingOnly = TRUE)
go_s <- NA
if (length(args) >= 1 && file.exists(args[1])) {
  for (ln in readLines(args[1])) {
    m <- regmatches(ln, regexec("^BenchmarkMixedPoisson-[0-9]+\\s+[0-9]+\\s+([0-9.]+) ns/op", ln))[[1]]
    if (length(m) == 2) go_s <- as.numeric(m[2]) / 1e9
  }
}
set.seed(13)
n <- 1e5; plots <- n / 10
pl <- rep(seq_len(plots) - 1, each = 10)
trt <- pl %% 4
u <- rnorm(plots, sd = 0.4)
d <- data.frame(plot = factor(pl), trt = factor(trt),
  y = rpois(n, exp(1 + c(0, 0.3, -0.5, 0.8)[trt + 1] + u[pl + 1])))
t_r <- unname(system.time(fit <- glmer(y ~ trt + (1 | plot), data = d, family = poisson,
  control = glmerControl(optimizer = "bobyqa")))["elapsed"])
cat(sprintf("glmer poisson 1e5 rows 1e4 plots: %.3f s", t_r))
if (!is.na(go_s)) cat(sprintf("  go %.3f s  ratio %.1f", go_s, t_r / go_s))
cat("\n")
