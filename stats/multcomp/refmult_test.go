package multcomp

import (
	"path/filepath"
	"testing"

	"furrow/internal/testkit"
)

// refMult is testdata/ref_multiplicity.json, produced by
// testdata/ref_multiplicity.R (R 4.2.2, multcomp 1.4.22, emmeans 1.8.4.1).
type refMult struct {
	Holm map[string]struct {
		P, Holm []float64
	}
	Sidak map[string]struct {
		Contrast            []string
		Estimate, SE, DF, P []float64
		PSidak              []float64 `json:"p_sidak"`
		LowerSidak          []float64 `json:"lower_sidak"`
		UpperSidak          []float64 `json:"upper_sidak"`
		PBonferroni         []float64 `json:"p_bonferroni"`
		LowerBonferroni     []float64 `json:"lower_bonferroni"`
		UpperBonferroni     []float64 `json:"upper_bonferroni"`
		Level               float64
	}
	Shaffer map[string]struct {
		Levels, G, Contrast []string
		Y, T                []float64
		DF                  float64
		P                   []float64
		PShaffer            []float64 `json:"p_shaffer"`
	}
}

var refMultCache *refMult

func loadRefMult(t testing.TB) *refMult {
	t.Helper()
	if refMultCache == nil {
		var r refMult
		testkit.DecodeFile(t, filepath.Join("testdata", "ref_multiplicity.json"), &r)
		refMultCache = &r
	}
	return refMultCache
}
