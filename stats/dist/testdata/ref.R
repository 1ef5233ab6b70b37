# Reference values for stats/dist, produced with R 4.2.2 (base stats).
# Run from this folder:  Rscript ref.R  (writes ref.json)
# Each row: function, arguments, upper-tail probability and its log
# (lower.tail = FALSE, log.p = TRUE), so tails far below 1e-300 are covered.
library(jsonlite)
rows <- list()
add <- function(fn, args, p, logp) {
  rows[[length(rows) + 1]] <<- list(fn = fn, args = I(args), p = p, logp = logp)
}
for (z in c(-3, -0.5, 0, 0.3, 1.96, 5, 8, 10, 20, 37, 38, 40, 100, 1000)) {
  add("norm", c(z), pnorm(z, lower.tail = FALSE), pnorm(z, lower.tail = FALSE, log.p = TRUE))
}
for (df in c(0.5, 1, 2.5, 3, 7.3, 10, 29.71, 100, 1e4, 1e6)) {
  for (t in c(-2, 0.5, 1.5, 3, 10, 50, 1e3, 1e6, 1e20, 1e100)) {
    add("t", c(t, df), pt(t, df, lower.tail = FALSE), pt(t, df, lower.tail = FALSE, log.p = TRUE))
  }
}
for (d in list(c(1, 1), c(1, 10), c(2.5, 13.7), c(3, 20), c(5, 1000), c(10, 3), c(4, 87.23), c(30, 30))) {
  for (f in c(0.1, 1, 3, 10, 100, 1e4, 1e8, 1e30)) {
    add("f", c(f, d), pf(f, d[1], d[2], lower.tail = FALSE), pf(f, d[1], d[2], lower.tail = FALSE, log.p = TRUE))
  }
}
for (df in c(0.5, 1, 2, 3.7, 10, 55.5, 200)) {
  for (x in c(0.01, 1, 5, 20, 60, 150, 500, 2000)) {
    add("chisq", c(x, df), pchisq(x, df, lower.tail = FALSE), pchisq(x, df, lower.tail = FALSE, log.p = TRUE))
  }
}
q <- list()
addq <- function(fn, args, x) q[[length(q) + 1]] <<- list(fn = fn, args = I(args), x = x)
for (p in c(1e-300, 1e-100, 1e-20, 1e-12, 1e-5, 0.025, 0.3, 0.5, 0.9, 0.975)) {
  addq("norm_upper", c(p), qnorm(p, lower.tail = FALSE))
  for (df in c(1, 2.5, 7.3, 30, 1e5)) addq("t_upper", c(p, df), qt(p, df, lower.tail = FALSE))
  for (d in list(c(1, 10), c(3, 20), c(2.5, 13.7))) addq("f_upper", c(p, d), qf(p, d[1], d[2], lower.tail = FALSE))
  for (df in c(1, 3.7, 20)) addq("chisq_upper", c(p, df), qchisq(p, df, lower.tail = FALSE))
}
out <- list(generator = paste(R.version.string, "base stats"), tails = rows, quantiles = q)
writeLines(toJSON(out, digits = NA, auto_unbox = TRUE, pretty = TRUE), "ref.json")
