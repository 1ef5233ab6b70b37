package contract

import (
	"bytes"
	"flag"
	"fmt"
	"os"
	"path/filepath"
	"slices"
	"strings"
	"testing"

	"furrow/internal/testkit"

	"furrow/checker/internal/fixture"
	"furrow/checker/method"

	"furrow/checker/table"
	"furrow/plan"
)

// update is the contract tests' one regenerate flag:
// go test ./checker/contract -run TestDataFixtures -update
var update = flag.Bool("update", false, "rewrite golden files (want.txt of testdata/data, and the XLSX fixtures there)")

// formatFindings writes diagnostics one a line as
// "severity code pos: summary", each related position indented below,
// with the prefix strip removed from file names.
func formatFindings(ds plan.Diagnostics, strip string) string {
	var b strings.Builder
	rel := func(p plan.Pos) string {
		p.File = strings.TrimPrefix(p.File, strip)
		return p.String()
	}
	for _, d := range ds {
		fmt.Fprintf(&b, "%s %s %s: %s\n", d.Severity, d.Code, rel(d.Pos), d.Summary)
		for _, r := range d.Related {
			fmt.Fprintf(&b, "\tdeclared at %s\n", rel(r))
		}
	}
	return b.String()
}

// xlsxFixtures are the binary fixtures of testdata/data, made from these
// rows when -update is given.
var xlsxFixtures = map[string]map[string][][]any{
	"missing-sheet": {
		"field book": {{"block", "plot", "treatment", "yield"}, {"B1", 1, "ctl", 5.1}},
		"notes":      {{"made by the fixture generator"}},
	},
	"xlsx-decimal-comma": {
		"plots": {
			{"block", "plot", "treatment", "yield"},
			{"B1", 1, "ctl", 5.1},
			{"B1", 2, "new", "6,35"},
			{"B2", 3, "ctl", "5.8"},
			{"B2", 4, "new", 6},
		},
	},
	"xlsx-cells": {
		"plots": {
			{"block", "plot", "treatment", "yield"},
			{"B1", 1, "ctl", 5.1},
			{"B1", 2, "new", "six"},
			{"B2", 3, "ctl", 25},
			{"B2", 4, "nwe", 6.3},
		},
	},
}

// TestDataFixtures loads each ../../testdata/data/<case>/plan.yaml with
// plan.Load, reads and checks its data, and compares the findings (or the
// read error) with want.txt. Regenerate with -update.
func TestDataFixtures(t *testing.T) {
	dirs, err := filepath.Glob("../../testdata/data/*/plan.yaml")
	if err != nil {
		t.Fatal(err)
	}
	if len(dirs) < 14 {
		t.Fatalf("found %d data fixtures, want at least 14", len(dirs))
	}
	for _, pf := range dirs {
		dir := filepath.Dir(pf)
		name := filepath.Base(dir)
		t.Run(name, func(t *testing.T) {
			if sheets, ok := xlsxFixtures[name]; ok && *update {
				if err := fixture.WriteXLSX(filepath.Join(dir, "plots.xlsx"), sheets); err != nil {
					t.Fatal(err)
				}
			}
			if make, ok := craftedXLSX[name]; ok && *update {
				b, err := make()
				if err == nil {
					err = os.WriteFile(filepath.Join(dir, "plots.xlsx"), b, 0o644)
				}
				if err != nil {
					t.Fatal(err)
				}
			}
			p, pds, err := plan.Load(pf, method.Default)
			if err != nil || pds.HasErrors() {
				t.Fatalf("fixture plan does not load: %v %v", err, pds)
			}
			strip := filepath.ToSlash(dir) + "/"
			var got string
			tab, ds, err := table.ReadTable(p, "")
			if err != nil {
				got = "read error: " + strings.ReplaceAll(err.Error(), strip, "") + "\n"
			} else {
				if tab != nil {
					cds, sum := CheckData(p, tab)
					ds = append(ds, cds...).Sort()
					if sum == nil {
						t.Error("no summary")
					}
				}
				got = formatFindings(ds, strip)
			}
			testkit.Golden(t, filepath.Join(dir, "want.txt"), []byte(got), *update, "go test ./checker/contract -run TestDataFixtures -update")
		})
	}
}

// TestExamplesConform checks that every example trial's data conform to
// its plan, and that its CSV and XLSX copies hold the same cells.
func TestExamplesConform(t *testing.T) {
	plans, _ := filepath.Glob("../../examples/*/plan.yaml")
	if len(plans) == 0 {
		t.Skip("no example plans in ../../examples")
	}
	for _, pf := range plans {
		t.Run(filepath.Base(filepath.Dir(pf)), func(t *testing.T) {
			p, pds, err := plan.Load(pf, method.Default)
			if err != nil || pds.HasErrors() {
				t.Fatalf("plan: %v %v", err, pds)
			}
			tab, ds, err := table.ReadTable(p, "")
			if err != nil {
				t.Fatal(err)
			}
			cds, sum := CheckData(p, tab)
			for _, d := range append(ds, cds...) {
				if d.Severity == plan.Error {
					t.Errorf("%v", d)
				}
			}
			var b bytes.Buffer
			if err := sum.WriteText(&b); err != nil || !strings.Contains(b.String(), "rows") {
				t.Errorf("summary: %v %q", err, b.String())
			}
			xp := *p
			xp.Data.Format, xp.Data.Sheet = table.FormatXLSX, ""
			xpath := filepath.Join(filepath.Dir(pf), "plots.xlsx")
			if _, err := os.Stat(xpath); err != nil {
				t.Skip("no XLSX copy")
			}
			xt, xds, err := table.ReadTable(&xp, xpath)
			if err != nil || xds.HasErrors() {
				t.Fatalf("xlsx: %v %v", err, xds)
			}
			if xt.ContentHash() != tab.ContentHash() {
				t.Errorf("CSV and XLSX copies differ in content")
			}
		})
	}
}

// contractPlan is a multi-site plan with a repeat factor: two sites, two
// blocks per site, two treatments, plots measured before and after.
func contractPlan(dir string) *plan.Plan {
	p := fixture.TablePlan(dir, "plots.csv")
	p.Columns = append([]plan.Column{{Name: "site", Role: plan.RoleSite, Levels: []string{"S1", "S2"}, Pos: plan.Pos{File: "plan.yaml", Line: 8, Column: 5}}}, p.Columns...)
	p.Columns = append(p.Columns, plan.Column{Name: "time", Role: plan.RoleRepeat, Levels: []string{"before", "after"}, Pos: plan.Pos{File: "plan.yaml", Line: 22, Column: 5}})
	p.Design.Layout = "multi-site"
	p.Design.Replicates = 2
	return p
}

// contractCSV writes the contractPlan data; edit may change the records
// (fields: site, block, plot, treatment, yield, time).
func contractCSV(edit func(rows [][]string) [][]string) string {
	var rows [][]string
	plot := 0
	for _, s := range []string{"S1", "S2"} {
		for _, b := range []string{"B1", "B2"} {
			for _, tr := range []string{"ctl", "new"} {
				plot++
				for k, tm := range []string{"before", "after"} {
					rows = append(rows, []string{s, b, fmt.Sprint(plot), tr, fmt.Sprintf("%d.5", plot+k), tm})
				}
			}
		}
	}
	if edit != nil {
		rows = edit(rows)
	}
	var sb strings.Builder
	sb.WriteString("site,block,plot,treatment,yield,time\n")
	for _, r := range rows {
		sb.WriteString(strings.Join(r, ",") + "\n")
	}
	return sb.String()
}

func checkCSV(t *testing.T, text string, edit func(p *plan.Plan)) (plan.Diagnostics, *DesignSummary) {
	t.Helper()
	dir := t.TempDir()
	fixture.WriteData(t, dir, "plots.csv", []byte(text))
	p := contractPlan(dir)
	if edit != nil {
		edit(p)
	}
	tab, rds, err := table.ReadTable(p, "")
	if err != nil {
		t.Fatal(err)
	}
	ds, sum := CheckData(p, tab)
	return append(rds, ds...), sum
}

func codesOf(ds plan.Diagnostics) []string {
	var out []string
	for _, d := range ds {
		out = append(out, d.Severity.String()+" "+d.Code)
	}
	return out
}

func TestCheckDataClean(t *testing.T) {
	ds, sum := checkCSV(t, contractCSV(nil), nil)
	if len(ds) != 0 {
		t.Fatalf("findings on conforming data: %v", ds)
	}
	if sum.Rows != 16 || sum.Units != 8 || sum.UnitColumn != "plot" || !slices.Equal(sum.CellColumns, []string{"site", "treatment"}) {
		t.Errorf("summary %+v", sum)
	}
	if len(sum.Cells) != 4 || sum.Cells[0].Units != 2 || !slices.Equal(sum.Cells[1].Levels, []string{"S1", "new"}) {
		t.Errorf("cells %+v", sum.Cells)
	}
	var b bytes.Buffer
	if err := sum.WriteText(&b); err != nil {
		t.Fatal(err)
	}
	want := "data " + sum.Data + ": 16 rows, 8 units (plot)\n" +
		"units per cell (replicates declared: 2)\n" +
		"  site  ctl  new\n" +
		"  S1    2    2\n" +
		"  S2    2    2\n" +
		"levels seen (rows)\n" +
		"  site       S1 8, S2 8\n" +
		"  block      B1 8, B2 8\n" +
		"  treatment  ctl 8, new 8\n" +
		"  time       before 8, after 8\n"
	if b.String() != want {
		t.Errorf("summary text:\n%s\nwant:\n%s", b.String(), want)
	}
}

func TestCheckDataFindings(t *testing.T) {
	cases := []struct {
		name  string
		edit  func(rows [][]string) [][]string
		plan  func(p *plan.Plan)
		codes []string
		text  string // a summary must contain this
	}{
		{
			name: "unit changes site",
			edit: func(r [][]string) [][]string { r[1][0] = "S2"; return r },
			// plot 1 at S2 in its second row: the unit changes site, and
			// S1 ctl keeps its 2 units (the first row decides the cell).
			codes: []string{"error data-unit-inconsistent"},
			text:  `unit "1" has site "S2" here but "S1" at row 2`,
		},
		{
			name:  "duplicate time point",
			edit:  func(r [][]string) [][]string { r[1][5] = "before"; return r },
			codes: []string{"warning data-record-missing", "error data-duplicate-record"},
			text:  `unit "1" at time "before" appears again (first at row 2)`,
		},
		{
			name:  "sub-samples allow repeats",
			edit:  func(r [][]string) [][]string { return append(r, r[0], r[1]) },
			plan:  func(p *plan.Plan) { p.Design.Subsamples = 2 },
			codes: nil,
		},
		{
			name:  "sub-samples exceeded",
			edit:  func(r [][]string) [][]string { return append(r, r[0], r[0]) },
			plan:  func(p *plan.Plan) { p.Design.Subsamples = 2 },
			codes: []string{"error data-duplicate-record"},
			text:  "more than 2 records",
		},
		{
			name:  "missing unit",
			edit:  func(r [][]string) [][]string { return r[2:] },
			codes: []string{"error data-replication"},
			text:  `site "S1", treatment "ctl": 1 unit, the plan declares 2 per cell`,
		},
		{
			name: "out of range dropped by a rule",
			edit: func(r [][]string) [][]string { r[0][4] = "120"; return r },
			plan: func(p *plan.Plan) {
				p.Exclusions = []plan.Exclusion{{ID: "implausible", Drop: plan.DropRow, When: plan.WhenOutOfRange, Column: "yield", Pos: plan.Pos{File: "plan.yaml", Line: 30, Column: 5}}}
			},
			codes: []string{"warning data-out-of-range"},
			text:  `exclusion "implausible" drops it`,
		},
		{
			name:  "misspelt column",
			edit:  func(r [][]string) [][]string { return r },
			plan:  func(p *plan.Plan) { p.Columns[1].Name = "Block"; p.Columns[1].Role = plan.RoleBlock },
			codes: []string{"error data-column-missing", "warning data-column-undeclared"},
			text:  `column "Block" (block) declared in the plan is not in the data; did you mean "block"?`,
		},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			ds, _ := checkCSV(t, contractCSV(c.edit), c.plan)
			if got := codesOf(ds); !slices.Equal(got, c.codes) {
				t.Fatalf("codes %v, want %v\n%v", got, c.codes, ds)
			}
			if c.text == "" {
				return
			}
			found := false
			for _, d := range ds {
				found = found || strings.Contains(d.Summary, c.text)
				if len(d.Related) == 0 && d.Code != "data-column-undeclared" {
					t.Errorf("finding without the plan position that declared it: %v", d)
				}
			}
			if !found {
				t.Errorf("no summary contains %q: %v", c.text, ds)
			}
		})
	}
}

func TestCheckDataLimitsRepeats(t *testing.T) {
	var sb strings.Builder
	sb.WriteString("block,plot,treatment,yield\n")
	for i := 0; i < 50; i++ {
		fmt.Fprintf(&sb, "B1,%d,ctl,x%d\n", i, i)
	}
	dir := t.TempDir()
	fixture.WriteData(t, dir, "plots.csv", []byte(sb.String()))
	p := fixture.TablePlan(dir, "plots.csv")
	p.Design.Replicates = 0
	tab, _, err := table.ReadTable(p, "")
	if err != nil {
		t.Fatal(err)
	}
	ds, _ := CheckData(p, tab)
	n, more := 0, ""
	for _, d := range ds {
		if d.Code == "data-not-number" {
			n++
			if strings.HasPrefix(d.Summary, "and ") {
				more = d.Summary
			}
		}
	}
	if n != table.FindingsPerColumn+1 || more != `and 30 more data-not-number findings in column "yield" from here on` {
		t.Errorf("%d findings, summary %q", n, more)
	}
}

func TestCheckDataManyUndeclaredLevels(t *testing.T) {
	// 400 units, each with its own treatment and variety level and no
	// levels declared: the 160000 combinations exceed maxCells, so only
	// the 400 cells seen are listed.
	var sb strings.Builder
	sb.WriteString("plot,treatment,variety,yield\n")
	for i := 0; i < 400; i++ {
		fmt.Fprintf(&sb, "%d,T%d,V%d,1\n", i, i, i)
	}
	dir := t.TempDir()
	fixture.WriteData(t, dir, "plots.csv", []byte(sb.String()))
	p := fixture.TablePlan(dir, "plots.csv")
	p.Columns = []plan.Column{{Name: "plot", Role: plan.RoleUnit}, {Name: "treatment", Role: plan.RoleTreatment},
		{Name: "variety", Role: plan.RoleFactor}, {Name: "yield", Role: plan.RoleResponse}}
	p.Design.Replicates = 1
	tab, _, err := table.ReadTable(p, "")
	if err != nil {
		t.Fatal(err)
	}
	ds, sum := CheckData(p, tab)
	if len(ds) != 0 || len(sum.Cells) != 400 || sum.Cells[399].Units != 1 {
		t.Errorf("%d findings, %d cells", len(ds), len(sum.Cells))
	}
}

func TestCheckDataNil(t *testing.T) {
	if ds, s := CheckData(nil, nil); ds != nil || s != nil {
		t.Error("nil inputs give findings")
	}
}
