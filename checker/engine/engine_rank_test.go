package engine

import (
	"encoding/json"
	"fmt"
	"math"
	"os"
	"path/filepath"
	"strings"
	"testing"
	"time"

	"furrow/checker/internal/fixture"

	"furrow/checker/record"
	"furrow/internal/testkit"
)

// rankRef holds the values of testdata/rank/ref.json, produced by
// testdata/rank/ref.R with R 4.2.2 (stats) and car 3.1-1; the van Elteren
// values are computed there from the published formulas.
type rankRef struct {
	Kruskal  struct{ H, DF, P float64 }
	Welch    struct{ F, DF1, DF2, P float64 }
	Friedman struct {
		Stat, DF, P float64
	}
	SignedOne    struct{ V, P float64 }        `json:"signed_one"`
	SignedPaired struct{ V, P float64 }        `json:"signed_paired"`
	SignedLess   struct{ P, Estimate float64 } `json:"signed_paired_less"`
	VanEltK      struct{ Q, DF, P float64 }    `json:"vanelteren_k"`
	WelchShapiro struct{ W, P float64 }        `json:"welch_shapiro"`
	WelchLevene  struct{ F, P float64 }        `json:"welch_levene"`
	KruskalSW    struct{ W, P float64 }        `json:"kruskal_shapiro"`
	KruskalBF    struct{ F, P float64 }        `json:"kruskal_bf"`
	VsRankSum    struct {
		P, PHolm, Estimate []float64
	} `json:"vs_control_ranksum"`
	VsVanElt struct {
		P, PHolm, Estimate []float64
	} `json:"vs_control_vanelteren"`
	VsFriedman struct {
		P, PBonferroni []float64
	} `json:"vs_control_friedman"`
	WelchPairwise struct {
		Label                         []string
		T, DF, P, Lower, Upper, PHolm []float64
	} `json:"welch_pairwise"`
	WelchTOST struct {
		PLower, PUpper, Lower, Upper float64
	} `json:"welch_tost"`
	RankSum2 struct{ U, P float64 } `json:"ranksum2"`
	VanElt2  struct{ Z, P float64 } `json:"vanelteren2"`
	Example  struct {
		N                        int
		Q, DF, P                 float64
		VsP, VsPHolm, VsEstimate []float64
	}
}

func (r *rankRef) UnmarshalJSON(b []byte) error {
	// Map the snake_case keys of ref.json (p_holm, p_lower, ...) onto the
	// Go field names.
	type plain rankRef
	s := strings.NewReplacer(`"p_holm"`, `"PHolm"`, `"p_bonferroni"`, `"PBonferroni"`, `"p_lower"`, `"PLower"`, `"p_upper"`, `"PUpper"`,
		`"vs_p_holm"`, `"VsPHolm"`, `"vs_p"`, `"VsP"`, `"vs_estimate"`, `"VsEstimate"`).Replace(string(b))
	return json.Unmarshal([]byte(s), (*plain)(r))
}

// hlRef mirrors testdata/rank/ref_hl.json from testdata/rank/ref_hl.R:
// Hodges-Lehmann estimates and intervals (R 4.2.2 wilcox.test(conf.int =
// TRUE); the stratified and the zero-keeping paired inversions written out
// from the formulas there).
type hlRef struct {
	VsRankSum  struct{ Estimate, Upper []float64 } `json:"vs_control_ranksum"`
	VsVanElt   struct{ Estimate, Upper []float64 } `json:"vs_control_vanelteren"`
	VsFriedman struct {
		Estimate, Lower, Upper []float64
	} `json:"vs_control_friedman"`
	SignedLess struct{ Estimate, Upper float64 } `json:"signed_paired_less"`
	Example    struct {
		VsEstimate []float64 `json:"vs_estimate"`
		VsUpper    []float64 `json:"vs_upper"`
		NIEstimate float64   `json:"ni_estimate"`
		NILower    float64   `json:"ni_lower"`
		NIUpper    float64   `json:"ni_upper"`
		NIVerdict  string    `json:"ni_verdict"`
	}
}

func loadHLRef(t *testing.T) *hlRef {
	t.Helper()
	var r hlRef
	testkit.DecodeFile(t, filepath.Join("testdata", "rank", "ref_hl.json"), &r)
	return &r
}

func loadRankRef(t *testing.T) *rankRef {
	t.Helper()
	var r rankRef
	testkit.DecodeFile(t, filepath.Join("testdata", "rank", "ref.json"), &r)
	return &r
}

// rankRun writes the plan and data into a fresh folder, registers the
// plan and runs it. twoLevels keeps the control and a only.
func rankRun(t *testing.T, twoLevels bool, steps, hyps string) (*record.Result, string) {
	t.Helper()
	pp := fixture.WriteRank(t, readTestdata(t, "rank/plots.csv"), twoLevels, steps, hyps)
	return run(t, pp, filepath.Join(filepath.Dir(pp), "out"), fixture.T0.Add(time.Hour)), pp
}

// acceptedStep returns the last step of the first endpoint, failing
// unless it was accepted.
func acceptedStep(t *testing.T, r *record.Result) (*record.EndpointResult, *record.StepResult) {
	t.Helper()
	ep := &r.Endpoints[0]
	s := &ep.Steps[len(ep.Steps)-1]
	if s.Error != "" || s.Decision.Action != record.ActionAccept || s.Results == nil || s.Results.Test == nil {
		t.Fatalf("step %s: error %q decision %+v", s.ID, s.Error, s.Decision)
	}
	return ep, s
}

// tolRef is the relative tolerance of every comparison with
// testdata/rank/ref.json and ref_hl.json (R 4.2.2 stats, car 3.1-1, and
// the formulas written out in ref.R and ref_hl.R; 15 significant digits as
// jsonlite writes them): the worst agreement measured on linux/amd64 is
// 6.7e-15 relative (a Welch p-value), 15 times below it; values that agree
// to the last printed digit are held to the same bound.
const tolRef = 1e-13

// failingLinear is a first step that always falls back to the step
// "only" (a threshold these residuals do not reach), so that the endpoint has a
// linear step for its term hypothesis.
const failingLinear = `      - id: lin
        model: linear
` + fixture.ChangeLog + `        fixed: [site, treatment]
        checks:
          - test: shapiro-wilk
            fail-below: 0.99999
        on-fail: only
`

func TestRankStepsAgainstR(t *testing.T) {
	ref := loadRankRef(t)
	for _, c := range []struct {
		name     string
		two      bool
		step     string
		stat, p  float64
		df       []float64
		method   string
		statName string
	}{
		// R 4.2.2 kruskal.test
		{"kruskal", false, "model: kruskal-wallis\n" + fixture.ChangeLog + "        compare: treatment\n", ref.Kruskal.H, ref.Kruskal.P, []float64{2}, "kruskal-wallis", "H"},
		// R 4.2.2 oneway.test(var.equal = FALSE)
		{"welch", false, "model: welch\n" + fixture.ChangeLog + "        compare: treatment\n", ref.Welch.F, ref.Welch.P, []float64{ref.Welch.DF1, ref.Welch.DF2}, "welch", "F"},
		// R 4.2.2 friedman.test(change, treatment, block)
		{"friedman", false, "model: friedman\n" + fixture.ChangeLog + "        compare: treatment\n        within: block\n", ref.Friedman.Stat, ref.Friedman.P, []float64{2}, "friedman", "chi-squared"},
		// R 4.2.2 wilcox.test(change): zero dropped, normal with continuity correction
		{"signed-rank one sample", false, "model: signed-rank\n" + fixture.ChangeLog, ref.SignedOne.V, ref.SignedOne.P, nil, "signed-rank", "V"},
		// R 4.2.2 wilcox.test(log(before+1), log(harvest+1), paired = TRUE)
		{"signed-rank paired", false, "model: signed-rank\n        outcome: {derive: raw}\n        transform: {kind: log-offset, offset: 1}\n        compare: time\n        within: plot\n",
			ref.SignedPaired.V, ref.SignedPaired.P, nil, "signed-rank", "V"},
		// van Elteren k-sample from the Landis, Heyman & Koch (1978) formula, ref.R
		{"van elteren k", false, "model: van-elteren\n" + fixture.ChangeLog + "        compare: treatment\n        within: site\n", ref.VanEltK.Q, ref.VanEltK.P, []float64{2}, "van-elteren", "Q"},
		// R 4.2.2 wilcox.test(control, a): W is the U of control
		{"rank-sum", true, "model: rank-sum\n" + fixture.ChangeLog + "        compare: treatment\n", ref.RankSum2.U, ref.RankSum2.P, nil, "rank-sum", "U"},
		// van Elteren (1960) two-sample Z from the published formula, ref.R
		{"van elteren two", true, "model: van-elteren\n" + fixture.ChangeLog + "        compare: treatment\n        within: site\n", ref.VanElt2.Z, ref.VanElt2.P, nil, "van-elteren", "Z"},
	} {
		t.Run(c.name, func(t *testing.T) {
			r, _ := rankRun(t, c.two, "      - id: only\n        "+c.step, "")
			_, s := acceptedStep(t, r)
			g := s.Results.Test
			testkit.CheckRelClose(t, c.statName, float64(g.Statistic), c.stat, tolRef)
			testkit.CheckRelClose(t, "p", float64(g.P), c.p, tolRef)
			if len(g.DF) != len(c.df) {
				t.Fatalf("df %v, want %v", g.DF, c.df)
			}
			for i := range c.df {
				testkit.CheckRelClose(t, "df", float64(g.DF[i]), c.df[i], tolRef)
			}
			if s.Fit.Method != c.method {
				t.Errorf("fit method %q, want %q", s.Fit.Method, c.method)
			}
			if s.N != 36 && !c.two && c.name != "signed-rank paired" {
				t.Errorf("n = %d, want 36 plots", s.N)
			}
			if len(s.Results.GroupSummaries) == 0 || s.Figures == nil || len(s.Figures.Residuals) != s.N {
				t.Errorf("group summaries %d, residuals %d for n %d", len(s.Results.GroupSummaries), len(s.Figures.Residuals), s.N)
			}
		})
	}
}

// Checks on a Welch step run on the deviations from the treatment means,
// on a Kruskal-Wallis step on the deviations from the treatment medians
// (R 4.2.2 shapiro.test; car 3.1-1 leveneTest with center = mean and
// center = median).
func TestRankStepChecks(t *testing.T) {
	ref := loadRankRef(t)
	checks := "        checks:\n          - test: shapiro-wilk\n            fail-below: 0.01\n          - test: %s\n            fail-below: 0.01\n"
	r, _ := rankRun(t, false, "      - id: w\n        model: welch\n"+fixture.ChangeLog+"        compare: treatment\n"+fmt.Sprintf(checks, "levene"), "")
	_, s := acceptedStep(t, r)
	testkit.CheckRelClose(t, "welch shapiro W", float64(s.Checks[0].Statistic), ref.WelchShapiro.W, tolRef)
	testkit.CheckRelClose(t, "welch shapiro p", float64(s.Checks[0].P), ref.WelchShapiro.P, tolRef)
	testkit.CheckRelClose(t, "welch levene F", float64(s.Checks[1].Statistic), ref.WelchLevene.F, tolRef)
	testkit.CheckRelClose(t, "welch levene p", float64(s.Checks[1].P), ref.WelchLevene.P, tolRef)
	if s.Checks[1].Verdict != record.VerdictPass || s.Checks[1].N != 36 {
		t.Errorf("levene %+v", s.Checks[1])
	}
	r, _ = rankRun(t, false, "      - id: k\n        model: kruskal-wallis\n"+fixture.ChangeLog+"        compare: treatment\n"+fmt.Sprintf(checks, "brown-forsythe"), "")
	_, s = acceptedStep(t, r)
	testkit.CheckRelClose(t, "kruskal shapiro W", float64(s.Checks[0].Statistic), ref.KruskalSW.W, tolRef)
	testkit.CheckRelClose(t, "kruskal shapiro p", float64(s.Checks[0].P), ref.KruskalSW.P, tolRef)
	testkit.CheckRelClose(t, "kruskal brown-forsythe F", float64(s.Checks[1].Statistic), ref.KruskalBF.F, tolRef)
	testkit.CheckRelClose(t, "kruskal brown-forsythe p", float64(s.Checks[1].P), ref.KruskalBF.P, tolRef)
}

// rankAnswers declares how a rank step answers the hypotheses of
// TestRankStepHypotheses: holm and Hodges-Lehmann shifts, the term omitted.
const rankAnswers = "        answers:\n          - hypothesis: vs\n            adjust: holm\n            estimate: hodges-lehmann\n          - hypothesis: ni\n            estimate: hodges-lehmann\n          - hypothesis: term\n            omit: a rank test fits no model terms\n"

func TestRankStepHypotheses(t *testing.T) {
	ref := loadRankRef(t)
	hl := loadHLRef(t)
	hyps := `      - id: vs
        kind: versus-control
        sides: less
        adjust: dunnett
      - id: ni
        kind: non-inferiority
        test: b
        against: a
        margin: {scale: ratio, upper: 1.25}
        better: lower
      - id: term
        kind: term
        term: [treatment]
`
	for _, c := range []struct {
		name, step string
		want       struct{ P, PHolm, Estimate []float64 }
		hl         struct{ Estimate, Upper []float64 }
	}{
		// R 4.2.2 wilcox.test(x, control, alternative = "less"), p.adjust holm
		{"kruskal", "model: kruskal-wallis\n" + fixture.ChangeLog + "        compare: treatment\n" + rankAnswers, ref.VsRankSum,
			// R 4.2.2 wilcox.test(x, control, "less", conf.int = TRUE): exact Moses bound
			hl.VsRankSum},
		// van Elteren (1960) two-sample, alternative less, from ref.R; p.adjust holm
		{"van elteren", "model: van-elteren\n" + fixture.ChangeLog + "        compare: treatment\n        within: site\n" + rankAnswers, ref.VsVanElt,
			// van Elteren inversion by formula, ref_hl.R
			hl.VsVanElt},
	} {
		t.Run(c.name, func(t *testing.T) {
			r, _ := rankRun(t, false, failingLinear+"      - id: only\n        "+c.step, hyps)
			ep, _ := acceptedStep(t, r)
			h := ep.Hypotheses[0]
			if !h.Assessable || h.Adjust != "dunnett" || h.AdjustUsed != "holm" || h.Estimator != "hodges-lehmann" || h.Answer == "" || strings.Contains(h.Note, "dunnett") {
				t.Fatalf("versus-control: want the step's declared holm and Hodges-Lehmann, no substitution: %+v", h)
			}
			if len(h.Comparisons) != 2 {
				t.Fatalf("comparisons %+v", h.Comparisons)
			}
			for i, cm := range h.Comparisons {
				testkit.CheckRelClose(t, cm.Label+" p", float64(cm.P), c.want.P[i], tolRef)
				testkit.CheckRelClose(t, cm.Label+" holm", float64(cm.PAdjusted), c.want.PHolm[i], tolRef)
				testkit.CheckRelClose(t, cm.Label+" hodges-lehmann", float64(cm.Estimate), c.hl.Estimate[i], tolRef)
				testkit.CheckRelClose(t, cm.Label+" upper bound", float64(cm.Upper), c.hl.Upper[i], tolRef)
				testkit.CheckRelClose(t, cm.Label+" ratio", float64(cm.Ratio), math.Exp(c.hl.Estimate[i]), tolRef)
				testkit.CheckRelClose(t, cm.Label+" ratio upper", float64(cm.RatioUpper), math.Exp(c.hl.Upper[i]), tolRef)
				if !math.IsInf(float64(cm.Lower), -1) || !math.IsNaN(float64(cm.SE)) || !cm.Reject {
					t.Errorf("%s: lower %v se %v reject %v", cm.Label, cm.Lower, cm.SE, cm.Reject)
				}
			}
			if ep.Hypotheses[0].Comparisons[0].Label != "a - control" {
				t.Errorf("label %q", ep.Hypotheses[0].Comparisons[0].Label)
			}
			if !strings.Contains(h.Note, "per comparison") || !strings.Contains(h.Note, "distribution-free") {
				t.Errorf("note %q", h.Note)
			}
			ni := ep.Hypotheses[1]
			if !ni.Assessable || len(ni.Comparisons) != 1 || ni.Comparisons[0].Equivalence == nil || !strings.Contains(ni.Note, "90% interval") {
				t.Fatalf("non-inferiority on a rank step: %+v", ni)
			}
			// The verdict follows the 90% interval against log(1.25).
			nc := ni.Comparisons[0]
			want := "not shown"
			if float64(nc.Upper) < math.Log(1.25) {
				want = "non-inferior"
			}
			if nc.Equivalence.Verdict != want || (float64(nc.P) < 0.05) != (want == "non-inferior") {
				t.Errorf("non-inferiority verdict %q p %v, interval upper %v", nc.Equivalence.Verdict, nc.P, nc.Upper)
			}
			if len(ep.Hypotheses) != 3 {
				t.Fatalf("%d hypotheses recorded, want the 3 declared", len(ep.Hypotheses))
			}
			for _, h := range ep.Hypotheses[2:] {
				if h.Assessable || !strings.Contains(h.Note, "as the plan declares: a rank test fits no model terms") || len(h.Comparisons) != 0 {
					t.Errorf("%s should be reported as omitted on the rank step, as declared: %+v", h.ID, h)
				}
			}
		})
	}
}

// On a Friedman step the comparisons are van Elteren's two-sample test
// with the blocks as strata (ref.R, from the published formula), adjusted
// as declared (R 4.2.2 p.adjust bonferroni).
func TestFriedmanStepHypotheses(t *testing.T) {
	ref := loadRankRef(t)
	r, _ := rankRun(t, false, "      - id: only\n        model: friedman\n"+fixture.ChangeLog+"        compare: treatment\n        within: block\n        answers:\n          - hypothesis: vs\n            estimate: hodges-lehmann\n",
		"      - id: vs\n        kind: versus-control\n        adjust: bonferroni\n")
	ep, _ := acceptedStep(t, r)
	h := ep.Hypotheses[0]
	if !h.Assessable || h.AdjustUsed != "bonferroni" || !strings.Contains(h.Note, "van Elteren") || len(h.Comparisons) != 2 {
		t.Fatalf("versus-control %+v", h)
	}
	hl := loadHLRef(t)
	for i, c := range h.Comparisons {
		testkit.CheckRelClose(t, c.Label+" p", float64(c.P), ref.VsFriedman.P[i], tolRef)
		testkit.CheckRelClose(t, c.Label+" bonferroni", float64(c.PAdjusted), ref.VsFriedman.PBonferroni[i], tolRef)
		// van Elteren inversion within blocks by formula (ref_hl.R)
		testkit.CheckRelClose(t, c.Label+" hodges-lehmann", float64(c.Estimate), hl.VsFriedman.Estimate[i], tolRef)
		testkit.CheckRelClose(t, c.Label+" lower", float64(c.Lower), hl.VsFriedman.Lower[i], tolRef)
		testkit.CheckRelClose(t, c.Label+" upper", float64(c.Upper), hl.VsFriedman.Upper[i], tolRef)
	}
}

// On a paired signed-rank step the comparison is the signed-rank test of
// the paired differences (R 4.2.2 wilcox.test(harvest, before, paired =
// TRUE, alternative = "less")), estimate their median.
func TestPairedSignedRankHypotheses(t *testing.T) {
	ref := loadRankRef(t)
	r, _ := rankRun(t, false, "      - id: only\n        model: signed-rank\n        outcome: {derive: raw}\n        transform: {kind: log-offset, offset: 1}\n        compare: time\n        within: plot\n        answers:\n          - hypothesis: over-time\n            adjust: holm\n            estimate: hodges-lehmann\n",
		"      - id: over-time\n        kind: pairwise\n        factor: time\n        sides: less\n")
	ep, _ := acceptedStep(t, r)
	h := ep.Hypotheses[0]
	if !h.Assessable || len(h.Comparisons) != 1 || h.Comparisons[0].Label != "harvest - before" {
		t.Fatalf("pairwise %+v", h)
	}
	c := h.Comparisons[0]
	testkit.CheckRelClose(t, "paired p", float64(c.P), ref.SignedLess.P, tolRef)
	// Median of the Walsh averages and the one-sided normal bound, by
	// formula in ref_hl.R (the differences contain a zero, which
	// wilcox.test would drop).
	hl := loadHLRef(t)
	testkit.CheckRelClose(t, "hodges-lehmann paired", float64(c.Estimate), hl.SignedLess.Estimate, tolRef)
	testkit.CheckRelClose(t, "paired upper bound", float64(c.Upper), hl.SignedLess.Upper, tolRef)
	testkit.CheckRelClose(t, "unadjusted family of one", float64(c.PAdjusted), ref.SignedLess.P, tolRef)
}

func TestWelchStepHypotheses(t *testing.T) {
	ref := loadRankRef(t)
	hyps := `      - id: all-pairs
        kind: pairwise
        adjust: tukey
      - id: eq
        kind: equivalence
        test: b
        against: a
        margin: {scale: ratio, lower: 0.5, upper: 2}
        alpha: 0.05
      - id: term
        kind: term
        term: [treatment]
`
	r, _ := rankRun(t, false, failingLinear+"      - id: only\n        model: welch\n"+fixture.ChangeLog+"        compare: treatment\n        answers:\n          - hypothesis: all-pairs\n            adjust: holm\n          - hypothesis: term\n            omit: Welch's test fits no model terms\n", hyps)
	ep, _ := acceptedStep(t, r)
	h := ep.Hypotheses[0]
	if !h.Assessable || h.AdjustUsed != "holm" || len(h.Comparisons) != 3 {
		t.Fatalf("pairwise %+v", h)
	}
	w := ref.WelchPairwise
	for i, cm := range h.Comparisons {
		// R 4.2.2 t.test(var.equal = FALSE), p.adjust holm
		if cm.Label != w.Label[i] {
			t.Fatalf("comparison %d is %q, want %q", i, cm.Label, w.Label[i])
		}
		testkit.CheckRelClose(t, cm.Label+" t", float64(cm.Statistic), w.T[i], tolRef)
		testkit.CheckRelClose(t, cm.Label+" df", float64(cm.DF), w.DF[i], tolRef)
		testkit.CheckRelClose(t, cm.Label+" p", float64(cm.P), w.P[i], tolRef)
		testkit.CheckRelClose(t, cm.Label+" lower", float64(cm.Lower), w.Lower[i], tolRef)
		testkit.CheckRelClose(t, cm.Label+" upper", float64(cm.Upper), w.Upper[i], tolRef)
		testkit.CheckRelClose(t, cm.Label+" holm", float64(cm.PAdjusted), w.PHolm[i], tolRef)
	}
	eq := ep.Hypotheses[1]
	if !eq.Assessable || len(eq.Comparisons) != 1 || eq.Comparisons[0].Equivalence == nil {
		t.Fatalf("equivalence %+v", eq)
	}
	e := eq.Comparisons[0]
	// R 4.2.2 t.test(b, a, mu = log(0.5), alternative = "greater") and
	// mu = log(2), alternative = "less"; 90% interval.
	testkit.CheckRelClose(t, "tost p lower", float64(e.Equivalence.PLower), ref.WelchTOST.PLower, tolRef)
	testkit.CheckRelClose(t, "tost p upper", float64(e.Equivalence.PUpper), ref.WelchTOST.PUpper, tolRef)
	testkit.CheckRelClose(t, "tost lower", float64(e.Lower), ref.WelchTOST.Lower, tolRef)
	testkit.CheckRelClose(t, "tost upper", float64(e.Upper), ref.WelchTOST.Upper, tolRef)
	if e.Equivalence.Verdict != "equivalent" {
		t.Errorf("verdict %q, want equivalent (both p < 0.05)", e.Equivalence.Verdict)
	}
	if ep.Hypotheses[2].Assessable {
		t.Errorf("term hypothesis assessable on a welch step")
	}
	mm := ep.Steps[1].Results.MarginalMeans
	if len(mm) != 3 || mm[0].Level != "control" || !testkit.Close(float64(mm[0].Response), math.Exp(float64(mm[0].Estimate)), 1e-15) {
		t.Errorf("marginal means %+v", mm)
	}
}

// Data problems are step errors, not panics: a friedman step whose
// blocks hold two values per treatment, a rank-sum over three levels.
func TestRankStepErrors(t *testing.T) {
	r, _ := rankRun(t, false, "      - id: f\n        model: friedman\n"+fixture.ChangeLog+"        compare: treatment\n        within: site\n", "")
	s := r.Endpoints[0].Steps[0]
	if s.Decision.Reason != record.ReasonLastResortFitFailed || !strings.Contains(s.Error, "more than one value") {
		t.Errorf("friedman within site: %q %+v", s.Error, s.Decision)
	}
}

// The soil-nematodes example end to end: mixed model on log counts fails
// Shapiro-Wilk, the change score fails too, the van Elteren step within
// sites is accepted with the three-treatment statistic, and the
// versus-untreated hypothesis is answered with holm. Reference values:
// testdata/rank/ref.R (R 4.2.2; van Elteren from the published formulas).
func TestSoilNematodesExample(t *testing.T) {
	ref := loadRankRef(t)
	hl := loadHLRef(t)
	dir := t.TempDir()
	for _, f := range []string{"plan.yaml", "plots.csv"} {
		b, err := os.ReadFile(filepath.Join("..", "..", "examples", "soil-nematodes", f))
		if err != nil {
			t.Fatal(err)
		}
		fixture.Write(t, filepath.Join(dir, f), string(b))
	}
	r, err := Run(RunOptions{PlanPath: filepath.Join(dir, "plan.yaml"), OutDir: filepath.Join(dir, "out"), Now: fixture.T0,
		Tool: record.ToolInfo{Name: "furrow", Version: "test"}, Unregistered: true})
	if err != nil {
		t.Fatal(err)
	}
	ep := r.Endpoints[0]
	if ep.Status != record.EndpointAccepted || ep.Reported != "ranks-within-site" {
		t.Fatalf("status %s reported %q", ep.Status, ep.Reported)
	}
	mixed, change, ranks := ep.Steps[0], ep.Steps[1], ep.Steps[2]
	if mixed.Error != "" || mixed.Decision.Action != record.ActionFallBack || mixed.Decision.Reason != record.ReasonCheckFailed || mixed.Decision.Next != "change-log" {
		t.Errorf("mixed-log: %q %+v", mixed.Error, mixed.Decision)
	}
	if mixed.Checks[0].Test != "shapiro-wilk" || mixed.Checks[0].Verdict != record.VerdictFail {
		t.Errorf("mixed-log should fail shapiro-wilk: %+v", mixed.Checks[0])
	}
	if change.Decision.Reason != record.ReasonCheckFailed || change.Decision.Next != "ranks-within-site" || change.Checks[0].Verdict != record.VerdictFail {
		t.Errorf("change-log: %+v %+v", change.Decision, change.Checks)
	}
	if ranks.Decision.Action != record.ActionAccept || ranks.Decision.Reason != record.ReasonNoChecks || ranks.N != ref.Example.N {
		t.Fatalf("ranks-within-site: n %d %+v", ranks.N, ranks.Decision)
	}
	g := ranks.Results.Test
	testkit.CheckRelClose(t, "example van elteren Q", float64(g.Statistic), ref.Example.Q, tolRef)
	testkit.CheckRelClose(t, "example van elteren p", float64(g.P), ref.Example.P, tolRef)
	if len(g.DF) != 1 || g.DF[0] != 2 || !strings.Contains(g.Method, "3 levels") {
		t.Errorf("global test %+v", g)
	}
	h := ep.Hypotheses[0]
	if h.ID != "versus-untreated" || h.Adjust != "dunnett" || h.AdjustUsed != "holm" || h.Sides != "less" || len(h.Comparisons) != 2 {
		t.Fatalf("versus-untreated %+v", h)
	}
	for i, c := range h.Comparisons {
		testkit.CheckRelClose(t, c.Label+" p", float64(c.P), ref.Example.VsP[i], tolRef)
		testkit.CheckRelClose(t, c.Label+" holm", float64(c.PAdjusted), ref.Example.VsPHolm[i], tolRef)
		// van Elteren inversion by formula (ref_hl.R)
		testkit.CheckRelClose(t, c.Label+" hodges-lehmann", float64(c.Estimate), hl.Example.VsEstimate[i], tolRef)
		testkit.CheckRelClose(t, c.Label+" upper bound", float64(c.Upper), hl.Example.VsUpper[i], tolRef)
		if !c.Reject {
			t.Errorf("%s not rejected at p %v", c.Label, c.PAdjusted)
		}
	}
	ni := ep.Hypotheses[1]
	if !ni.Assessable || len(ni.Comparisons) != 1 || ni.Comparisons[0].Equivalence == nil {
		t.Fatalf("non-inferiority on the rank step: %+v", ni)
	}
	nc := ni.Comparisons[0]
	testkit.CheckRelClose(t, "non-inferiority estimate", float64(nc.Estimate), hl.Example.NIEstimate, tolRef)
	testkit.CheckRelClose(t, "non-inferiority 90% lower", float64(nc.Lower), hl.Example.NILower, tolRef)
	testkit.CheckRelClose(t, "non-inferiority 90% upper", float64(nc.Upper), hl.Example.NIUpper, tolRef)
	if nc.Equivalence.Verdict != hl.Example.NIVerdict {
		t.Errorf("non-inferiority verdict %q, ref_hl.R %q", nc.Equivalence.Verdict, hl.Example.NIVerdict)
	}
}
