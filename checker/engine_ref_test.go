package checker

import (
	"encoding/json"
	"math"
	"os"
	"path/filepath"
	"testing"
)

// refDir is the shared reference folder beside the checkout.
const refDir = "../../shared/reference"

func closeTo(got, want, tol float64) bool {
	d := math.Abs(got - want)
	return d <= tol || d <= tol*math.Abs(want)
}

// PlantGrowth (R datasets; Dobson 1983, An Introduction to Statistical
// Modelling, table 7.1) through a furrow plan: one-way linear model on
// the accepted first step. Published ANOVA: F = 4.846 on (2, 27),
// p = 0.0159 (Dobson 1983). Reference-library values from R 4.2.2 aov,
// oracle case05 (read at test time).
func TestPlantGrowthEndToEnd(t *testing.T) {
	data := filepath.Join(refDir, "oracle", "data", "case05_plantgrowth.csv")
	refPath := filepath.Join(refDir, "oracle", "ref", "case05_plantgrowth.json")
	if _, err := os.Stat(data); err != nil {
		t.Skip("shared reference data not found beside the checkout (../shared/reference); skipping")
	}
	dir := t.TempDir()
	abs, _ := filepath.Abs(data)
	b, _ := os.ReadFile(abs)
	write(t, filepath.Join(dir, "plantgrowth.csv"), string(b))
	pp := filepath.Join(dir, "plan.yaml")
	write(t, pp, `furrow: 1
trial:
  id: PG
  title: PlantGrowth one-way layout (public dataset)
  version: "1.0"
  amendments: []
data:
  file: plantgrowth.csv
  format: csv
columns:
  - name: group
    role: treatment
    levels: [ctrl, trt1, trt2]
    control: ctrl
  - name: weight
    role: response
    min: 0
    max: 100
design:
  layout: crd
  replicates: 10
endpoints:
  - id: weight
    response: weight
    primary: true
    steps:
      - id: anova
        model: linear
        fixed: [group]
        anova: 1
        checks:
          - test: shapiro-wilk
            fail-below: 0.05
          - test: levene
            by: [group]
            fail-below: 0.05
`)
	register(t, pp, t0)
	r := run(t, pp, filepath.Join(dir, "out"), t0)
	ep := r.Endpoints[0]
	if ep.Status != EndpointAccepted || ep.Reported != "anova" {
		t.Fatalf("status %s reported %q", ep.Status, ep.Reported)
	}
	an := ep.Steps[0].Results.Anova
	// Published (Dobson 1983): F 4.846, p 0.0159 — to the printed digits.
	if !closeTo(float64(an[0].F), 4.846, 5e-4) || !closeTo(float64(an[0].P), 0.0159, 1e-4) {
		t.Errorf("F %v p %v, published 4.846 / 0.0159", an[0].F, an[0].P)
	}
	rb, err := os.ReadFile(refPath)
	if err != nil {
		t.Skip("reference values not found")
	}
	var ref struct {
		Anova []map[string]any `json:"anova"`
	}
	if err := json.Unmarshal(rb, &ref); err != nil {
		t.Fatal(err)
	}
	// R 4.2.2 aov (oracle case05): SS and F to 1e-10 relative.
	if want := ref.Anova[0]["Sum Sq"].(float64); !closeTo(float64(an[0].SS), want, 1e-10) {
		t.Errorf("SS %v, R %v", an[0].SS, want)
	}
	if want := ref.Anova[0]["F value"].(float64); !closeTo(float64(an[0].F), want, 1e-10) {
		t.Errorf("F %v, R %v", an[0].F, want)
	}
	if want := ref.Anova[1]["Sum Sq"].(float64); !closeTo(float64(an[1].SS), want, 1e-10) {
		t.Errorf("residual SS %v, R %v", an[1].SS, want)
	}
}
