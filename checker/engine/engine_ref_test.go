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

	"furrow/checker/internal/fixture"

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
	fixture.Write(t, filepath.Join(dir, "plantgrowth.csv"), string(b))
	pp := filepath.Join(dir, "plan.yaml")
	fixture.Write(t, pp, `furrow: 1
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
	fixture.Register(t, pp, fixture.T0)
	r := run(t, pp, filepath.Join(dir, "out"), fixture.T0)
	ep := r.Endpoints[0]
	if ep.Status != record.EndpointAccepted || ep.Reported != "anova" {
		t.Fatalf("status %s reported %q", ep.Status, ep.Reported)
	}
	an := ep.Steps[0].Results.Anova
	// Published (Dobson 1983): F 4.846, p 0.0159, held to half a unit of
	// the last printed digit (measured 8.8e-5 and 1.0e-5 absolute).
	testkit.CheckWithin(t, "F (Dobson 1983)", float64(an[0].F), 4.846, 0, 5e-4)
	testkit.CheckWithin(t, "p (Dobson 1983)", float64(an[0].P), 0.0159, 0, 5e-5)
	// R 4.2.2 aov (oracle case05, 16 digits): measured SS 3.4e-16, F 0
	// relative.
	testkit.CheckRelClose(t, "SS (R aov)", float64(an[0].SS), ref.Anova[0]["Sum Sq"].(float64), 1e-14)
	testkit.CheckRelClose(t, "F (R aov)", float64(an[0].F), ref.Anova[0]["F value"].(float64), 1e-14)
	testkit.CheckRelClose(t, "residual SS (R aov)", float64(an[1].SS), ref.Anova[1]["Sum Sq"].(float64), 1e-14)
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
	fixture.Write(t, filepath.Join(dir, dataName), string(b))
	pp := filepath.Join(dir, "plan.yaml")
	fixture.Write(t, pp, s)
	fixture.Register(t, pp, fixture.T0)
	return run(t, pp, filepath.Join(dir, "out"), fixture.T0)
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
			at := oatsAnova[m]
			for _, w := range []struct {
				term     string
				f        float64
				num, den float64
				p, pTol  float64
			}{
				{"V", 1.48534, 2, 10, 0.27239, 5e-6},
				{"N", 37.68565, 3, 45, 2.4577e-12, 5e-17},
				{"V:N", 0.30282, 6, 45, 0.9322, 5e-5},
			} {
				row := anovaRow(t, res.Anova, w.term)
				// Published F and p to half a unit of their last printed
				// digit (measured 3.5e-6 for F 0.30282); the df are the
				// strata's exact 10 and 45.
				testkit.CheckWithin(t, w.term+" F (Yates 1935)", float64(row.F), w.f, 0, 5e-6)
				testkit.CheckWithin(t, w.term+" p (Yates 1935)", float64(row.P), w.p, 0, w.pTol)
				testkit.CheckWithin(t, w.term+" num df", float64(row.DF), w.num, 0, 0)
				testkit.CheckRelClose(t, w.term+" den df (exact)", float64(row.DenDF), w.den, at.df.rel)
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
				// Closed-form ANOVA estimates (values.json, basis computed, 15
				// digits): measured 1.1e-11 relative.
				if !testkit.RelClose(float64(vc.Variance), w, 3e-10) || !testkit.RelClose(float64(vc.Share), w/total, 3e-10) ||
					!testkit.RelClose(float64(vc.SD), math.Sqrt(w), 3e-10) || vc.Boundary {
					t.Errorf("%s: variance %v share %v sd %v boundary %v; ANOVA estimate %v share %v",
						vc.Group, vc.Variance, vc.Share, vc.SD, vc.Boundary, w, w/total)
				}
			}
			// sigma: measured 9.9e-13.
			if fs := ep.Steps[0].Fit; fs.Method != "reml" || !fs.Converged || !testkit.RelClose(float64(fs.Sigma), math.Sqrt(177.083333333333), 3e-11) {
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
			// The same fit in R (ref.R: lme4 1.1-31 at the polished optimum,
			// lmerTest 3.1-3 type III F tests with this ddf, pbkrtest 0.5.2
			// for Kenward-Roger), and the exact error-strata ANOVA (R aov).
			var ref map[string]json.RawMessage
			loadRef(t, "oats", &ref)
			var byDF struct {
				Anova refAnova `json:"anova"`
			}
			if err := json.Unmarshal(ref[m], &byDF); err != nil {
				t.Fatal(err)
			}
			var strata refAnova
			if err := json.Unmarshal(ref["strata"], &strata); err != nil {
				t.Fatal(err)
			}
			names := map[string]string{"V": "V", "N": "N", "V:N": "V:N"}
			checkAnova(t, res.Anova, byDF.Anova, names, at, "R lmerTest 3.1-3 ("+m+")")
			checkAnova(t, res.Anova, strata, names, at, "R aov error strata (exact)")
		})
	}
}

// anovaTol holds the tolerances of checkAnova: F, denominator df and p
// (the numerator df must be equal).
type anovaTol struct{ f, df, p tol }

// The ANOVA tolerances are 10 to 100 times the worst agreement measured on
// linux/amd64 against ref.json (ref.R: lmerTest 3.1-3 contest with this
// ddf at the polished REML optimum, pbkrtest 0.5.2, R aov error strata).
// Satterthwaite df: floor 1e-6 relative; Kenward-Roger df: 1e-8; p-values:
// 1e-7 relative or 1e-12 absolute.
var (
	// oatsAnova: the balanced split-plot, where both methods must give
	// the strata's exact df. Measured F 7.4e-12; Satterthwaite df 7.8e-9
	// (furrow's finite-difference Hessian), p 1.2e-9; Kenward-Roger df
	// 3.9e-15, p 8.4e-12 (above 1e-12 absolute).
	oatsAnova = map[string]anovaTol{
		"satterthwaite": {f: tol{1e-10, 0}, df: tol{1e-7, 0}, p: tol{1e-7, 1e-12}},
		"kenward-roger": {f: tol{1e-10, 0}, df: tol{1e-13, 0}, p: tol{3e-10, 1e-12}},
	}
	// npkAnova: random blocks, N:P:K recovered from the block stratum.
	// Measured F 1.2e-11; Satterthwaite df 1.8e-8, p 8.4e-9; Kenward-Roger
	// df 1.3e-15, p 1.3e-11.
	npkAnova = map[string]anovaTol{
		"satterthwaite": {f: tol{1e-9, 0}, df: tol{3e-7, 0}, p: tol{1e-7, 1e-12}},
		"kenward-roger": {f: tol{1e-9, 0}, df: tol{1e-13, 0}, p: tol{1e-9, 1e-12}},
	}
	// unbSatAnova: Satterthwaite on the unbalanced set. Measured F 4.1e-11,
	// df 4.2e-8 (single- and multi-df terms alike, now that R tests the
	// same basis of each term as furrow), p 8.9e-8 (time, p = 6.3e-4 on
	// 15.3 df). The p tolerance is looser than the 1e-7 floor: the
	// reference is tight (lmerTest at the polished optimum; its df agree
	// with the exact oats df to 4e-11), and the 8.9e-8 is furrow's own
	// Satterthwaite df error (a finite-difference Hessian in stats/lmm)
	// times the p-value's sensitivity to df, about 2 here; the floor
	// would leave a margin of 1.1.
	unbSatAnova = anovaTol{f: tol{1e-9, 0}, df: tol{1e-6, 0}, p: tol{1e-6, 1e-12}}
	// unbKRAnova: Kenward-Roger on the unbalanced set. Measured F 4.2e-11,
	// df 4.0e-12, p 1.4e-10.
	unbKRAnova = anovaTol{f: tol{1e-9, 0}, df: tol{1e-10, 0}, p: tol{3e-9, 1e-12}}
)

// checkAnova compares rows by term (ours -> R's name) with R's anova.
func checkAnova(t *testing.T, rows []record.AnovaRow, ref refAnova, names map[string]string, at anovaTol, source string) {
	t.Helper()
	if len(ref.Term) != len(names) {
		t.Fatalf("%s has %d terms, want %d", source, len(ref.Term), len(names))
	}
	for ours, theirs := range names {
		row := anovaRow(t, rows, ours)
		k := slices.Index(ref.Term, theirs)
		if k < 0 {
			t.Fatalf("%s has no term %s", source, theirs)
		}
		checkRef(t, ours+" F", row.F, ref.F[k], at.f, source)
		checkRef(t, ours+" num df", row.DF, ref.NumDF[k], tol{}, source)
		checkRef(t, ours+" den df", row.DenDF, ref.DenDF[k], at.df, source)
		checkRef(t, ours+" p", row.P, ref.P[k], at.p, source)
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
			at := npkAnova[m]
			for _, w := range []struct {
				term    string
				f, fTol float64
				den     float64
			}{{"N", 12.25873, 5e-6, 12}, {"P", 0.54413, 5e-6, 12}, {"K", 6.16569, 5e-6, 12}, {"N:P", 1.3783, 5e-5, 12},
				{"N:K", 2.14597, 5e-6, 12}, {"P:K", 0.03119, 5e-6, 12}, {"N:P:K", 0.48322, 5e-6, 4}} {
				row := anovaRow(t, res.Anova, w.term)
				// Printed F to half a unit of the last digit (measured 4.9e-6
				// for P:K); the exact strata df.
				testkit.CheckWithin(t, w.term+" F (values.json)", float64(row.F), w.f, 0, w.fTol)
				testkit.CheckRelClose(t, w.term+" den df (exact)", float64(row.DenDF), w.den, at.df.rel)
			}
			// Strata estimates from the printed sums of squares (15 digits):
			// measured 1.6e-11.
			want := map[string]float64{"block": (306.293333333333/4 - 185.286666666667/12) / 4, "residual": 185.286666666667 / 12}
			if len(res.VarianceComponents) != len(want) {
				t.Fatalf("%d variance components, want %d", len(res.VarianceComponents), len(want))
			}
			for _, vc := range res.VarianceComponents {
				w, ok := want[vc.Group]
				if !ok {
					t.Errorf("unexpected component %s", vc.Group)
					continue
				}
				testkit.CheckRelClose(t, vc.Group+" variance (strata)", float64(vc.Variance), w, 3e-10)
			}
			var ref map[string]json.RawMessage
			loadRef(t, "npk", &ref)
			var byDF struct {
				Anova refAnova `json:"anova"`
			}
			if err := json.Unmarshal(ref[m], &byDF); err != nil {
				t.Fatal(err)
			}
			var strata refAnova
			if err := json.Unmarshal(ref["strata"], &strata); err != nil {
				t.Fatal(err)
			}
			names := map[string]string{}
			for _, s := range []string{"N", "P", "K", "N:P", "N:K", "P:K", "N:P:K"} {
				names[s] = s
			}
			checkAnova(t, res.Anova, byDF.Anova, names, at, "R lmerTest 3.1-3 ("+m+")")
			checkAnova(t, res.Anova, strata, names, at, "R aov error strata (exact)")
		})
	}
}
