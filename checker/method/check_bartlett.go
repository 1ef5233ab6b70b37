package method

import "furrow/stats/assume"

// Bartlett is Bartlett's test of equal residual variance between groups.
var Bartlett = &Check{
	Name:  "bartlett",
	Title: "Bartlett",
	Doc: "Tests whether the residuals have equal variance in every group of the by columns by comparing the pooled " +
		"variance with the geometric mean of the group variances (a chi-squared statistic with a scaling correction). " +
		"Powerful under normal errors, sensitive to non-normality. Bartlett (1937, Proc R Soc A 160:268).",
	Words:  "Bartlett test of equal residual variance",
	Target: ResidualsByGroup,
	Run: func(in Input) (Outcome, error) {
		r, err := assume.Bartlett(in.Groups)
		return Outcome{On: on(ResidualsByGroup, in.By), N: r.N, Statistic: r.Stat, DF: []float64{r.DF}, P: r.P}, err
	},
}
