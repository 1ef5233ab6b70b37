package method

import (
	"fmt"
	"strings"

	"furrow/plan"
)

// Linear is the fixed-effects linear model fitted by least squares.
var Linear = &Model{
	Name:  "linear",
	Title: "linear model",
	Doc: "Fits the analysed values by least squares on the step's fixed terms and covariates (pivoted Householder QR, " +
		"sum-to-zero coding, aliased columns found and named), with ANOVA tests of Type I, II or III (Searle 1987, " +
		"Linear Models for Unbalanced Data; Langsrud 2003, Stat Comput 13:163) on the residual degrees of freedom. " +
		"Comparisons are contrasts of the estimated marginal means (Searle, Speed & Milliken 1980, Am Stat 34:216).",
	Rules: plan.ModelRules{
		Fixed: plan.Required, Random: plan.Forbidden,
		DF: []string{plan.DFResidual}, Anova: true,
		Compare: plan.Forbidden, Within: plan.Forbidden,
		Model: true, Means: true,
		Estimates: []string{plan.EstimateMeanDifference}, JointAdjust: true,
	},
	Pairing:  contrasts,
	Describe: func(st *plan.Step, y string) string { return describeModelFit(st, y, false) },
}

// Mixed is the linear mixed model fitted by REML or maximum likelihood.
var Mixed = &Model{
	Name:  "mixed",
	Title: "linear mixed model",
	Doc: "Fits the step's fixed terms with a random intercept per level of each random term (nested terms group by the " +
		"combination of their columns, separate terms are crossed) by REML (Patterson & Thompson 1971, Biometrika " +
		"58:545) or maximum likelihood, on the profiled penalised least-squares form (Bates et al. 2015, J Stat Softw " +
		"67(1)). Tests and contrasts use Satterthwaite (1946; Giesbrecht & Burns 1985; Fai & Cornelius 1996) or " +
		"Kenward-Roger (1997, Biometrics 53:983) denominator degrees of freedom.",
	Rules: plan.ModelRules{
		Fixed: plan.Required, Random: plan.Required,
		Estimation: []string{"reml", "ml"},
		DF:         []string{plan.DFSatterthwaite, plan.DFKenwardRoger, plan.DFResidual}, Anova: true,
		Compare: plan.Forbidden, Within: plan.Forbidden,
		UnitRandom: true, Model: true, Means: true,
		Estimates: []string{plan.EstimateMeanDifference}, JointAdjust: true,
	},
	Pairing:  contrasts,
	Describe: func(st *plan.Step, y string) string { return describeModelFit(st, y, true) },
}

func contrasts(*plan.Step) Pairing { return Contrasts }

// describeModelFit writes the explain sentence of a linear or mixed step.
func describeModelFit(st *plan.Step, y string, mixed bool) string {
	var b strings.Builder
	if !mixed {
		b.WriteString("A linear model fitted by least squares to " + y)
	} else {
		est := "REML"
		if st.Estimation == "ml" {
			est = "maximum likelihood"
		}
		b.WriteString("A linear mixed model fitted by " + est + " to " + y)
	}
	fixed := TermList(st.Fixed, " × ")
	for _, c := range st.Covariates {
		fixed = append(fixed, Code(c)+" (covariate)")
	}
	if st.Outcome.Derive == plan.DeriveBaseline {
		fixed = append(fixed, "the baseline value (covariate)")
	}
	fmt.Fprintf(&b, ", with fixed terms %s", JoinAnd(fixed))
	if len(st.Random) > 0 {
		var rnd []string
		for _, t := range st.Random {
			rnd = append(rnd, RandomTerm(t))
		}
		fmt.Fprintf(&b, " and random intercepts for %s", JoinAnd(rnd))
	}
	fmt.Fprintf(&b, ". Type %s tests", roman(st.Anova))
	switch st.DF {
	case plan.DFSatterthwaite:
		b.WriteString(" with Satterthwaite denominator degrees of freedom")
	case plan.DFKenwardRoger:
		b.WriteString(" with Kenward-Roger denominator degrees of freedom")
	default:
		b.WriteString(" on the residual degrees of freedom")
	}
	b.WriteString(".")
	return b.String()
}
