package method

import "furrow/stats/assume"

// BrownForsythe is the median-centred form of Levene's test.
var BrownForsythe = &Check{
	Name:  "brown-forsythe",
	Title: "Brown-Forsythe",
	Doc: "Tests whether the residuals spread equally in every group of the by columns: a one-way analysis of variance " +
		"of the absolute deviations of the residuals from their group medians, which keeps its size under skewed " +
		"errors. Brown & Forsythe (1974, JASA 69:364).",
	Words:  "Brown-Forsythe test (median-centred) of equal residual variance",
	Target: ResidualsByGroup,
	Run:    groupedF(assume.BrownForsythe),
}
