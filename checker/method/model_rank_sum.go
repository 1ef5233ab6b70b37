package method

import (
	"fmt"

	"furrow/plan"
)

// RankSum is the Wilcoxon-Mann-Whitney rank-sum test.
var RankSum = &Model{
	Name:  "rank-sum",
	Title: "Wilcoxon-Mann-Whitney rank-sum test",
	Doc: "Compares the two levels of the compared factor by the ranks of the analysed values: Wilcoxon (1945) and " +
		"Mann & Whitney (1947, Ann Math Stat 18:50), exact for small samples without ties, else normal with continuity " +
		"and tie corrections; the Hodges-Lehmann (1963, Ann Math Stat 34:598) shift with the Moses interval. Checks run " +
		"on the deviations from the level medians.",
	Rules: plan.ModelRules{
		Fixed: plan.Forbidden, Random: plan.Forbidden,
		Compare: plan.Required, CompareLevels: 2, Within: plan.Forbidden,
		Ranks: true, Estimates: []string{plan.EstimateHodgesLehmann},
	},
	Pairing: func(*plan.Step) Pairing { return RankSumShift },
	Describe: func(st *plan.Step, y string) string {
		return fmt.Sprintf("The Wilcoxon-Mann-Whitney rank-sum test of %s between the levels of %s.", y, Code(st.Compare))
	},
}
