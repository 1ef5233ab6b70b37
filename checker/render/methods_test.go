package render

import (
	"fmt"
	"math/rand/v2"
	"path/filepath"
	"strings"
	"testing"

	"furrow/checker/internal/fixture"

	"furrow/checker/method"
	"furrow/checker/record"
	"furrow/plan"
)

// methodsPlan is an invented blocked trial with two treatments, each plot
// measured twice; %s is the one step under test.
const methodsPlan = `furrow: 1
trial:
  id: T-METHODS
  title: every method of the registry (invented)
  version: "1.0"
  amendments: []
data:
  file: data.csv
columns:
  - name: block
    role: block
    levels: [B1, B2, B3, B4, B5, B6]
  - name: plot
    role: unit
  - name: treatment
    role: treatment
    levels: [control, product]
    control: control
  - name: time
    role: repeat
    levels: [before, after]
  - name: y
    role: response
    min: 0
design:
  layout: rcbd
exclusions: []
endpoints:
  - id: y
    response: y
    primary: true
    not-computable: pass
    steps:
%s
    hypotheses:
      - id: vs
        kind: versus-control
`

// methodSteps gives, for every model kind of the registry, a step of that
// kind on the methods plan (with its declared answer where the kind
// cannot give Dunnett-adjusted mean differences). A kind added to the
// registry without a step here fails TestEveryMethodEndToEnd.
var methodSteps = map[string]string{
	"linear":         "model: linear\n        outcome: {derive: change, from: before, to: after}\n        fixed: [block, treatment]",
	"mixed":          "model: mixed\n        fixed: [block, treatment, time, [treatment, time]]\n        random: [plot]",
	"poisson":        "model: poisson\n        outcome: {derive: baseline, from: before, to: after}\n        fixed: [block, treatment]",
	"welch":          "model: welch\n        outcome: {derive: change, from: before, to: after}\n        compare: treatment\n        answers: [{hypothesis: vs, adjust: holm}]",
	"kruskal-wallis": "model: kruskal-wallis\n        outcome: {derive: change, from: before, to: after}\n        compare: treatment\n        answers: [{hypothesis: vs, adjust: holm, estimate: hodges-lehmann}]",
	"friedman":       "model: friedman\n        outcome: {derive: change, from: before, to: after}\n        compare: treatment\n        within: block\n        answers: [{hypothesis: vs, adjust: holm, estimate: hodges-lehmann}]",
	"signed-rank":    "model: signed-rank\n        outcome: {derive: change, from: before, to: after}\n        answers: [{hypothesis: vs, adjust: holm, estimate: hodges-lehmann}]",
	"rank-sum":       "model: rank-sum\n        outcome: {derive: change, from: before, to: after}\n        compare: treatment\n        answers: [{hypothesis: vs, adjust: holm, estimate: hodges-lehmann}]",
	"van-elteren":    "model: van-elteren\n        outcome: {derive: change, from: before, to: after}\n        compare: treatment\n        within: block\n        answers: [{hypothesis: vs, adjust: holm, estimate: hodges-lehmann}]",
}

// methodsData writes 6 blocks x 2 treatments x 2 times of invented,
// seeded values.
func methodsData() string {
	rng := rand.New(rand.NewPCG(7, 11))
	var b strings.Builder
	b.WriteString("block,plot,treatment,time,y\n")
	for k := 1; k <= 6; k++ {
		for i, trt := range []string{"control", "product"} {
			base := 50 + 3*float64(k) + rng.NormFloat64()*4
			for j, tm := range []string{"before", "after"} {
				y := base + float64(j)*(5+4*float64(i)) + rng.NormFloat64()*2
				fmt.Fprintf(&b, "B%d,P%d%d,%s,%s,%.0f\n", k, k, i, trt, tm, y)
			}
		}
	}
	return b.String()
}

// TestEveryMethodEndToEnd runs a step of every model kind of the registry,
// with every check of the registry declared on it, through lint, run,
// explain and the report: a method in the registry that the engine, the
// plan document or the report does not know fails here, and so does a
// model kind without a step in methodSteps.
func TestEveryMethodEndToEnd(t *testing.T) {
	var checks strings.Builder
	checks.WriteString("        checks:\n")
	for _, c := range method.Default.AllChecks() {
		fmt.Fprintf(&checks, "          - test: %s\n            fail-below: 0.000001\n", c.Name)
	}
	data := methodsData()
	for _, m := range method.Default.AllModels() {
		t.Run(m.Name, func(t *testing.T) {
			step, ok := methodSteps[m.Name]
			if !ok {
				t.Fatalf("model kind %s has no step in methodSteps", m.Name)
			}
			dir := t.TempDir()
			pp := filepath.Join(dir, "plan.yaml")
			fixture.Write(t, pp, fmt.Sprintf(methodsPlan, "      - id: only\n        "+step+"\n"+checks.String()))
			fixture.Write(t, filepath.Join(dir, "data.csv"), data)
			p, ds, err := plan.Load(pp, method.Default)
			if err != nil || ds.HasErrors() {
				t.Fatalf("lint: %v %v", err, ds)
			}
			fixture.Register(t, pp, fixture.T0)
			r := run(t, pp, filepath.Join(dir, "out"), fixture.T0.Add(3600e9))
			ep := r.Endpoints[0]
			if ep.Status != record.EndpointAccepted || ep.Reported != "only" {
				t.Fatalf("status %s, reported %q: %+v", ep.Status, ep.Reported, ep.Steps[0].Decision)
			}
			s := ep.Steps[0]
			if s.Model.Kind != m.Name || !strings.HasPrefix(s.Model.Text, m.Name+" ") {
				t.Errorf("model %+v does not name the kind %s", s.Model, m.Name)
			}
			if len(s.Checks) != len(method.Default.AllChecks()) {
				t.Fatalf("%d checks recorded", len(s.Checks))
			}
			for _, c := range s.Checks {
				if c.Verdict == record.VerdictNotRun {
					t.Errorf("check %s was not run", c.Test)
				}
			}
			h := ep.Hypotheses[0]
			if !h.Assessable || len(h.Comparisons) != 1 {
				t.Fatalf("hypothesis %+v", h)
			}
			report := string(BuildReport(r).Markdown())
			if !strings.Contains(report, s.Model.Text) {
				t.Errorf("report does not show the model %q", s.Model.Text)
			}
			for _, c := range method.Default.AllChecks() {
				if !strings.Contains(report, "| "+c.Name+" |") && !strings.Contains(report, "| "+c.Name+" by ") {
					t.Errorf("report's decision trail has no row for check %s", c.Name)
				}
			}
			doc := string(Explain(p, plan.Hash(p)).Markdown())
			if want := m.Describe(&p.Endpoints[0].Steps[0], describeOutcome(p, &p.Endpoints[0], &p.Endpoints[0].Steps[0])); !strings.Contains(doc, want) {
				t.Errorf("explain does not describe the %s step as %q", m.Name, want)
			}
			for _, c := range method.Default.AllChecks() {
				if !strings.Contains(doc, c.Words) {
					t.Errorf("explain does not name check %s as %q", c.Name, c.Words)
				}
			}
			if want := method.Default.PairingOf(&p.Endpoints[0].Steps[0]).Words(); !strings.Contains(doc, want) {
				t.Errorf("explain does not say the step answers vs with %q", want)
			}
		})
	}
}
