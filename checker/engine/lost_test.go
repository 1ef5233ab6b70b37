package engine

import (
	"errors"
	"os"
	"path/filepath"
	"slices"
	"strings"
	"testing"

	"furrow/checker/internal/fixture"

	"furrow/checker/record"
	"furrow/plan"
)

// TestRunLostUnits: the cascade plan declares 6 units per treatment and
// accepts at least 5 (least-units, below: stop); its exclusion removes
// unit u18 (treatment b). A unit missing from the data is a recorded
// warning and a listed lost unit, and the run goes on; below the least
// count, in the file or after the exclusions, the run stops with a data
// error that names the cell.
func TestRunLostUnits(t *testing.T) {
	dropUnits := func(pp string, units ...string) {
		dp := filepath.Join(filepath.Dir(pp), "data.csv")
		b, err := os.ReadFile(dp)
		if err != nil {
			t.Fatal(err)
		}
		lines := strings.SplitAfter(string(b), "\n")
		lines = slices.DeleteFunc(lines, func(l string) bool {
			for _, u := range units {
				if strings.HasPrefix(l, u+",") {
					return true
				}
			}
			return false
		})
		fixture.Write(t, dp, strings.Join(lines, ""))
	}
	runIt := func(pp string) (*record.Result, error) {
		return Run(RunOptions{PlanPath: pp, OutDir: filepath.Join(filepath.Dir(pp), "run"), Now: fixture.T0,
			Tool: record.ToolInfo{Name: "furrow", Version: "test"}, Unregistered: true})
	}

	t.Run("one lost, one excluded: the run goes on", func(t *testing.T) {
		pp := fixture.WriteCascade(t, "1e-12", "1e-12", "1e-12")
		dropUnits(pp, "u1") // a control unit
		r, err := runIt(pp)
		if err != nil {
			t.Fatal(err)
		}
		want := []record.LostUnit{{Cell: []string{"control"}}, {Cell: []string{"b"}, Unit: "u18", Rule: "listed"}}
		if !slices.EqualFunc(r.LostUnits, want, func(a, b record.LostUnit) bool {
			return slices.Equal(a.Cell, b.Cell) && a.Block == b.Block && a.Unit == b.Unit && a.Rule == b.Rule
		}) {
			t.Errorf("lost units %+v, want %+v", r.LostUnits, want)
		}
		var codes []string
		for _, f := range r.DataWarnings {
			if strings.HasPrefix(f.Code, "data-units") {
				codes = append(codes, f.Code+": "+f.Summary)
			}
		}
		wantCodes := []string{
			`data-units-lost: treatment "control": 5 of the 6 units the plan declares per cell; 1 lost; the plan accepts at least 5 per cell, so this loss does not stop the analysis`,
			`data-units-lost: treatment "b": 5 of the 6 units the plan declares per cell after the declared exclusions; exclusion "listed" removed unit "u18"; the plan accepts at least 5 per cell, so this loss does not stop the analysis`,
		}
		if !slices.Equal(codes, wantCodes) {
			t.Errorf("lost-unit warnings:\n%s\nwant:\n%s", strings.Join(codes, "\n"), strings.Join(wantCodes, "\n"))
		}
		if r.Design.LeastUnits == nil || r.Design.LeastUnits.Count != 5 || r.Design.LeastUnits.Below != plan.BelowStop {
			t.Errorf("design least units %+v", r.Design.LeastUnits)
		}
		if r.Endpoints[0].Reported == "" {
			t.Errorf("no step reported: %+v", r.Endpoints[0])
		}
		if err := record.Seal(r, nil); err != nil {
			t.Fatal(err)
		}
		b, err := record.EncodeRecord(r)
		if err != nil {
			t.Fatal(err)
		}
		if err := record.ValidateRecord(b); err != nil {
			t.Error(err)
		}
	})

	stops := func(t *testing.T, pp, text string) {
		t.Helper()
		_, err := runIt(pp)
		var de *DataError
		if !errors.As(err, &de) {
			t.Fatalf("run: %v, want a data error", err)
		}
		for _, d := range de.Diagnostics {
			if d.Code == "data-units-below-least" && d.Severity == plan.Error && strings.Contains(d.Summary, text) {
				return
			}
		}
		t.Errorf("no data-units-below-least error containing %q: %v", text, de.Diagnostics)
	}
	t.Run("two lost: below the least, the run stops", func(t *testing.T) {
		pp := fixture.WriteCascade(t, "1e-12", "1e-12", "1e-12")
		dropUnits(pp, "u1", "u4")
		stops(t, pp, `treatment "control": 4 of the 6 units the plan declares per cell; 2 lost; that is below the least 5 per cell the plan accepts, so the run stops`)
	})
	t.Run("excluded below the least: the run stops", func(t *testing.T) {
		pp := fixture.WriteCascade(t, "1e-12", "1e-12", "1e-12")
		b, err := os.ReadFile(pp)
		if err != nil {
			t.Fatal(err)
		}
		fixture.Write(t, pp, strings.Replace(string(b), "units: [u18]", "units: [u15, u18]", 1))
		stops(t, pp, `treatment "b": 4 of the 6 units the plan declares per cell after the declared exclusions; exclusion "listed" removed units "u15", "u18"; that is below the least 5`)
	})
}
