package table

import (
	"archive/zip"
	"bytes"
	"io"
	"math"
	"path/filepath"
	"slices"
	"strings"
	"testing"
	"time"

	"furrow/checker/internal/fixture"

	"github.com/xuri/excelize/v2"

	"furrow/plan"
)

// buildXLSX makes a workbook with one sheet named sheet from rows of cell
// values (nil = blank) and returns its bytes. fix may adjust the file
// before it is saved.
func buildXLSX(t *testing.T, sheet string, rows [][]any, fix func(f *excelize.File)) []byte {
	t.Helper()
	f := excelize.NewFile()
	defer f.Close()
	if err := f.SetSheetName("Sheet1", sheet); err != nil {
		t.Fatal(err)
	}
	for r, row := range rows {
		for c, v := range row {
			if v == nil {
				continue
			}
			if err := f.SetCellValue(sheet, CellRef(r+1, c+1), v); err != nil {
				t.Fatal(err)
			}
		}
	}
	if fix != nil {
		fix(f)
	}
	var b bytes.Buffer
	if err := f.Write(&b); err != nil {
		t.Fatal(err)
	}
	return b.Bytes()
}

// rewriteZip returns the archive with edit applied to one member's text.
func rewriteZip(t *testing.T, data []byte, member string, edit func(string) string) []byte {
	t.Helper()
	zr, err := zip.NewReader(bytes.NewReader(data), int64(len(data)))
	if err != nil {
		t.Fatal(err)
	}
	var out bytes.Buffer
	zw := zip.NewWriter(&out)
	for _, f := range zr.File {
		rc, err := f.Open()
		if err != nil {
			t.Fatal(err)
		}
		body, err := io.ReadAll(rc)
		rc.Close()
		if err != nil {
			t.Fatal(err)
		}
		if f.Name == member {
			body = []byte(edit(string(body)))
		}
		w, err := zw.Create(f.Name)
		if err != nil {
			t.Fatal(err)
		}
		w.Write(body)
	}
	if err := zw.Close(); err != nil {
		t.Fatal(err)
	}
	return out.Bytes()
}

func xlsxPlan(dir string) *plan.Plan {
	p := fixture.TablePlan(dir, "plots.xlsx")
	p.Data.Format = "xlsx"
	p.Data.Sheet = "plots"
	p.Columns = append(p.Columns, plan.Column{Name: "sown", Role: plan.RoleLabel})
	return p
}

func readXLSXBytes(t *testing.T, data []byte, edit func(p *plan.Plan)) (*Table, plan.Diagnostics) {
	t.Helper()
	dir := t.TempDir()
	fixture.WriteData(t, dir, "plots.xlsx", data)
	p := xlsxPlan(dir)
	if edit != nil {
		edit(p)
	}
	tab, diags, err := ReadTable(p, "")
	if err != nil {
		t.Fatalf("ReadTable: %v", err)
	}
	return tab, diags
}

func TestReadXLSXCells(t *testing.T) {
	sown := time.Date(2026, 3, 14, 0, 0, 0, 0, time.UTC)
	data := buildXLSX(t, "plots", [][]any{
		{"block", "plot", "treatment", "yield", "sown"},
		{"B1", 1, "ctl", 10.5, sown},
		{"B1", 2, "new", "12.25", nil}, // number stored as text, blank date
		nil,                            // blank row between data rows
		{"B2", 3, "ctl", "NA", "2026-03-15"},
		{"B2", 4, "new", 0.1, 46097.0},
	}, func(f *excelize.File) {
		// D6 shows its date through a custom format; D7 a built-in one.
		custom := "yyyy\\-mm\\-dd"
		id, err := f.NewStyle(&excelize.Style{CustomNumFmt: &custom})
		if err != nil {
			t.Fatal(err)
		}
		if err := f.SetCellStyle("plots", "E6", "E6", id); err != nil {
			t.Fatal(err)
		}
		// A formula whose cached value is the number 13 (set below by
		// rewriting the cell as Excel writes numeric formula results).
		if err := f.SetCellValue("plots", "D7", 13); err != nil {
			t.Fatal(err)
		}
		if err := f.SetCellFormula("plots", "D7", "D3+0.75"); err != nil {
			t.Fatal(err)
		}
		f.SetCellValue("plots", "A7", "B2")
		f.SetCellValue("plots", "B7", 5)
		f.SetCellValue("plots", "C7", "ctl")
		// A text formula result; its cached value is added below.
		f.SetCellFormula("plots", "E7", `LOWER("LATE")`)
	})
	data = rewriteZip(t, data, "xl/worksheets/sheet1.xml", func(s string) string {
		s = strings.Replace(s, `<c r="D7" t="str">`, `<c r="D7">`, 1)
		return strings.Replace(s, `LOWER(&#34;LATE&#34;)</f>`, `LOWER(&#34;LATE&#34;)</f><v>late</v>`, 1)
	})
	tab, diags := readXLSXBytes(t, data, nil)
	var codes []string
	for _, d := range diags {
		codes = append(codes, d.Code)
	}
	if !slices.Equal(codes, []string{"data-blank-rows"}) {
		t.Errorf("findings %v", diags)
	}
	if got := tab.RowNumbers(); !slices.Equal(got, []int{2, 3, 5, 6, 7}) {
		t.Errorf("rows %v", got)
	}
	if got := tab.Texts("plot"); !slices.Equal(got, []string{"1", "2", "3", "4", "5"}) {
		t.Errorf("plots %q", got)
	}
	y := tab.Column("yield")
	want := []float64{10.5, 12.25, math.NaN(), 0.1, 13}
	for i, w := range want {
		if math.IsNaN(w) {
			if !y.Missing[i] {
				t.Errorf("yield[%d] %q not missing", i, y.Text[i])
			}
			continue
		}
		if y.Missing[i] || math.Abs(y.Num[i]-w) > 1e-15*w {
			t.Errorf("yield[%d] = %v (%q), want %v", i, y.Num[i], y.Text[i], w)
		}
	}
	if y.Text[3] != "0.1" {
		t.Errorf("0.1 written as %q", y.Text[3])
	}
	// In the 1900 date system a serial n after 1900-02-28 is n days after
	// 1899-12-30 (ECMA-376 Part 1, 18.17.4.1, which keeps the fictitious
	// 1900-02-29 as serial 60).
	serialDay := time.Date(1899, 12, 30, 0, 0, 0, 0, time.UTC).AddDate(0, 0, 46097).Format("2006-01-02")
	if got := tab.Texts("sown"); !slices.Equal(got, []string{"2026-03-14", "", "2026-03-15", serialDay, "late"}) {
		t.Errorf("dates %q", got)
	}
	if tab.Format != FormatXLSX || tab.Sheet != "plots" || !strings.HasSuffix(tab.PosFile(), "plots.xlsx[plots]") {
		t.Errorf("format %q sheet %q posfile %q", tab.Format, tab.Sheet, tab.PosFile())
	}
}

func TestReadXLSXDecimalComma(t *testing.T) {
	// An XLSX plan declares decimal: "," and no delimiter (a workbook has
	// none): number cells are numbers whatever the decimal mark; text
	// cells follow the declared mark, so "3,75" is 3.75 and "3.75" is text.
	data := buildXLSX(t, "plots", [][]any{
		{"block", "plot", "treatment", "yield"},
		{"B1", 1, "ctl", 2.5},
		{"B1", 2, "new", "3,75"},
		{"B2", 3, "ctl", "-1,5e1"},
		{"B2", 4, "new", "3.75"},
	}, nil)
	tab, diags := readXLSXBytes(t, data, func(p *plan.Plan) { p.Data.Decimal = ","; p.Data.Delimiter = "" })
	if len(diags) != 0 {
		t.Errorf("findings %v", diags)
	}
	y := tab.Column("yield")
	for i, w := range []float64{2.5, 3.75, -15} {
		if y.Missing[i] || y.Num[i] != w {
			t.Errorf("yield[%d] = %v (%q), want %v", i, y.Num[i], y.Text[i], w)
		}
	}
	if !math.IsNaN(y.Num[3]) || y.Missing[3] || y.Text[3] != "3.75" {
		t.Errorf("text \"3.75\" under decimal \",\": %v %q missing %v", y.Num[3], y.Text[3], y.Missing[3])
	}
	if got := y.Text[:3]; !slices.Equal(got, []string{"2.5", "3,75", "-1,5e1"}) {
		t.Errorf("texts %q", got)
	}
	// The same plan read with a CSV file given instead still refuses a
	// comma that is both the delimiter and the decimal mark.
	dir := t.TempDir()
	csvPath := fixture.WriteData(t, dir, "plots.csv", []byte("block,plot,treatment,yield\nB1,1,ctl,2\n"))
	p := xlsxPlan(dir)
	p.Data.Decimal, p.Data.Delimiter = ",", ""
	if _, _, err := ReadTable(p, csvPath); err == nil || !strings.Contains(err.Error(), "both") || !strings.Contains(err.Error(), "plots.csv") {
		t.Errorf("csv with a comma for both: %v", err)
	}
}

func TestReadXLSXMissingSheet(t *testing.T) {
	data := buildXLSX(t, "data", [][]any{{"block"}, {"B1"}}, func(f *excelize.File) {
		f.NewSheet("Plots notes")
	})
	tab, diags := readXLSXBytes(t, data, nil)
	if tab != nil {
		t.Error("a table from a missing sheet")
	}
	if len(diags) != 1 || diags[0].Code != "data-sheet-missing" {
		t.Fatalf("findings %v", diags)
	}
	s := diags[0].Summary
	if !strings.Contains(s, `sheet "plots" is not in the workbook`) || !strings.Contains(s, `"data", "Plots notes"`) {
		t.Errorf("summary %q does not list the sheets", s)
	}
	if len(diags[0].Related) != 1 || diags[0].Related[0].Line != 4 {
		t.Errorf("related %v, want the data section", diags[0].Related)
	}
	// The first sheet is read when the plan names none.
	tab, _ = readXLSXBytes(t, data, func(p *plan.Plan) { p.Data.Sheet = "" })
	if tab == nil || tab.Sheet != "data" || tab.NumRows() != 1 {
		t.Errorf("first sheet: %+v", tab)
	}
}

func TestReadXLSXRaggedAndEmpty(t *testing.T) {
	data := buildXLSX(t, "plots", [][]any{
		{"block", "plot", "treatment", "yield"},
		{"B1", 1, "ctl", 3, nil, "stray"},
	}, nil)
	_, diags := readXLSXBytes(t, data, nil)
	if len(diags) != 1 || diags[0].Code != "data-ragged-row" || !strings.Contains(diags[0].Summary, "cell F2") || diags[0].Pos.Column != 6 {
		t.Errorf("findings %v", diags)
	}
	empty := buildXLSX(t, "plots", nil, nil)
	tab, diags := readXLSXBytes(t, empty, nil)
	if tab != nil || len(diags) != 1 || diags[0].Code != "data-no-header" {
		t.Errorf("empty sheet: %v %v", tab, diags)
	}
}

// TestContentHashCSVEqualsXLSX reads the same cells from CSV and XLSX.
func TestContentHashCSVEqualsXLSX(t *testing.T) {
	csvTab, _ := readCSVText(t, "block,plot,treatment,yield\nB1,1,ctl,10.5\nB1,2,new,0.1\nB2,3,ctl,NA\nB2,4,new,1000000\n", nil)
	data := buildXLSX(t, "plots", [][]any{
		{"block", "plot", "treatment", "yield"},
		{"B1", 1, "ctl", 10.5},
		{"B1", 2, "new", 0.1},
		{"B2", 3, "ctl", "NA"},
		{"B2", 4, "new", 1e6},
	}, nil)
	xTab, _ := readXLSXBytes(t, data, nil)
	if csvTab.ContentHash() != xTab.ContentHash() {
		t.Errorf("content hash differs between CSV and XLSX with equal cells")
	}
	dir := t.TempDir()
	fixture.WriteData(t, dir, "plots.xlsx", data)
	if _, _, err := ReadTable(xlsxPlan(dir), filepath.Join(dir, "plots.xlsx")); err != nil {
		t.Fatal(err)
	}
}

func TestDateFormatKind(t *testing.T) {
	// Number format codes (ECMA-376 Part 1, 18.8.31): kind 1 date, 2 date
	// and time, 3 time only, 0 not a date.
	cases := []struct {
		code string
		want int
	}{
		{"General", 0}, {"0.00", 0}, {"#,##0", 0}, {"0.00E+00", 0}, {`0.0" days"`, 0}, {"[Red]0.0", 0},
		{"yyyy-mm-dd", 1}, {"d/m/yy", 1}, {"mmm yyyy", 1}, {`dd\.mm\.yyyy`, 1},
		{"yyyy-mm-dd hh:mm", 2}, {"[$-409]m/d/yy h:mm AM/PM", 2},
		{"hh:mm:ss", 3}, {"[h]:mm", 3},
	}
	for _, c := range cases {
		if got := dateFormatKind(c.code); got != c.want {
			t.Errorf("dateFormatKind(%q) = %d, want %d", c.code, got, c.want)
		}
	}
	for id, want := range map[int]int{0: 0, 2: 0, 14: 1, 17: 1, 18: 3, 22: 2, 45: 3, 49: 0} {
		if got := builtinDateKind(id); got != want {
			t.Errorf("builtinDateKind(%d) = %d, want %d", id, got, want)
		}
	}
}

func TestReadXLSXLevelSpaces(t *testing.T) {
	data := buildXLSX(t, "plots", [][]any{
		{"block", "plot", "treatment", "yield"},
		{"B1", 1, "ctl", 2.5},
		{"B1", 2, "new ", 3},
		{"B2", 3, "ctl", 2},
		{"B2", 4, "new ", " 4"},
	}, nil)
	tab, diags := readXLSXBytes(t, data, nil)
	if len(diags) != 1 {
		t.Fatalf("findings %v", diags)
	}
	d := diags[0]
	want := `cell C3: column "treatment": level "new " has a trailing space (2 cells, first at row 3); it is read as "new"`
	if d.Code != "data-level-space" || d.Pos.Line != 3 || d.Pos.Column != 3 || d.Summary != want {
		t.Errorf("%v %v: %s\nwant %s", d.Code, d.Pos, d.Summary, want)
	}
	if got := tab.Texts("treatment"); !slices.Equal(got, []string{"ctl", "new", "ctl", "new"}) {
		t.Errorf("treatment %q", got)
	}
}
