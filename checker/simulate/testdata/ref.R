# Reference rejection rates for checker/simulate/simulate_test.go, by direct
# simulation in R (base stats only): the size of Levene's test (absolute
# deviations from the group mean; Levene 1960) and of the Brown-Forsythe
# variant (deviations from the group median; Brown & Forsythe 1974, JASA
# 69:364-367), each the one-way ANOVA F test on the deviations, for 8
# groups of 4 independent N(0, 1) values, at the 0.05 level.
# Run: Rscript ref.R > ref.json
set.seed(20260301)
reps <- 20000
g <- factor(rep(1:8, each = 4))
size <- function(centre) {
  p <- replicate(reps, {
    y <- rnorm(32)
    d <- abs(y - ave(y, g, FUN = centre))
    anova(lm(d ~ g))[1, 5]
  })
  mean(p < 0.05)
}
lev <- size(mean)
bf <- size(median)
cat(sprintf('{\n  "source": "%s, base stats, set.seed(20260301), %d replicates",\n  "groups": 8,\n  "per_group": 4,\n  "replicates": %d,\n  "levene_mean_size": %.5f,\n  "brown_forsythe_size": %.5f\n}\n',
  R.version.string, reps, reps, lev, bf))
