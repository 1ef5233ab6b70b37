package method

import (
	"fmt"

	"furrow/plan"
)

// Friedman is Friedman's rank test for blocked designs.
var Friedman = &Model{
	Name:  "friedman",
	Title: "Friedman rank test",
	Doc: "Compares the levels of the compared factor by their ranks within each block (the step's within): Friedman " +
		"(1937, JASA 32:675) with the correction for ties; blocks that lack a level are left out and counted. " +
		"Comparisons are van Elteren's stratified two-sample tests within the blocks. Checks run on the deviations " +
		"after one median-polish sweep over blocks and levels.",
	Rules: plan.ModelRules{
		Fixed: plan.Forbidden, Random: plan.Forbidden,
		Compare: plan.Required, Within: plan.Required,
		UnitWithin: true, Ranks: true, Estimates: []string{plan.EstimateHodgesLehmann},
	},
	Pairing: func(*plan.Step) Pairing { return StratifiedShift },
	Describe: func(st *plan.Step, y string) string {
		return fmt.Sprintf("The Friedman rank test of %s between the levels of %s within %s, with the correction for ties.", y, Code(st.Compare), Code(st.Within))
	},
}
