package engine

import (
	"encoding/json"
	"fmt"
	"math"
	"math/rand/v2"
	"os"
	"path/filepath"
	"slices"
	"strings"
	"testing"

	"furrow/checker/record"
	"furrow/internal/testkit"
)

// rnum is a number in ref.json, where R writes non-finite values as
// strings ("Inf", "-Inf", "NA") or null.
type rnum float64

func (r *rnum) UnmarshalJSON(b []byte) error {
	s := strings.Trim(string(b), `"`)
	switch s {
	case "Inf":
		*r = rnum(math.Inf(1))
	case "-Inf":
		*r = rnum(math.Inf(-1))
	case "NA", "NaN", "null":
		*r = rnum(math.NaN())
	default:
		var v float64
		if err := json.Unmarshal([]byte(s), &v); err != nil {
			return err
		}
		*r = rnum(v)
	}
	return nil
}

// refFamily is a family of comparisons in ref.json (ref.R: dunnett,
// tukey): R's contrast labels "a - b" with estimate, SE, per-contrast df,
// unadjusted and adjusted p-values, simultaneous limits.
type refFamily struct {
	Contrast []string `json:"contrast"`
	Estimate []rnum   `json:"estimate"`
	SE       []rnum   `json:"SE"`
	DF       []rnum   `json:"df"`
	P        []rnum   `json:"p"`
	PAdj     []rnum   `json:"p_adj"`
	Lower    []rnum   `json:"lower"`
	Upper    []rnum   `json:"upper"`
	// Critical is the family's critical value on the t scale, from R's
	// adaptive quadrature of the Dunnett (1955) or studentized range
	// integral (deterministic; ref.R).
	Critical rnum `json:"critical"`
	FamilyDF rnum `json:"family_df"`
}

type refAnova struct {
	Term  []string `json:"term"`
	F     []rnum   `json:"F"`
	NumDF []rnum   `json:"NumDF"`
	DenDF []rnum   `json:"DenDF"`
	P     []rnum   `json:"p"`
}

type refEmm struct {
	Level  []string `json:"level"`
	Emmean []rnum   `json:"emmean"`
	SE     []rnum   `json:"SE"`
	DF     []rnum   `json:"df"`
	Lower  []rnum   `json:"lower"`
	Upper  []rnum   `json:"upper"`
}

type refVC struct {
	Group    []string `json:"group"`
	Variance []rnum   `json:"variance"`
}

type refMixed struct {
	Varcomp refVC `json:"varcomp"`
	REML    rnum  `json:"reml"`
	ByDF    map[string]json.RawMessage
}

// loadRef reads testdata/published/ref.json (made by ref.R) into v at key;
// the file is committed, so its absence fails the test.
func loadRef(t *testing.T, key string, v any) {
	t.Helper()
	var all map[string]json.RawMessage
	testkit.DecodeFile(t, filepath.Join("testdata", "published", "ref.json"), &all)
	raw, ok := all[key]
	if !ok {
		t.Fatalf("ref.json has no %q", key)
	}
	if err := json.Unmarshal(raw, v); err != nil {
		t.Fatalf("ref.json %s: %v", key, err)
	}
}

// checkNear is testkit.CheckClose with the reference's source in the
// message.
func checkNear(t *testing.T, what string, got record.Num, want rnum, tol float64, source string) {
	t.Helper()
	if !testkit.Close(float64(got), float64(want), tol) {
		t.Errorf("%s = %.12g, %s %.12g (tol %g)", what, float64(got), source, float64(want), tol)
	}
}

// checkFamily compares a hypothesis' comparisons with an R family,
// matching by label (R may write the pair the other way round, which
// negates the estimate and swaps the limits).
func checkFamily(t *testing.T, what string, hr record.HypothesisResult, ref refFamily, tolP, tolCI float64, source string) {
	t.Helper()
	if len(hr.Comparisons) != len(ref.Contrast) {
		t.Fatalf("%s: %d comparisons, %s has %d", what, len(hr.Comparisons), source, len(ref.Contrast))
	}
	for _, c := range hr.Comparisons {
		k, sign := -1, 1.0
		for i, lab := range ref.Contrast {
			if lab == c.Level+" - "+c.Against {
				k = i
			} else if lab == c.Against+" - "+c.Level {
				k, sign = i, -1
			}
		}
		if k < 0 {
			t.Errorf("%s: comparison %s not in %s", what, c.Label, source)
			continue
		}
		w := what + " " + c.Label
		checkNear(t, w+" estimate", c.Estimate*record.Num(sign), ref.Estimate[k], 1e-6, source)
		checkNear(t, w+" se", c.SE, ref.SE[k], 1e-6, source)
		checkNear(t, w+" df", c.DF, ref.DF[k], 1e-3, source)
		checkNear(t, w+" p (unadjusted)", c.P, ref.P[k], 1e-5, source)
		checkNear(t, w+" p adjusted", c.PAdjusted, ref.PAdj[k], tolP, source)
		lo, hi := ref.Lower[k], ref.Upper[k]
		if sign < 0 {
			lo, hi = -hi, -lo
		}
		checkNear(t, w+" lower", c.Lower, lo, tolCI, source)
		checkNear(t, w+" upper", c.Upper, hi, tolCI, source)
		crit := (c.Upper - c.Estimate) / c.SE
		if math.IsInf(float64(c.Upper), 1) {
			crit = (c.Estimate - c.Lower) / c.SE
		}
		checkNear(t, w+" critical value", crit, ref.Critical, 1e-8, "R 4.2.2 integrate() of the family's integral (ref.R)")
	}
}

func hypByID(t *testing.T, ep record.EndpointResult, id string) record.HypothesisResult {
	t.Helper()
	for _, h := range ep.Hypotheses {
		if h.ID == id {
			return h
		}
	}
	t.Fatalf("no hypothesis %s", id)
	return record.HypothesisResult{}
}

func anovaRow(t *testing.T, rows []record.AnovaRow, term string) record.AnovaRow {
	t.Helper()
	for _, r := range rows {
		if r.Term == term {
			return r
		}
	}
	t.Fatalf("no anova row %s", term)
	return record.AnovaRow{}
}

// TestOatsFamilies checks the Dunnett, Tukey and Holm families on the oats
// split-plot mixed model against R (emmeans 1.8.4-1 contrasts on the
// lme4 1.1-31 / lmerTest 3.1-3 fit; adjusted p-values and simultaneous
// limits from mvtnorm 1.1-3 pmvt/qmvt at abseps 1e-10 for Dunnett and from
// R 4.2.2 ptukey/qtukey for Tukey; ref.R), for both df methods. The
// multivariate-t values are those of a randomised lattice rule: adjusted
// p-values to 1e-6; its critical value (found by root finding on the noisy
// lattice estimate) carries about 2e-6 of noise, so the Dunnett limits are
// held to 1e-5 and the critical value itself to 1e-8 against R's adaptive
// quadrature of the Dunnett (1955) integral.
func TestOatsFamilies(t *testing.T) {
	for _, m := range []string{"satterthwaite", "kenward-roger"} {
		t.Run(m, func(t *testing.T) {
			r := publishedRun(t, "oats.yaml", testkit.ReadShared(t, "agri/oats_MASS.csv"), "oats.csv", "DFMETHOD", m)
			var ref map[string]json.RawMessage
			loadRef(t, "oats", &ref)
			var fams struct {
				DunnettN        refFamily `json:"dunnett_N"`
				DunnettNGreater refFamily `json:"dunnett_N_greater"`
				TukeyN          refFamily `json:"tukey_N"`
				TukeyV          refFamily `json:"tukey_V"`
				HolmV           struct {
					Contrast []string `json:"contrast"`
					PAdj     []rnum   `json:"p_adj"`
				} `json:"holm_V"`
				EmmN refEmm `json:"emm_N"`
			}
			if err := json.Unmarshal(ref[m], &fams); err != nil {
				t.Fatal(err)
			}
			ep := r.Endpoints[0]
			src := "R emmeans 1.8.4-1 + mvtnorm 1.1-3 (ref.R, " + m + ")"
			checkFamily(t, "dunnett N", hypByID(t, ep, "nitrogen-vs-none"), fams.DunnettN, 1e-6, 1e-5, src)
			checkFamily(t, "dunnett N greater", hypByID(t, ep, "nitrogen-greater"), fams.DunnettNGreater, 1e-6, 1e-5, src)
			src = "R emmeans 1.8.4-1 + ptukey (ref.R, " + m + ")"
			checkFamily(t, "tukey N", hypByID(t, ep, "nitrogen-pairs"), fams.TukeyN, 1e-6, 1e-6, src)
			checkFamily(t, "tukey V", hypByID(t, ep, "variety-pairs"), fams.TukeyV, 1e-6, 1e-6, src)
			h := hypByID(t, ep, "variety-holm")
			for _, c := range h.Comparisons {
				for i, lab := range fams.HolmV.Contrast {
					if lab == c.Label {
						checkNear(t, "holm V "+c.Label, c.PAdjusted, fams.HolmV.PAdj[i], 1e-6, "R emmeans 1.8.4-1 holm")
					}
				}
			}
			mms := ep.Steps[0].Results.MarginalMeans
			for i, lv := range fams.EmmN.Level {
				for _, mm := range mms {
					if mm.Level != lv {
						continue
					}
					w := "emmean N " + lv
					checkNear(t, w, mm.Estimate, fams.EmmN.Emmean[i], 1e-6, "R emmeans 1.8.4-1")
					checkNear(t, w+" se", mm.SE, fams.EmmN.SE[i], 1e-6, "R emmeans 1.8.4-1")
					checkNear(t, w+" df", mm.DF, fams.EmmN.DF[i], 1e-3, "R emmeans 1.8.4-1")
					checkNear(t, w+" lower", mm.Lower, fams.EmmN.Lower[i], 1e-5, "R emmeans 1.8.4-1")
				}
			}
		})
	}
}

// chickwtsPlan is a one-way linear plan on R datasets::chickwts (unequal
// replication, six feeds, casein as the control), exported by ref.R.
const chickwtsPlan = `furrow: 1
trial:
  id: CHICKWTS
  title: chick weights by feed (public dataset, R datasets::chickwts)
  version: "1.0"
  amendments: []
data:
  file: chickwts.csv
  format: csv
columns:
  - name: feed
    role: treatment
    levels: [casein, horsebean, linseed, meatmeal, soybean, sunflower]
    control: casein
  - name: weight
    role: response
    min: 0
    max: 1000
design:
  layout: crd
endpoints:
  - id: weight
    response: weight
    primary: true
    not-computable: fail
    steps:
      - id: oneway
        model: linear
        fixed: [feed]
    hypotheses:
      - {id: dunnett, kind: versus-control, adjust: dunnett}
      - {id: dunnett-less, kind: versus-control, adjust: dunnett, sides: less}
      - {id: tukey, kind: pairwise, adjust: tukey}
      - {id: bonferroni, kind: versus-control, adjust: bonferroni}
      - {id: holm, kind: versus-control, adjust: holm}
      - {id: hochberg, kind: versus-control, adjust: hochberg}
      - {id: bh, kind: versus-control, adjust: benjamini-hochberg}
`

// TestChickwtsFamilies checks Dunnett (unequal group sizes: the
// one-factor correlation sqrt(n_i/(n_i+n_0)) products), Tukey-Kramer and
// the step-wise adjustments on a linear step against R (ref.R: emmeans
// 1.8.4-1 on lm; mvtnorm 1.1-3 at abseps 1e-10; multcomp 1.4-22 glht
// single-step as a second source; ptukey).
func TestChickwtsFamilies(t *testing.T) {
	dir := t.TempDir()
	write(t, filepath.Join(dir, "chickwts.csv"), string(readTestdata(t, "published/chickwts.csv")))
	pp := filepath.Join(dir, "plan.yaml")
	write(t, pp, chickwtsPlan)
	register(t, pp, t0)
	r := run(t, pp, filepath.Join(dir, "out"), t0)
	var ref struct {
		Dunnett     refFamily `json:"dunnett"`
		DunnettLess refFamily `json:"dunnett_less"`
		Tukey       refFamily `json:"tukey"`
		EmmTukey    []rnum    `json:"emmeans_tukey"`
		Glht        struct {
			Contrast []string `json:"contrast"`
			PAdj     []rnum   `json:"p_adj"`
		} `json:"glht_dunnett"`
		Bonferroni []rnum `json:"bonferroni"`
		Holm       []rnum `json:"holm"`
		Hochberg   []rnum `json:"hochberg"`
		BH         []rnum `json:"bh"`
	}
	loadRef(t, "chickwts", &ref)
	ep := r.Endpoints[0]
	// Limits to 1e-4: the lattice-rule critical value's noise (about 5e-6,
	// see TestOatsFamilies) times SEs near 23 g; the critical value itself
	// is checked to 1e-8 against the quadrature.
	checkFamily(t, "dunnett", hypByID(t, ep, "dunnett"), ref.Dunnett, 1e-6, 1e-4, "R emmeans 1.8.4-1 + mvtnorm 1.1-3")
	checkFamily(t, "dunnett less", hypByID(t, ep, "dunnett-less"), ref.DunnettLess, 1e-6, 1e-4, "R emmeans 1.8.4-1 + mvtnorm 1.1-3")
	checkFamily(t, "tukey", hypByID(t, ep, "tukey"), ref.Tukey, 1e-6, 1e-6, "R emmeans 1.8.4-1 + ptukey")
	// Tukey-Kramer p-values as emmeans prints them (its own ptukey call), same order.
	tk := hypByID(t, ep, "tukey")
	for i, c := range tk.Comparisons {
		k := -1
		for j, lab := range ref.Tukey.Contrast {
			if lab == c.Against+" - "+c.Level || lab == c.Level+" - "+c.Against {
				k = j
			}
		}
		if k >= 0 {
			checkNear(t, fmt.Sprintf("tukey %d emmeans", i), c.PAdjusted, ref.EmmTukey[k], 1e-6, "R emmeans 1.8.4-1 adjust tukey")
		}
	}
	// multcomp 1.4-22 glht labels "horsebean - casein == 0".
	d := hypByID(t, ep, "dunnett")
	for _, c := range d.Comparisons {
		for i, lab := range ref.Glht.Contrast {
			if strings.HasPrefix(lab, c.Level+" - "+c.Against) {
				checkNear(t, "glht "+c.Label, c.PAdjusted, ref.Glht.PAdj[i], 1e-6, "R multcomp 1.4-22 glht single-step")
			}
		}
	}
	for _, a := range []struct {
		id   string
		want []rnum
	}{{"bonferroni", ref.Bonferroni}, {"holm", ref.Holm}, {"hochberg", ref.Hochberg}, {"bh", ref.BH}} {
		h := hypByID(t, ep, a.id)
		if len(h.Comparisons) != len(a.want) {
			t.Fatalf("%s: %d comparisons, R %d", a.id, len(h.Comparisons), len(a.want))
		}
		// Same order: emmeans trt.vs.ctrl lists the levels after the control.
		for i, c := range h.Comparisons {
			checkNear(t, a.id+" "+c.Label, c.PAdjusted, a.want[i], 1e-10, "R emmeans 1.8.4-1 / p.adjust "+a.id)
		}
	}
}

// TestUnbalancedMixedNonIntegerDF checks a mixed step on invented
// unbalanced repeated measures (ref.R, seeded) whose Satterthwaite and
// Kenward-Roger df are not whole numbers, against R: lme4 1.1-31 /
// lmerTest 3.1-3 type 3 F tests, emmeans 1.8.4-1 marginal means and
// single contrasts (each with its own df), and the Tukey family on the
// smallest df of its comparisons with R 4.2.2 ptukey/qtukey.
func TestUnbalancedMixedNonIntegerDF(t *testing.T) {
	for _, m := range []string{"satterthwaite", "kenward-roger"} {
		t.Run(m, func(t *testing.T) {
			r := publishedRun(t, "unbalanced.yaml", readTestdata(t, "published/unbalanced.csv"), "unbalanced.csv", "DFMETHOD", m)
			ep := r.Endpoints[0]
			if ep.Status != record.EndpointAccepted {
				t.Fatalf("status %s error %q", ep.Status, ep.Steps[0].Error)
			}
			var ref struct {
				Varcomp refVC `json:"varcomp"`
				REML    rnum  `json:"reml"`
			}
			loadRef(t, "unbalanced", &ref)
			var all map[string]json.RawMessage
			loadRef(t, "unbalanced", &all)
			var byDF struct {
				Anova  refAnova  `json:"anova"`
				Emm    refEmm    `json:"emm"`
				Tukey  refFamily `json:"tukey"`
				VsCtrl []struct {
					Contrast string `json:"contrast"`
					Estimate rnum   `json:"estimate"`
					SE       rnum   `json:"SE"`
					DF       rnum   `json:"df"`
					Lower    rnum   `json:"lower.CL"`
					Upper    rnum   `json:"upper.CL"`
					P        rnum   `json:"p.value"`
				} `json:"vs_ctrl"`
			}
			if err := json.Unmarshal(all[m], &byDF); err != nil {
				t.Fatal(err)
			}
			res := ep.Steps[0].Results
			src := "R lme4 1.1-31 / lmerTest 3.1-3 (" + m + ")"
			checkAnova(t, res.Anova, byDF.Anova, map[string]string{"treatment": "treatment", "time": "time", "treatment:time": "treatment:time"}, src)
			row := anovaRow(t, res.Anova, "treatment")
			if math.Abs(float64(row.DenDF)-math.Round(float64(row.DenDF))) < 1e-3 {
				t.Errorf("treatment den df %v is a whole number; the set is meant to be unbalanced", row.DenDF)
			}
			// R's REML variance estimates, converged to rhoend 1e-12: 1e-5 relative.
			groups := map[string]string{"block": "block", "plot": "plot", "residual": "Residual"}
			for _, vc := range res.VarianceComponents {
				k := slices.Index(ref.Varcomp.Group, groups[vc.Group])
				if k < 0 {
					t.Fatalf("no R component for %s", vc.Group)
				}
				checkNear(t, vc.Group+" variance", vc.Variance, ref.Varcomp.Variance[k], 1e-5, "R lme4 1.1-31")
			}
			checkNear(t, "REML criterion", ep.Steps[0].Fit.Criterion, ref.REML, 1e-7, "R lme4 1.1-31 REMLcrit")
			for i, lv := range byDF.Emm.Level {
				for _, mm := range res.MarginalMeans {
					if mm.Level == lv {
						checkNear(t, "emmean "+lv, mm.Estimate, byDF.Emm.Emmean[i], 1e-6, "R emmeans 1.8.4-1")
						checkNear(t, "emmean se "+lv, mm.SE, byDF.Emm.SE[i], 1e-5, "R emmeans 1.8.4-1")
						checkNear(t, "emmean df "+lv, mm.DF, byDF.Emm.DF[i], 1e-3, "R emmeans 1.8.4-1")
					}
				}
			}
			vs := hypByID(t, ep, "vs-ctrl")
			for _, c := range vs.Comparisons {
				found := false
				for _, w := range byDF.VsCtrl {
					if w.Contrast != c.Label {
						continue
					}
					found = true
					checkNear(t, c.Label+" estimate", c.Estimate, w.Estimate, 1e-6, "R emmeans 1.8.4-1")
					checkNear(t, c.Label+" se", c.SE, w.SE, 1e-5, "R emmeans 1.8.4-1")
					checkNear(t, c.Label+" df", c.DF, w.DF, 1e-3, "R emmeans 1.8.4-1")
					checkNear(t, c.Label+" p", c.P, w.P, 1e-5, "R emmeans 1.8.4-1")
					checkNear(t, c.Label+" lower", c.Lower, w.Lower, 1e-4, "R emmeans 1.8.4-1")
				}
				if !found {
					t.Errorf("no R contrast %s", c.Label)
				}
			}
			tk := hypByID(t, ep, "pairs")
			checkFamily(t, "tukey", tk, byDF.Tukey, 1e-5, 1e-4, "R emmeans 1.8.4-1 + ptukey on min df")
			if !strings.Contains(tk.Note, "uses the smallest") {
				t.Errorf("tukey note %q does not state the common df", tk.Note)
			}
			// Dunnett on the same fit: adjusted p-values are single-step
			// (at least the raw ones, at most Bonferroni's) and the note
			// states the common df.
			dn := hypByID(t, ep, "vs-ctrl-dunnett")
			for i, c := range dn.Comparisons {
				raw := float64(vs.Comparisons[i].P)
				if !(float64(c.PAdjusted) >= raw-1e-12 && float64(c.PAdjusted) <= math.Min(1, 2*raw)+1e-12) {
					t.Errorf("dunnett %s adjusted %v outside [raw %v, bonferroni %v]", c.Label, c.PAdjusted, raw, 2*raw)
				}
			}
			if !strings.Contains(dn.Note, "uses the smallest") {
				t.Errorf("dunnett note %q does not state the common df", dn.Note)
			}
		})
	}
}

// TestSoilNematodesMixedStep runs the committed demonstration example end to
// end: its first step, a mixed model on log counts with random site:block
// and plot, now fits; the invented data are built so that its conditional
// residuals fail Shapiro-Wilk, and the cascade moves on as the plan says.
func TestSoilNematodesMixedStep(t *testing.T) {
	dir := t.TempDir()
	for _, f := range []string{"plan.yaml", "plots.csv"} {
		b, err := os.ReadFile(filepath.Join("..", "..", "examples", "soil-nematodes", f))
		if err != nil {
			t.Fatal(err)
		}
		write(t, filepath.Join(dir, f), string(b))
	}
	pp := filepath.Join(dir, "plan.yaml")
	register(t, pp, t0)
	r := run(t, pp, filepath.Join(dir, "out"), t0)
	ep := r.Endpoints[0]
	s0 := ep.Steps[0]
	if s0.Error != "" || s0.Fit == nil {
		t.Fatalf("mixed step did not fit: %q", s0.Error)
	}
	if s0.Fit.Method != "reml" || !s0.Fit.Converged || math.IsNaN(float64(s0.Fit.Criterion)) {
		t.Errorf("fit summary %+v", *s0.Fit)
	}
	sw := s0.Checks[0]
	if sw.Test != "shapiro-wilk" || sw.Verdict != record.VerdictFail || !(float64(sw.P) < 0.05) {
		t.Errorf("shapiro-wilk on the mixed step: verdict %v p %v, want a failure below 0.05", sw.Verdict, sw.P)
	}
	if s0.Decision.Action != record.ActionFallBack || s0.Decision.Reason != record.ReasonCheckFailed || s0.Decision.Next != "change-log" {
		t.Errorf("decision %+v, want fall back to change-log on the failed check", s0.Decision)
	}
	if !ep.Steps[1].Executed {
		t.Errorf("change-log step not executed")
	}
	if len(s0.Figures.Residuals) != s0.N || s0.N == 0 {
		t.Errorf("%d residuals for %d observations", len(s0.Figures.Residuals), s0.N)
	}
}

// rmPlan is an invented repeated-measures plan: the first mixed step has
// a fixed block that is aliased with its random block (a fit error), the
// second fails Shapiro-Wilk on heavy-tailed data, the third (a linear
// model on the last time) is accepted.
const rmPlan = `furrow: 1
trial:
  id: RM-FALLBACK
  title: invented repeated-measures fallback test
  version: "1.0"
  amendments: []
data:
  file: data.csv
  format: csv
columns:
  - name: block
    role: block
    levels: [b1, b2, b3, b4, b5, b6]
  - name: plot
    role: unit
  - name: treatment
    role: treatment
    levels: [control, a, b]
    control: control
  - name: time
    role: repeat
    levels: [d1, d2, d3]
  - name: y
    role: response
    min: -1000
    max: 1000
design:
  layout: repeated
endpoints:
  - id: y
    response: y
    primary: true
    not-computable: fail
    steps:
      - id: aliased
        model: mixed
        fixed: [block, treatment]
        random: [block, plot]
        on-fail: mixed
      - id: mixed
        model: mixed
        fixed: [treatment, time, [treatment, time]]
        random: [block, plot]
        df: kenward-roger
        checks:
          - test: shapiro-wilk
            fail-below: 0.05
        on-fail: means
      - id: means
        model: linear
        outcome: {derive: unit-mean, at: d3}
        fixed: [block, treatment]
        checks:
          - test: shapiro-wilk
            fail-below: 1e-12
    hypotheses:
      - {id: vs-control, kind: versus-control, adjust: dunnett}
`

// TestMixedStepFallsBack covers a mixed step whose fit fails (fixed block
// aliased with the random block: recorded as the step's fit error) and a
// mixed step whose Shapiro-Wilk check fails, on invented seeded data with
// skewed, heavy-tailed noise.
func TestMixedStepFallsBack(t *testing.T) {
	rng := rand.New(rand.NewPCG(7, 11))
	var b strings.Builder
	b.WriteString("block,plot,treatment,time,y\n")
	for bl := 1; bl <= 6; bl++ {
		be := rng.NormFloat64() * 2
		for ti, tr := range []string{"control", "a", "b"} {
			pe := rng.NormFloat64()
			for _, tm := range []string{"d1", "d2", "d3"} {
				// Cubed exponential noise: strongly skewed and heavy tailed.
				x := rng.ExpFloat64()
				e := x * x * x
				fmt.Fprintf(&b, "b%d,p%d%d,%s,%s,%.4f\n", bl, bl, ti, tr, tm, 50+be+pe+float64(ti)+e)
			}
		}
	}
	dir := t.TempDir()
	write(t, filepath.Join(dir, "data.csv"), b.String())
	pp := filepath.Join(dir, "plan.yaml")
	write(t, pp, rmPlan)
	register(t, pp, t0)
	r := run(t, pp, filepath.Join(dir, "out"), t0)
	ep := r.Endpoints[0]
	s0, s1, s2 := ep.Steps[0], ep.Steps[1], ep.Steps[2]
	if s0.Error == "" || s0.Decision.Reason != record.ReasonFitFailed || s0.Decision.Next != "mixed" {
		t.Errorf("aliased step: error %q decision %+v", s0.Error, s0.Decision)
	}
	if !strings.Contains(s0.Error, "aliased") {
		t.Errorf("aliased step error %q does not say aliased", s0.Error)
	}
	if s1.Error != "" || s1.Checks[0].Verdict != record.VerdictFail || s1.Decision.Next != "means" {
		t.Errorf("mixed step: error %q check %+v decision %+v", s1.Error, s1.Checks[0], s1.Decision)
	}
	if s1.Model.DF != "kenward-roger" || s1.Fit == nil || s1.Fit.Method != "reml" {
		t.Errorf("mixed step model %+v fit %+v", s1.Model, s1.Fit)
	}
	if ep.Status != record.EndpointAccepted || ep.Reported != "means" || s2.Results == nil {
		t.Fatalf("status %s reported %q", ep.Status, ep.Reported)
	}
	if h := ep.Hypotheses[0]; h.Step != "means" || len(h.Comparisons) != 2 || math.IsNaN(float64(h.Comparisons[0].PAdjusted)) {
		t.Errorf("hypothesis on the accepted step: %+v", h)
	}
}
