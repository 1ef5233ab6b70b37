## Reference values for stats/lm tests. Run from stats/lm/testdata:
##   Rscript ref.R
## Writes ref.json. Requires R (stats), car and jsonlite (Debian packages).
## Data: datasets::npk and invented, seeded layouts generated below.
suppressMessages(library(car))
suppressMessages(library(emmeans))
library(jsonlite)

fitinfo <- function(fit) {
  s <- summary(fit)
  cf <- coef(fit)
  ct <- s$coefficients
  se <- rep(NA_real_, length(cf)); names(se) <- names(cf)
  se[rownames(ct)] <- ct[, 2]
  pv <- rep(NA_real_, length(cf)); names(pv) <- names(cf)
  pv[rownames(ct)] <- ct[, 4]
  ci <- suppressWarnings(confint(fit))
  list(
    coef_names = names(cf), coef = unname(cf), se = unname(se), p = unname(pv),
    lower = unname(ci[, 1]), upper = unname(ci[, 2]),
    aliased = names(cf)[is.na(cf)],
    sigma = s$sigma, df_residual = fit$df.residual, rank = fit$rank,
    r_squared = s$r.squared, adj_r_squared = s$adj.r.squared,
    logLik = as.numeric(logLik(fit)), AIC = AIC(fit), BIC = BIC(fit),
    fitted = unname(fitted(fit)), residuals = unname(residuals(fit)),
    hat = unname(hatvalues(fit)), rstandard = unname(rstandard(fit)),
    rstudent = unname(rstudent(fit)), cooks = unname(cooks.distance(fit)),
    vcov = unname(vcov(fit, complete = FALSE))
  )
}
tab <- function(a) {
  a <- as.data.frame(a)
  keep <- rownames(a) != "(Intercept)"
  a <- a[keep, , drop = FALSE]
  ss <- if ("Sum Sq" %in% names(a)) a[["Sum Sq"]] else a[["Sum of Sq"]]
  list(term = rownames(a), df = unname(a$Df), ss = unname(ss),
       F = unname(a[["F value"]]), p = unname(a[["Pr(>F)"]]))
}

out <- list(meta = list(
  R = R.version.string, car = as.character(packageVersion("car")),
  jsonlite = as.character(packageVersion("jsonlite")),
  emmeans = as.character(packageVersion("emmeans"))))

## 1. npk, treatment contrasts: yield ~ block + N*P*K (N:P:K confounded with blocks).
options(contrasts = c("contr.treatment", "contr.poly"))
fit <- lm(yield ~ block + N * P * K, data = npk)
out$npk <- list(
  data = list(block = as.integer(npk$block) - 1L, N = as.integer(npk$N) - 1L,
              P = as.integer(npk$P) - 1L, K = as.integer(npk$K) - 1L, yield = npk$yield),
  call = "lm(yield ~ block + N*P*K, npk); anova(fit); car::Anova(fit, type=2)",
  fit = fitinfo(fit), type1 = tab(anova(fit)), type2 = tab(Anova(fit, type = 2)))

## 2. Invented unbalanced two-way layout, all cells present, with a covariate.
set.seed(20240611)
A <- factor(rep(c("a1", "a2", "a3"), times = c(9, 7, 8)))
B <- factor(c(rep(c("b1", "b2"), c(4, 5)), rep(c("b1", "b2"), c(5, 2)), rep(c("b1", "b2"), c(3, 5))))
x <- round(runif(24, 10, 20), 2)
y <- round(5 + as.integer(A) + 2 * (B == "b2") + 0.8 * (A == "a3" & B == "b2") + 0.3 * x + rnorm(24), 3)
w <- round(runif(24, 0.5, 2), 3)
d2 <- data.frame(A, B, x, y, w)
options(contrasts = c("contr.sum", "contr.poly"))
fs <- lm(y ~ A * B + x, data = d2)
options(contrasts = c("contr.treatment", "contr.poly"))
ft <- lm(y ~ A * B + x, data = d2)
fw <- lm(y ~ A * B + x, data = d2, weights = w)
f0 <- lm(y ~ 0 + A + x, data = d2)
out$unbal <- list(
  data = list(A = as.integer(A) - 1L, B = as.integer(B) - 1L, x = x, y = y, w = w),
  call = "lm(y ~ A*B + x) with contr.sum and contr.treatment; car::Anova types 2 and 3 (contr.sum); weighted fit; lm(y ~ 0 + A + x)",
  sum = fitinfo(fs), treatment = fitinfo(ft), weighted = fitinfo(fw), noint = fitinfo(f0),
  type1 = tab(anova(fs)), type2 = tab(Anova(fs, type = 2)), type3 = tab(Anova(fs, type = 3)),
  weighted_type2 = tab(Anova(fw, type = 2)),
  emm_A = as.list(as.data.frame(summary(emmeans(fs, ~ A)))[, c("emmean", "SE", "df")]),
  emm_AB = as.list(as.data.frame(summary(emmeans(fs, ~ A:B)))[, c("emmean", "SE", "df")]))

## 3. Invented 3 x 3 layout with the cell (a3, b3) empty.
set.seed(7)
cells <- expand.grid(A = c("a1", "a2", "a3"), B = c("b1", "b2", "b3"), stringsAsFactors = FALSE)
cells <- cells[!(cells$A == "a3" & cells$B == "b3"), ]
reps <- c(3, 2, 4, 2, 3, 3, 4, 2)
d3 <- cells[rep(seq_len(nrow(cells)), reps), ]
d3$A <- factor(d3$A); d3$B <- factor(d3$B)
d3$y <- round(10 + as.integer(d3$A) - 0.5 * as.integer(d3$B) + rnorm(nrow(d3)), 3)
fm <- lm(y ~ A * B, data = d3)
## Type II by model comparison (Langsrud 2003): A | B, B | A, A:B | A + B.
mA <- lm(y ~ A, d3); mB <- lm(y ~ B, d3); mAB <- lm(y ~ A + B, d3)
cmp <- function(m0, m1) { a <- anova(m0, m1); c(df = a$Df[2], ss = a[["Sum of Sq"]][2]) }
out$missing <- list(
  data = list(A = as.integer(d3$A) - 1L, B = as.integer(d3$B) - 1L, y = d3$y),
  call = "lm(y ~ A*B) with an empty cell (treatment contrasts); anova(fit); Type II as anova(lm(y~B), lm(y~A+B)) etc.",
  fit = fitinfo(fm), type1 = tab(anova(fm)),
  type2 = list(term = c("A", "B", "A:B"),
               df = unname(c(cmp(mB, mAB)[1], cmp(mA, mAB)[1], cmp(mAB, fm)[1])),
               ss = unname(c(cmp(mB, mAB)[2], cmp(mA, mAB)[2], cmp(mAB, fm)[2]))))

## 4. Nested: y ~ A + A:B on the unbalanced layout (B within A).
fn <- lm(y ~ A + A:B, data = d2)
out$nested <- list(call = "lm(y ~ A + A:B) on the unbal data", fit = fitinfo(fn), type1 = tab(anova(fn)))

writeLines(toJSON(out, digits = I(17), auto_unbox = TRUE, na = "null", pretty = TRUE), "ref.json")
