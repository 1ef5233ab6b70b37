package contract

// Test helpers shared with the table package's tests (a copy of the ones
// in checker/table/table_test.go).

import (
	"os"
	"path/filepath"
	"testing"

	"furrow/plan"
)

// ptr returns a pointer to x.
func ptr(x float64) *float64 { return &x }

// tablePlan is a small RCBD plan built in Go: two blocks, two treatments,
// one plot per treatment and block, a yield response in [0, 100].
func tablePlan(dir, file string) *plan.Plan {
	return &plan.Plan{
		Format: 1,
		Path:   filepath.Join(dir, "plan.yaml"),
		Data: plan.DataSource{File: file, Format: "csv", Delimiter: ",", Decimal: ".",
			Missing: []string{"", "NA"}, Pos: plan.Pos{File: "plan.yaml", Line: 4, Column: 3}},
		Columns: []plan.Column{
			{Name: "block", Role: plan.RoleBlock, Levels: []string{"B1", "B2"}, Pos: plan.Pos{File: "plan.yaml", Line: 10, Column: 5}},
			{Name: "plot", Role: plan.RoleUnit, Pos: plan.Pos{File: "plan.yaml", Line: 13, Column: 5}},
			{Name: "treatment", Role: plan.RoleTreatment, Levels: []string{"ctl", "new"}, Control: "ctl", Pos: plan.Pos{File: "plan.yaml", Line: 15, Column: 5}},
			{Name: "yield", Role: plan.RoleResponse, Min: ptr(0), Max: ptr(100), Pos: plan.Pos{File: "plan.yaml", Line: 19, Column: 5}},
		},
		Design: plan.Design{Layout: "rcbd", Replicates: 2, Pos: plan.Pos{File: "plan.yaml", Line: 25, Column: 3}},
	}
}

// writeData writes a data file into dir and returns its path.
func writeData(t *testing.T, dir, name string, data []byte) string {
	t.Helper()
	path := filepath.Join(dir, name)
	if err := os.WriteFile(path, data, 0o644); err != nil {
		t.Fatal(err)
	}
	return path
}
