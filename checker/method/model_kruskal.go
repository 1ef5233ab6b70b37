package method

import (
	"fmt"

	"furrow/plan"
)

// KruskalWallis is the Kruskal-Wallis rank test.
var KruskalWallis = &Model{
	Name:  "kruskal-wallis",
	Title: "Kruskal-Wallis rank test",
	Doc: "Compares the levels of the compared factor by the ranks of the analysed values: Kruskal & Wallis (1952, JASA " +
		"47:583) H with the correction for ties, chi-squared on k - 1 df. Comparisons are Wilcoxon-Mann-Whitney " +
		"rank-sum tests with Hodges-Lehmann shifts. Checks run on the deviations from the level medians.",
	Rules: plan.ModelRules{
		Fixed: plan.Forbidden, Random: plan.Forbidden,
		Compare: plan.Required, Within: plan.Forbidden,
		Ranks: true, Estimates: []string{plan.EstimateHodgesLehmann},
	},
	Pairing: func(*plan.Step) Pairing { return RankSumShift },
	Describe: func(st *plan.Step, y string) string {
		return fmt.Sprintf("The Kruskal-Wallis rank test of %s between the levels of %s, with the correction for ties.", y, Code(st.Compare))
	},
}
