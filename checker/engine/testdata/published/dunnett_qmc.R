# Reference for TestDunnettNonProductCorrelation (checker/engine/engine_dunnett_test.go):
# an unbalanced RCBD whose Dunnett contrasts are not of the one-factor form.
# Run from this folder with: Rscript dunnett_qmc.R (R 4.2.2, multcomp 1.4.22,
# mvtnorm 1.1.3, jsonlite 1.8.4; Debian 12 packages). It prints the data rows
# (the CSV in the Go test) and writes dunnett_qmc.json: per comparison the t
# statistic and the single-step adjusted p-value with mvtnorm's error estimate.
#
# The adjusted p-values are P(max |T_i| >= |t|) by pmvt on the correlation and
# df of glht(lm(y ~ block + trt), mcp(trt = "Dunnett")), with
# GenzBretz(maxpts = 1e8, abseps = 1e-7, releps = 0); each call must complete
# normally, with its error estimate below 1e-7. (The earlier
# adjusted("single-step", abseps = 1e-6) kept the default maxpts = 25000 and
# did not reach its 1e-6 target.) summary.glht with the same algorithm must
# agree within the errors. Another seed and file check the estimates:
#   Rscript dunnett_qmc.R 7 /tmp/dunnett_qmc_seed7.json
# prints, per comparison, the difference from the committed dunnett_qmc.json
# against the sum of the two error estimates.
suppressMessages({library(multcomp); library(jsonlite)})
args <- commandArgs(trailingOnly = TRUE)
seed <- if (length(args) >= 1) as.integer(args[1]) else 1L
outfile <- if (length(args) >= 2) args[2] else "dunnett_qmc.json"
lv <- c("ctrl","a","b","c","d")
d <- data.frame(block=factor(rep(paste0("B",1:4), each=5)), trt=factor(rep(lv, 4), levels=lv),
  y=c(10.1,12.3,11.0,13.2,10.9, 9.6,11.1,10.9,12.8,10.1, 10.8,12.9,11.7,13.9,11.6, 9.9,11.8,10.2,12.1,10.4))
d <- d[-c(2,3,9,12,18),]  # drop five plots unevenly: the contrasts correlation is not of the one-factor form
options(contrasts=c("contr.sum","contr.poly"))
f <- lm(y ~ block + trt, data=d)
gl <- glht(f, linfct=mcp(trt="Dunnett"))
cat(sprintf("%s,%s,%s\n", d$block, d$trt, d$y), sep="")
algCall <- "GenzBretz(maxpts = 1e8, abseps = 1e-7, releps = 0)"
alg <- eval(parse(text = algCall))
tstat <- as.numeric((coef(gl) - gl$rhs) / sqrt(diag(vcov(gl))))
cr <- cov2cor(vcov(gl))
m <- length(tstat)
cmp <- lapply(seq_len(m), function(i) {
  set.seed(seed)
  p <- pmvt(lower = rep(-abs(tstat[i]), m), upper = rep(abs(tstat[i]), m), df = gl$df, corr = cr, algorithm = alg)
  if (attr(p, "msg") != "Normal Completion" || !(attr(p, "error") <= 1e-7))
    stop(sprintf("pmvt t=%g: %s, error %g", tstat[i], attr(p, "msg"), attr(p, "error")))
  list(level = lv[i + 1], t = tstat[i], p_adjusted = 1 - as.numeric(p), error = attr(p, "error"))
})
set.seed(seed)
g <- summary(gl, test = adjusted("single-step", algorithm = alg))
stopifnot(all.equal(as.numeric(g$test$tstat), tstat, tolerance = 1e-12))
stopifnot(all(abs(g$test$pvalues - sapply(cmp, `[[`, "p_adjusted")) <= attr(g$test$pvalues, "error") + sapply(cmp, `[[`, "error")))
out <- list(meta = list(R_version = R.version.string,
                        packages = list(multcomp = as.character(packageVersion("multcomp")),
                                        mvtnorm = as.character(packageVersion("mvtnorm")),
                                        jsonlite = as.character(packageVersion("jsonlite"))),
                        model = "glht(lm(y ~ block + trt), linfct = mcp(trt = \"Dunnett\")), two-sided single-step",
                        df = gl$df,
                        algorithm = sprintf("pmvt(lower = -|t|, upper = |t|, df, corr = cov2cor(vcov(glht)), algorithm = %s), set.seed(%d) before each call", algCall, seed)),
            comparisons = cmp)
if (outfile != "dunnett_qmc.json" && file.exists("dunnett_qmc.json")) {
  ref <- fromJSON("dunnett_qmc.json")$comparisons
  for (i in seq_along(cmp)) {
    dd <- abs(cmp[[i]]$p_adjusted - ref$p_adjusted[i])
    cat(sprintf("%s: |diff| %.2e, errors %.2e + %.2e%s\n", cmp[[i]]$level, dd, cmp[[i]]$error, ref$error[i],
                if (dd > cmp[[i]]$error + ref$error[i]) "  EXCEEDS" else ""))
  }
}
writeLines(toJSON(out, digits = I(17), auto_unbox = TRUE, pretty = TRUE), outfile)
