package method

import "furrow/stats/assume"

// ShapiroWilk is the Shapiro-Wilk test of normal residuals.
var ShapiroWilk = &Check{
	Name:  "shapiro-wilk",
	Title: "Shapiro-Wilk",
	Doc: "Tests whether the residuals look like a sample from one normal distribution: W is the squared correlation " +
		"of the ordered residuals with their expected normal order statistics, small when the residuals are skewed or " +
		"heavy-tailed. Shapiro & Wilk (1965, Biometrika 52:591), with Royston's (1992, Stat Comput 2:117; 1995, Appl " +
		"Stat 44:547) approximation of the coefficients and the p-value, defined for 3 to 5000 residuals.",
	Words:  "Shapiro-Wilk test of the residuals",
	Target: Residuals,
	Run: func(in Input) (Outcome, error) {
		r, err := assume.ShapiroWilk(in.Resid)
		return Outcome{On: on(Residuals, nil), N: r.N, Statistic: r.W, P: r.P}, err
	},
}
