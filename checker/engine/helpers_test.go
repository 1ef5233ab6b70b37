package engine_test

// Helpers of the external tests (degenerate_test.go), copied from other
// tests (one copy per package until they move to a shared test package).
// degenerate_test.go is an external test so that it can render the report
// (furrow/checker/render imports this package through simulate).

import (
	"slices"

	"github.com/xuri/excelize/v2"

	"furrow/checker/record"
	"furrow/checker/render"
	"furrow/checker/table"
	"math"
	"os"
	"testing"
	"time"
)

// writeXLSXFixture writes an XLSX workbook with the given sheets (a copy
// of the helper in checker/contract/contract_test.go).
func writeXLSXFixture(path string, sheets map[string][][]any) error {
	f := excelize.NewFile()
	defer f.Close()
	names := make([]string, 0, len(sheets))
	for name := range sheets {
		names = append(names, name)
	}
	slices.Sort(names)
	for i, name := range names {
		if i == 0 {
			if err := f.SetSheetName("Sheet1", name); err != nil {
				return err
			}
		} else if _, err := f.NewSheet(name); err != nil {
			return err
		}
		for r, row := range sheets[name] {
			for c, v := range row {
				if err := f.SetCellValue(name, table.CellRef(r+1, c+1), v); err != nil {
					return err
				}
			}
		}
	}
	return f.SaveAs(path)
}

// checkFuzzResult checks the properties of a returned result.
func checkFuzzResult(t *testing.T, name string, r *record.Result, data []byte) {
	t.Helper()
	if err := record.Seal(r, nil); err != nil {
		t.Fatalf("%s: sealing the record: %v\ndata:\n%s", name, err, data)
	}
	rec, err := record.EncodeRecord(r)
	if err != nil {
		t.Fatalf("%s: encoding the record: %v\ndata:\n%s", name, err, data)
	}
	if err := record.ValidateRecord(rec); err != nil {
		t.Fatalf("%s: record does not validate: %v\ndata:\n%s", name, err, data)
	}
	if _, err := render.BuildReport(r).HTML(); err != nil {
		t.Fatalf("%s: report does not render: %v\ndata:\n%s", name, err, data)
	}
	for _, ep := range r.Endpoints {
		for _, s := range ep.Steps {
			for _, c := range s.Checks {
				if c.Verdict == record.VerdictPass && (math.IsNaN(float64(c.P)) || c.P < c.FailBelow) {
					t.Fatalf("%s: check %s of step %s passed with p = %v\ndata:\n%s", name, c.Test, s.ID, c.P, data)
				}
			}
		}
		if ep.Status != record.EndpointFailed && ep.Reported == "" {
			t.Fatalf("%s: endpoint %s has results but no reported step", name, ep.ID)
		}
	}
}

func write(t *testing.T, path, s string) {
	t.Helper()
	if err := os.WriteFile(path, []byte(s), 0o644); err != nil {
		t.Fatal(err)
	}
}

var t0 = time.Date(2026, 3, 1, 9, 0, 0, 0, time.UTC)
