package render

import (
	"math"
	"strconv"
	"strings"
	"testing"

	"furrow/checker/record"
)

// syntheticResult is a small hand-made record with one fallback, used to
// test the renderers without running the engine.
func syntheticResult() *record.Result {
	resid := []record.Num{-1.2, 0.3, 0.8, -0.1, 2.9, -0.7, 0.2, -1.9, 0.5, 0.1, -0.4, 1.0}
	fitted := []record.Num{3, 3.1, 3.3, 3.6, 4, 4.2, 4.4, 4.9, 5, 5.3, 5.5, 6}
	groups := []string{"a", "a", "a", "a", "b", "b", "b", "b", "c", "c", "c", "c"}
	return &record.Result{
		Format: record.AuditFormat,
		Tool:   record.ToolInfo{Name: "furrow", Version: "test"},
		Trial:  record.TrialInfo{ID: "T-1", Title: "A <small> trial & test", PlanVersion: "1.0"},
		Inputs: record.Inputs{PlanHash: "sha256:abc", DataPath: "data.csv", Rows: 12, RowsKept: 12, Columns: []string{"g", "y"}},
		Endpoints: []record.EndpointResult{{
			ID: "yield", Response: "y", Primary: true, Alpha: 0.05, Status: record.EndpointAccepted, Reported: "ranks",
			Steps: []record.StepResult{
				{ID: "ols", Executed: true, N: 12, Model: record.ModelSpec{Text: "linear of y; fixed: g", Kind: "linear"},
					Checks:   []record.CheckResult{{Test: "shapiro-wilk", Statistic: 0.81, P: 0.012, FailBelow: 0.05, Verdict: record.VerdictFail, OnFail: "ranks", Pos: "plan.yaml:20:11"}},
					Decision: record.Decision{Action: record.ActionFallBack, Reason: record.ReasonCheckFailed, Next: "ranks", Rule: "plan.yaml:20:11", Detail: "shapiro-wilk p = 0.012 < 0.05"},
					Figures:  &record.DiagnosticData{Fitted: fitted, Residuals: resid, Groups: groups, Values: fitted}},
				{ID: "ranks", Executed: true, N: 12, Model: record.ModelSpec{Text: "kruskal-wallis: y by g", Kind: "kruskal-wallis", Compare: "g"},
					Decision: record.Decision{Action: record.ActionAccept, Reason: record.ReasonNoChecks, Rule: "plan.yaml:25:9"},
					Results:  &record.StepDetail{Scale: "y", Test: &record.GlobalTest{Method: "kruskal-wallis", Statistic: 6.2, DF: []record.Num{2}, P: 0.045}},
					Figures:  &record.DiagnosticData{Groups: groups, Values: fitted}},
				{ID: "never", Model: record.ModelSpec{Text: "welch", Kind: "welch"}, Decision: record.Decision{Action: record.ActionSkip, Reason: record.ReasonNotReached}},
			},
			Hypotheses: []record.HypothesisResult{{ID: "vs-a", Kind: "versus-control", Step: "ranks", Sides: "two-sided", Alpha: 0.05, Adjust: "dunnett", AdjustUsed: "holm", Assessable: true,
				Comparisons: []record.Comparison{{Label: "b - a", Level: "b", Against: "a", Estimate: 1.1, P: 0.02, PAdjusted: 0.04, Lower: 0.1, Upper: 2.1, Reject: true, Ratio: record.Num(math.NaN())}}}},
		}},
		Integrity: record.Integrity{ContentHash: "sha256:def"},
	}
}

func TestReportHTMLShowsVerdictTrailAndFigures(t *testing.T) {
	r := syntheticResult()
	rep := BuildReport(r)
	page, err := rep.HTML()
	if err != nil {
		t.Fatal(err)
	}
	s := string(page)
	for _, want := range []string{
		"A &lt;small&gt; trial &amp; test", // escaped title
		"step ranks accepted",
		"vs-a: b versus a differs (adjusted p = 0.0400",
		"fall-back", "not reached", "0.0120",
		Caution[:40],
	} {
		if !strings.Contains(s, want) {
			t.Errorf("report lacks %q", want)
		}
	}
	if strings.Contains(s, "<script") || strings.Contains(s, "http://") && !strings.Contains(s, "xmlns") {
		t.Errorf("report must be self-contained without scripts")
	}
	// ols: residuals/fitted, QQ, histogram, box; ranks: box only.
	if n := len(rep.Figures["yield/ols"]); n != 4 {
		t.Errorf("ols figures = %d, want 4", n)
	}
	if n := len(rep.Figures["yield/ranks"]); n != 1 {
		t.Errorf("ranks figures = %d, want 1", n)
	}
	if got := strings.Count(s, "<svg"); got != 5 {
		t.Errorf("page has %d svg elements, want 5", got)
	}
	if strings.Contains(s, "UNREGISTERED") {
		t.Errorf("registered-looking run shows the unregistered banner")
	}
	r.Unregistered = true
	page, _ = BuildReport(r).HTML()
	if !strings.Contains(string(page), "UNREGISTERED RUN") {
		t.Errorf("unregistered run lacks its banner")
	}
}

func TestReportMarkdownAndCSV(t *testing.T) {
	rep := BuildReport(syntheticResult())
	md := string(rep.Markdown())
	for _, want := range []string{"# Analysis report:", "## Decision trail: `yield`", "| `ols` |", "fall-back to `ranks`", "Global test: kruskal-wallis", "## Caution"} {
		if !strings.Contains(md, want) {
			t.Errorf("markdown lacks %q", want)
		}
	}
	tables, err := rep.CSVTables()
	if err != nil {
		t.Fatal(err)
	}
	checks := string(tables["checks.csv"])
	if !strings.Contains(checks, "yield,ols,true,shapiro-wilk,0.81,0.012,0.05,fail,fall-back,check-failed,ranks,plan.yaml:20:11") {
		t.Errorf("checks.csv:\n%s", checks)
	}
	if !strings.Contains(string(tables["comparisons.csv"]), "yield,vs-a,ranks,b - a,1.1,") {
		t.Errorf("comparisons.csv:\n%s", tables["comparisons.csv"])
	}
}

func TestFormatting(t *testing.T) {
	cases := []struct {
		in   record.Num
		num  string
		pval string
	}{
		{0.000012, "1.200e-05", "< 0.0001"},
		{0.04567, "0.04567", "0.0457"},
		{1234.5678, "1235", "1.0000"},
		{record.Num(math.NaN()), "-", "-"},
	}
	for _, c := range cases {
		if got := fmtNum(c.in); got != c.num {
			t.Errorf("fmtNum(%v) = %q, want %q", c.in, got, c.num)
		}
		if c.pval != "1.0000" {
			if got := fmtP(c.in); got != c.pval {
				t.Errorf("fmtP(%v) = %q, want %q", c.in, got, c.pval)
			}
		}
	}
}

// The report of a 10,000-row trial must stay small enough to open and
// print comfortably: figures thin their points above MaxFigurePoints.
func TestReportSizeAt10000Rows(t *testing.T) {
	const n = 10000
	r := syntheticResult()
	e := &r.Endpoints[0]
	fd := &record.DiagnosticData{}
	od := &record.ObservedData{Response: "y", Repeat: "time", RepeatLevels: []string{"fixture.T0", "t1"}}
	grp := record.ObservedFactor{Name: "g", Role: "treatment", Levels: []string{"a", "b", "c"}}
	for i := 0; i < n; i++ {
		x := float64(i)
		fd.Fitted = append(fd.Fitted, record.Num(math.Sin(x)))
		fd.Residuals = append(fd.Residuals, record.Num(math.Cos(x*1.3)))
		fd.Values = append(fd.Values, record.Num(x))
		fd.Groups = append(fd.Groups, grp.Levels[i%3])
		od.Values = append(od.Values, record.Num(x))
		grp.Values = append(grp.Values, grp.Levels[i%3])
		od.Unit = append(od.Unit, "u"+strconv.Itoa(i/2))
		od.RepeatValues = append(od.RepeatValues, od.RepeatLevels[i%2])
	}
	od.Factors = []record.ObservedFactor{grp}
	e.Steps[0].Figures = fd
	e.Observed = od
	page, err := BuildReport(r).HTML()
	if err != nil {
		t.Fatal(err)
	}
	if len(page) > 3<<20 {
		t.Errorf("report of %d rows is %d bytes, want under 3 MiB", n, len(page))
	}
	if !strings.Contains(string(page), "systematic sample") {
		t.Errorf("thinned figures do not say so")
	}
	t.Logf("report of %d rows: %d bytes", n, len(page))
}

// The Markdown trail puts the decision on the row of the check whose rule
// made it, and shows the grouping of a variance check.
func TestMarkdownTrailDecisionOnDecidingCheck(t *testing.T) {
	r := syntheticResult()
	s := &r.Endpoints[0].Steps[0]
	s.Checks = []record.CheckResult{
		{Test: "shapiro-wilk", Statistic: 0.97, P: 0.4, FailBelow: 0.05, Verdict: record.VerdictPass, Pos: "plan.yaml:20:11"},
		{Test: "levene", By: []string{"g"}, Statistic: 5.1, P: 0.01, FailBelow: 0.05, Verdict: record.VerdictFail, OnFail: "ranks", Pos: "plan.yaml:22:11"},
	}
	s.Decision.Rule = "plan.yaml:22:11"
	md := string(BuildReport(r).Markdown())
	first := "| `ols` | linear of y; fixed: g | 12 | shapiro-wilk | 0.97 | 0.4000 | 0.05 | pass |  | plan.yaml:20:11 |"
	second := "|  |  |  | levene by g | 5.1 | 0.0100 | 0.05 | fail | fall-back to `ranks` | plan.yaml:22:11 |"
	if !strings.Contains(md, first) || !strings.Contains(md, second) {
		t.Errorf("trail rows:\n%s", md)
	}
}
