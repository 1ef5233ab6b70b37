# Checks that the generated example data behave as each example's README
# says (which cascade step the checks should accept). Run from the module
# root after `go run ./examples/generate`:
#
#   Rscript examples/generate/testdata/verify.R > examples/generate/testdata/verify.txt
#
# Uses R with nlme and car (Debian packages). The Go tests never run this
# script; verify.txt records what it printed.
suppressPackageStartupMessages({
  library(nlme); library(car)
})
cat("R ", R.version$major, ".", R.version$minor, " nlme ", format(packageVersion("nlme")),
    " car ", format(packageVersion("car")), "\n", sep = "")
p <- function(label, x) cat(sprintf("%-48s %.3g\n", label, x))

## soil-nematodes
d <- read.csv("examples/soil-nematodes/plots.csv", na.strings = c("", "NA"), stringsAsFactors = TRUE)
nobase <- unique(d$plot[d$time == "before" & is.na(d$juveniles)])
cat("\nsoil-nematodes: plots without a baseline:", as.character(nobase), "\n")
d <- d[!(d$plot %in% nobase) & !is.na(d$juveniles), ]
d$treatment <- relevel(d$treatment, "untreated")
d$ly <- log(d$juveniles + 1)
# plots are nested in blocks, blocks in sites: random site:block and plot
# intercepts, sites fixed (the site-level random term has variance 0 next
# to the fixed site effect's columns, so it is left out)
d$sb <- interaction(d$site, d$block, drop = TRUE)
m1 <- lme(ly ~ site + treatment * time, random = ~ 1 | sb / plot, data = d, method = "REML")
p("mixed-log shapiro-wilk p (conditional residuals)", shapiro.test(resid(m1))$p.value)
p("mixed-log shapiro-wilk p (marginal residuals)", shapiro.test(resid(m1, level = 0))$p.value)
p("mixed-log levene (mean) p by treatment", leveneTest(resid(m1) ~ d$treatment, center = mean)$`Pr(>F)`[1])
w <- reshape(d[, c("site", "block", "plot", "treatment", "time", "ly")], idvar = c("site", "block", "plot", "treatment"),
             timevar = "time", direction = "wide")
w <- w[!is.na(w$ly.before) & !is.na(w$ly.harvest), ]
w$change <- w$ly.harvest - w$ly.before
cat("change-log units:", nrow(w), "\n")
m2 <- lm(change ~ site + treatment, data = w)
p("change-log shapiro-wilk p", shapiro.test(resid(m2))$p.value)
p("change-log brown-forsythe p by treatment", leveneTest(resid(m2) ~ w$treatment, center = median)$`Pr(>F)`[1])
cat("change-log mean log change by treatment:\n")
print(round(tapply(w$change, w$treatment, mean), 3))
cat("change-log median ratio harvest/before by treatment:\n")
print(round(exp(tapply(w$change, w$treatment, median)), 3))
for (lv in c("reference", "candidate")) {
  s <- w[w$treatment %in% c("untreated", lv), ]
  # stratified look: Wilcoxon within each site, pooled signs of the shift
  p(sprintf("wilcoxon %s vs untreated (unstratified) p", lv),
    wilcox.test(change ~ droplevels(treatment), data = s, exact = FALSE)$p.value)
}

## wheat-varieties
d <- read.csv2("examples/wheat-varieties/plots.csv", stringsAsFactors = TRUE)
d$variety <- relevel(d$variety, "Norrin")
m <- lm(yield ~ block + variety, data = d)
cat("\nwheat-varieties:\n")
p("linear shapiro-wilk p", shapiro.test(resid(m))$p.value)
p("linear levene (mean) p by variety", leveneTest(resid(m) ~ d$variety, center = mean)$`Pr(>F)`[1])
print(anova(m))

## irrigation-split-plot
d <- read.csv("examples/irrigation-split-plot/plots.csv", stringsAsFactors = TRUE)
# whole plots (block x irrigation) nested in blocks; in this balanced
# layout the containment denominator df are the error-stratum df, which
# Kenward-Roger also gives
options(contrasts = c("contr.sum", "contr.poly"))  # type III tests need sum-to-zero coding
m <- lme(yield ~ irrigation * nitrogen, random = ~ 1 | block / irrigation, data = d, method = "REML")
cat("\nirrigation-split-plot:\n")
p("mixed shapiro-wilk p (conditional residuals)", shapiro.test(resid(m))$p.value)
p("mixed levene (mean) p by nitrogen", leveneTest(resid(m) ~ d$nitrogen, center = mean)$`Pr(>F)`[1])
print(VarCorr(m))
print(anova(m, type = "marginal"))
