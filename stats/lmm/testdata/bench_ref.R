## Timing reference for the stats/lmm benchmarks: the same designs and models
## fitted with lme4 + lmerTest (+ pbkrtest for Kenward-Roger) when installed.
## Run from stats/lmm:  Rscript testdata/bench_ref.R [max_n [go_bench_output]]
## Prints one line per case: case, rows, seconds for the REML fit, seconds for
## the Satterthwaite Type III table, seconds for the Kenward-Roger table (small
## cases only). Data generation is excluded from the timings. The data follow
## the same design as bench_test.go (seeded, invented) but R's generator, so
## the numbers differ; the fits have the same size and structure.
## Compare with: go test -run XXX -bench . -benchtime=1x ./stats/lmm > go.txt
## and pass go.txt as the second argument: each line then also gives the Go
## time of fit + Satterthwaite + Type III and the ratio (R fit + table) / Go.
ok <- suppressWarnings(suppressPackageStartupMessages(
  requireNamespace("lme4", quietly = TRUE) && requireNamespace("lmerTest", quietly = TRUE)))
if (!ok) { cat("lme4/lmerTest not installed: nothing to compare\n"); quit(status = 0) }
suppressPackageStartupMessages({ library(lme4); library(lmerTest) })
options(contrasts = c("contr.sum", "contr.poly"))
args <- commandArgs(trailingOnly = TRUE)
max_n <- if (length(args)) as.numeric(args[1]) else 1e5
go_s <- list()
if (length(args) >= 2 && file.exists(args[2])) {
  for (ln in readLines(args[2])) {
    m <- regmatches(ln, regexec("^Benchmark([A-Za-z]+)/(\\S+?)-[0-9]+\\s+[0-9]+\\s+([0-9.]+) ns/op", ln, perl = TRUE))[[1]]
    if (length(m) == 4) go_s[[paste(m[2], m[3])]] <- as.numeric(m[4]) / 1e9
  }
}

rm_data <- function(n) {
  set.seed(n)
  plots <- n / 2
  pl <- rep(seq_len(plots) - 1, each = 2)
  d <- data.frame(plot = factor(pl), site = factor(pl %% 20),
    trt = factor((pl %/% 20) %% 3), time = factor(rep(0:1, plots)))
  d$y <- 5 + 0.1 * as.integer(d$site) + 0.5 * as.integer(d$trt) + 0.3 * as.integer(d$time) +
    rnorm(plots, sd = 1.5)[pl + 1] + rnorm(n)
  d
}
cr_data <- function(sites, genos, reps) {
  set.seed(sites * genos)
  d <- expand.grid(rep = factor(seq_len(reps)), geno = factor(seq_len(genos)), site = factor(seq_len(sites)))
  d$sg <- interaction(d$site, d$geno, drop = TRUE)
  d$y <- 10 + 0.2 * as.integer(d$rep) + rnorm(sites, sd = 2)[d$site] + rnorm(genos)[d$geno] +
    rnorm(sites * genos, sd = 0.5)[d$sg] + rnorm(nrow(d))
  d
}
tm <- function(expr) unname(system.time(expr)["elapsed"])
report <- function(name, n, fit_s, sat_s, kr_s, go_key) {
  cat(sprintf("%-22s %9d  fit %8.3f s  sat-typeIII %8.3f s  kr-typeIII %s",
    name, n, fit_s, sat_s, if (is.na(kr_s)) "      -" else sprintf("%8.3f s", kr_s)))
  g <- go_s[[go_key]]
  if (!is.null(g)) cat(sprintf("  go %7.3f s  ratio %6.1f", g, (fit_s + sat_s) / g))
  cat("\n")
}

for (n in c(1e3, 1e4, 1e5, 1e6)) {
  if (n > max_n) break
  d <- rm_data(n)
  fit <- NULL
  t_fit <- tm(fit <- lmerTest::lmer(y ~ site + trt * time + (1 | plot), data = d))
  t_sat <- tm(anova(fit, type = 3, ddf = "Satterthwaite"))
  t_kr <- if (n <= 1e4 && requireNamespace("pbkrtest", quietly = TRUE)) tm(anova(fit, type = 3, ddf = "Kenward-Roger")) else NA
  report("repeated-measures", n, t_fit, t_sat, t_kr, sprintf("RepeatedMeasures N=%d", as.integer(n)))
}
for (g in c(200, 1000)) {
  d <- cr_data(50, g, 3)
  if (nrow(d) > max_n * 2) break
  fit <- NULL
  t_fit <- tm(fit <- lmerTest::lmer(y ~ rep + (1 | site) + (1 | geno) + (1 | sg), data = d))
  t_sat <- tm(anova(fit, type = 3, ddf = "Satterthwaite"))
  report(sprintf("crossed-50x%dx3", g), nrow(d), t_fit, t_sat, NA, sprintf("Crossed 50x%dx3", as.integer(g)))
}
