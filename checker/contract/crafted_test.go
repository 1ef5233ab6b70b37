package contract

import (
	"archive/zip"
	"bytes"
	"io"
	"strings"

	"github.com/xuri/excelize/v2"
)

// craftedXLSX are the damaged and crafted workbooks of testdata/data,
// written when -update is given: a workbook excelize makes from rows, with
// one part edited as a damaged or hostile file would have it.
var craftedXLSX = map[string]func() ([]byte, error){
	// C3 ("ctl" is shared string 5) points past the table.
	"xlsx-shared-string": editedXLSX(func(s string) string {
		return strings.Replace(s, `<c r="C4" t="s"><v>5</v></c>`, `<c r="C4" t="s"><v>57</v></c>`, 1)
	}),
	// D5 keeps its formula but not the value it computes.
	"xlsx-formula-no-value": editedXLSX(func(s string) string {
		return strings.Replace(s, `<c r="D5"><v>6.3</v></c>`, `<c r="D5"><f>D3+0.3</f></c>`, 1)
	}),
	// Row 4, its cells without references, comes after row 5 (as row 2).
	"xlsx-rows-out-of-order": editedXLSX(func(s string) string {
		for _, c := range []string{"A4", "B4", "C4", "D4"} {
			s = strings.Replace(s, ` r="`+c+`"`, "", 1)
		}
		return strings.Replace(s, `<row r="4">`, `<row r="2">`, 1)
	}),
	// 11 MiB of empty elements and white space, packed a thousand times.
	"xlsx-zip-bomb": editedXLSX(func(s string) string {
		return strings.Replace(s, `</sheetData>`, strings.Repeat("<x/>"+strings.Repeat(" ", 1000), 11<<10)+`</sheetData>`, 1)
	}),
	// One run of white space longer than any cell.
	"xlsx-whitespace": editedXLSX(func(s string) string {
		return strings.Replace(s, `</sheetData>`, strings.Repeat(" ", 1<<20+1)+`</sheetData>`, 1)
	}),
}

// editedXLSX returns a maker of the workbook of plain rows with edit
// applied to its sheet part.
func editedXLSX(edit func(string) string) func() ([]byte, error) {
	return func() ([]byte, error) {
		f := excelize.NewFile()
		defer f.Close()
		if err := f.SetSheetName("Sheet1", "plots"); err != nil {
			return nil, err
		}
		rows := [][]any{{"block", "plot", "treatment", "yield"}, {"B1", 1, "ctl", 5.1}, {"B1", 2, "new", 6}, {"B2", 3, "ctl", 4.8}, {"B2", 4, "new", 6.3}}
		for r, row := range rows {
			for c, v := range row {
				cell, _ := excelize.CoordinatesToCellName(c+1, r+1)
				if err := f.SetCellValue("plots", cell, v); err != nil {
					return nil, err
				}
			}
		}
		var b bytes.Buffer
		if err := f.Write(&b); err != nil {
			return nil, err
		}
		return rewriteMember(b.Bytes(), "xl/worksheets/sheet1.xml", edit)
	}
}

// rewriteMember returns the archive with edit applied to one member.
func rewriteMember(data []byte, member string, edit func(string) string) ([]byte, error) {
	zr, err := zip.NewReader(bytes.NewReader(data), int64(len(data)))
	if err != nil {
		return nil, err
	}
	var out bytes.Buffer
	zw := zip.NewWriter(&out)
	for _, f := range zr.File {
		rc, err := f.Open()
		if err != nil {
			return nil, err
		}
		body, err := io.ReadAll(rc)
		rc.Close()
		if err != nil {
			return nil, err
		}
		if f.Name == member {
			body = []byte(edit(string(body)))
		}
		w, err := zw.Create(f.Name)
		if err != nil {
			return nil, err
		}
		if _, err := w.Write(body); err != nil {
			return nil, err
		}
	}
	if err := zw.Close(); err != nil {
		return nil, err
	}
	return out.Bytes(), nil
}
