package table

import (
	"bytes"
	"fmt"
	"math"
	"math/rand/v2"
	"os"
	"path/filepath"
	"slices"
	"strings"
	"testing"

	"furrow/checker/internal/fixture"

	"furrow/plan"
)

func TestReadCSVVariants(t *testing.T) {
	cases := []struct {
		name  string
		text  string
		edit  func(p *plan.Plan)
		rows  []int
		yield []float64 // NaN = missing
		treat []string
	}{
		{
			name: "plain", text: goodCSV,
			rows: []int{2, 3, 4, 5}, yield: []float64{10.5, 12, math.NaN(), 13.25},
			treat: []string{"ctl", "new", "ctl", "new"},
		},
		{
			name: "bom and crlf",
			text: "\uFEFFblock,plot,treatment,yield\r\nB1,1,ctl,10.5\r\nB1,2,new,12\r\n",
			rows: []int{2, 3}, yield: []float64{10.5, 12}, treat: []string{"ctl", "new"},
		},
		{
			name: "quoted with embedded newline, doubled quote and delimiter",
			text: "block,plot,treatment,yield,note\n" +
				"B1,1,ctl,10.5,\"two\nlines\"\n" +
				"B1,2,\"new\",\"12\",\"say \"\"hi\"\", ok\"\n" +
				"B2,3,ctl,1,\"a\r\nb\r\nc\"\n" +
				"B2,4,new,2,x\n",
			rows: []int{2, 4, 5, 8}, yield: []float64{10.5, 12, 1, 2}, treat: []string{"ctl", "new", "ctl", "new"},
		},
		{
			name: "semicolon and decimal comma",
			text: "block;plot;treatment;yield\nB1;1;ctl;10,5\nB1;2;new;-1,25e1\nB2;3;ctl;7\n",
			edit: func(p *plan.Plan) { p.Data.Delimiter = ";"; p.Data.Decimal = "," },
			rows: []int{2, 3, 4}, yield: []float64{10.5, -12.5, 7}, treat: []string{"ctl", "new", "ctl"},
		},
		{
			name: "tab delimiter",
			text: "block\tplot\ttreatment\tyield\nB1\t1\tctl\t3\n",
			edit: func(p *plan.Plan) { p.Data.Delimiter = "\t" },
			rows: []int{2}, yield: []float64{3}, treat: []string{"ctl"},
		},
		{
			name: "missing codes and padding",
			text: "block,plot,treatment,yield\nB1,1, ctl ,  \nB1,2,new,-\nB2,3,ctl, NA \nB2,4,new,.\n",
			edit: func(p *plan.Plan) { p.Data.Missing = []string{"NA", "-", " . "} },
			rows: []int{2, 3, 4, 5}, yield: []float64{math.NaN(), math.NaN(), math.NaN(), math.NaN()},
			treat: []string{"ctl", "new", "ctl", "new"},
		},
		{
			name: "blank lines and trailing delimiters",
			text: "\n\nblock,plot,treatment,yield,\nB1,1,ctl,4,\n\n,,,,\nB2,3,ctl,5,,\n\n",
			rows: []int{4, 7}, yield: []float64{4, 5}, treat: []string{"ctl", "ctl"},
		},
		{
			name: "lone carriage returns",
			text: "block,plot,treatment,yield\rB1,1,ctl,10.5\rB1,2,new,12\r",
			rows: []int{2, 3}, yield: []float64{10.5, 12}, treat: []string{"ctl", "new"},
		},
		{
			name: "no final newline",
			text: "block,plot,treatment,yield\nB1,1,ctl,4",
			rows: []int{2}, yield: []float64{4}, treat: []string{"ctl"},
		},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			tab, diags := readCSVText(t, c.text, c.edit)
			for _, d := range diags {
				if d.Severity == plan.Error {
					t.Errorf("unexpected error finding: %v", d)
				}
			}
			if got := tab.RowNumbers(); !slices.Equal(got, c.rows) {
				t.Errorf("rows %v, want %v", got, c.rows)
			}
			y := tab.Column("yield")
			for i, w := range c.yield {
				if math.IsNaN(w) {
					if !y.Missing[i] || !math.IsNaN(y.Num[i]) {
						t.Errorf("yield[%d] = %q not missing", i, y.Text[i])
					}
				} else if y.Missing[i] || math.Abs(y.Num[i]-w) > 1e-12*math.Abs(w) {
					t.Errorf("yield[%d] = %v, want %v", i, y.Num[i], w)
				}
			}
			if got := tab.Texts("treatment"); !slices.Equal(got, c.treat) {
				t.Errorf("treatment %q, want %q", got, c.treat)
			}
			if tab.Column("block").Name != "block" || tab.HeaderRow < 1 {
				t.Errorf("header %v at %d", tab.ColumnNames(), tab.HeaderRow)
			}
		})
	}
}

func TestReadCSVQuotedNote(t *testing.T) {
	tab, _ := readCSVText(t, "block,plot,treatment,yield,note\nB1,1,ctl,1,\"say \"\"hi\"\", ok\"\nB1,2,new,2,\"two\r\nlines\"\n", nil)
	if got := tab.Texts("note"); !slices.Equal(got, []string{`say "hi", ok`, "two\nlines"}) {
		t.Errorf("notes %q", got)
	}
}

func TestReadCSVStructuralFindings(t *testing.T) {
	cases := []struct {
		name, text string
		codes      []string
		noTable    bool
	}{
		{"ragged short", "block,plot,treatment,yield\nB1,1,ctl\nB1,2,new,3\n", []string{"data-ragged-row"}, false},
		{"ragged long", "block,plot,treatment,yield\nB1,1,ctl,3,9\n", []string{"data-ragged-row"}, false},
		{"unterminated quote", "block,plot,treatment,yield\nB1,1,\"ctl,3\nB1,2,new,4\n", []string{"data-quote"}, true},
		{"bare quote", "block,plot,treatment,yield\nB1,1,ct\"l,3\n", []string{"data-quote"}, true},
		{"text after closing quote", "block,plot,treatment,yield\nB1,1,\"ctl\"x,3\nB1,2,new,4\n", []string{"data-quote"}, true},
		{"repeated header", "block,plot,treatment,yield,yield\nB1,1,ctl,3,4\n", []string{"data-header-repeated"}, false},
		{"blank header with values", "block,plot,treatment,yield,\nB1,1,ctl,3,x\n", []string{"data-header-blank"}, false},
		{"interior blank row", "block,plot,treatment,yield\nB1,1,ctl,3\n , , ,\nB1,2,new,4\n", []string{"data-blank-rows"}, false},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			tab, diags := readCSVText(t, c.text, nil)
			var codes []string
			for _, d := range diags {
				codes = append(codes, d.Code)
				if !d.Pos.IsValid() && d.Code != "data-header-blank" {
					t.Errorf("finding without a row: %v", d)
				}
			}
			if !slices.Equal(codes, c.codes) {
				t.Errorf("codes %v, want %v (%v)", codes, c.codes, diags)
			}
			if (tab == nil) != c.noTable {
				t.Errorf("table nil = %v, want %v", tab == nil, c.noTable)
			}
		})
	}
}

func TestReadCSVQuoteMessages(t *testing.T) {
	_, diags := readCSVText(t, "block,plot,treatment,yield\nB1,1,ctl,3\nB1,2,\"new,4\nB2,3,ctl,5\n", nil)
	if len(diags) != 1 || diags[0].Pos.Line != 3 || !strings.Contains(diags[0].Summary, "never closed") {
		t.Errorf("unterminated quote: %v", diags)
	}
	_, diags = readCSVText(t, "block,plot,treatment,yield\nB1,1,\"ctl\"x,3\nB1,2,new,4\n", nil)
	if len(diags) != 1 || diags[0].Pos.Line != 2 || !strings.Contains(diags[0].Summary, "follows the closing quote") {
		t.Errorf("text after quote: %v", diags)
	}
}

func TestReadTableErrors(t *testing.T) {
	dir := t.TempDir()
	cases := []struct {
		name   string
		file   string
		data   []byte
		format string
		want   string
	}{
		{"empty", "e.csv", nil, "csv", "the file is empty"},
		{"only blank lines", "b.csv", []byte("\n\r\n\n"), "csv", "no header row"},
		{"binary", "bin.csv", []byte("block,plot\x00\x01\x02\n"), "csv", "binary data"},
		{"zip as csv", "z.csv", []byte("PK\x03\x04rest"), "csv", "zip archive"},
		{"latin-1", "l.csv", []byte("block,plot\nB1,caf\xe9\n"), "csv", "line 2 is not valid utf-8"},
		{"text as xlsx", "t.xlsx", []byte("block,plot\n"), "xlsx", "is text, not an xlsx"},
		{"binary as xlsx", "x.xlsx", []byte{0x00, 0x01, 0xff}, "xlsx", "not an xlsx workbook"},
		{"broken zip as xlsx", "bz.xlsx", []byte("PK\x03\x04garbage"), "xlsx", "not a readable xlsx workbook"},
		{"unknown format", "u.ods", []byte("a\n"), "ods", "unknown format"},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			path := fixture.WriteData(t, dir, c.file, c.data)
			p := fixture.TablePlan(dir, c.file)
			p.Data.Format = c.format
			tab, diags, err := ReadTable(p, "")
			if err == nil {
				t.Fatalf("no error; table %v, diagnostics %v", tab, diags)
			}
			if !strings.Contains(err.Error(), c.want) || !strings.Contains(err.Error(), filepath.ToSlash(path)) {
				t.Errorf("error %q does not name the file or say %q", err, c.want)
			}
		})
	}
	p := fixture.TablePlan(dir, "absent.csv")
	if _, _, err := ReadTable(p, ""); err == nil || !strings.Contains(err.Error(), "absent.csv") {
		t.Errorf("missing file: %v", err)
	}
	p.Data.Delimiter = ";;"
	fixture.WriteData(t, dir, "absent.csv", []byte("a\n"))
	if _, _, err := ReadTable(p, ""); err == nil || !strings.Contains(err.Error(), "delimiter") {
		t.Errorf("bad delimiter: %v", err)
	}
	p.Data.Delimiter, p.Data.Decimal = ",", ","
	if _, _, err := ReadTable(p, ""); err == nil || !strings.Contains(err.Error(), "both") {
		t.Errorf("comma as delimiter and decimal mark: %v", err)
	}
	if _, _, err := ReadTable(nil, ""); err == nil {
		t.Error("nil plan gives no error")
	}
}

func TestReadTableDataPath(t *testing.T) {
	dir := t.TempDir()
	other := fixture.WriteData(t, dir, "other.csv", []byte(goodCSV))
	p := fixture.TablePlan(filepath.Join(dir, "no-such-dir"), "plots.csv")
	tab, _, err := ReadTable(p, other)
	if err != nil {
		t.Fatal(err)
	}
	if tab.Path != filepath.ToSlash(other) || tab.Format != FormatCSV {
		t.Errorf("path %q format %q", tab.Path, tab.Format)
	}
	// Format from the extension when the plan leaves it empty.
	p.Data.Format = ""
	if tab, _, err = ReadTable(p, other); err != nil || tab.Format != FormatCSV {
		t.Errorf("format by extension: %v %v", tab, err)
	}
}

func TestReadCSVDoesNotModifyPlan(t *testing.T) {
	dir := t.TempDir()
	fixture.WriteData(t, dir, "plots.csv", []byte(goodCSV))
	p := fixture.TablePlan(dir, "plots.csv")
	before := fmt.Sprintf("%#v", *p)
	if _, _, err := ReadTable(p, ""); err != nil {
		t.Fatal(err)
	}
	if after := fmt.Sprintf("%#v", *p); after != before {
		t.Error("ReadTable modified the plan")
	}
}

// benchCSV makes an invented RCBD-like file with n rows: site, block,
// plot, treatment, time and a count, with about 1% missing.
func benchCSV(n int) []byte {
	rng := rand.New(rand.NewPCG(1, 2))
	var b bytes.Buffer
	b.WriteString("site,block,plot,treatment,time,juveniles\n")
	treat := []string{"untreated", "reference", "candidate"}
	for i := 0; i < n; i++ {
		y := fmt.Sprintf("%.1f", 100*rng.ExpFloat64())
		if rng.IntN(100) == 0 {
			y = "NA"
		}
		fmt.Fprintf(&b, "S%d,B%d,P%d,%s,%s,%s\n", 1+i%6, 1+i%4, i/2, treat[i%3], []string{"before", "harvest"}[i%2], y)
	}
	return b.Bytes()
}

func BenchmarkReadCSV1e6(b *testing.B) {
	dir := b.TempDir()
	data := benchCSV(1_000_000)
	path := filepath.Join(dir, "big.csv")
	if err := os.WriteFile(path, data, 0o644); err != nil {
		b.Fatal(err)
	}
	p := &plan.Plan{Path: filepath.Join(dir, "plan.yaml"), Data: plan.DataSource{File: "big.csv", Format: "csv", Missing: []string{"", "NA"}},
		Columns: []plan.Column{{Name: "juveniles", Role: plan.RoleResponse}}}
	b.SetBytes(int64(len(data)))
	b.ResetTimer()
	for b.Loop() {
		tab, _, err := ReadTable(p, "")
		if err != nil || tab.NumRows() != 1_000_000 {
			b.Fatal(err)
		}
	}
}

func TestReadCSVDelimiterHint(t *testing.T) {
	cases := []struct {
		name, text string
		delim      string // the plan's delimiter
		line       int    // 0: no hint, a table
		summary    string
	}{
		{
			name: "semicolon read with the default", text: "block;plot;treatment;yield\nB1;1;ctl;6,1\nB1;2;new;6,9\n",
			delim: ",", line: 1,
			summary: `the header "block;plot;treatment;yield" does not split on ","; split on ";" it gives the declared columns block, plot, treatment and yield: declare delimiter: ";" in the data section`,
		},
		{
			name: "quoted semicolon header after blank lines", text: "\n \n\"block\";\"plot\";\"treatment\";\"yield\"\n\"B1\";1;\"ctl\";6\n",
			delim: ",", line: 3,
			summary: `the header "\"block\";\"plot\";\"treatment\";\"yield\"" does not split on ","; split on ";" it gives the declared columns block, plot, treatment and yield: declare delimiter: ";" in the data section`,
		},
		{
			name: "tab with extra columns", text: "block\tplot\ttreatment\tnote\tweight\nB1\t1\tctl\tx\t6\n",
			delim: ",", line: 1,
			summary: `the header "block\tplot\ttreatment\tnote\tweight" does not split on ","; split on "\t" it gives the declared columns block, plot and treatment: declare delimiter: "\t" in the data section`,
		},
		{
			name: "comma read as semicolon", text: "block,plot,treatment,yield\nB1,1,ctl,6\n",
			delim: ";", line: 1,
			summary: `the header "block,plot,treatment,yield" does not split on ";"; split on "," it gives the declared columns block, plot, treatment and yield: declare delimiter: "," in the data section`,
		},
		// Not a delimiter problem: the header splits, or its parts are not
		// declared columns.
		{name: "well split", text: goodCSV, delim: ","},
		{name: "one undeclared column with semicolons", text: "a;b;c\n1;2;3\n", delim: ","},
		{name: "one declared name only", text: "block;x\nB1;1\n", delim: ","},
		{name: "semicolons inside a header cell", text: "block,plot,treatment,yield;t/ha\nB1,1,ctl,6\n", delim: ","},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			tab, diags := readCSVText(t, c.text, func(p *plan.Plan) { p.Data.Delimiter = c.delim })
			var hint []plan.Diagnostic
			for _, d := range diags {
				if d.Code == "data-delimiter" {
					hint = append(hint, d)
				}
			}
			if c.line == 0 {
				if len(hint) != 0 || tab == nil {
					t.Errorf("hint %v, table %v", hint, tab != nil)
				}
				return
			}
			if tab != nil || len(diags) != 1 || len(hint) != 1 {
				t.Fatalf("want the hint alone and no table; table %v, findings %v", tab != nil, diags)
			}
			d := hint[0]
			if d.Severity != plan.Error || d.Pos.Line != c.line || d.Pos.Column != 0 || !strings.HasSuffix(d.Pos.File, "plots.csv") {
				t.Errorf("finding %v at %v", d.Severity, d.Pos)
			}
			if d.Summary != c.summary {
				t.Errorf("summary\n%s\nwant\n%s", d.Summary, c.summary)
			}
			if len(d.Related) != 1 || d.Related[0].Line != 4 {
				t.Errorf("related %v, want the data section", d.Related)
			}
		})
	}
}
