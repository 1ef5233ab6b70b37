# Reference for TestDunnettNonProductCorrelation (checker/engine/engine_dunnett_test.go):
# an unbalanced RCBD whose Dunnett contrasts are not of the one-factor form.
# Run with: Rscript dunnett_qmc.R (R 4.2.2, multcomp 1.4.22, mvtnorm 1.1.3);
# it prints the data rows, then the adjusted p-values and t statistics.
suppressMessages(library(multcomp))
lv <- c("ctrl","a","b","c","d")
d <- data.frame(block=factor(rep(paste0("B",1:4), each=5)), trt=factor(rep(lv, 4), levels=lv),
  y=c(10.1,12.3,11.0,13.2,10.9, 9.6,11.1,10.9,12.8,10.1, 10.8,12.9,11.7,13.9,11.6, 9.9,11.8,10.2,12.1,10.4))
d <- d[-c(2,3,9,12,18),]  # drop five plots unevenly: the contrasts correlation is not of the one-factor form
options(contrasts=c("contr.sum","contr.poly"))
f <- lm(y ~ block + trt, data=d)
set.seed(1)
g <- summary(glht(f, linfct=mcp(trt="Dunnett")), test=adjusted("single-step", abseps=1e-6))
print(R.version.string); print(packageVersion("multcomp")); print(packageVersion("mvtnorm"))
cat(sprintf("%s,%s,%s\n", d$block, d$trt, d$y), sep="")
cat(sprintf("%.10f\n", g$test$pvalues))
cat(sprintf("%.10f\n", g$test$tstat))
