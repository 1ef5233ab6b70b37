# Reference values for checker/engine/engine_rank_test.go.
#
# Run from checker/engine/testdata/rank:  Rscript ref.R
# Writes plots.csv (an invented, seeded multi-site trial: 3 sites x 4
# blocks x 3 treatments, nematode counts before application and at
# harvest) and ref.json (R 4.2.2 stats and car 3.1-1 results on the
# per-plot change log(harvest + 1) - log(before + 1)).
#
# Van Elteren's statistics are not in base R; they are computed below
# directly from van Elteren (1960, Bull Int Stat Inst 37:351) and, for
# more than two treatments, Landis, Heyman & Koch (1978, Int Stat Rev
# 46:237), written independently of the Go code.

suppressPackageStartupMessages({library(jsonlite); library(car)})
set.seed(20260314)

sites <- paste0("S", 1:3)
trts <- c("control", "a", "b")
rows <- list()
k <- 0
for (s in sites) {
  site_eff <- rnorm(1, 0, 0.6)
  for (b in 1:4) {
    blk <- paste0(s, "B", b)
    blk_eff <- rnorm(1, 0, 0.2)
    for (t in sample(trts)) {
      k <- k + 1
      plot <- sprintf("p%02d", k)
      before <- rnbinom(1, mu = exp(6 + site_eff + blk_eff), size = 4)
      shift <- c(control = 0.1, a = -0.5, b = -0.9)[[t]]
      sdv <- c(control = 0.3, a = 0.5, b = 0.8)[[t]]
      harvest <- round((before + 1) * exp(shift + rnorm(1, 0, sdv)))
      rows[[length(rows) + 1]] <- data.frame(site = s, block = blk, plot = plot, treatment = t, time = "before", juveniles = before)
      rows[[length(rows) + 1]] <- data.frame(site = s, block = blk, plot = plot, treatment = t, time = "harvest", juveniles = harvest)
    }
  }
}
d <- do.call(rbind, rows)
write.csv(d, "plots.csv", row.names = FALSE, quote = FALSE)

w <- reshape(d, idvar = c("site", "block", "plot", "treatment"), timevar = "time", direction = "wide")
w$change <- log(w$juveniles.harvest + 1) - log(w$juveniles.before + 1)
w$treatment <- factor(w$treatment, levels = trts)
y <- w$change
g <- w$treatment

# van Elteren two-sample: x is the first group; strata by st.
vanElteren2 <- function(x, y, sx, sy, alternative = "two.sided") {
  T <- 0; E <- 0; V <- 0
  for (s in unique(c(sx, sy))) {
    a <- x[sx == s]; b <- y[sy == s]
    m <- length(a); n <- length(b); N <- m + n
    if (m == 0 || n == 0) next
    r <- rank(c(a, b))
    ties <- table(c(a, b))
    tt <- sum(ties^3 - ties)
    if (tt == N^3 - N) next
    T <- T + sum(r[1:m]) / (N + 1)
    E <- E + m / 2
    V <- V + m * n * ((N + 1) - tt / (N * (N - 1))) / (12 * (N + 1)^2)
  }
  z <- (T - E) / sqrt(V)
  p <- switch(alternative, two.sided = 2 * pnorm(-abs(z)), less = pnorm(z), greater = pnorm(z, lower.tail = FALSE))
  list(z = z, p = p)
}

# van Elteren k-sample mean-score statistic (Landis, Heyman & Koch 1978).
vanElterenK <- function(y, g, st) {
  lev <- levels(g); kk <- length(lev)
  D <- rep(0, kk); V <- matrix(0, kk, kk)
  for (s in unique(st)) {
    ys <- y[st == s]; gs <- g[st == s]; N <- length(ys)
    r <- rank(ys)
    n <- as.numeric(table(factor(gs, levels = lev)))
    R <- sapply(lev, function(l) sum(r[gs == l]))
    s2 <- mean((r - mean(r))^2)
    D <- D + (R - n * (N + 1) / 2) / (N + 1)
    V <- V + s2 * N / (N - 1) * (diag(n) - outer(n, n) / N) / (N + 1)^2
  }
  i <- 1:(kk - 1)
  Q <- as.numeric(t(D[i]) %*% solve(V[i, i]) %*% D[i])
  list(q = Q, df = kk - 1, p = pchisq(Q, kk - 1, lower.tail = FALSE))
}

ref <- list(source = "R 4.2.2 (stats), car 3.1-1; van Elteren from the published formulas, see ref.R")

kw <- kruskal.test(y ~ g)
ref$kruskal <- list(h = unname(kw$statistic), df = unname(kw$parameter), p = kw$p.value)

ow <- oneway.test(y ~ g, var.equal = FALSE)
ref$welch <- list(f = unname(ow$statistic), df1 = unname(ow$parameter[1]), df2 = unname(ow$parameter[2]), p = ow$p.value)

fr <- friedman.test(y, g, w$block)
ref$friedman <- list(stat = unname(fr$statistic), df = unname(fr$parameter), p = fr$p.value)

sr <- wilcox.test(y)
ref$signed_one <- list(v = unname(sr$statistic), p = sr$p.value)

bef <- log(w$juveniles.before + 1); har <- log(w$juveniles.harvest + 1)
sp <- wilcox.test(bef, har, paired = TRUE)
ref$signed_paired <- list(v = unname(sp$statistic), p = sp$p.value)

# Pairwise harvest - before on the paired step, sides less (R's x - y).
spl <- wilcox.test(har, bef, paired = TRUE, alternative = "less")
ref$signed_paired_less <- list(p = spl$p.value, estimate = median(har - bef))

vk <- vanElterenK(y, g, w$site)
ref$vanelteren_k <- vk

# Checks on the Welch step: residuals = deviations from the treatment means.
rw <- y - ave(y, g)
ref$welch_shapiro <- list(w = unname(shapiro.test(rw)$statistic), p = shapiro.test(rw)$p.value)
lt <- leveneTest(y ~ g, center = mean)
ref$welch_levene <- list(f = lt$`F value`[1], p = lt$`Pr(>F)`[1])
# Checks on the Kruskal-Wallis step: deviations from the treatment medians.
rk <- y - ave(y, g, FUN = median)
ref$kruskal_shapiro <- list(w = unname(shapiro.test(rk)$statistic), p = shapiro.test(rk)$p.value)
bf <- leveneTest(y ~ g, center = median)
ref$kruskal_bf <- list(f = bf$`F value`[1], p = bf$`Pr(>F)`[1])

# Versus control, sides less, holm: rank-sum (Kruskal-Wallis step) and
# stratified van Elteren (van Elteren step).
pr <- c(); pv <- c(); est <- c()
for (l in c("a", "b")) {
  x <- y[g == l]; z <- y[g == "control"]
  pr <- c(pr, wilcox.test(x, z, alternative = "less")$p.value)
  pv <- c(pv, vanElteren2(x, z, w$site[g == l], w$site[g == "control"], "less")$p)
  est <- c(est, median(x) - median(z))
}
# Versus control on the Friedman step: van Elteren within blocks, two-sided, bonferroni.
pf <- c()
for (l in c("a", "b")) {
  pf <- c(pf, vanElteren2(y[g == l], y[g == "control"], w$block[g == l], w$block[g == "control"])$p)
}
ref$vs_control_friedman <- list(p = pf, p_bonferroni = p.adjust(pf, "bonferroni"))
ref$vs_control_ranksum <- list(p = pr, p_holm = p.adjust(pr, "holm"), estimate = est)
ref$vs_control_vanelteren <- list(p = pv, p_holm = p.adjust(pv, "holm"), estimate = est)

# Pairwise on the Welch step, two-sided, declared tukey (used: holm).
pw <- list(label = c(), t = c(), df = c(), p = c(), lower = c(), upper = c())
for (pp in list(c("a", "control"), c("b", "control"), c("b", "a"))) {
  tt <- t.test(y[g == pp[1]], y[g == pp[2]], var.equal = FALSE)
  pw$label <- c(pw$label, paste(pp[1], "-", pp[2]))
  pw$t <- c(pw$t, unname(tt$statistic)); pw$df <- c(pw$df, unname(tt$parameter)); pw$p <- c(pw$p, tt$p.value)
  pw$lower <- c(pw$lower, tt$conf.int[1]); pw$upper <- c(pw$upper, tt$conf.int[2])
}
pw$p_holm <- p.adjust(pw$p, "holm")
ref$welch_pairwise <- pw

# Equivalence of b against a on the Welch step, ratio margins 0.5 and 2.
xb <- y[g == "b"]; xa <- y[g == "a"]
lo <- t.test(xb, xa, var.equal = FALSE, mu = log(0.5), alternative = "greater")
hi <- t.test(xb, xa, var.equal = FALSE, mu = log(2), alternative = "less")
ci <- t.test(xb, xa, var.equal = FALSE, conf.level = 0.9)$conf.int
ref$welch_tost <- list(p_lower = lo$p.value, p_upper = hi$p.value, lower = ci[1], upper = ci[2])

# Two treatments only (control and a): rank-sum U of control, van Elteren z of control.
x2 <- y[g == "control"]; y2 <- y[g == "a"]
rs <- wilcox.test(x2, y2)
ref$ranksum2 <- list(u = unname(rs$statistic), p = rs$p.value)
ve <- vanElteren2(x2, y2, w$site[g == "control"], w$site[g == "a"])
ref$vanelteren2 <- ve

# The soil-nematodes example (examples/soil-nematodes): the accepted
# van Elteren step on the change log(harvest + 1) - log(before + 1) within
# sites, after the plan's exclusion of plots without a baseline count;
# versus-untreated sides less, declared dunnett, used holm.
ex <- read.csv("../../../../examples/soil-nematodes/plots.csv", na.strings = c("", "NA"))
ew <- reshape(ex, idvar = c("site", "block", "plot", "treatment"), timevar = "time", direction = "wide")
ew <- ew[!is.na(ew$juveniles.before) & !is.na(ew$juveniles.harvest), ]
ew$change <- log(ew$juveniles.harvest + 1) - log(ew$juveniles.before + 1)
ew$treatment <- factor(ew$treatment, levels = c("untreated", "reference", "candidate"))
evk <- vanElterenK(ew$change, ew$treatment, ew$site)
ep <- c(); ee <- c()
for (l in c("reference", "candidate")) {
  x <- ew$change[ew$treatment == l]; z <- ew$change[ew$treatment == "untreated"]
  ep <- c(ep, vanElteren2(x, z, ew$site[ew$treatment == l], ew$site[ew$treatment == "untreated"], "less")$p)
  ee <- c(ee, median(x) - median(z))
}
ref$example <- list(n = nrow(ew), q = evk$q, df = evk$df, p = evk$p, vs_p = ep, vs_p_holm = p.adjust(ep, "holm"), vs_estimate = ee)

writeLines(toJSON(ref, digits = NA, auto_unbox = TRUE, pretty = TRUE), "ref.json")
