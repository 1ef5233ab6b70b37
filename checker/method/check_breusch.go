package method

import "furrow/stats/assume"

// BreuschPagan is the studentised Breusch-Pagan test of residual
// variance against the fitted values.
var BreuschPagan = &Check{
	Name:  "breusch-pagan",
	Title: "Breusch-Pagan",
	Doc: "Tests whether the residual variance changes with the fitted values (the cone that widens with the mean): " +
		"n R² of the squared residuals regressed on the fitted values, chi-squared on 1 df. Breusch & Pagan (1979, " +
		"Econometrica 47:1287) in Koenker's (1981, J Econom 17:107) studentised form, robust to non-normal errors.",
	Words:  "Breusch-Pagan test (studentised) of residual variance against the fitted values",
	Target: ResidualsVsFitted,
	Run: func(in Input) (Outcome, error) {
		r, err := assume.BreuschPaganFitted(in.Resid, in.Fitted)
		return Outcome{On: on(ResidualsVsFitted, nil), N: r.N, Statistic: r.Stat, DF: []float64{r.DF}, P: r.P}, err
	},
}
