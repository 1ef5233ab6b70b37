package table_test

// FuzzReadCSV is an external test so that it can run the data contract
// (furrow/checker/contract imports this package) on every table it reads.

import (
	"fmt"
	"math"
	"math/rand/v2"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"furrow/checker/internal/fixture"
	"furrow/plan"

	"furrow/checker/contract"
	"furrow/checker/table"
)

// FuzzReadCSV reads arbitrary bytes as CSV under two dialects. It must never
// panic; a returned table must be rectangular, with row numbers increasing,
// and Subset of all rows must reproduce its content hash.
func FuzzReadCSV(f *testing.F) {
	f.Add([]byte(table.GoodCSV), false)
	f.Add([]byte("\uFEFFblock;plot;treatment;yield\r\nB1;1;ctl;1,5\r\n"), true)
	f.Add([]byte("block,plot,treatment,yield\n\"B1\n\",1,\"c\"\"t\",\n"), false)
	f.Add([]byte("a,\"b\n"), false)
	dir := f.TempDir()
	f.Fuzz(func(t *testing.T, data []byte, semicolon bool) {
		path := filepath.Join(dir, fmt.Sprintf("fuzz-%d.csv", rand.Uint64()))
		if err := os.WriteFile(path, data, 0o644); err != nil {
			t.Fatal(err)
		}
		defer os.Remove(path)
		p := fixture.TablePlan(dir, "unused.csv")
		if semicolon {
			p.Data.Delimiter, p.Data.Decimal = ";", ","
		}
		tab, diags, err := table.ReadTable(p, path)
		if err != nil {
			if tab != nil || diags != nil {
				t.Fatal("error together with a table or diagnostics")
			}
			return
		}
		if !checkTable(t, tab, diags) {
			return
		}
		contract.CheckData(p, tab) // must not panic
	})
}

// FuzzReadXLSX reads arbitrary bytes as an XLSX workbook. It must never
// panic, nor allocate without bound; a returned table must be rectangular
// with row numbers increasing, every finding must have a code and a
// summary, and the data contract must run on the table. The seeds
// (testdata/fuzz/FuzzReadXLSX) are a sound workbook and damaged ones.
func FuzzReadXLSX(f *testing.F) {
	for _, seed := range table.XLSXSeeds(f) {
		f.Add(seed)
	}
	dir := f.TempDir()
	f.Fuzz(func(t *testing.T, data []byte) {
		path := filepath.Join(dir, fmt.Sprintf("fuzz-%d.xlsx", rand.Uint64()))
		if err := os.WriteFile(path, data, 0o644); err != nil {
			t.Fatal(err)
		}
		defer os.Remove(path)
		p := fixture.TablePlan(dir, "unused.xlsx")
		p.Data.Format = table.FormatXLSX
		tab, diags, err := table.ReadTableWith(p, path, table.Options{MaxSize: 64 << 20})
		if err != nil {
			if tab != nil || diags != nil {
				t.Fatal("error together with a table or diagnostics")
			}
			if !strings.Contains(err.Error(), filepath.ToSlash(path)) {
				t.Fatalf("error does not name the file: %v", err)
			}
			return
		}
		if !checkTable(t, tab, diags) {
			return
		}
		contract.CheckData(p, tab) // must not panic
	})
}

// checkTable fails unless every finding has a code and a summary and a
// table, when there is one, has increasing row numbers after its header,
// rectangular columns, no number in a missing cell, and the same content as
// its subset of all rows. It reports whether there is a table to go on with.
func checkTable(t *testing.T, tab *table.Table, diags plan.Diagnostics) bool {
	t.Helper()
	for _, d := range diags {
		if d.Summary == "" || d.Code == "" {
			t.Fatalf("empty finding %+v", d)
		}
	}
	if tab == nil {
		if !diags.HasErrors() {
			t.Fatal("no table and no error finding")
		}
		return false
	}
	rows := tab.RowNumbers()
	for i := range rows {
		if rows[i] <= tab.HeaderRow || (i > 0 && rows[i] <= rows[i-1]) {
			t.Fatalf("row numbers %v after header %d", rows, tab.HeaderRow)
		}
	}
	for _, c := range tab.Columns() {
		if len(c.Text) != len(rows) || len(c.Num) != len(rows) || len(c.Missing) != len(rows) {
			t.Fatalf("column %q not rectangular", c.Name)
		}
		for i := range c.Text {
			if c.Missing[i] && !math.IsNaN(c.Num[i]) {
				t.Fatalf("missing cell %q has a number", c.Text[i])
			}
		}
	}
	all := make([]int, len(rows))
	for i := range all {
		all[i] = i
	}
	sub, err := tab.Subset(all)
	if err != nil || sub.ContentHash() != tab.ContentHash() {
		t.Fatalf("subset of all rows: %v", err)
	}
	return true
}
