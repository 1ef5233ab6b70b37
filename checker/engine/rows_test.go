package engine

import (
	"fmt"
	"os"
	"path/filepath"
	"slices"
	"strings"
	"testing"

	"furrow/checker/internal/fixture"

	"furrow/checker/record"
)

// checkRowsAddUp checks the row accounting of every fitted step of a
// record: its rows used plus its unused rows make the rows read, no row
// is both used and unused or listed twice, the endpoint's rows analysed
// is the reported step's rows, and for a raw outcome n is those rows.
func checkRowsAddUp(t *testing.T, r *record.Result) {
	t.Helper()
	fitted := 0
	defer func() {
		if fitted == 0 {
			t.Errorf("no fitted step to account for")
		}
	}()
	for _, e := range r.Endpoints {
		for _, s := range e.Steps {
			if s.Fit == nil {
				if s.Rows != 0 || len(s.Unused) != 0 {
					t.Errorf("%s/%s: not fitted, yet rows %d unused %d", e.ID, s.ID, s.Rows, len(s.Unused))
				}
				continue
			}
			fitted++
			if got := s.Rows + len(s.Unused); got != r.Inputs.Rows {
				t.Errorf("%s/%s: rows used %d + unused %d = %d, want the %d rows read", e.ID, s.ID, s.Rows, len(s.Unused), got, r.Inputs.Rows)
			}
			seen := map[int]bool{}
			for _, u := range s.Unused {
				if seen[u.Row] {
					t.Errorf("%s/%s: row %d listed twice as unused", e.ID, s.ID, u.Row)
				}
				seen[u.Row] = true
				if u.Reason == "" || (u.Reason == record.UnusedExcluded) != (u.Rule != "") {
					t.Errorf("%s/%s: unused row %+v: reason and rule do not agree", e.ID, s.ID, u)
				}
			}
			if !slices.IsSortedFunc(s.Unused, func(a, b record.UnusedRow) int { return a.Row - b.Row }) {
				t.Errorf("%s/%s: unused rows not in file order", e.ID, s.ID)
			}
			if s.Model.Derive == "raw" && s.N != s.Rows {
				t.Errorf("%s/%s: raw outcome, n %d but rows used %d", e.ID, s.ID, s.N, s.Rows)
			}
			if s.ID == e.Reported && e.RowsAnalysed != s.Rows {
				t.Errorf("%s: rows analysed %d, but the reported step %s used %d", e.ID, e.RowsAnalysed, s.ID, s.Rows)
			}
		}
		if e.Reported == "" && e.RowsAnalysed != 0 {
			t.Errorf("%s: no step reported, rows analysed %d", e.ID, e.RowsAnalysed)
		}
	}
}

// reasons counts a step's unused rows by reason (with the rule or column).
func reasons(s *record.StepResult) map[string]int {
	out := map[string]int{}
	for _, u := range s.Unused {
		out[strings.TrimSuffix(u.Reason+" "+u.Rule+u.Column, " ")]++
	}
	return out
}

func stepByID(t *testing.T, e *record.EndpointResult, id string) *record.StepResult {
	t.Helper()
	for i := range e.Steps {
		if e.Steps[i].ID == id {
			return &e.Steps[i]
		}
	}
	t.Fatalf("no step %s", id)
	return nil
}

// TestRowsAddUpExamples: on every example, each step accounts for every
// row read. The nematode trial's steps say why each unused row is unused:
// the exclusion no-baseline (rows 48, 49), three missing harvest counts,
// and, for the change score, the three before rows left without a harvest.
func TestRowsAddUpExamples(t *testing.T) {
	plans, _ := filepath.Glob("../../examples/*/plan.yaml")
	if len(plans) != 3 {
		t.Fatalf("found %d example plans, want 3", len(plans))
	}
	for _, pp := range plans {
		name := filepath.Base(filepath.Dir(pp))
		t.Run(name, func(t *testing.T) {
			r := run(t, pp, t.TempDir(), fixture.T0)
			checkRowsAddUp(t, r)
			e := &r.Endpoints[0]
			if e.Reported == "" || e.RowsAnalysed == 0 {
				t.Fatalf("nothing reported: %+v", e)
			}
			if name != "soil-nematodes" {
				if e.RowsAnalysed != r.Inputs.Rows {
					t.Errorf("rows analysed %d of %d, with no row missing", e.RowsAnalysed, r.Inputs.Rows)
				}
				return
			}
			if e.RowsAnalysed != 136 {
				t.Errorf("rows analysed %d, want 136 (68 units, two rows each)", e.RowsAnalysed)
			}
			mixed, change := stepByID(t, e, "mixed-log"), stepByID(t, e, "change-log")
			want := map[string]int{"excluded no-baseline": 2, "missing-response": 3}
			if got := reasons(mixed); !mapsEqual(got, want) {
				t.Errorf("mixed-log unused %v, want %v", got, want)
			}
			want["no-second-time time"] = 3
			if got := reasons(change); !mapsEqual(got, want) {
				t.Errorf("change-log unused %v, want %v", got, want)
			}
			if change.N != 68 || change.Rows != 136 {
				t.Errorf("change-log n %d rows %d, want 68 units from 136 rows", change.N, change.Rows)
			}
		})
	}
}

func mapsEqual(a, b map[string]int) bool {
	if len(a) != len(b) {
		return false
	}
	for k, v := range a {
		if b[k] != v {
			return false
		}
	}
	return true
}

// TestRowsMissingResponse: a missing yield in the wheat trial, whose plan
// has no exclusion rule: the row is not analysed, it is listed as unused
// with the reason, and rows analysed is the reported step's n.
func TestRowsMissingResponse(t *testing.T) {
	dir := t.TempDir()
	src, err := os.ReadFile("../../examples/wheat-varieties/plots.csv")
	if err != nil {
		t.Fatal(err)
	}
	lines := strings.Split(string(src), "\n")
	// row 5 of the file (line index 4): B1;104;Quisbar;7,57
	f := strings.Split(lines[4], ";")
	lines[4] = strings.Join(append(f[:3], ""), ";")
	dp := filepath.Join(dir, "plots.csv")
	fixture.Write(t, dp, strings.Join(lines, "\n"))
	r, err := Run(RunOptions{PlanPath: "../../examples/wheat-varieties/plan.yaml", DataPath: dp, OutDir: filepath.Join(dir, "run"), Now: fixture.T0,
		Tool: record.ToolInfo{Name: "furrow", Version: "test"}})
	if err != nil {
		t.Fatal(err)
	}
	checkRowsAddUp(t, r)
	e := &r.Endpoints[0]
	rep := stepByID(t, e, e.Reported)
	if e.RowsAnalysed != 31 || rep.N != 31 {
		t.Errorf("rows analysed %d, n %d; want 31 of 32", e.RowsAnalysed, rep.N)
	}
	want := []record.UnusedRow{{Row: 5, Unit: "104", Reason: record.UnusedMissingResponse}}
	if !slices.Equal(rep.Unused, want) {
		t.Errorf("unused %+v, want %+v", rep.Unused, want)
	}
	if len(r.LostUnits) != 0 {
		t.Errorf("a unit with a missing response is not lost (no exclusion declares it): %+v", r.LostUnits)
	}
}

// rowsPlan is a small blocked plan (three blocks, three treatments, one
// plot each) with a covariate; %s is the steps.
const rowsPlan = `furrow: 1
trial:
  id: T-ROWS
  title: row accounting (invented)
  version: "1.0"
  amendments: []
data:
  file: data.csv
columns:
  - name: block
    role: block
    levels: [B1, B2, B3]
  - name: plot
    role: unit
  - name: treatment
    role: treatment
    levels: [control, a, b]
    control: control
  - name: stand
    role: covariate
  - name: y
    role: response
design:
  layout: rcbd
  replicates: 3
  least-units: {per: cell, count: 3, below: stop}
endpoints:
  - id: ep
    response: y
    primary: true
    not-computable: fail
    steps:
%s
    hypotheses: []
`

// TestRowsByStep: a missing covariate is a reason of the step that uses
// the covariate only, and a Friedman test leaves out the block that lacks
// a level (its rows are unused, and n counts the rows of complete blocks).
func TestRowsByStep(t *testing.T) {
	cases := []struct {
		name, steps string
		edit        func(rows [][]string)
		n           int
		want        map[string]int
	}{
		{
			name:  "missing covariate",
			steps: "      - id: ancova\n        model: linear\n        fixed: [block, treatment]\n        covariates: [stand]",
			edit:  func(rows [][]string) { rows[4][3] = "" },
			n:     8,
			want:  map[string]int{"missing-covariate stand": 1},
		},
		{
			name:  "covariate not used",
			steps: "      - id: anova\n        model: linear\n        fixed: [block, treatment]",
			edit:  func(rows [][]string) { rows[4][3] = "" },
			n:     9,
			want:  map[string]int{},
		},
		{
			name:  "friedman leaves out an incomplete block",
			steps: "      - id: ranks\n        model: friedman\n        compare: treatment\n        within: block",
			edit:  func(rows [][]string) { rows[4][4] = "" }, // B2, a
			n:     6,
			want:  map[string]int{"missing-response": 1, "incomplete-block block": 2},
		},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			dir := t.TempDir()
			var rows [][]string
			noise := []float64{0.3, -0.2, 0.5, -0.4, 0.1, 0.6, -0.3, 0.2, -0.1}
			plot := 0
			for bi, b := range []string{"B1", "B2", "B3"} {
				for ti, tr := range []string{"control", "a", "b"} {
					plot++
					rows = append(rows, []string{b, fmt.Sprint(plot), tr, fmt.Sprintf("%d", 40+plot%4), fmt.Sprintf("%.1f", 10+float64(ti)*1.5+float64(bi)*0.7+noise[plot-1])})
				}
			}
			c.edit(rows)
			var sb strings.Builder
			sb.WriteString("block,plot,treatment,stand,y\n")
			for _, r := range rows {
				sb.WriteString(strings.Join(r, ",") + "\n")
			}
			fixture.Write(t, filepath.Join(dir, "data.csv"), sb.String())
			pp := filepath.Join(dir, "plan.yaml")
			fixture.Write(t, pp, fmt.Sprintf(rowsPlan, c.steps))
			r, err := Run(RunOptions{PlanPath: pp, OutDir: filepath.Join(dir, "run"), Now: fixture.T0, Tool: record.ToolInfo{Name: "furrow", Version: "test"}, Unregistered: true})
			if err != nil {
				t.Fatal(err)
			}
			checkRowsAddUp(t, r)
			s := &r.Endpoints[0].Steps[0]
			if s.Fit == nil {
				t.Fatalf("step not fitted: %s", s.Error)
			}
			if s.N != c.n || s.Rows != c.n {
				t.Errorf("n %d rows %d, want %d", s.N, s.Rows, c.n)
			}
			if got := reasons(s); !mapsEqual(got, c.want) {
				t.Errorf("unused %v, want %v", got, c.want)
			}
		})
	}
}
