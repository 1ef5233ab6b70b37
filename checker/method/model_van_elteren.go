package method

import (
	"fmt"

	"furrow/plan"
)

// VanElteren is van Elteren's stratified rank test.
var VanElteren = &Model{
	Name:  "van-elteren",
	Title: "van Elteren stratified rank test",
	Doc: "Compares the levels of the compared factor by ranks within each stratum of the step's within (a site or " +
		"block), combining the strata with van Elteren's (1960, Bull Int Stat Inst 37:351) weights; with two levels " +
		"van Elteren's Z, with more the k-sample statistic. Comparisons are stratified two-sample tests with the " +
		"common Hodges-Lehmann shift. Checks run on the deviations from the level medians within each stratum.",
	Rules: plan.ModelRules{
		Fixed: plan.Forbidden, Random: plan.Forbidden,
		Compare: plan.Required, Within: plan.Required,
		Ranks: true, Estimates: []string{plan.EstimateHodgesLehmann},
	},
	Pairing: func(*plan.Step) Pairing { return StratifiedShift },
	Describe: func(st *plan.Step, y string) string {
		return fmt.Sprintf("Van Elteren's stratified rank test of %s between the levels of %s within each %s.", y, Code(st.Compare), Code(st.Within))
	},
}
