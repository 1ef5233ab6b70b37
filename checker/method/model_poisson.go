package method

import (
	"fmt"

	"furrow/plan"
)

// Poisson is the Poisson log-linear model for counts.
var Poisson = &Model{
	Name:  "poisson",
	Title: "Poisson log-linear model",
	Doc: "Fits the counts with a Poisson distribution and log link on the step's fixed terms and covariates by " +
		"iteratively reweighted least squares on the QR path (Nelder & Wedderburn 1972, J R Stat Soc A 135:370; " +
		"McCullagh & Nelder 1989, Generalized Linear Models, 2nd ed.). Each term is tested by the likelihood ratio of " +
		"the fit without its columns (Type III); marginal means are rates, back-transformed from the log scale, and " +
		"comparisons are rate ratios with Wald intervals. Checks run on the Pearson residuals.",
	Rules: plan.ModelRules{
		Fixed: plan.Required, Random: plan.Forbidden,
		Compare: plan.Forbidden, Within: plan.Forbidden,
		Model: true, Means: true,
		Estimates: []string{plan.EstimateMeanDifference}, JointAdjust: true,
	},
	Pairing: contrasts,
	Describe: func(st *plan.Step, y string) string {
		fixed := TermList(st.Fixed, " × ")
		for _, c := range st.Covariates {
			fixed = append(fixed, Code(c)+" (covariate)")
		}
		return fmt.Sprintf("A Poisson log-linear model of %s with fixed terms %s, fitted by iteratively reweighted least squares; "+
			"each term is tested by the likelihood ratio of the model without it (Type III), means are rates and comparisons rate ratios.",
			y, JoinAnd(fixed))
	},
}
