package engine_test

import (
	"errors"
	"fmt"
	"math"
	"path/filepath"
	"strings"
	"testing"

	"furrow/checker/internal/fixture"

	"furrow/checker/engine"
	"furrow/checker/record"
)

// This file holds hand-written degenerate data sets: each must give a
// result whose decision trail records the failure in the step that meets
// it, with an error that names the problem; never a panic and never a
// non-number reported as a passed check. Each test pins the step and the
// words of its error, so a run that stopped with an error instead, or a
// trail that failed elsewhere, fails the test. All scenarios are invented.

// degeneratePlan is a one-factor plan with a block, a unit and a repeat
// column; %s are the columns' extras, the exclusions, and the steps.
const degeneratePlan = `furrow: 1
trial:
  id: T-DEGENERATE
  title: degenerate data (invented)
  version: "1.0"
  amendments: []
data:
  file: %s
  format: %s
columns:
  - name: block
    role: block
    levels: [%s]
  - name: unit
    role: unit
  - name: treatment
    role: treatment
    levels: [control, a, b]
    control: control
%s  - name: y
    role: response
design:
  layout: %s
exclusions:
%s
endpoints:
  - id: ep
    response: y
    primary: true
    not-computable: fail
    steps:
%s
    hypotheses:
      - id: vs-control
        kind: versus-control
        adjust: holm
`

// degenerateCase is one scenario: plan pieces and data rows.
type degenerateCase struct {
	blocks     string
	repeat     bool // add a repeat column "time" with levels [t1, t2]
	layout     string
	exclusions string
	steps      string
	rows       [][]string // without header; columns block, unit, treatment, [time,] y
}

func (c degenerateCase) run(t *testing.T) (*record.Result, error) {
	t.Helper()
	dir := t.TempDir()
	header := "block,unit,treatment,y"
	extra := ""
	if c.repeat {
		header = "block,unit,treatment,time,y"
		extra = "  - name: time\n    role: repeat\n    levels: [t1, t2]\n"
	}
	var b strings.Builder
	b.WriteString(header + "\n")
	for _, r := range c.rows {
		b.WriteString(strings.Join(r, ",") + "\n")
	}
	fixture.Write(t, filepath.Join(dir, "data.csv"), b.String())
	excl := c.exclusions
	if excl == "" {
		excl = "  []"
	}
	pp := filepath.Join(dir, "plan.yaml")
	fixture.Write(t, pp, fmt.Sprintf(degeneratePlan, "data.csv", "csv", c.blocks, extra, c.layout, excl, c.steps))
	return engine.Run(engine.RunOptions{PlanPath: pp, OutDir: filepath.Join(dir, "run"), Now: fixture.T0, Tool: record.ToolInfo{Version: "test"}, Unregistered: true})
}

// crdRows returns n units per treatment in one block "B1" with y from f.
func crdRows(n int, blocks []string, f func(trt, i int) float64) [][]string {
	var rows [][]string
	trts := []string{"control", "a", "b"}
	u := 0
	for i := 0; i < n; i++ {
		for k, tr := range trts {
			u++
			rows = append(rows, []string{blocks[i%len(blocks)], fmt.Sprintf("u%d", u), tr, fmt.Sprintf("%.6g", f(k, i))})
		}
	}
	return rows
}

// expectTrail is the common assertion: the run returns a result (no
// error), which passes the fuzz properties, and its step id was executed,
// failed to fit with an error containing text, and says so in its
// decision.
func expectTrail(t *testing.T, r *record.Result, err error, id, text string) *record.StepResult {
	t.Helper()
	if err != nil {
		t.Fatalf("run stopped with an error instead of recording the failure: %v %s", err, dataFindings(err))
	}
	checkFuzzResult(t, "degenerate", r, nil)
	t.Logf("trail:\n%s", trail(r))
	var s *record.StepResult
	for i := range r.Endpoints[0].Steps {
		if r.Endpoints[0].Steps[i].ID == id {
			s = &r.Endpoints[0].Steps[i]
		}
	}
	if s == nil {
		t.Fatalf("no step %s:\n%s", id, trail(r))
	}
	if !s.Executed || !strings.Contains(s.Error, text) ||
		(s.Decision.Reason != record.ReasonFitFailed && s.Decision.Reason != record.ReasonLastResortFitFailed) {
		t.Fatalf("step %s: executed %v, error %q (want it to contain %q), reason %v", id, s.Executed, s.Error, text, s.Decision.Reason)
	}
	return s
}

func dataFindings(err error) string {
	var de *engine.DataError
	if !errors.As(err, &de) {
		return ""
	}
	var s []string
	for _, d := range de.Diagnostics {
		s = append(s, d.Summary)
	}
	return strings.Join(s, "; ")
}

// trail is the decision trail in one line per step, for failure messages.
func trail(r *record.Result) string {
	var b strings.Builder
	for _, ep := range r.Endpoints {
		fmt.Fprintf(&b, "endpoint %s %v reported %q\n", ep.ID, ep.Status, ep.Reported)
		for _, s := range ep.Steps {
			fmt.Fprintf(&b, "  step %s executed=%v error=%q decision=%v/%v %q\n", s.ID, s.Executed, s.Error, s.Decision.Action, s.Decision.Reason, s.Decision.Detail)
			for _, c := range s.Checks {
				fmt.Fprintf(&b, "    check %s %v p=%v err=%q\n", c.Test, c.Verdict, float64(c.P), c.Error)
			}
		}
	}
	return b.String()
}

const linearThenKruskal = `      - id: linear
        model: linear
        fixed: [treatment]
        checks:
          - test: shapiro-wilk
            fail-below: 0.05
          - test: levene
            fail-below: 0.05
        on-fail: ranks
      - id: ranks
        model: kruskal-wallis
        compare: treatment
        answers:
          - hypothesis: vs-control
            estimate: hodges-lehmann`

// Every unit of treatment b is removed by a listed-unit exclusion.
func TestDegenerateTreatmentAllExcluded(t *testing.T) {
	c := degenerateCase{
		blocks: "B1", layout: "crd",
		exclusions: "  - id: lost\n    drop: unit\n    when: listed\n    units: [u3, u6, u9, u12]\n    reason: invented loss of every b unit",
		steps:      linearThenKruskal,
		rows:       crdRows(4, []string{"B1"}, func(k, i int) float64 { return 10 + float64(k) + 0.3*float64(i%3) + 0.1*float64(k*i%2) }),
	}
	r, err := c.run(t)
	if err != nil {
		t.Fatalf("run stopped with an error: %v %s", err, dataFindings(err))
	}
	// The result must keep b in the declared family, as a comparison that
	// cannot be made, and say why.
	checkFuzzResult(t, "degenerate", r, nil)
	hs := r.Endpoints[0].Hypotheses
	if len(hs) != 1 {
		t.Fatalf("want one hypothesis, got %d", len(hs))
	}
	var found bool
	for _, c := range hs[0].Comparisons {
		if c.Level == "b" {
			found = true
			if !math.IsNaN(float64(c.P)) || c.Reject {
				t.Errorf("comparison b - control on no data: p = %v, reject = %v", float64(c.P), c.Reject)
			}
		}
	}
	if !found || !strings.Contains(hs[0].Note, "b has no analysed data") {
		t.Errorf("treatment b without data is not recorded: comparisons %+v, note %q", hs[0].Comparisons, hs[0].Note)
	}
}

// The response is constant within every treatment group: the linear model
// fits exactly, so its tests are undefined; the step records a fit error
// (and its checks are not run) and the cascade takes the on-fail step.
func TestDegenerateConstantWithinGroups(t *testing.T) {
	c := degenerateCase{
		blocks: "B1", layout: "crd", steps: linearThenKruskal,
		rows: crdRows(4, []string{"B1"}, func(k, i int) float64 { return 10 + 5*float64(k) }),
	}
	r, err := c.run(t)
	s := expectTrail(t, r, err, "linear", "fits the data exactly")
	if s.Decision.Reason != record.ReasonFitFailed || s.Decision.Next != "ranks" {
		t.Errorf("exact fit: decision %+v, want a fit failure falling back to ranks", s.Decision)
	}
	if len(s.Checks) != 2 {
		t.Fatalf("%d checks recorded, want the 2 declared", len(s.Checks))
	}
	for _, ch := range s.Checks {
		if ch.Verdict == record.VerdictPass || ch.Verdict == record.VerdictFail {
			t.Errorf("check %s gave a verdict (%v, p = %v) on zero residuals", ch.Test, ch.Verdict, float64(ch.P))
		}
	}
}

// A repeated-measures plan (change from t1 to t2) where no unit has a t2 row.
func TestDegenerateNoSecondTime(t *testing.T) {
	var rows [][]string
	for _, r := range crdRows(4, []string{"B1"}, func(k, i int) float64 { return 10 + float64(k) + 0.2*float64(i) }) {
		rows = append(rows, []string{r[0], r[1], r[2], "t1", r[3]})
	}
	c := degenerateCase{
		blocks: "B1", repeat: true, layout: "repeated",
		steps: `      - id: change
        model: linear
        outcome: {derive: change, from: t1, to: t2}
        fixed: [treatment]
        on-fail: ranks
      - id: ranks
        model: kruskal-wallis
        outcome: {derive: change, from: t1, to: t2}
        compare: treatment
        answers:
          - hypothesis: vs-control
            estimate: hodges-lehmann`,
		rows: rows,
	}
	r, err := c.run(t)
	expectTrail(t, r, err, "change", "no observations left after derivation")
	expectTrail(t, r, err, "ranks", "no observations left after derivation")
	if ep := r.Endpoints[0]; ep.Status != record.EndpointFailed || ep.Reported != "" {
		t.Errorf("endpoint %s reported %q with no second time point", ep.Status, ep.Reported)
	}
}

// A mixed model whose random factor (block) has a single level.
func TestDegenerateRandomFactorOneLevel(t *testing.T) {
	c := degenerateCase{
		blocks: "B1", layout: "rcbd",
		steps: `      - id: mixed
        model: mixed
        fixed: [treatment]
        random: [block]
        on-fail: fixed
      - id: fixed
        model: linear
        fixed: [treatment]`,
		rows: crdRows(4, []string{"B1"}, func(k, i int) float64 { return 10 + float64(k) + 0.37*float64(i) - 0.11*float64(k*i) }),
	}
	r, err := c.run(t)
	expectTrail(t, r, err, "mixed", `"block" has 1 level with data`)
	if ep := r.Endpoints[0]; ep.Status != record.EndpointAccepted || ep.Reported != "fixed" {
		t.Errorf("endpoint %s reported %q, want the fixed-effects fallback", ep.Status, ep.Reported)
	}
}

// A rank step where every response value ties.
func TestDegenerateAllTies(t *testing.T) {
	c := degenerateCase{
		blocks: "B1", layout: "crd",
		steps: `      - id: ranks
        model: kruskal-wallis
        compare: treatment
        answers:
          - hypothesis: vs-control
            estimate: hodges-lehmann`,
		rows: crdRows(4, []string{"B1"}, func(k, i int) float64 { return 7 }),
	}
	r, err := c.run(t)
	expectTrail(t, r, err, "ranks", "all values are tied")
	if ep := r.Endpoints[0]; ep.Status != record.EndpointFailed {
		t.Errorf("endpoint %s reported %q on all-tied data:\n%s", ep.ID, ep.Reported, trail(r))
	}
}

// An XLSX data file whose sheet holds only the header row.
func TestDegenerateXLSXHeaderOnly(t *testing.T) {
	dir := t.TempDir()
	xp := filepath.Join(dir, "data.xlsx")
	if err := fixture.WriteXLSX(xp, map[string][][]any{"plots": {{"block", "unit", "treatment", "y"}}}); err != nil {
		t.Fatal(err)
	}
	pp := filepath.Join(dir, "plan.yaml")
	plan := fmt.Sprintf(degeneratePlan, "data.xlsx", "xlsx", "B1", "", "crd", "  []", linearThenKruskal)
	plan = strings.Replace(plan, "  format: xlsx\n", "  format: xlsx\n  sheet: plots\n", 1)
	fixture.Write(t, pp, plan)
	_, err := engine.Run(engine.RunOptions{PlanPath: pp, OutDir: filepath.Join(dir, "run"), Now: fixture.T0, Tool: record.ToolInfo{Version: "test"}, Unregistered: true})
	var de *engine.DataError
	if !errors.As(err, &de) {
		t.Fatalf("a header-only sheet: got %v, want a data error", err)
	}
	found := false
	for _, d := range de.Diagnostics {
		if d.Code == "data-no-rows" && d.Pos.Line == 1 {
			found = true
		}
	}
	if !found {
		t.Errorf("no data-no-rows finding at row 1: %v", de.Diagnostics)
	}
}
