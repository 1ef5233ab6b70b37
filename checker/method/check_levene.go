package method

import "furrow/stats/assume"

// Levene is Levene's test of equal residual variance between groups.
var Levene = &Check{
	Name:  "levene",
	Title: "Levene",
	Doc: "Tests whether the residuals spread equally in every group of the by columns: a one-way analysis of variance " +
		"of the absolute deviations of the residuals from their group means. Levene (1960, in Contributions to " +
		"Probability and Statistics, Stanford University Press).",
	Words:  "Levene test (mean-centred) of equal residual variance",
	Target: ResidualsByGroup,
	Run:    groupedF(assume.Levene),
}

// groupedF runs an F-type test of the grouped residuals.
func groupedF(test func([][]float64) (assume.FTestResult, error)) func(Input) (Outcome, error) {
	return func(in Input) (Outcome, error) {
		r, err := test(in.Groups)
		return Outcome{On: on(ResidualsByGroup, in.By), N: r.N, Statistic: r.F, DF: []float64{r.DF1, r.DF2}, P: r.P}, err
	}
}
