package method

import (
	"fmt"

	"furrow/plan"
)

// SignedRank is the Wilcoxon signed-rank test.
var SignedRank = &Model{
	Name:  "signed-rank",
	Title: "Wilcoxon signed-rank test",
	Doc: "Without compare, tests whether the per-unit values (a change or baseline outcome) are centred on zero; with " +
		"compare and within, tests the paired differences of the two levels within each unit or block, first declared " +
		"level minus second. Wilcoxon (1945, Biometrics Bull 1:80), exact for small samples without ties, else normal " +
		"with continuity and tie corrections. Paired comparisons give the Hodges-Lehmann median of the Walsh averages.",
	Rules: plan.ModelRules{
		Fixed: plan.Forbidden, Random: plan.Forbidden,
		Compare: plan.Required, CompareOptionalPerUnit: true, CompareLevels: 2,
		Within: plan.Forbidden, WithinWithCompare: true,
		UnitWithin: true, Ranks: true, Estimates: []string{plan.EstimateHodgesLehmann},
	},
	Pairing: func(s *plan.Step) Pairing {
		if s.Compare != "" {
			return SignedRankPaired
		}
		return RankSumShift
	},
	Describe: func(st *plan.Step, y string) string {
		return fmt.Sprintf("The Wilcoxon signed-rank test of %s.", y)
	},
}
