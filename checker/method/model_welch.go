package method

import (
	"fmt"

	"furrow/plan"
)

// Welch is Welch's one-way analysis of variance.
var Welch = &Model{
	Name:  "welch",
	Title: "Welch one-way ANOVA",
	Doc: "Compares the means of the levels of the compared factor without assuming equal variances: Welch's (1951, " +
		"Biometrika 38:330) weighted F test with approximate denominator df. Comparisons are Welch two-sample t tests " +
		"(Welch 1947, Biometrika 34:28) with Welch-Satterthwaite df and t intervals. Checks run on the deviations from " +
		"the level means.",
	Rules: plan.ModelRules{
		Fixed: plan.Forbidden, Random: plan.Forbidden,
		Compare: plan.Required, Within: plan.Forbidden,
		Means: true, Estimates: []string{plan.EstimateMeanDifference},
	},
	Pairing: func(*plan.Step) Pairing { return WelchTwoSample },
	Describe: func(st *plan.Step, y string) string {
		return fmt.Sprintf("Welch's one-way analysis of variance of %s between the levels of %s, not assuming equal variances.", y, Code(st.Compare))
	},
}
