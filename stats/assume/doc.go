// Package assume provides the assumption tests a statistical analysis plan
// refers to: normality (Shapiro-Wilk, Anderson-Darling, sample moments) and
// homogeneity of variance (Levene, Brown-Forsythe, Bartlett, Breusch-Pagan).
//
// Each test takes plain slices (or a gonum matrix of regressors), never
// modifies them, and returns a result struct holding the statistic, its
// degrees of freedom where relevant, the p-value and the number of
// observations. Problems the data can cause (too few values, constant data,
// NaN, a group of size one) are returned as errors; nothing panics on data.
//
// # Normality
//
// ShapiroWilk follows Royston (1992, Stat Comput 2:117) and Royston (1995,
// Appl Stat 44:547, AS R94) for 3 <= n <= 5000. AndersonDarling uses the
// case-3 (mean and variance estimated) modification and p-value formulas of
// D'Agostino & Stephens (1986, Goodness-of-Fit Techniques, table 4.9).
// Moments gives sample skewness and excess kurtosis with their exact
// standard errors under normality.
//
// # Homogeneity of variance
//
// Levene (1960) uses absolute deviations from group means, Brown & Forsythe
// (1974, JASA 69:364) from group medians; both are one-way ANOVA F tests on
// those deviations. Bartlett (1937, Proc R Soc A 160:268) is the
// likelihood-ratio statistic with its scaling constant. BreuschPagan is
// Koenker's (1981, J Econometrics 17:107) studentised form of the Breusch &
// Pagan (1979, Econometrica 47:1287) test, n R² of the squared residuals on
// the regressors.
//
// # Speed
//
// BenchmarkShapiroWilk5000 (n = 5000) runs in about 0.6 ms per call on the
// development machine (2-core AMD EPYC; go test -bench ShapiroWilk5000
// ./stats/assume), dominated by sorting and the 2500 normal quantiles.
package assume
