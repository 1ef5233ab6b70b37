package checker

// Test helpers copied from other packages' tests (one copy per package).

import (
	"slices"

	"github.com/xuri/excelize/v2"

	"furrow/checker/table"
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
