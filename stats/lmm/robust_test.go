package lmm

import (
	"fmt"
	"math"
	"path/filepath"
	"sort"
	"testing"

	"gonum.org/v1/gonum/mat"

	"furrow/internal/testkit"
)

// robustDoc is testdata/robust.json, written by testdata/robust.R (R 4.2.2,
// lme4 1.1-31, lmerTest 3.1-3, pbkrtest 0.5.2, nloptr 2.0.3; versions in
// its meta). The reference fits are lme4's tight fits on the well-scaled
// covariate, mapped exactly to the covariate's own offset and scale (see
// the script).
type robustDoc struct {
	Meta    map[string]string `json:"meta"`
	Designs []robustDesign    `json:"designs"`
	Random  []robustRandom    `json:"random"`
}

type robustGroup struct {
	Name   string `json:"name"`
	Codes  []int  `json:"codes"`
	Levels int    `json:"levels"`
}

type robustDesign struct {
	Label     string        `json:"label"`
	N         int           `json:"n"`
	Y         []float64     `json:"y"`
	X0        []float64     `json:"X0"` // fixed part without x, column-major
	P0        int           `json:"p0"`
	Colnames0 []string      `json:"colnames0"`
	Weights   []float64     `json:"weights"`
	Groups    []robustGroup `json:"groups"`
	Cases     []robustCase  `json:"cases"`
}

type robustCase struct {
	Offset          float64   `json:"offset"`
	Scale           float64   `json:"scale"`
	X               []float64 `json:"x"`
	REML            robustFit `json:"reml"`
	ML              robustFit `json:"ml"`
	DirectCriterion *float64  `json:"direct_criterion"`
}

type robustFit struct {
	Criterion float64    `json:"criterion"`
	OptDiff   float64    `json:"opt_diff"`
	Theta     []float64  `json:"theta"`
	Sigma     float64    `json:"sigma"`
	VcGroup   []string   `json:"vc_group"`
	VcVar     []float64  `json:"vc_var"`
	Beta      []float64  `json:"beta"`
	Vcov      []float64  `json:"vcov"`
	SE        []float64  `json:"se"`
	DF        []float64  `json:"df"`
	P         []float64  `json:"p"`
	KrSE      []float64  `json:"kr_se"`
	KrDF      []float64  `json:"kr_df"`
	Anova3    []refAnova `json:"anova3"`
	Emm       *struct {
		L        []float64 `json:"l"`
		Estimate float64   `json:"estimate"`
		SE       float64   `json:"se"`
		DF       float64   `json:"df"`
	} `json:"emm"`
}

type robustRandom struct {
	Seed      int           `json:"seed"`
	Kind      string        `json:"kind"`
	N         int           `json:"n"`
	Y         []float64     `json:"y"`
	X         []float64     `json:"x"`
	Offset    float64       `json:"offset"`
	Scale     float64       `json:"scale"`
	Weights   []float64     `json:"weights"`
	Groups    []robustGroup `json:"groups"`
	Criterion float64       `json:"criterion"`
	OptDiff   float64       `json:"opt_diff"`
	Theta     []float64     `json:"theta"`
}

// agreement keeps the worst measured difference per quantity (relative,
// or absolute for the criteria), to log beside the tolerances.
type agreement map[string]float64

func (a agreement) note(what string, d float64) {
	if d > a[what] || math.IsNaN(d) {
		a[what] = d
	}
}

// rel checks got against want at relative tolerance tol and notes the
// relative error under the quantity's name.
func (a agreement) rel(t *testing.T, quantity, what string, got, want, tol float64) {
	t.Helper()
	a.note(quantity, testkit.RelErr(got, want))
	testkit.CheckRelClose(t, what, got, want, tol)
}

func (a agreement) log(t *testing.T) {
	keys := make([]string, 0, len(a))
	for k := range a {
		keys = append(keys, k)
	}
	sort.Strings(keys)
	for _, k := range keys {
		t.Logf("worst %-28s %.2g", k, a[k])
	}
}

func loadRobust(t *testing.T) robustDoc {
	t.Helper()
	var doc robustDoc
	testkit.DecodeFile(t, filepath.Join("testdata", "robust.json"), &doc)
	return doc
}

func groupings(gs []robustGroup) []Grouping {
	out := make([]Grouping, len(gs))
	for k, g := range gs {
		out[k] = Grouping{Name: g.Name, Index: g.Codes, Levels: g.Levels}
	}
	return out
}

// model returns X = [X0, x] for one case.
func (d *robustDesign) model(c *robustCase) *mat.Dense {
	p := d.P0 + 1
	X := mat.NewDense(d.N, p, nil)
	for j := 0; j < d.P0; j++ {
		for i := 0; i < d.N; i++ {
			X.Set(i, j, d.X0[j*d.N+i])
		}
	}
	for i := 0; i < d.N; i++ {
		X.Set(i, d.P0, c.X[i])
	}
	return X
}

// Tolerances of the covariate-scale cases against robust.json. The first
// three are the targets of the robustness work (issue 12): the criterion
// to 1e-6 absolute, fixed effects and variance components to 1e-6
// relative, on the covariate's own offset and scale. The rest are set at
// about 10 times the worst agreement measured over the 102 cases
// (linux/amd64), noted beside each. The reference's theta is converged to
// about 1e-7 relative: its fits of one design at different scales, which
// are the same fit, differ by that much (furrow's by 1e-15), and that
// bounds the agreement of everything that depends on theta.
const (
	robCritAbs = 1e-6 // REML criterion and ML deviance, absolute (measured 4e-13)
	robBetaRel = 1e-6 // fixed effects and marginal means, relative (2.8e-9; 7.4e-11)
	robVCRel   = 1e-6 // variance components, relative (1.3e-7)
	robSERel   = 1e-6 // SEs, relative; covariances relative to sd_i sd_j (4.2e-8; 8.4e-8)
	robDFRel   = 2e-6 // Satterthwaite df; lmerTest differentiates numerically (2.4e-7)
	robKRRel   = 1e-6 // Kenward-Roger SE and df (4.2e-8, 7.3e-8)
	robFRel    = 1e-6 // Type III F (2.5e-8)
	robPRel    = 5e-5 // p-values (5e-6)
)

// TestCovariateScale fits every design of robust.json with its covariate
// at offsets 1e0..1e8, scales 1e-10..1e10 and a few pairs, by REML and ML,
// and compares the criterion, fixed effects (original scale), their SEs,
// Satterthwaite and Kenward-Roger df, the Type III tests, a marginal mean
// and the variance components with the reference library's tight fit.
func TestCovariateScale(t *testing.T) {
	doc := loadRobust(t)
	ag := agreement{}
	total, failed := 0, 0
	for di := range doc.Designs {
		d := &doc.Designs[di]
		g := groupings(d.Groups)
		for ci := range d.Cases {
			c := &d.Cases[ci]
			total++
			name := fmt.Sprintf("%s/offset=%g/scale=%g", d.Label, c.Offset, c.Scale)
			ok := t.Run(name, func(t *testing.T) {
				X := d.model(c)
				t.Run("reml", func(t *testing.T) { checkRobustREML(t, ag, d, c, X, g) })
				t.Run("ml", func(t *testing.T) { checkRobustML(t, ag, d, c, X, g) })
			})
			if !ok {
				failed++
			}
		}
	}
	t.Logf("covariate scale: %d of %d cases failed", failed, total)
	ag.log(t)
}

func checkVC(t *testing.T, ag agreement, what string, got []Component, g []Grouping, ref robustFit) {
	t.Helper()
	for k, gr := range g {
		ag.rel(t, what+" variance components", what+" variance "+gr.Name, got[k].Variance, robustVC(ref, gr.Name), robVCRel)
	}
	ag.rel(t, what+" variance components", what+" residual variance", got[len(g)].Variance, robustVC(ref, "Residual"), robVCRel)
}

func robustVC(ref robustFit, name string) float64 {
	for i, n := range ref.VcGroup {
		if n == name {
			return ref.VcVar[i]
		}
	}
	return math.NaN()
}

func checkRobustREML(t *testing.T, ag agreement, d *robustDesign, c *robustCase, X *mat.Dense, g []Grouping) {
	fit, err := Fit(d.Y, X, g, &Options{Weights: d.Weights})
	if err != nil {
		t.Fatal(err)
	}
	ref := c.REML
	if fit.Status.Early() || fit.Status.String() != "Success" {
		t.Errorf("status %v", fit.Status)
	}
	ag.note("REML criterion (absolute)", math.Abs(fit.Objective-ref.Criterion))
	if d := math.Abs(fit.Objective - ref.Criterion); d > robCritAbs {
		t.Errorf("REML criterion %.12f, reference %.12f: differs by %.3g", fit.Objective, ref.Criterion, d)
	}
	checkVC(t, ag, "REML", fit.Components, g, ref)
	p := len(ref.Beta)
	for j := 0; j < p; j++ {
		ag.rel(t, "REML fixed effects", fmt.Sprintf("beta %d", j), fit.Coef[j].Estimate, ref.Beta[j], robBetaRel)
		ag.rel(t, "REML SE", fmt.Sprintf("se %d", j), fit.Coef[j].SE, ref.SE[j], robSERel)
		ag.rel(t, "Satterthwaite df", fmt.Sprintf("satterthwaite df %d", j), fit.Coef[j].DF, ref.DF[j], robDFRel)
		ag.rel(t, "coefficient p", fmt.Sprintf("p %d", j), fit.Coef[j].P, ref.P[j], robPRel)
	}
	cov := fit.CoefCov()
	for i := 0; i < p; i++ {
		for j := 0; j < p; j++ {
			// Relative to the geometric mean of the variances: an entry of a
			// covariance matrix is only known to that scale.
			sc := math.Sqrt(ref.Vcov[i*p+i] * ref.Vcov[j*p+j])
			ag.note("REML covariance (of sd*sd)", math.Abs(cov.At(i, j)-ref.Vcov[j*p+i])/sc)
			testkit.CheckWithin(t, fmt.Sprintf("cov %d,%d", i, j), cov.At(i, j), ref.Vcov[j*p+i], 0, robSERel*sc)
		}
	}
	// Type III tests: the trt term (nested design) and x.
	var terms [][]int
	if d.P0 > 1 {
		cols := make([]int, d.P0-1)
		for j := range cols {
			cols[j] = j + 1
		}
		terms = append(terms, cols)
	}
	terms = append(terms, []int{d.P0})
	a3, err := fit.TermTests(terms, 3, Satterthwaite)
	if err != nil {
		t.Fatal(err)
	}
	for i, r := range ref.Anova3 {
		// Multi-df terms keep the looser tolerances of satTermTol (a
		// difference from lmerTest's multi-df combination that is there on
		// well-scaled data too, see ref_test.go).
		dfTol, pTol := robDFRel, robPRel
		if r.NumDF > 1 {
			dfTol, pTol = satTermTol(r)
		}
		kind := "1-df"
		if r.NumDF > 1 {
			kind = "multi-df"
		}
		ag.rel(t, "type III F "+kind, "type III F "+r.Term, a3[i].F, r.F, robFRel)
		ag.rel(t, "type III df "+kind, "type III df "+r.Term, a3[i].DenDF, r.DenDF, dfTol)
		ag.rel(t, "type III p "+kind, "type III p "+r.Term, a3[i].P, r.P, pTol)
	}
	if e := ref.Emm; e != nil {
		cf, err := fit.Contrast(e.L, Satterthwaite)
		if err != nil {
			t.Fatal(err)
		}
		ag.rel(t, "marginal mean", "marginal mean", cf.Estimate, e.Estimate, robBetaRel)
		ag.rel(t, "marginal mean SE", "marginal mean se", cf.SE, e.SE, robSERel)
		ag.rel(t, "marginal mean df", "marginal mean df", cf.DF, e.DF, robDFRel)
	}
	for j := 0; j < p; j++ {
		l := make([]float64, p)
		l[j] = 1
		cf, err := fit.Contrast(l, KenwardRoger)
		if err != nil {
			t.Fatal(err)
		}
		ag.rel(t, "Kenward-Roger SE", fmt.Sprintf("KR se %d", j), cf.SE, ref.KrSE[j], robKRRel)
		ag.rel(t, "Kenward-Roger df", fmt.Sprintf("KR df %d", j), cf.DF, ref.KrDF[j], robKRRel)
	}
}

func checkRobustML(t *testing.T, ag agreement, d *robustDesign, c *robustCase, X *mat.Dense, g []Grouping) {
	fit, err := Fit(d.Y, X, g, &Options{Criterion: ML, Weights: d.Weights})
	if err != nil {
		t.Fatal(err)
	}
	ref := c.ML
	if fit.Status.Early() || fit.Status.String() != "Success" {
		t.Errorf("status %v", fit.Status)
	}
	ag.note("ML deviance (absolute)", math.Abs(fit.Objective-ref.Criterion))
	if d := math.Abs(fit.Objective - ref.Criterion); d > robCritAbs {
		t.Errorf("ML deviance %.12f, reference %.12f: differs by %.3g", fit.Objective, ref.Criterion, d)
	}
	checkVC(t, ag, "ML", fit.Components, g, ref)
	for j := range ref.Beta {
		ag.rel(t, "ML fixed effects", fmt.Sprintf("ML beta %d", j), fit.Coef[j].Estimate, ref.Beta[j], robBetaRel)
		ag.rel(t, "ML SE", fmt.Sprintf("ML se %d", j), fit.Coef[j].SE, ref.SE[j], robSERel)
	}
}

// TestRandomDesignsNotWorse is the property test of robust.json's seeded
// random designs (one factor, nested, crossed, crossed with interaction;
// missing cells, zero variances, weights; a covariate at offset
// 10^U(0,8) and scale 10^U(-10,10)): the fit succeeds and its REML
// criterion is never above the reference's tight fit by more than 1e-6.
func TestRandomDesignsNotWorse(t *testing.T) {
	doc := loadRobust(t)
	failed := 0
	worst, best := math.Inf(-1), math.Inf(1)
	for _, r := range doc.Random {
		r := r
		ok := t.Run(fmt.Sprintf("seed=%d/%s", r.Seed, r.Kind), func(t *testing.T) {
			X := mat.NewDense(r.N, 2, nil)
			for i := 0; i < r.N; i++ {
				X.Set(i, 0, 1)
				X.Set(i, 1, r.X[i])
			}
			fit, err := Fit(r.Y, X, groupings(r.Groups), &Options{Weights: r.Weights})
			if err != nil {
				t.Fatal(err)
			}
			if fit.Status.String() != "Success" {
				t.Errorf("status %v", fit.Status)
			}
			d := fit.Objective - r.Criterion
			worst, best = math.Max(worst, d), math.Min(best, d)
			if d > robCritAbs {
				t.Errorf("REML criterion %.12f is %.3g above the reference's %.12f (offset %g, scale %g, theta %v vs %v)",
					fit.Objective, d, r.Criterion, r.Offset, r.Scale, fit.Theta(), r.Theta)
			}
		})
		if !ok {
			failed++
		}
	}
	t.Logf("random designs: %d of %d failed; criterion minus the reference's from %.3g to %.3g", failed, len(doc.Random), best, worst)
}
