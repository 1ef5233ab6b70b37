package table

import (
	"archive/zip"
	"bytes"
	"errors"
	"fmt"
	"runtime"
	"slices"
	"strings"
	"testing"

	"furrow/checker/internal/fixture"

	"github.com/xuri/excelize/v2"

	"furrow/plan"
)

// Parts of a minimal workbook written by hand, for the damaged and
// crafted workbooks of these tests.
const (
	rawRels = `<?xml version="1.0" encoding="UTF-8"?><Relationships xmlns="http://schemas.openxmlformats.org/package/2006/relationships">` +
		`<Relationship Id="rId1" Type="http://schemas.openxmlformats.org/officeDocument/2006/relationships/officeDocument" Target="xl/workbook.xml"/></Relationships>`
	rawWorkbook = `<?xml version="1.0" encoding="UTF-8"?><workbook xmlns="http://schemas.openxmlformats.org/spreadsheetml/2006/main" xmlns:r="http://schemas.openxmlformats.org/officeDocument/2006/relationships">` +
		`<sheets><sheet name="plots" sheetId="1" r:id="rId1"/></sheets></workbook>`
	rawWorkbookRels = `<?xml version="1.0" encoding="UTF-8"?><Relationships xmlns="http://schemas.openxmlformats.org/package/2006/relationships">` +
		`<Relationship Id="rId1" Type="http://schemas.openxmlformats.org/officeDocument/2006/relationships/worksheet" Target="worksheets/sheet1.xml"/>` +
		`<Relationship Id="rId2" Type="http://schemas.openxmlformats.org/officeDocument/2006/relationships/sharedStrings" Target="sharedStrings.xml"/></Relationships>`
	rawSheetHead = `<?xml version="1.0" encoding="UTF-8"?><worksheet xmlns="http://schemas.openxmlformats.org/spreadsheetml/2006/main"><sheetData>`
	rawSheetTail = `</sheetData></worksheet>`
	// rawHeader is the header row of tablePlan's columns as inline strings.
	rawHeader = `<row r="1"><c r="A1" t="inlineStr"><is><t>block</t></is></c><c r="B1" t="inlineStr"><is><t>plot</t></is></c>` +
		`<c r="C1" t="inlineStr"><is><t>treatment</t></is></c><c r="D1" t="inlineStr"><is><t>yield</t></is></c></row>`
)

// rawXLSX zips a workbook from its parts: the package and workbook parts
// above, then parts (name to content, in name order); a part named in
// parts replaces the default one.
func rawXLSX(t testing.TB, parts map[string]string) []byte {
	t.Helper()
	all := map[string]string{"_rels/.rels": rawRels, "xl/workbook.xml": rawWorkbook, "xl/_rels/workbook.xml.rels": rawWorkbookRels}
	for k, v := range parts {
		all[k] = v
	}
	names := make([]string, 0, len(all))
	for k := range all {
		names = append(names, k)
	}
	slices.Sort(names)
	var out bytes.Buffer
	zw := zip.NewWriter(&out)
	for _, n := range names {
		if all[n] == "\x00absent" {
			continue
		}
		w, err := zw.Create(n)
		if err != nil {
			t.Fatal(err)
		}
		if _, err := w.Write([]byte(all[n])); err != nil {
			t.Fatal(err)
		}
	}
	if err := zw.Close(); err != nil {
		t.Fatal(err)
	}
	return out.Bytes()
}

// sheetXML is a sheet part of the given rows (raw row elements).
func sheetXML(rows ...string) string {
	return rawSheetHead + strings.Join(rows, "") + rawSheetTail
}

// goodRows are two data rows under rawHeader.
var goodRows = []string{rawHeader,
	`<row r="2"><c r="A2" t="inlineStr"><is><t>B1</t></is></c><c r="B2"><v>1</v></c><c r="C2" t="inlineStr"><is><t>ctl</t></is></c><c r="D2"><v>5.5</v></c></row>`,
	`<row r="3"><c r="A3" t="inlineStr"><is><t>B1</t></is></c><c r="B3"><v>2</v></c><c r="C3" t="inlineStr"><is><t>new</t></is></c><c r="D3"><v>6</v></c></row>`,
}

// readRawXLSX reads a workbook with tablePlan as XLSX under o.
func readRawXLSX(t *testing.T, data []byte, o Options) (*Table, plan.Diagnostics, error) {
	t.Helper()
	dir := t.TempDir()
	fixture.WriteData(t, dir, "plots.xlsx", data)
	p := fixture.TablePlan(dir, "plots.xlsx")
	p.Data.Format = FormatXLSX
	return ReadTableWith(p, "", o)
}

func TestRawXLSXReads(t *testing.T) {
	tab, ds, err := readRawXLSX(t, rawXLSX(t, map[string]string{"xl/worksheets/sheet1.xml": sheetXML(goodRows...)}), Options{})
	if err != nil || len(ds) != 0 || tab.NumRows() != 2 {
		t.Fatalf("%v %v %v", tab, ds, err)
	}
	if got := tab.Texts("treatment"); !slices.Equal(got, []string{"ctl", "new"}) {
		t.Errorf("treatment %q", got)
	}
}

// TestXLSXCellFindings: a shared string the workbook does not hold and a
// formula saved without its value are error findings at their cell
// (before, excelize's row reader read both as blank cells).
func TestXLSXCellFindings(t *testing.T) {
	data := buildXLSX(t, "plots", [][]any{
		{"block", "plot", "treatment", "yield"},
		{"B1", 1, "ctl", 5.5},
		{"B1", 2, "new", 6},
		{"B2", 3, "ctl", 5},
		{"B2", 4, "new", 7},
	}, func(f *excelize.File) {
		if err := f.SetCellFormula("plots", "D5", "D3+0.75"); err != nil {
			t.Fatal(err)
		}
	})
	data = rewriteZip(t, data, "xl/worksheets/sheet1.xml", func(s string) string {
		// C4 ("ctl", shared string 5) now points past the table; A5 gets a
		// negative index; D5's formula keeps no value.
		s = strings.Replace(s, `<c r="C4" t="s"><v>5</v></c>`, `<c r="C4" t="s"><v>57</v></c>`, 1)
		s = strings.Replace(s, `<c r="A5" t="s"><v>7</v></c>`, `<c r="A5" t="s"><v>-1</v></c>`, 1)
		return strings.Replace(s, `<f>D3+0.75</f><v>7</v>`, `<f>D3+0.75</f>`, 1)
	})
	tab, ds := readXLSXBytes(t, data, nil)
	var got []string
	for _, d := range ds {
		got = append(got, fmt.Sprintf("%s %d:%d %s", d.Code, d.Pos.Line, d.Pos.Column, d.Summary))
	}
	want := []string{
		`data-xlsx-cell 4:3 cell C4 refers to shared string "57", but the workbook holds 8 shared strings (numbers 0 to 7); the workbook is damaged: open it in a spreadsheet program and save it again`,
		`data-xlsx-cell 5:1 cell A5 refers to shared string "-1", but the workbook holds 8 shared strings (numbers 0 to 7); the workbook is damaged: open it in a spreadsheet program and save it again`,
		`data-xlsx-cell 5:4 cell D5 holds the formula "=D3+0.75" saved without its value; furrow reads the values a spreadsheet program saves with its formulas: open the workbook in one, let it calculate, and save it`,
	}
	if !slices.Equal(got, want) {
		t.Errorf("findings\n%s\nwant\n%s", strings.Join(got, "\n"), strings.Join(want, "\n"))
	}
	if tab == nil || tab.NumRows() != 4 || !tab.Column("yield").Missing[3] {
		t.Errorf("table %v", tab)
	}
}

// TestXLSXBounds: crafted and damaged workbooks are refused with one
// message naming the file (and the part, row or cell), before they are
// unpacked or held whole.
func TestXLSXBounds(t *testing.T) {
	spaces := func(n int) string { return strings.Repeat(" ", n) }
	nested := strings.Repeat("<x>", 40) + strings.Repeat("</x>", 40)
	sst := func(n int) string {
		return `<sst xmlns="http://schemas.openxmlformats.org/spreadsheetml/2006/main">` + strings.Repeat("<si/>", n) + `</sst>`
	}
	cases := []struct {
		name  string
		parts map[string]string
		opt   Options
		want  string
	}{
		{"whitespace run", map[string]string{"xl/worksheets/sheet1.xml": sheetXML(rawHeader, spaces(maxTextRun+1))}, Options{},
			"the workbook part xl/worksheets/sheet1.xml holds a text of more than 1 MiB (1048576 bytes) without markup"},
		{"zip bomb", map[string]string{"xl/worksheets/sheet1.xml": sheetXML(rawHeader, strings.Repeat("<x/>"+spaces(1000), 11<<10))}, Options{},
			"the workbook part xl/worksheets/sheet1.xml unpacks to 10.8 MiB (11309422 bytes) from"},
		{"over the size limit", map[string]string{"xl/worksheets/sheet1.xml": sheetXML(append(goodRows, spaces(3000))...)}, Options{MaxSize: 2000},
			"the workbook part xl/worksheets/sheet1.xml unpacks to 3.59 KiB (3676 bytes), over the limit of 1.95 KiB (2000 bytes) on data"},
		{"parts together over the limit", map[string]string{"xl/worksheets/sheet1.xml": sheetXML(goodRows...), "xl/sharedStrings.xml": sst(100)}, Options{MaxSize: 1700},
			"the parts read unpack to"},
		{"nesting", map[string]string{"xl/worksheets/sheet1.xml": sheetXML(rawHeader, nested)}, Options{},
			"nests elements more than 32 deep"},
		{"doctype", map[string]string{"xl/worksheets/sheet1.xml": `<!DOCTYPE x [<!ENTITY a "aaaa">]>` + sheetXML(goodRows...)}, Options{},
			"holds a document type declaration"},
		{"not xml", map[string]string{"xl/worksheets/sheet1.xml": sheetXML(rawHeader, "<row><c></row>")}, Options{},
			"the part xl/worksheets/sheet1.xml closes element c with </row>"},
		{"cut short", map[string]string{"xl/worksheets/sheet1.xml": rawSheetHead + rawHeader + "<row r=\"2\">"}, Options{},
			"ends inside an element"},
		{"rows out of order", map[string]string{"xl/worksheets/sheet1.xml": sheetXML(rawHeader, `<row r="5"/>`, `<row r="3"/>`)}, Options{},
			`sheet "plots", row 3: the sheet is damaged: row 3 comes after row 5 (rows must be in order)`},
		{"row past the sheet", map[string]string{"xl/worksheets/sheet1.xml": sheetXML(rawHeader, `<row r="1048577"/>`)}, Options{},
			`the row number "1048577" is not one from 1 to 1048576`},
		{"column past XFD", map[string]string{"xl/worksheets/sheet1.xml": sheetXML(rawHeader, `<row r="2"><c r="XFE2"><v>1</v></c></row>`)}, Options{},
			`row 2: the sheet is damaged: "XFE2" is not a cell reference (column A to XFD, row 1 to 1048576)`},
		{"row 0", map[string]string{"xl/worksheets/sheet1.xml": sheetXML(rawHeader, `<row r="2"><c r="A0"><v>1</v></c></row>`)}, Options{},
			`"A0" is not a cell reference`},
		{"cell in another row", map[string]string{"xl/worksheets/sheet1.xml": sheetXML(rawHeader, `<row r="2"><c r="A3"><v>1</v></c></row>`)}, Options{},
			`row 2: the sheet is damaged: cell A3 is in row 2`},
		{"cells out of order", map[string]string{"xl/worksheets/sheet1.xml": sheetXML(rawHeader, `<row r="2"><c r="C2"><v>1</v></c><c r="B2"><v>1</v></c></row>`)}, Options{},
			`cell B2 comes after cell C2 (cells must be in order)`},
		{"too many shared strings", map[string]string{"xl/worksheets/sheet1.xml": sheetXML(goodRows...), "xl/sharedStrings.xml": sst(1<<20 + 1)}, Options{},
			"the workbook's shared-string table holds more than 1048576 strings"},
		{"no workbook", map[string]string{"xl/workbook.xml": "\x00absent"}, Options{},
			"not a readable xlsx workbook: it has no workbook part (xl/workbook.xml)"},
		{"no sheet part", map[string]string{}, Options{},
			`not a readable xlsx workbook: it has no part for sheet "plots"`},
	}
	// The most bytes allocated while reading: 64 MiB, but for the shared
	// strings, which are read (a million of them) before they are refused.
	allocs := map[string]uint64{"too many shared strings": 512 << 20}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			var before runtime.MemStats
			runtime.ReadMemStats(&before)
			tab, ds, err := readRawXLSX(t, rawXLSX(t, c.parts), c.opt)
			var after runtime.MemStats
			runtime.ReadMemStats(&after)
			if err == nil {
				t.Fatalf("read: %v %v", tab, ds)
			}
			if !strings.Contains(err.Error(), c.want) || !strings.Contains(err.Error(), "plots.xlsx") {
				t.Errorf("error\n%v\nwant it to name the file and say\n%s", err, c.want)
			}
			// Refused before the part is held: far less allocated than it
			// unpacks to (the bombs unpack to 11 MiB and more).
			limit := allocs[c.name]
			if limit == 0 {
				limit = 64 << 20
			}
			if got := after.TotalAlloc - before.TotalAlloc; got > limit {
				t.Errorf("%d MiB allocated", got>>20)
			}
		})
	}
}

// TestXLSXPadding: a header far wider than its rows (a name in column
// XFD) makes a table that is mostly padding; it is refused with the
// counts once the padding passes the bound, not held whole.
func TestXLSXPadding(t *testing.T) {
	var hdr strings.Builder
	hdr.WriteString(`<row r="1">`)
	for i := 1; i <= maxSheetCols; i++ {
		fmt.Fprintf(&hdr, `<c t="inlineStr"><is><t>c%d</t></is></c>`, i)
	}
	hdr.WriteString(`</row>`)
	rows := []string{hdr.String()}
	for r := 2; r <= 400; r++ {
		rows = append(rows, fmt.Sprintf(`<row r="%d"><c r="A%d"><v>1</v></c></row>`, r, r))
	}
	_, _, err := readRawXLSX(t, rawXLSX(t, map[string]string{"xl/worksheets/sheet1.xml": sheetXML(rows...)}), Options{})
	var ce *CellsError
	if !errors.As(err, &ce) || ce.Row != 66 || ce.Columns != maxSheetCols {
		t.Fatalf("error %v", err)
	}
	want := `sheet "plots": by row 66 the rows hold 65 cells and 1064895 blank ones pad them to the 16384 named columns of the header; a table that is mostly padding is refused (at most 8 blank cells per cell held, once past 1048576): is the header row the one the data follow?`
	if !strings.HasSuffix(err.Error(), want) {
		t.Errorf("error\n%v\nwant it to end\n%s", err, want)
	}
	// A name in the last column alone, with no values under it, is a
	// blank column: no padding, the table reads.
	rows = []string{`<row r="1"><c r="A1" t="inlineStr"><is><t>block</t></is></c><c r="XFD1" t="inlineStr"><is><t> </t></is></c></row>`}
	for r := 2; r <= 400; r++ {
		rows = append(rows, fmt.Sprintf(`<row r="%d"><c r="A%d" t="inlineStr"><is><t>B1</t></is></c></row>`, r, r))
	}
	tab, _, err := readRawXLSX(t, rawXLSX(t, map[string]string{"xl/worksheets/sheet1.xml": sheetXML(rows...)}), Options{})
	if err != nil || tab.NumColumns() != 1 || tab.NumRows() != 399 {
		t.Errorf("blank wide header: %v %v", tab, err)
	}
}

// TestXLSXNotAWorkbook: an old .xls or encrypted workbook is named as such.
func TestXLSXNotAWorkbook(t *testing.T) {
	_, _, err := readRawXLSX(t, append(append([]byte{}, oleMagic...), make([]byte, 504)...), Options{})
	if err == nil || !strings.Contains(err.Error(), "an old-format .xls workbook or a password-protected one") {
		t.Errorf("ole: %v", err)
	}
}
