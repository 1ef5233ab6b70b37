package engine

import (
	"bytes"
	"encoding/json"
	"math"
	"os"
	"path/filepath"
	"slices"
	"strings"
	"testing"

	"furrow/checker/record"
	"furrow/internal/testkit"
)

// PlantGrowth (R datasets; Dobson 1983, An Introduction to Statistical
// Modelling, table 7.1) through a furrow plan: one-way linear model on
// the accepted first step. Published ANOVA: F = 4.846 on (2, 27),
// p = 0.0159 (Dobson 1983). Reference-library values from R 4.2.2 aov,
// oracle case05 (read at test time).
func TestPlantGrowthEndToEnd(t *testing.T) {
	b := testkit.ReadShared(t, "oracle/data/case05_plantgrowth.csv")
	var ref struct {
		Anova []map[string]any `json:"anova"`
	}
	testkit.ReadJSON(t, testkit.SharedPath(t, "oracle/ref/case05_plantgrowth.json"), &ref)
	dir := t.TempDir()
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
  least-units: {per: cell, count: 9, below: stop}
endpoints:
  - id: weight
    response: weight
    primary: true
    not-computable: fail
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
	if ep.Status != record.EndpointAccepted || ep.Reported != "anova" {
		t.Fatalf("status %s reported %q", ep.Status, ep.Reported)
	}
	an := ep.Steps[0].Results.Anova
	// Published (Dobson 1983): F 4.846, p 0.0159 — to the printed digits.
	testkit.CheckWithin(t, "F (Dobson 1983)", float64(an[0].F), 4.846, 5e-4, 5e-4)
	testkit.CheckWithin(t, "p (Dobson 1983)", float64(an[0].P), 0.0159, 1e-4, 1e-4)
	// R 4.2.2 aov (oracle case05): SS and F to 1e-10 relative.
	testkit.CheckWithin(t, "SS (R aov)", float64(an[0].SS), ref.Anova[0]["Sum Sq"].(float64), 1e-10, 1e-10)
	testkit.CheckWithin(t, "F (R aov)", float64(an[0].F), ref.Anova[0]["F value"].(float64), 1e-10, 1e-10)
	testkit.CheckWithin(t, "residual SS (R aov)", float64(an[1].SS), ref.Anova[1]["Sum Sq"].(float64), 1e-10, 1e-10)
}

// publishedRun copies the plan testdata/published/<plan> (with the
// replacements old -> new applied) and the data b beside it as the plan's
// data.file name, registers and runs it.
func publishedRun(t *testing.T, planName string, b []byte, dataName string, repl ...string) *record.Result {
	t.Helper()
	src, err := os.ReadFile(filepath.Join("testdata", "published", planName))
	if err != nil {
		t.Fatal(err)
	}
	s := string(src)
	for i := 0; i+1 < len(repl); i += 2 {
		s = strings.ReplaceAll(s, repl[i], repl[i+1])
	}
	dir := t.TempDir()
	write(t, filepath.Join(dir, dataName), string(b))
	pp := filepath.Join(dir, "plan.yaml")
	write(t, pp, s)
	register(t, pp, t0)
	return run(t, pp, filepath.Join(dir, "out"), t0)
}

// TestOatsSplitPlotEndToEnd runs the Yates (1935) oats split-plot (J R Stat
// Soc Suppl 2:181; R MASS::oats) through a furrow plan as a mixed model
// with random block and block x variety, with both df methods. Published
// split-plot analysis (values from ../shared/reference/agri/values.json,
// the error-strata ANOVA of Yates 1935 reproduced by R aov): variety
// F = 1.48534 on (2, 10), nitrogen F = 37.68565 on (3, 45), N x V
// F = 0.30282 on (6, 45); REML variance components equal the ANOVA
// estimates in this balanced design: block (MS_B - MS_a)/12 = 214.477083,
// whole plot (MS_a - MS_b)/4 = 106.061806, residual MS_b = 177.083333.
func TestOatsSplitPlotEndToEnd(t *testing.T) {
	for _, m := range []string{"satterthwaite", "kenward-roger"} {
		t.Run(m, func(t *testing.T) {
			oats := testkit.ReadShared(t, "agri/oats_MASS.csv")
			r := publishedRun(t, "oats.yaml", oats, "oats.csv", "DFMETHOD", m)
			ep := r.Endpoints[0]
			if ep.Status != record.EndpointAccepted || ep.Reported != "split-plot" {
				t.Fatalf("status %s reported %q, error %q", ep.Status, ep.Reported, ep.Steps[0].Error)
			}
			res := ep.Steps[0].Results
			for _, w := range []struct {
				term     string
				f        float64
				num, den float64
				p, pTol  float64
			}{
				{"V", 1.48534, 2, 10, 0.27239, 5e-6},
				{"N", 37.68565, 3, 45, 2.4577e-12, 1e-16},
				{"V:N", 0.30282, 6, 45, 0.9322, 5e-5},
			} {
				row := anovaRow(t, res.Anova, w.term)
				// Published F to its 5-6 printed digits; df to 1e-3 relative.
				if !testkit.Close(float64(row.F), w.f, 5e-6) || !testkit.Close(float64(row.DF), w.num, 1e-9) ||
					!testkit.Close(float64(row.DenDF), w.den, 1e-3) || math.Abs(float64(row.P)-w.p) > w.pTol {
					t.Errorf("%s: F %v on (%v, %v) p %v; Yates (1935) split-plot: F %v on (%v, %v) p %v",
						w.term, row.F, row.DF, row.DenDF, row.P, w.f, w.num, w.den, w.p)
				}
			}
			want := map[string]float64{"B": 214.477083333333, "B:V": 106.061805555556, "residual": 177.083333333333}
			total := 214.477083333333 + 106.061805555556 + 177.083333333333
			if len(res.VarianceComponents) != 3 {
				t.Fatalf("%d variance components", len(res.VarianceComponents))
			}
			for _, vc := range res.VarianceComponents {
				w, ok := want[vc.Group]
				if !ok {
					t.Errorf("unexpected component %s", vc.Group)
					continue
				}
				// Closed-form ANOVA estimates (values.json, basis computed): 1e-6 relative.
				if !testkit.Close(float64(vc.Variance), w, 1e-6) || !testkit.Close(float64(vc.Share), w/total, 1e-6) ||
					!testkit.Close(float64(vc.SD), math.Sqrt(w), 1e-6) || vc.Boundary {
					t.Errorf("%s: variance %v share %v sd %v boundary %v; ANOVA estimate %v share %v",
						vc.Group, vc.Variance, vc.Share, vc.SD, vc.Boundary, w, w/total)
				}
			}
			if fs := ep.Steps[0].Fit; fs.Method != "reml" || !fs.Converged || !testkit.Close(float64(fs.Sigma), math.Sqrt(177.083333333333), 1e-6) {
				t.Errorf("fit summary %+v", *fs)
			}
			// The record of a mixed step meets the published schema, and a
			// second run gives the same bytes.
			if m == "satterthwaite" {
				var recs [2][]byte
				for k, res := range []*record.Result{r, publishedRun(t, "oats.yaml", oats, "oats.csv", "DFMETHOD", m)} {
					if err := record.Seal(res, nil); err != nil {
						t.Fatal(err)
					}
					b, err := record.EncodeRecord(res)
					if err != nil {
						t.Fatal(err)
					}
					if err := record.ValidateRecord(b); err != nil {
						t.Fatalf("record: %v", err)
					}
					recs[k] = b
				}
				if !bytes.Equal(recs[0], recs[1]) {
					t.Error("two runs of the mixed step gave different records")
				}
			}
			// The same fit in R (ref.R: lme4 1.1-31, lmerTest 3.1-3 anova type 3 with
			// this ddf; pbkrtest 0.5.2 for Kenward-Roger): F 1e-6, df 1e-3 relative.
			var ref map[string]json.RawMessage
			loadRef(t, "oats", &ref)
			var byDF struct {
				Anova refAnova `json:"anova"`
			}
			if err := json.Unmarshal(ref[m], &byDF); err != nil {
				t.Fatal(err)
			}
			checkAnova(t, res.Anova, byDF.Anova, map[string]string{"V": "V", "N": "N", "V:N": "V:N"}, "R lmerTest 3.1-3 ("+m+")")
		})
	}
}

// checkAnova compares rows by term (ours -> R's name) with R's anova.
func checkAnova(t *testing.T, rows []record.AnovaRow, ref refAnova, names map[string]string, source string) {
	t.Helper()
	for ours, theirs := range names {
		row := anovaRow(t, rows, ours)
		k := slices.Index(ref.Term, theirs)
		if k < 0 {
			t.Fatalf("%s has no term %s", source, theirs)
		}
		checkNear(t, ours+" F", row.F, ref.F[k], 1e-6, source)
		checkNear(t, ours+" num df", row.DF, ref.NumDF[k], 1e-9, source)
		checkNear(t, ours+" den df", row.DenDF, ref.DenDF[k], 1e-3, source)
		checkNear(t, ours+" p", row.P, ref.P[k], 1e-5, source)
	}
}

// TestNpkRandomBlocksEndToEnd runs R's npk 2^3 factorial (R datasets::npk,
// Venables & Ripley 2002) with random blocks. N:P:K is confounded with
// blocks, so the mixed model recovers it from the block stratum. In this
// balanced design with a positive block variance the REML F tests equal
// the error-strata ANOVA (../shared/reference/oracle/ref/case01_npk.json,
// R 4.2.2 aov with Error(block); and agri/values.json): N F = 12.25873 on
// (1, 12), K F = 6.16569 on (1, 12), N:P:K F = 0.48322 on (1, 4); block
// variance (76.57333 - 15.44056)/4 = 15.28319, residual 15.44056.
func TestNpkRandomBlocksEndToEnd(t *testing.T) {
	for _, m := range []string{"satterthwaite", "kenward-roger"} {
		t.Run(m, func(t *testing.T) {
			r := publishedRun(t, "npk.yaml", testkit.ReadShared(t, "agri/npk.csv"), "npk.csv", "DFMETHOD", m)
			ep := r.Endpoints[0]
			if ep.Status != record.EndpointAccepted {
				t.Fatalf("status %s, error %q", ep.Status, ep.Steps[0].Error)
			}
			res := ep.Steps[0].Results
			for _, w := range []struct {
				term   string
				f, den float64
			}{{"N", 12.25873, 12}, {"P", 0.54413, 12}, {"K", 6.16569, 12}, {"N:P", 1.3783, 12},
				{"N:K", 2.14597, 12}, {"P:K", 0.03119, 12}, {"N:P:K", 0.48322, 4}} {
				row := anovaRow(t, res.Anova, w.term)
				// Printed to 5 significant digits: 1e-4 relative (3e-4 for P:K's 4 digits).
				if !testkit.Close(float64(row.F), w.f, 3e-4) || !testkit.Close(float64(row.DenDF), w.den, 1e-3) {
					t.Errorf("%s: F %v on %v df; error-strata ANOVA (R aov, case01): %v on %v", w.term, row.F, row.DenDF, w.f, w.den)
				}
			}
			want := map[string]float64{"block": (306.293333333333/4 - 185.286666666667/12) / 4, "residual": 185.286666666667 / 12}
			for _, vc := range res.VarianceComponents {
				if !testkit.Close(float64(vc.Variance), want[vc.Group], 1e-6) {
					t.Errorf("%s variance %v, strata estimate %v", vc.Group, vc.Variance, want[vc.Group])
				}
			}
			var ref map[string]json.RawMessage
			loadRef(t, "npk", &ref)
			var byDF struct {
				Anova refAnova `json:"anova"`
			}
			if err := json.Unmarshal(ref[m], &byDF); err != nil {
				t.Fatal(err)
			}
			names := map[string]string{}
			for _, s := range []string{"N", "P", "K", "N:P", "N:K", "P:K", "N:P:K"} {
				names[s] = s
			}
			checkAnova(t, res.Anova, byDF.Anova, names, "R lmerTest 3.1-3 ("+m+")")
		})
	}
}
