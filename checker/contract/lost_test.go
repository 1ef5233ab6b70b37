package contract

import (
	"bytes"
	"slices"
	"strings"
	"testing"

	"furrow/checker/internal/fixture"

	"furrow/checker/table"
	"furrow/plan"
)

// leastUnits returns a plan edit declaring design.least-units.
func leastUnits(per string, count int, below string) func(p *plan.Plan) {
	return func(p *plan.Plan) {
		p.Design.LeastUnits = &plan.LeastUnits{Per: per, Count: count, Below: below, Pos: plan.Pos{File: "plan.yaml", Line: 27, Column: 16}}
	}
}

// dropPlot removes every row of one plot of contractCSV (plots are
// numbered site, block, treatment: plot 3 is S1, B2, ctl).
func dropPlot(plot string) func(rows [][]string) [][]string {
	return func(rows [][]string) [][]string {
		return slices.DeleteFunc(rows, func(r []string) bool { return r[2] == plot })
	}
}

func TestLostUnits(t *testing.T) {
	cases := []struct {
		name  string
		edit  func(rows [][]string) [][]string
		plan  func(p *plan.Plan)
		codes []string
		text  string
		lost  []LostUnit
	}{
		{
			name:  "one unit lost, at the least",
			edit:  dropPlot("3"),
			plan:  leastUnits(plan.LeastPerCell, 1, plan.BelowStop),
			codes: []string{"warning data-units-lost"},
			text:  `site "S1", treatment "ctl": 1 of the 2 units the plan declares per cell; 1 lost (block "B2"); the plan accepts at least 1 per cell, so this loss does not stop the analysis`,
			lost:  []LostUnit{{Cell: []string{"S1", "ctl"}, Block: "B2"}},
		},
		{
			name:  "below the least, stop",
			edit:  dropPlot("3"),
			plan:  leastUnits(plan.LeastPerCell, 2, plan.BelowStop),
			codes: []string{"error data-units-below-least"},
			text:  `site "S1", treatment "ctl": 1 of the 2 units the plan declares per cell; 1 lost (block "B2"); that is below the least 2 per cell the plan accepts, so the run stops, as the plan declares (least-units below: stop)`,
			lost:  []LostUnit{{Cell: []string{"S1", "ctl"}, Block: "B2"}},
		},
		{
			name:  "below the least, warn",
			edit:  dropPlot("3"),
			plan:  leastUnits(plan.LeastPerCell, 2, plan.BelowWarn),
			codes: []string{"warning data-units-below-least"},
			text:  `and the analysis goes on with a warning, as the plan declares (least-units below: warn)`,
			lost:  []LostUnit{{Cell: []string{"S1", "ctl"}, Block: "B2"}},
		},
		{
			name: "a whole cell lost",
			edit: func(r [][]string) [][]string { return dropPlot("3")(dropPlot("1")(r)) },
			plan: leastUnits(plan.LeastPerCell, 1, plan.BelowStop),
			// the cell has no row left, so the finding is placed at the file
			codes: []string{"error data-units-below-least"},
			text:  `site "S1", treatment "ctl": 0 of the 2 units the plan declares per cell; 2 lost (blocks "B1", "B2"); that is below the least 1 per cell`,
			lost:  []LostUnit{{Cell: []string{"S1", "ctl"}, Block: "B1"}, {Cell: []string{"S1", "ctl"}, Block: "B2"}},
		},
		{
			name:  "per treatment, below",
			edit:  dropPlot("3"),
			plan:  leastUnits(plan.LeastPerTreatment, 2, plan.BelowStop),
			codes: []string{"warning data-units-lost", "error data-units-below-least"},
			text:  `site "S1", treatment "ctl": 1 unit over its cells, below the least 2 per treatment the plan accepts, so the run stops`,
			lost:  []LostUnit{{Cell: []string{"S1", "ctl"}, Block: "B2"}},
		},
		{
			name:  "per treatment, at the least",
			edit:  dropPlot("3"),
			plan:  leastUnits(plan.LeastPerTreatment, 1, plan.BelowStop),
			codes: []string{"warning data-units-lost"},
			text:  `1 lost (block "B2"); site "S1", treatment "ctl" keeps 1, at least the 1 per treatment the plan accepts, so this loss does not stop the analysis`,
			lost:  []LostUnit{{Cell: []string{"S1", "ctl"}, Block: "B2"}},
		},
		{
			name: "blocks that do not tell",
			edit: dropPlot("3"),
			plan: func(p *plan.Plan) {
				leastUnits(plan.LeastPerCell, 1, plan.BelowWarn)(p)
				p.Columns[1].Levels = []string{"B1", "B2", "B3"} // 2 units per cell over 3 blocks
			},
			codes: []string{"warning data-level-unseen", "warning data-units-lost"},
			text:  `site "S1", treatment "ctl": 1 of the 2 units the plan declares per cell; 1 lost; the plan accepts`,
			lost:  []LostUnit{{Cell: []string{"S1", "ctl"}}},
		},
		{
			name: "a surplus is an error still",
			edit: func(r [][]string) [][]string {
				return append(r, []string{"S1", "B1", "9", "ctl", "1.5", "before"}, []string{"S1", "B1", "9", "ctl", "1.5", "after"})
			},
			plan:  leastUnits(plan.LeastPerCell, 1, plan.BelowStop),
			codes: []string{"error data-replication"},
			text:  `site "S1", treatment "ctl": 3 units, the plan declares 2 per cell`,
		},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			ds, sum := checkCSV(t, contractCSV(c.edit), c.plan)
			if got := codesOf(ds); !slices.Equal(got, c.codes) {
				t.Fatalf("codes %v, want %v\n%v", got, c.codes, ds)
			}
			found := false
			for _, d := range ds {
				found = found || strings.Contains(d.Summary, c.text)
				if len(d.Related) == 0 {
					t.Errorf("finding without the plan position that declared it: %v", d)
				}
			}
			if !found {
				t.Errorf("no summary contains %q:\n%v", c.text, ds)
			}
			if !slices.EqualFunc(sum.Lost, c.lost, equalLost) {
				t.Errorf("lost %+v, want %+v", sum.Lost, c.lost)
			}
		})
	}
}

func equalLost(a, b LostUnit) bool {
	return slices.Equal(a.Cell, b.Cell) && a.Block == b.Block && a.Unit == b.Unit && a.Rule == b.Rule
}

func TestLostUnitsText(t *testing.T) {
	_, sum := checkCSV(t, contractCSV(dropPlot("3")), leastUnits(plan.LeastPerCell, 1, plan.BelowStop))
	var b bytes.Buffer
	if err := sum.WriteText(&b); err != nil {
		t.Fatal(err)
	}
	want := "lost units (least accepted: 1 per cell, below: stop)\n" +
		"  site  treatment  block\n" +
		"  S1    ctl        B2\n"
	if !strings.Contains(b.String(), want) {
		t.Errorf("summary text:\n%s\nlacks:\n%s", b.String(), want)
	}
}

// TestCheckKept: units the exclusions removed whole are lost units too,
// judged by the same least count, and listed with their id and rule.
func TestCheckKept(t *testing.T) {
	cases := []struct {
		name  string
		edit  func(rows [][]string) [][]string
		least func(p *plan.Plan)
		gone  map[string]string
		codes []string
		text  string
		lost  []LostUnit
	}{
		{
			name:  "one removed, at the least",
			least: leastUnits(plan.LeastPerCell, 1, plan.BelowStop),
			gone:  map[string]string{"3": "welfare"},
			codes: []string{"warning data-units-lost"},
			text:  `site "S1", treatment "ctl": 1 of the 2 units the plan declares per cell after the declared exclusions; exclusion "welfare" removed unit "3"; the plan accepts at least 1 per cell`,
			lost:  []LostUnit{{Cell: []string{"S1", "ctl"}, Block: "B2", Unit: "3", Rule: "welfare"}},
		},
		{
			name:  "one absent, one removed, below the least",
			edit:  dropPlot("3"),
			least: leastUnits(plan.LeastPerCell, 1, plan.BelowStop),
			gone:  map[string]string{"1": "welfare"},
			codes: []string{"error data-units-below-least"},
			text:  `site "S1", treatment "ctl": 0 of the 2 units the plan declares per cell after the declared exclusions; 1 not in the data (block "B2"); exclusion "welfare" removed unit "1"; that is below the least 1 per cell the plan accepts, so the run stops`,
			lost:  []LostUnit{{Cell: []string{"S1", "ctl"}, Block: "B2"}, {Cell: []string{"S1", "ctl"}, Block: "B1", Unit: "1", Rule: "welfare"}},
		},
		{
			name:  "absent only: reported by CheckData, listed here",
			edit:  dropPlot("3"),
			least: leastUnits(plan.LeastPerCell, 1, plan.BelowStop),
			lost:  []LostUnit{{Cell: []string{"S1", "ctl"}, Block: "B2"}},
		},
		{
			name:  "per treatment, brought below by an exclusion",
			least: leastUnits(plan.LeastPerTreatment, 2, plan.BelowWarn),
			gone:  map[string]string{"8": "welfare"},
			codes: []string{"warning data-units-lost", "warning data-units-below-least"},
			text:  `site "S2", treatment "new": 1 unit over its cells after the declared exclusions, below the least 2 per treatment the plan accepts`,
			lost:  []LostUnit{{Cell: []string{"S2", "new"}, Block: "B2", Unit: "8", Rule: "welfare"}},
		},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			dir := t.TempDir()
			fixture.WriteData(t, dir, "plots.csv", []byte(contractCSV(c.edit)))
			p := contractPlan(dir)
			c.least(p)
			tab, _, err := table.ReadTable(p, "")
			if err != nil {
				t.Fatal(err)
			}
			ds, lost := CheckKept(p, tab, c.gone)
			if got := codesOf(ds); !slices.Equal(got, c.codes) {
				t.Fatalf("codes %v, want %v\n%v", got, c.codes, ds)
			}
			if c.text != "" {
				found := false
				for _, d := range ds {
					found = found || strings.Contains(d.Summary, c.text)
				}
				if !found {
					t.Errorf("no summary contains %q:\n%v", c.text, ds)
				}
			}
			if !slices.EqualFunc(lost, c.lost, equalLost) {
				t.Errorf("lost %+v, want %+v", lost, c.lost)
			}
		})
	}
	if ds, lost := CheckKept(fixture.TablePlan(t.TempDir(), "x.csv"), nil, nil); ds != nil || lost != nil {
		t.Error("nil table gives findings")
	}
}
