package simulate

import (
	"path/filepath"
	"slices"
	"testing"

	"furrow/checker/method"

	"furrow/plan"
)

// The split-plot example declares the whole plot (irrigation within
// block) as a random term: the simulated layout must carry one effect per
// whole plot, 3 irrigation regimes x 4 blocks = 12 groups, constant within
// each whole plot, and the response model must report its SD.
func TestSimulateWholePlotGroups(t *testing.T) {
	p, ds, err := plan.Load(filepath.Join("..", "..", "examples", "irrigation-split-plot", "plan.yaml"), method.Default)
	if err != nil || ds.HasErrors() {
		t.Fatalf("%v %v", err, ds)
	}
	lay, err := buildLayout(p)
	if err != nil {
		t.Fatal(err)
	}
	if len(lay.groups) != 1 || lay.nGroups[0] != 12 {
		t.Fatalf("groupings %v with sizes %v, want one of 12", lay.groupNames, lay.nGroups)
	}
	if lay.groupNames[0] != "irrigation within block" {
		t.Errorf("grouping named %q", lay.groupNames[0])
	}
	byGroup := map[int][]string{}
	for i, g := range lay.groups[0] {
		row := lay.fixed[i]
		byGroup[g] = append(byGroup[g], row[lay.colIdx["block"]]+"/"+row[lay.colIdx["irrigation"]])
	}
	for g, keys := range byGroup {
		if len(slices.Compact(slices.Clone(keys))) != 1 {
			t.Errorf("group %d mixes whole plots %v", g, keys)
		}
		if len(keys) != 4 {
			t.Errorf("group %d has %d sub-plots, want 4 nitrogen rates", g, len(keys))
		}
	}
	res, err := Simulate(p, SimOptions{Runs: 4, Seed: 3})
	if err != nil {
		t.Fatal(err)
	}
	m := res.Responses[0]
	if m.GroupSD != m.ResidualSD/2 || len(m.Groups) != 1 {
		t.Errorf("group sd %v (residual %v), groups %v", m.GroupSD, m.ResidualSD, m.Groups)
	}
	// The wheat trial declares no such term.
	w, _, _ := plan.Load(filepath.Join("..", "..", "examples", "wheat-varieties", "plan.yaml"), method.Default)
	wl, err := buildLayout(w)
	if err != nil {
		t.Fatal(err)
	}
	if len(wl.groups) != 0 {
		t.Errorf("wheat layout has groupings %v", wl.groupNames)
	}
}
