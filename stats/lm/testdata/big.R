# Reference values for TestLargeAgainstR (tsqr_test.go): a weighted fit on
# 41000 rows (three row chunks of the tall-skinny QR) with one aliased
# column. The data are defined by formulas that Go recomputes exactly
# (integer arithmetic) or to within an ulp (sin, cos).
# Run: Rscript big.R > big.json   (R 4.2, stats::lm)
n <- 41000
t <- 0:(n - 1)
x1 <- sin(0.37 * t)
x2 <- 3 * cos(0.011 * t) + 100
x3 <- t %% 7
x4 <- x1 + 2 * x3
x5 <- ((t * t) %% 1000) / 1000
e <- ((t * 7919) %% 1009) / 1009 - 0.5
y <- 1 + 2 * x1 - 0.5 * x2 + 0.3 * x3 + 4 * x5 + e
w <- 1 + (t %% 3)
w[t %% 97 == 0] <- 0
fit <- lm(y ~ x1 + x2 + x3 + x4 + x5, weights = w)
s <- summary(fit)
rows <- c(1, 2, 3, 5000, 16384, 16385, 32768, 32769, 40999, 41000)
rows <- rows[w[rows] > 0]
h <- hatvalues(fit)
cd <- cooks.distance(fit)
rs <- rstudent(fit)
key <- as.character(rows)
f <- function(v) paste(sprintf("%.17g", v), collapse = ", ")
cf <- coef(fit)
se <- rep(NA, length(cf))
se[!is.na(cf)] <- s$coefficients[, 2]
cf[is.na(cf)] <- 0
cat("{\n")
cat(sprintf("  \"r_version\": \"%s\",\n", R.version.string))
cat(sprintf("  \"coef\": [%s],\n", f(cf)))
cat(sprintf("  \"se\": [%s],\n", gsub("NA", "null", f(se))))
cat(sprintf("  \"aliased\": [%s],\n", paste(which(is.na(coef(fit))) - 1, collapse = ", ")))
cat(sprintf("  \"sigma\": %.17g,\n", s$sigma))
cat(sprintf("  \"r2\": %.17g,\n", s$r.squared))
cat(sprintf("  \"df\": %d,\n", fit$df.residual))
cat(sprintf("  \"rows\": [%s],\n", paste(rows - 1, collapse = ", ")))
cat(sprintf("  \"hat\": [%s],\n", f(h[key])))
cat(sprintf("  \"cook\": [%s],\n", f(cd[key])))
cat(sprintf("  \"rstudent\": [%s]\n", f(rs[key])))
cat("}\n")
