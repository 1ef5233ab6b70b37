package table

import (
	"crypto/sha256"
	"encoding/hex"
	"math"
	"slices"
	"strings"
	"testing"

	"furrow/checker/internal/fixture"

	"furrow/plan"
)

// readCSVText writes text to a temporary plots.csv and reads it with p
// (tablePlan when nil).
func readCSVText(t *testing.T, text string, edit func(p *plan.Plan)) (*Table, plan.Diagnostics) {
	t.Helper()
	dir := t.TempDir()
	fixture.WriteData(t, dir, "plots.csv", []byte(text))
	p := fixture.TablePlan(dir, "plots.csv")
	if edit != nil {
		edit(p)
	}
	tab, diags, err := ReadTable(p, "")
	if err != nil {
		t.Fatalf("ReadTable: %v", err)
	}
	return tab, diags
}

const goodCSV = "block,plot,treatment,yield\n" +
	"B1,1,ctl,10.5\n" +
	"B1,2,new,12\n" +
	"B2,3,ctl,NA\n" +
	"B2,4,new,13.25\n"

func TestTableAccessors(t *testing.T) {
	tab, diags := readCSVText(t, goodCSV, nil)
	if len(diags) != 0 {
		t.Fatalf("diagnostics: %v", diags)
	}
	if got, want := tab.ColumnNames(), []string{"block", "plot", "treatment", "yield"}; !slices.Equal(got, want) {
		t.Errorf("columns %v, want %v", got, want)
	}
	if tab.NumRows() != 4 || tab.NumColumns() != 4 {
		t.Fatalf("size %d x %d, want 4 x 4", tab.NumRows(), tab.NumColumns())
	}
	if got := tab.RowNumbers(); !slices.Equal(got, []int{2, 3, 4, 5}) {
		t.Errorf("row numbers %v", got)
	}
	y := tab.Column("yield")
	if y == nil || y.Index != 4 || !y.Numeric {
		t.Fatalf("yield column %+v", y)
	}
	// Values as written in goodCSV.
	want := []float64{10.5, 12, math.NaN(), 13.25}
	for i, w := range want {
		got, _ := tab.Float("yield", i)
		if math.IsNaN(w) != math.IsNaN(got) || (!math.IsNaN(w) && got != w) {
			t.Errorf("yield[%d] = %v, want %v", i, got, w)
		}
	}
	if !y.Missing[2] || y.Missing[0] {
		t.Errorf("missing mask %v", y.Missing)
	}
	if s, ok := tab.Text("treatment", 1); !ok || s != "new" {
		t.Errorf("treatment[1] = %q, %v", s, ok)
	}
	if _, ok := tab.Text("nope", 0); ok {
		t.Error("Text of an absent column reports ok")
	}
	if tab.Column("nope") != nil || tab.Floats("nope") != nil || tab.Texts("nope") != nil {
		t.Error("absent column is not nil")
	}
	if got := tab.Pos(1, 4).String(); !strings.HasSuffix(got, "plots.csv:3:4") {
		t.Errorf("Pos = %s", got)
	}
	// Floats returns a copy.
	f := tab.Floats("yield")
	f[0] = -1
	if y.Num[0] != 10.5 {
		t.Error("Floats shares memory with the table")
	}
	if !strings.HasPrefix(tab.FileHash, "sha256:") || len(tab.FileHash) != len("sha256:")+64 {
		t.Errorf("FileHash %q", tab.FileHash)
	}
	sum := sha256.Sum256([]byte(goodCSV))
	if tab.FileHash != "sha256:"+hex.EncodeToString(sum[:]) {
		t.Errorf("FileHash is not the sha256 of the file bytes")
	}
}

func TestSubsetAndFilter(t *testing.T) {
	tab, _ := readCSVText(t, goodCSV, nil)
	before := tab.ContentHash()
	sub, err := tab.Subset([]int{3, 1})
	if err != nil {
		t.Fatal(err)
	}
	if got := sub.RowNumbers(); !slices.Equal(got, []int{5, 3}) {
		t.Errorf("subset rows %v", got)
	}
	if got := sub.Texts("plot"); !slices.Equal(got, []string{"4", "2"}) {
		t.Errorf("subset plots %v", got)
	}
	if _, err := tab.Subset([]int{4}); err == nil {
		t.Error("out-of-range subset gives no error")
	}
	kept := tab.Filter(func(i int) bool { return !tab.Column("yield").Missing[i] })
	if kept.NumRows() != 3 || kept.Column("yield").Missing[0] {
		t.Errorf("filter kept %d rows", kept.NumRows())
	}
	if tab.NumRows() != 4 || tab.ContentHash() != before {
		t.Error("Subset or Filter modified the receiver")
	}
	empty := tab.Filter(func(int) bool { return false })
	if empty.NumRows() != 0 || empty.NumColumns() != 4 {
		t.Errorf("empty filter %d x %d", empty.NumRows(), empty.NumColumns())
	}
}

// TestContentHashSpec rebuilds the content hash of a tiny table from the
// serialisation written in the package documentation.
func TestContentHashSpec(t *testing.T) {
	tab, _ := readCSVText(t, "block,plot,treatment,yield\nB1,1,ctl,1.50\nB2,2,new,NA\n", nil)
	spec := "furrow table v1\n" +
		"columns 4 rows 2\n" +
		"c5:block\nc4:plot\nc9:treatment\nc5:yield\n" +
		"t2:B1t1:1t3:ctln3:1.5\n" +
		"t2:B2t1:2t3:newm\n"
	sum := sha256.Sum256([]byte(spec))
	if got, want := tab.ContentHash(), "sha256:"+hex.EncodeToString(sum[:]); got != want {
		t.Errorf("ContentHash = %s, want %s (from the documented serialisation)", got, want)
	}
}

func TestContentHashIgnoresLayout(t *testing.T) {
	a, _ := readCSVText(t, goodCSV, nil)
	// Same cells: CRLF, a byte-order mark, quoting, padding, another
	// delimiter, 12.0 written for 12, a blank line.
	b, _ := readCSVText(t, "\uFEFFblock;plot;\"treatment\";yield\r\n"+
		"B1;1;ctl;10.5\r\n\r\n"+
		"\"B1\";2; new ;12.0\r\n"+
		"B2;3;ctl;NA\r\n"+
		"B2;4;new;1.325e1\r\n", func(p *plan.Plan) { p.Data.Delimiter = ";" })
	if a.ContentHash() != b.ContentHash() {
		t.Errorf("equal cells give different content hashes")
	}
	if a.FileHash == b.FileHash {
		t.Errorf("different bytes give the same file hash")
	}
	c, _ := readCSVText(t, strings.Replace(goodCSV, "13.25", "13.26", 1), nil)
	if a.ContentHash() == c.ContentHash() {
		t.Errorf("a changed value leaves the content hash unchanged")
	}
	d, _ := readCSVText(t, strings.Replace(goodCSV, "B2,3", "B2,03", 1), nil)
	if a.ContentHash() == d.ContentHash() {
		t.Errorf("unit 03 and unit 3 give the same content hash")
	}
}

func TestCellRef(t *testing.T) {
	// Spreadsheet column letters: A..Z, then AA; XFD is column 16384, the
	// last column of an XLSX sheet (ECMA-376 limits, from memory).
	cases := []struct {
		row, col int
		want     string
	}{{1, 1, "A1"}, {17, 4, "D17"}, {2, 26, "Z2"}, {3, 27, "AA3"}, {9, 52, "AZ9"}, {9, 53, "BA9"}, {1, 16384, "XFD1"}, {1, 0, "?1"}}
	for _, c := range cases {
		if got := CellRef(c.row, c.col); got != c.want {
			t.Errorf("CellRef(%d, %d) = %s, want %s", c.row, c.col, got, c.want)
		}
	}
}

func TestParseNumber(t *testing.T) {
	nan := math.NaN()
	cases := []struct {
		in   string
		dec  byte
		want float64 // NaN: not a number
	}{
		{"0", '.', 0}, {"-1.5", '.', -1.5}, {"+2", '.', 2}, {".5", '.', 0.5}, {"5.", '.', 5},
		{"1e3", '.', 1000}, {"1.5E-2", '.', 0.015}, {"1,5", ',', 1.5}, {"-0,25e1", ',', -2.5},
		{"1,5", '.', nan}, {"1.5", ',', nan}, {"1,000.5", '.', nan}, {"1.2.3", '.', nan},
		{"", '.', nan}, {"-", '.', nan}, {".", '.', nan}, {"e5", '.', nan}, {"1e", '.', nan}, {"1e+", '.', nan},
		{"inf", '.', nan}, {"NaN", '.', nan}, {"0x10", '.', nan}, {"1_000", '.', nan}, {"12abc", '.', nan},
		{"1e400", '.', nan}, {"1e-400", '.', 0}, {" 1", '.', nan},
		{strings.Repeat("1", 70), '.', 1.1111111111111111e69},
		{"0." + strings.Repeat("0", 70) + "1", '.', 1e-71},
		{strings.Repeat("1", 70) + "x", '.', nan},
	}
	for _, c := range cases {
		got, ok := ParseNumber(c.in, c.dec)
		if math.IsNaN(c.want) {
			if ok {
				t.Errorf("ParseNumber(%q, %q) = %v, want not a number", c.in, c.dec, got)
			}
			continue
		}
		// Decimal literals: the parse must give the nearest double, so
		// the relative error is within one ulp.
		if !ok || math.Abs(got-c.want) > 1e-15*math.Abs(c.want) {
			t.Errorf("ParseNumber(%q, %q) = %v, %v, want %v", c.in, c.dec, got, ok, c.want)
		}
	}
	// Overflows tells a number beyond a double from text that is none.
	for in, want := range map[string]bool{"1e400": true, "-1e309": true, "1" + strings.Repeat("0", 400): true, "2e308": true,
		"1e308": false, "1e-400": false, "inf": false, "1e4oo": false, "12abc": false, "": false} {
		if got := Overflows(in, '.'); got != want {
			t.Errorf("Overflows(%.20q) = %v, want %v", in, got, want)
		}
	}
	if !Overflows("1,5e999", ',') || Overflows("1,5e999", '.') {
		t.Error("Overflows does not follow the decimal mark")
	}
}

func TestReadLevelSpaces(t *testing.T) {
	// Each distinct untrimmed level text is one warning at its first cell,
	// with its count; the trimmed text is what the table holds. Numbers,
	// labels and missing cells with spaces are not levels.
	text := "block,plot,treatment,yield,note\n" +
		"B1,1,ctl ,5 ,x \n" +
		"B1,2, new,6,\n" +
		"B2 ,3,ctl ,5,\n" +
		"B2,4,\"new  \",6,\n" +
		"B2,5,\tctl ,NA ,\n" +
		"B2,6,  ,7,\n" +
		"B2,7,ctl ,8,\n"
	tab, diags := readCSVText(t, text, func(p *plan.Plan) {
		p.Columns = append(p.Columns, plan.Column{Name: "note", Role: plan.RoleLabel})
	})
	type want struct {
		line, col int
		summary   string
	}
	wants := []want{
		{2, 3, `column "treatment": level "ctl " has a trailing space (3 cells, first at row 2); it is read as "ctl"`},
		{3, 3, `column "treatment": level " new" has a leading space (1 cell, row 3); it is read as "new"`},
		{4, 1, `column "block": level "B2 " has a trailing space (1 cell, row 4); it is read as "B2"`},
		{5, 3, `column "treatment": level "new  " has 2 trailing spaces (1 cell, row 5); it is read as "new"`},
		{6, 3, `column "treatment": level "\tctl " has leading white space and a trailing space (1 cell, row 6); it is read as "ctl"`},
	}
	if len(diags) != len(wants) {
		t.Fatalf("%d findings, want %d: %v", len(diags), len(wants), diags)
	}
	for i, w := range wants {
		d := diags[i]
		if d.Code != "data-level-space" || d.Severity != plan.Warning || d.Pos.Line != w.line || d.Pos.Column != w.col {
			t.Errorf("finding %d: %v %v at %v", i, d.Severity, d.Code, d.Pos)
		}
		if d.Summary != w.summary {
			t.Errorf("finding %d:\n%s\nwant\n%s", i, d.Summary, w.summary)
		}
		if len(d.Related) != 1 || (d.Related[0].Line != 15 && d.Related[0].Line != 10) {
			t.Errorf("finding %d related %v, want the column's declaration", i, d.Related)
		}
	}
	if got := tab.Texts("treatment"); !slices.Equal(got, []string{"ctl", "new", "ctl", "new", "ctl", "", "ctl"}) {
		t.Errorf("treatment %q", got)
	}
	clean := strings.NewReplacer(" ,", ",", ", ", ",", "\"new  \"", "new", "\t", "", "  ", "").Replace(text)
	ref, _ := readCSVText(t, clean, func(p *plan.Plan) {
		p.Columns = append(p.Columns, plan.Column{Name: "note", Role: plan.RoleLabel})
	})
	if tab.ContentHash() != ref.ContentHash() {
		t.Errorf("content hash differs from the trimmed file's:\n%s", clean)
	}
}

func TestSpaceWords(t *testing.T) {
	for _, c := range []struct{ in, want string }{
		{"a ", "a trailing space"},
		{"  a", "2 leading spaces"},
		{" a  ", "a leading space and 2 trailing spaces"},
		{"a\u00a0", "trailing white space"},
		{"\ta\t", "leading white space and trailing white space"},
	} {
		if got := spaceWords(c.in); got != c.want {
			t.Errorf("spaceWords(%q) = %q, want %q", c.in, got, c.want)
		}
	}
}
