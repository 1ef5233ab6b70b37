package method

import "furrow/stats/assume"

// AndersonDarling is the Anderson-Darling test of normal residuals.
var AndersonDarling = &Check{
	Name:  "anderson-darling",
	Title: "Anderson-Darling",
	Doc: "Tests whether the residuals look like a sample from a normal distribution with estimated mean and variance, " +
		"weighting the tails more than the centre: the modified statistic A2* with the p-value of D'Agostino & " +
		"Stephens (1986, Goodness-of-Fit Techniques, table 4.9). Anderson & Darling (1954, JASA 49:765).",
	Words:  "Anderson-Darling test of the residuals",
	Target: Residuals,
	Run: func(in Input) (Outcome, error) {
		r, err := assume.AndersonDarling(in.Resid)
		return Outcome{On: on(Residuals, nil), N: r.N, Statistic: r.A2Star, P: r.P}, err
	},
}
