package contract

import (
	"bytes"
	"fmt"
	"strings"
	"testing"

	"furrow/checker/internal/fixture"

	"furrow/checker/table"
)

// TestUndeclaredColumnsOnce: many undeclared columns are one warning with
// their count (before, a header of a million names printed a million
// warnings); a few are still one each, with a suggestion.
func TestUndeclaredColumnsOnce(t *testing.T) {
	var b strings.Builder
	b.WriteString("block,plot,treatment,yield")
	for i := 0; i < 1000000; i++ {
		fmt.Fprintf(&b, ",x%d", i)
	}
	b.WriteString("\n")
	blanks := strings.Repeat(",", 1000000)
	for _, row := range []string{"B1,1,ctl,5", "B1,2,new,6", "B2,3,ctl,5", "B2,4,new,7"} {
		b.WriteString(row + blanks + "\n")
	}
	ds := checkTablePlan(t, b.String())
	var undeclared []string
	for _, d := range ds {
		if d.Code == "data-column-undeclared" {
			undeclared = append(undeclared, fmt.Sprintf("%s: %s", d.Pos, d.Summary))
		}
	}
	want := `plots.csv:1:5: 1000000 columns are not declared in the plan ("x0", "x1", "x2" and 999997 more, from column 5 on); they are carried along unchecked`
	if len(undeclared) != 1 || !strings.HasSuffix(undeclared[0], want) {
		t.Errorf("undeclared findings %d:\n%s\nwant one ending\n%s", len(undeclared), strings.Join(undeclared[:min(3, len(undeclared))], "\n"), want)
	}
	ds = checkTablePlan(t, "block,plot,treatment,yeild,note\nB1,1,ctl,5,a\n")
	n := 0
	for _, d := range ds {
		if d.Code == "data-column-undeclared" {
			n++
		}
	}
	if n != 2 {
		t.Errorf("two undeclared columns: %d findings %v", n, ds)
	}
}

// TestLongCellsQuotedShort: a cell of 10 MB is quoted in a message by its
// first 60 characters and its length; a long number by its value.
func TestLongCellsQuotedShort(t *testing.T) {
	big := strings.Repeat("z", 10<<20)
	long := "1" + strings.Repeat("0", 199)
	ds := checkTablePlan(t, "block,plot,treatment,yield\nB1,1,ctl,"+big+"\nB1,2,"+big+",6\nB2,3,ctl,"+long+"\nB2,4,new,7\n")
	var got []string
	for _, d := range ds {
		if len(d.Summary) > 400 {
			t.Errorf("a %d-byte message: %.200s", len(d.Summary), d.Summary)
		}
		switch d.Code {
		case "data-not-number", "data-level-undeclared", "data-out-of-range":
			got = append(got, d.Summary)
		}
	}
	zs := `"` + strings.Repeat("z", 60) + `…" (10485760 characters)`
	want := []string{
		`column "yield": ` + zs + ` is not a number`,
		`column "treatment": level ` + zs + ` is not declared (declared: ctl, new)`,
		`column "yield": 1e+199 is outside the plausible range [0, 100]`,
	}
	for _, w := range want {
		found := false
		for _, g := range got {
			found = found || g == w
		}
		if !found {
			t.Errorf("no finding\n%s\namong\n%s", w, strings.Join(got, "\n"))
		}
	}
}

// TestSummaryShort: the design summary lists at most 20 levels per column
// and 20 rows and columns of the cell table, and says how many there are.
func TestSummaryShort(t *testing.T) {
	var b strings.Builder
	b.WriteString("block,plot,treatment,yield\n")
	for i := 0; i < 300; i++ {
		fmt.Fprintf(&b, "B%d,%d,t%d,5\n", 1+i%2, i, i)
	}
	dir := t.TempDir()
	fixture.WriteData(t, dir, "plots.csv", []byte(b.String()))
	p := fixture.TablePlan(dir, "plots.csv")
	// 30 declared treatments make a cell table of 30 columns.
	p.Columns[2].Levels = nil
	for i := 0; i < 30; i++ {
		p.Columns[2].Levels = append(p.Columns[2].Levels, fmt.Sprintf("t%d", i))
	}
	p.Columns[2].Control = "fixture.T0"
	tab, _, err := table.ReadTable(p, "")
	if err != nil {
		t.Fatal(err)
	}
	_, sum := CheckData(p, tab)
	var out bytes.Buffer
	if err := sum.WriteText(&out); err != nil {
		t.Fatal(err)
	}
	text := out.String()
	for _, w := range []string{"t19 1, and 280 more", "(1 row and 30 columns in all; the first 20 of each are shown)"} {
		if !strings.Contains(text, w) {
			t.Errorf("summary lacks %q:\n%s", w, text)
		}
	}
	if len(text) > 4000 {
		t.Errorf("summary of %d bytes", len(text))
	}
}

// checkTablePlan reads text as plots.csv under tablePlan and checks it.
func checkTablePlan(t *testing.T, text string) []planDiag {
	t.Helper()
	dir := t.TempDir()
	fixture.WriteData(t, dir, "plots.csv", []byte(text))
	p := fixture.TablePlan(dir, "plots.csv")
	tab, rds, err := table.ReadTable(p, "")
	if err != nil {
		t.Fatal(err)
	}
	ds, _ := CheckData(p, tab)
	var out []planDiag
	for _, d := range append(rds, ds...) {
		d.Pos.File = strings.TrimPrefix(d.Pos.File, strings.ReplaceAll(dir, `\`, "/")+"/")
		out = append(out, planDiag{Code: d.Code, Pos: d.Pos.String(), Summary: d.Summary})
	}
	return out
}

// planDiag is a finding with its position written out.
type planDiag struct{ Code, Pos, Summary string }
