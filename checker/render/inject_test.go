package render

import (
	"regexp"
	"strings"
	"testing"

	"furrow/checker/record"
)

// hostileResult puts markup, script, links, images and spreadsheet
// formulas where plan and data text reach the report: the title, names,
// levels, labels, notes and messages. All invented.
func hostileResult() *record.Result {
	r := syntheticResult()
	r.Trial.Title = "<script>alert(1)</script> [click](javascript:alert(2)) ![x](http://tracker.invalid/p.png)"
	r.Trial.ID = "=HYPERLINK(\"http://evil.invalid\",\"x\")"
	r.Inputs.DataPath = "data`|`.csv"
	e := &r.Endpoints[0]
	e.ID = "yield | <b>bold</b>"
	e.Steps[0].ID = "`ols`"
	e.Steps[0].Model.Text = "linear of y; fixed: *g* __h__ <img src=x onerror=alert(3)>"
	h := &e.Hypotheses[0]
	h.ID = "# heading"
	h.Note = "&amp; <iframe src=x> ~~gone~~"
	h.Comparisons[0].Label = "=1+1 - @SUM(A1)"
	r.DataWarnings = []record.Finding{{Severity: "warning", Code: "c", Pos: "data.csv:2:3", Summary: "level \"<a href=x>\" is odd\nsecond line"}}
	return r
}

// Nothing a plan or data file holds becomes markup in report.md: every
// hostile text appears with its Markdown and HTML characters escaped, and
// no raw tag, link, image or heading survives (CommonMark backslash
// escapes; code spans fenced past the backticks inside).
func TestMarkdownEscapesPlanAndDataText(t *testing.T) {
	md := string(BuildReport(hostileResult()).Markdown())
	// Code spans show their content literally; look at the rest.
	text := withoutCodeSpans(md)
	for _, bad := range []string{"<script>", "<img", "<iframe", "<a href", "<b>", "](javascript:", "![x](", "&amp;", "~~gone~~", "*g*", "__h__"} {
		// Present only behind a backslash (or inside a code span).
		if regexp.MustCompile(`(^|[^\\])` + regexp.QuoteMeta(bad)).MatchString(text) {
			t.Errorf("report.md holds %q unescaped", bad)
		}
	}
	for _, bad := range []string{"\n# heading", "\nsecond line"} {
		if strings.Contains(md, bad) {
			t.Errorf("report.md starts a line with %q", bad)
		}
	}
	for _, want := range []string{
		`# Analysis report: \<script>alert(1)\</script> \[click\](javascript:alert(2)) \!\[x\](http://tracker.invalid/p.png)`,
		"``data`\\|`.csv``", // a code span fenced by two backticks, the bar escaped for the table
		"`` `ols` ``",
		`\*g\* \_\_h\_\_ \<img src=x onerror=alert(3)>`,
		`\&amp; \<iframe src=x> \~\~gone\~\~`,
		`level "\<a href=x>" is odd second line`,
	} {
		if !strings.Contains(md, want) {
			t.Errorf("report.md lacks the escaped text %q", want)
		}
	}
}

// Text cells that a spreadsheet would evaluate get a leading quote in
// tables/*.csv (the common practice against CSV injection); numbers,
// negative ones included, do not.
func TestCSVNeutralisesFormulas(t *testing.T) {
	r := hostileResult()
	r.Endpoints[0].Hypotheses[0].Comparisons[0].Estimate = -1.5
	tables, err := BuildReport(r).CSVTables()
	if err != nil {
		t.Fatal(err)
	}
	cmp := string(tables["comparisons.csv"])
	if !strings.Contains(cmp, "'=1+1 - @SUM(A1)") || !strings.Contains(cmp, ",-1.5,") {
		t.Errorf("comparisons.csv:\n%s", cmp)
	}
	for name, b := range tables {
		for _, line := range strings.Split(string(b), "\n") {
			for _, cell := range strings.Split(line, ",") {
				if c := strings.TrimPrefix(cell, `"`); c != "" && strings.ContainsRune("=+@", rune(c[0])) {
					t.Errorf("%s: cell %q would run as a formula", name, cell)
				}
			}
		}
	}
}

// withoutCodeSpans removes CommonMark code spans: a run of n backticks up
// to the next run of exactly n.
func withoutCodeSpans(s string) string {
	var b strings.Builder
	for i := 0; i < len(s); {
		if s[i] != '`' {
			b.WriteByte(s[i])
			i++
			continue
		}
		n := 0
		for i+n < len(s) && s[i+n] == '`' {
			n++
		}
		j := i + n
		closed := false
		for j < len(s) {
			if s[j] != '`' {
				j++
				continue
			}
			m := 0
			for j+m < len(s) && s[j+m] == '`' {
				m++
			}
			if m == n {
				i, closed = j+m, true
				break
			}
			j += m
		}
		if !closed {
			b.WriteString(s[i : i+n])
			i += n
		}
	}
	return b.String()
}
