package glm

import (
	"fmt"
	"math"
	"os"
	"sort"
	"strconv"
	"strings"
	"sync"
	"testing"

	"furrow/internal/testkit"
	"furrow/stats/design"
)

// Reference values in testdata/ref.json were produced by testdata/ref.R
// with R 4.2.2 (stats::glm with glm.control(epsilon = 1e-14), anova,
// residuals, hatvalues, logLik, AIC, pbinom/ppois/pnbinom), MASS 7.3-58.2
// (glm.nb, refined with theta.ml and negative.binomial; anova.negbin),
// car 3.1-1 (linearHypothesis) and jsonlite 1.8.4; the script records the
// exact calls and the versions.

// rFit is one fit as ref.R writes it.
type rFit struct {
	Family        string      `json:"family"`
	Link          string      `json:"link"`
	CoefNames     []string    `json:"coef_names"`
	Coef          []*float64  `json:"coef"`
	SE            []*float64  `json:"se"`
	Stat          []*float64  `json:"stat"`
	P             []*float64  `json:"p"`
	Dispersion    float64     `json:"dispersion"`
	Deviance      float64     `json:"deviance"`
	NullDeviance  float64     `json:"null_deviance"`
	DFResidual    int         `json:"df_residual"`
	DFNull        int         `json:"df_null"`
	Rank          int         `json:"rank"`
	LogLik        *float64    `json:"logLik"`
	AIC           *float64    `json:"AIC"`
	Pearson       float64     `json:"pearson"`
	Fitted        []float64   `json:"fitted"`
	Eta           []float64   `json:"eta"`
	ResidWorking  []float64   `json:"resid_working"`
	ResidPearson  []float64   `json:"resid_pearson"`
	ResidDeviance []float64   `json:"resid_deviance"`
	Hat           []float64   `json:"hat"`
	CovUnscaled   [][]float64 `json:"cov_unscaled"`
	Theta         float64     `json:"theta"`
	SETheta       float64     `json:"SE_theta"`
	ThetaScore    float64     `json:"theta_score"`
}

type rLRT struct {
	DF       int      `json:"df"`
	Deviance float64  `json:"deviance"`
	Stat     float64  `json:"stat"`
	P        float64  `json:"p"`
	F        *float64 `json:"F"`
}

type rWald struct {
	DF   int     `json:"df"`
	Stat float64 `json:"stat"`
	P    float64 `json:"p"`
}

type rBounds struct {
	A  []float64 `json:"a"`
	B  []float64 `json:"b"`
	SA []float64 `json:"sa"`
	SB []float64 `json:"sb"`
}

type rZero struct {
	Observed  float64 `json:"observed"`
	Expected  float64 `json:"expected"`
	Score     float64 `json:"score"`
	P         float64 `json:"p"`
	Z         float64 `json:"z"`
	POneSided float64 `json:"p_one_sided"`
}

type rDisp struct {
	Pearson float64 `json:"pearson"`
	DF      int     `json:"df"`
	Ratio   float64 `json:"ratio"`
	P       float64 `json:"p"`
}

type refFile struct {
	Counts struct {
		Data         map[string][]float64 `json:"data"`
		Poisson      rFit                 `json:"poisson"`
		Quasipoisson rFit                 `json:"quasipoisson"`
		Weighted     rFit                 `json:"weighted"`
		LRTPoisson   rLRT                 `json:"lrt_poisson"`
		LRTQuasi     rLRT                 `json:"lrt_quasi"`
		L            [][]float64          `json:"L"`
		WaldPoisson  rWald                `json:"wald_poisson"`
		WaldQuasi    rWald                `json:"wald_quasi"`
		Bounds       rBounds              `json:"bounds"`
		Dispersion   rDisp                `json:"dispersion"`
		Zero         rZero                `json:"zero"`
	} `json:"counts"`
	Germ struct {
		Data       map[string][]float64 `json:"data"`
		Logit      rFit                 `json:"logit"`
		Probit     rFit                 `json:"probit"`
		CLogLog    rFit                 `json:"cloglog"`
		Quasi      rFit                 `json:"quasi"`
		LRTLogit   rLRT                 `json:"lrt_logit"`
		LRTQuasi   rLRT                 `json:"lrt_quasi"`
		Bounds     rBounds              `json:"bounds"`
		Dispersion rDisp                `json:"dispersion"`
		Zero       rZero                `json:"zero"`
	} `json:"germ"`
	Traps struct {
		Data              map[string][]float64 `json:"data"`
		NegbinRaw         rFit                 `json:"negbin_raw"`
		Negbin            rFit                 `json:"negbin"`
		Negbin0           rFit                 `json:"negbin0"`
		LRTNegbinRaw      rLRT                 `json:"lrt_negbin_raw"`
		LRTNegbin         rLRT                 `json:"lrt_negbin"`
		Poisson           rFit                 `json:"poisson"`
		Bounds            rBounds              `json:"bounds"`
		DispersionPoisson rDisp                `json:"dispersion_poisson"`
		ZeroPoisson       rZero                `json:"zero_poisson"`
		ZeroNegbin        rZero                `json:"zero_negbin"`
	} `json:"traps"`
	Zip struct {
		Data       map[string][]float64 `json:"data"`
		Poisson    rFit                 `json:"poisson"`
		Zero       rZero                `json:"zero"`
		Dispersion rDisp                `json:"dispersion"`
	} `json:"zip"`
	Insects struct {
		Data         map[string][]float64 `json:"data"`
		Poisson      rFit                 `json:"poisson"`
		Quasipoisson rFit                 `json:"quasipoisson"`
		Negbin       rFit                 `json:"negbin"`
		LRTPoisson   rLRT                 `json:"lrt_poisson"`
		Dispersion   rDisp                `json:"dispersion"`
		Zero         rZero                `json:"zero"`
	} `json:"insects"`
	Menarche struct {
		Data    map[string][]float64 `json:"data"`
		Logit   rFit                 `json:"logit"`
		Probit  rFit                 `json:"probit"`
		CLogLog rFit                 `json:"cloglog"`
	} `json:"menarche"`
	Quine struct {
		Data      map[string][]float64 `json:"data"`
		NegbinRaw rFit                 `json:"negbin_raw"`
		Negbin    rFit                 `json:"negbin"`
	} `json:"quine"`
}

var (
	refOnce sync.Once
	refData refFile
)

func loadRef(t *testing.T) *refFile {
	t.Helper()
	refOnce.Do(func() { testkit.DecodeFile(t, "testdata/ref.json", &refData) })
	return &refData
}

// Tolerances against R, each 10-100 times the largest disagreement
// measured over all the fits of ref.json (go test -run Ref -v prints the
// measured agreement per quantity and where it is largest; doc.go lists
// the numbers). coef and se are relative to max(|value|, SE) and stat to
// max(|z|, 1) (see checkScaled), p relative divided by max(1, z²) (see
// checkP), deviance and loglik absolute, resid and hat absolute below 1
// and relative above (testkit.Close), the rest relative.
var tol = map[string]float64{
	"coef":     1e-10, // measured 1.3e-12
	"se":       1e-10, // measured 9.8e-13
	"stat":     1e-10, // measured 1.2e-12
	"p":        1e-10, // measured 1.2e-12
	"deviance": 1e-8,  // measured 3.4e-10 (quine null deviance, about 190)
	"loglik":   1e-10, // measured 3.4e-12 (logLik and AIC)
	"pearson":  1e-10, // measured 1.9e-12
	"fitted":   1e-11, // measured 2.5e-13
	"resid":    1e-10, // measured 3.6e-12 (eta, working, Pearson, deviance residuals)
	"hat":      5e-12, // measured 6.4e-14
	"theta":    1e-10, // measured 2.8e-12 (theta and its SE)
	"lr":       1e-13, // measured 3.2e-15 (LR statistics)
	"lr_p":     1e-12, // measured 4.3e-14 (LR and Wald p-values)
	"wald":     1e-13, // measured 1.0e-15
	"bounds":   1e-10, // measured 2.9e-12 (cdf at y - 1 and y, both tails)
	"zero":     1e-9,  // measured 1.3e-11
	"disp":     1e-12, // measured 5.9e-14
}

// agreement records the largest measured error per quantity.
var agreement = struct {
	sync.Mutex
	max   map[string]float64
	where map[string]string
}{max: map[string]float64{}, where: map[string]string{}}

// check compares got with want under the quantity's tolerance, relative
// (rel true) or absolute-or-relative, and records the error.
func check(t *testing.T, kind, what string, got, want float64, rel bool) {
	t.Helper()
	var e float64
	var ok bool
	if rel {
		e = testkit.RelErr(got, want)
		ok = testkit.RelClose(got, want, tol[kind])
	} else {
		e = math.Abs(got-want) / math.Max(1, math.Abs(want))
		ok = testkit.Close(got, want, tol[kind])
	}
	if kind == "deviance" || kind == "loglik" {
		e = math.Abs(got - want)
		ok = math.Abs(got-want) <= tol[kind]
	}
	record(t, kind, what, e)
	if !ok {
		t.Errorf("%s: %s = %.15g, want %.15g (error %.3g, tol %.2g)", kind, what, got, want, e, tol[kind])
	}
}

// checkScaled compares got with want relative to max(|want|, scale): a
// coefficient near 0 is compared on the scale of its standard error (the
// deviance, from which both fits judge convergence, does not fix it more
// finely), a z or t statistic on the scale of 1.
func checkScaled(t *testing.T, kind, what string, got, want, scale float64) {
	t.Helper()
	e := math.Abs(got-want) / math.Max(math.Abs(want), scale)
	record(t, kind, what, e)
	if !(e <= tol[kind]) {
		t.Errorf("%s: %s = %.15g, want %.15g (error %.3g relative to max(|want|, %.3g), tol %.2g)", kind, what, got, want, e, scale, tol[kind])
	}
}

// checkP compares p-values relatively, the error divided by max(1, z²):
// d log p = -z dz for a normal tail, so a tail p-value far out magnifies
// the last digits of its statistic z by z².
func checkP(t *testing.T, what string, got, want, z float64) {
	t.Helper()
	e := testkit.RelErr(got, want) / math.Max(1, z*z)
	record(t, "p", what, e)
	if !(e <= tol["p"]) {
		t.Errorf("p: %s = %.15g, want %.15g (relative error / max(1, z²) %.3g, tol %.2g)", what, got, want, e, tol["p"])
	}
}

func record(t *testing.T, kind, what string, e float64) {
	agreement.Lock()
	if e > agreement.max[kind] || math.IsNaN(e) {
		agreement.max[kind] = e
		agreement.where[kind] = t.Name() + " " + what
	}
	agreement.Unlock()
}

// TestMain prints, with -v, the measured agreement with R per quantity
// after the run (the source of the numbers in doc.go).
func TestMain(m *testing.M) {
	code := m.Run()
	if testing.Verbose() {
		agreement.Lock()
		var keys []string
		for k := range agreement.max {
			keys = append(keys, k)
		}
		sort.Strings(keys)
		for _, k := range keys {
			fmt.Printf("agreement with R: %-9s largest error %.2g (tolerance %.2g) at %s\n", k, agreement.max[k], tol[k], agreement.where[k])
		}
		agreement.Unlock()
	}
	os.Exit(code)
}

// factor builds a design factor from 0-based codes with levels prefix1..
func factor(name, prefix string, codes []float64) design.Factor {
	f := design.Factor{Name: name, Codes: make([]int, len(codes))}
	k := 0
	for i, c := range codes {
		f.Codes[i] = int(c)
		k = max(k, int(c)+1)
	}
	for j := 1; j <= k; j++ {
		f.Levels = append(f.Levels, prefix+strconv.Itoa(j))
	}
	return f
}

// build makes the model matrix of the given terms (treatment coding, the
// first level the reference, as R's default contrasts).
func build(t *testing.T, factors []design.Factor, nums []design.Numeric, labels ...string) *design.Matrix {
	t.Helper()
	fr, err := design.NewFrame(factors, nums)
	if err != nil {
		t.Fatal(err)
	}
	var terms []design.Term
	for _, l := range labels {
		terms = append(terms, design.Term{Vars: strings.Split(l, ":")})
	}
	m, err := design.Build(fr, design.Spec{Intercept: true, Terms: terms})
	if err != nil {
		t.Fatal(err)
	}
	return m
}

// rName converts "trt[T2]" to R's "trtT2" and "(intercept)" to "(Intercept)".
func rName(name string) string {
	if name == "(intercept)" {
		return "(Intercept)"
	}
	return strings.NewReplacer("[", "", "]", "").Replace(name)
}

func logs(x []float64) []float64 {
	out := make([]float64, len(x))
	for i, v := range x {
		out[i] = math.Log(v)
	}
	return out
}

// compare checks a fit against R's, coefficient by coefficient (matched
// by name) and observation by observation.
func compare(t *testing.T, got *Result, want rFit) {
	t.Helper()
	idx := map[string]int{}
	for j, n := range got.Names {
		idx[rName(n)] = j
	}
	for k, name := range want.CoefNames {
		j, ok := idx[name]
		if !ok {
			t.Fatalf("R coefficient %q has no column (ours: %v)", name, got.Names)
		}
		if want.Coef[k] == nil {
			if !math.IsNaN(got.Estimate[j]) {
				t.Errorf("%s: R reports aliased, we estimate %g", name, got.Estimate[j])
			}
			continue
		}
		checkScaled(t, "coef", name, got.Estimate[j], *want.Coef[k], *want.SE[k])
		check(t, "se", name, got.StdErr[j], *want.SE[k], true)
		checkScaled(t, "stat", name, got.Stat[j], *want.Stat[k], 1)
		checkP(t, name, got.PValue[j], *want.P[k], *want.Stat[k])
	}
	if got.Rank != want.Rank || got.DFResid != want.DFResidual || got.DFNull != want.DFNull {
		t.Errorf("rank %d, df %d, null df %d; want %d, %d, %d", got.Rank, got.DFResid, got.DFNull, want.Rank, want.DFResidual, want.DFNull)
	}
	check(t, "disp", "dispersion", got.Phi, want.Dispersion, true)
	check(t, "deviance", "deviance", got.Deviance, want.Deviance, false)
	check(t, "deviance", "null deviance", got.NullDeviance, want.NullDeviance, false)
	check(t, "pearson", "Pearson X2", got.Pearson, want.Pearson, true)
	if want.LogLik == nil {
		if !math.IsNaN(got.LogLik) || !math.IsNaN(got.AIC) {
			t.Errorf("quasi fit: logLik %g, AIC %g, want NaN", got.LogLik, got.AIC)
		}
	} else {
		check(t, "loglik", "logLik", got.LogLik, *want.LogLik, false)
		check(t, "loglik", "AIC", got.AIC, *want.AIC, false)
	}
	const eps = 0x1p-52
	for i := range want.Fitted {
		if want.Fitted[i] <= eps || want.Fitted[i] >= 1-eps {
			// R clamps a fitted probability to [eps, 1 - eps] (binomial
			// linkinv and mu.eta), and its working residual, leverage and
			// weight at such a row follow the clamp, not the model.
			continue
		}
		at := fmt.Sprintf("[%d]", i)
		check(t, "fitted", "fitted"+at, got.Fitted[i], want.Fitted[i], true)
		check(t, "resid", "eta"+at, got.Eta[i], want.Eta[i], false)
		check(t, "resid", "working residual"+at, got.WorkingResid[i], want.ResidWorking[i], false)
		check(t, "resid", "Pearson residual"+at, got.PearsonResid[i], want.ResidPearson[i], false)
		check(t, "resid", "deviance residual"+at, got.DevianceResid[i], want.ResidDeviance[i], false)
		check(t, "hat", "leverage"+at, got.Leverage[i], want.Hat[i], false)
	}
	if want.Theta != 0 {
		check(t, "theta", "theta", got.Theta, want.Theta, true)
		check(t, "theta", "SE(theta)", got.ThetaSE, want.SETheta, true)
	}
}

func mustFit(t *testing.T, m *design.Matrix, y []float64, fam Family, opt *Options) *Result {
	t.Helper()
	r, err := FitModel(m, y, fam, opt)
	if err != nil {
		t.Fatalf("fit: %v", err)
	}
	return r
}

// TestRefCounts: the blocked trial with plot areas as an offset.
func TestRefCounts(t *testing.T) {
	ref := loadRef(t).Counts
	d := ref.Data
	m := build(t, []design.Factor{factor("trt", "T", d["trt"]), factor("block", "B", d["block"])}, nil, "block", "trt")
	off := logs(d["area"])
	fp := mustFit(t, m, d["y"], Poisson, &Options{Offset: off})
	t.Run("poisson", func(t *testing.T) { compare(t, fp, ref.Poisson) })
	fq := mustFit(t, m, d["y"], Poisson, &Options{Offset: off, Dispersion: PearsonDispersion})
	t.Run("quasipoisson", func(t *testing.T) { compare(t, fq, ref.Quasipoisson) })
	fw := mustFit(t, m, d["y"], Poisson, &Options{Offset: off, Weights: d["w"]})
	t.Run("weighted", func(t *testing.T) { compare(t, fw, ref.Weighted) })
}

// TestRefGerm: germination proportions with trials, three links and quasi.
func TestRefGerm(t *testing.T) {
	ref := loadRef(t).Germ
	d := ref.Data
	m := build(t, []design.Factor{factor("trt", "S", d["trt"]), factor("block", "B", d["block"])}, nil, "block", "trt")
	for _, c := range []struct {
		link Link
		want rFit
	}{{Logit, ref.Logit}, {Probit, ref.Probit}, {CLogLog, ref.CLogLog}} {
		f := mustFit(t, m, d["y"], Binomial, &Options{Link: c.link, Trials: d["n"]})
		t.Run(c.link.String(), func(t *testing.T) { compare(t, f, c.want) })
	}
	fq := mustFit(t, m, d["y"], Binomial, &Options{Trials: d["n"], Dispersion: PearsonDispersion})
	t.Run("quasi", func(t *testing.T) { compare(t, fq, ref.Quasi) })
}

// TestRefTraps: over-dispersed trap counts, negative binomial with trap
// nights as an offset, against the refined MASS::glm.nb fit.
func TestRefTraps(t *testing.T) {
	ref := loadRef(t).Traps
	d := ref.Data
	m := build(t, []design.Factor{factor("trt", "T", d["trt"]), factor("block", "B", d["block"])}, nil, "block", "trt")
	m0 := build(t, []design.Factor{factor("block", "B", d["block"])}, nil, "block")
	off := logs(d["nights"])
	nb := mustFit(t, m, d["y"], NegBinomial, &Options{Offset: off})
	t.Run("negbin", func(t *testing.T) { compare(t, nb, ref.Negbin) })
	nb0 := mustFit(t, m0, d["y"], NegBinomial, &Options{Offset: off})
	t.Run("negbin0", func(t *testing.T) { compare(t, nb0, ref.Negbin0) })
	t.Run("fixed theta", func(t *testing.T) {
		// negative.binomial(theta) at the estimated theta (property): the
		// same fit, with theta not counted as a parameter in the AIC.
		f := mustFit(t, m, d["y"], NegBinomial, &Options{Offset: off, Theta: nb.Theta})
		for j := range f.Estimate {
			testkit.CheckClose(t, "fixed-theta coefficient", f.Estimate[j], nb.Estimate[j], 1e-12)
			testkit.CheckClose(t, "fixed-theta SE", f.StdErr[j], nb.StdErr[j], 1e-12)
		}
		testkit.CheckClose(t, "fixed-theta AIC", f.AIC, nb.AIC-2, 1e-12)
		if !math.IsNaN(f.ThetaSE) || f.Theta != nb.Theta {
			t.Errorf("fixed theta: Theta %g, ThetaSE %g; want %g and NaN", f.Theta, f.ThetaSE, nb.Theta)
		}
	})
	fp := mustFit(t, m, d["y"], Poisson, &Options{Offset: off})
	t.Run("poisson", func(t *testing.T) { compare(t, fp, ref.Poisson) })
}

// TestRefZip: Poisson counts with a fifth of the plots empty.
func TestRefZip(t *testing.T) {
	ref := loadRef(t).Zip
	d := ref.Data
	m := build(t, []design.Factor{factor("trt", "T", d["trt"])}, nil, "trt")
	f := mustFit(t, m, d["y"], Poisson, nil)
	compare(t, f, ref.Poisson)
}

// TestRefInsects: datasets::InsectSprays (Beall 1942).
func TestRefInsects(t *testing.T) {
	ref := loadRef(t).Insects
	d := ref.Data
	m := build(t, []design.Factor{factor("spray", "S", d["spray"])}, nil, "spray")
	rename := func(f *rFit) { // R's sprays are A..F, ours S1..S6
		for k, v := range f.CoefNames {
			if strings.HasPrefix(v, "spray") && !strings.HasPrefix(v, "sprayS") {
				f.CoefNames[k] = "sprayS" + strconv.Itoa(int(v[5]-'A')+1)
			}
		}
	}
	rename(&ref.Poisson)
	rename(&ref.Quasipoisson)
	rename(&ref.Negbin)
	fp := mustFit(t, m, d["count"], Poisson, nil)
	t.Run("poisson", func(t *testing.T) { compare(t, fp, ref.Poisson) })
	fq := mustFit(t, m, d["count"], Poisson, &Options{Dispersion: PearsonDispersion})
	t.Run("quasipoisson", func(t *testing.T) { compare(t, fq, ref.Quasipoisson) })
	nb := mustFit(t, m, d["count"], NegBinomial, nil)
	t.Run("negbin", func(t *testing.T) { compare(t, nb, ref.Negbin) })
}

// TestRefMenarche: MASS::menarche, grouped binomial on a covariate, three
// links. The youngest groups have no successes and the oldest only
// successes, with the groups between identifying both coefficients: no
// separation.
func TestRefMenarche(t *testing.T) {
	ref := loadRef(t).Menarche
	d := ref.Data
	m := build(t, nil, []design.Numeric{{Name: "Age", Values: d["age"]}}, "Age")
	for _, c := range []struct {
		link Link
		want rFit
	}{{Logit, ref.Logit}, {Probit, ref.Probit}, {CLogLog, ref.CLogLog}} {
		t.Run(c.link.String(), func(t *testing.T) {
			compare(t, mustFit(t, m, d["menarche"], Binomial, &Options{Link: c.link, Trials: d["total"]}), c.want)
		})
	}
}

// TestRefQuine: MASS::quine, glm.nb(Days ~ Eth + Sex + Age + Lrn).
func TestRefQuine(t *testing.T) {
	ref := loadRef(t).Quine
	d := ref.Data
	fs := []design.Factor{factor("Eth", "E", d["eth"]), factor("Sex", "S", d["sex"]), factor("Age", "A", d["age"]), factor("Lrn", "L", d["lrn"])}
	m := build(t, fs, nil, "Eth", "Sex", "Age", "Lrn")
	r := map[string]string{"EthN": "EthE2", "SexM": "SexS2", "AgeF1": "AgeA2", "AgeF2": "AgeA3", "AgeF3": "AgeA4", "LrnSL": "LrnL2"}
	for k, v := range ref.Negbin.CoefNames {
		if s, ok := r[v]; ok {
			ref.Negbin.CoefNames[k] = s
		}
	}
	nb := mustFit(t, m, d["days"], NegBinomial, nil)
	compare(t, nb, ref.Negbin)
}
