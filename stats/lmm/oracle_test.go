package lmm

import (
	"encoding/csv"
	"encoding/json"
	"math"
	"os"
	"path/filepath"
	"strconv"
	"testing"

	"gonum.org/v1/gonum/mat"

	"furrow/internal/testkit"
)

// readCSV reads a CSV (or tab-separated .txt) file under the shared
// reference folder, skipping when it is absent.
func readCSV(t *testing.T, rel string) []map[string]string {
	t.Helper()
	path := testkit.SharedPath(t, rel)
	f, err := os.Open(path)
	if err != nil {
		t.Fatalf("reading %s: %v", rel, err)
	}
	defer f.Close()
	r := csv.NewReader(f)
	r.Comma = ','
	if filepath.Ext(path) == ".txt" {
		r.Comma = '\t'
	}
	recs, err := r.ReadAll()
	if err != nil {
		t.Fatal(err)
	}
	var out []map[string]string
	for _, rec := range recs[1:] {
		m := map[string]string{}
		for i, h := range recs[0] {
			m[h] = rec[i]
		}
		out = append(out, m)
	}
	return out
}

// codes maps string labels to level codes in order of first appearance.
func codes(vals []string) ([]int, int) {
	idx := map[string]int{}
	out := make([]int, len(vals))
	for i, v := range vals {
		c, ok := idx[v]
		if !ok {
			c = len(idx)
			idx[v] = c
		}
		out[i] = c
	}
	return out, len(idx)
}

func ones(n int) *mat.Dense {
	X := mat.NewDense(n, 1, nil)
	for i := 0; i < n; i++ {
		X.Set(i, 0, 1)
	}
	return X
}

type oracleFit struct {
	REMLCriterion float64 `json:"reml_criterion"`
	Deviance      float64 `json:"deviance"`
	AIC, BIC      float64
	Varcomp       []struct {
		Group    string  `json:"group"`
		Variance float64 `json:"variance"`
	} `json:"varcomp"`
	Fixef []struct {
		Estimate float64 `json:"Estimate"`
		SE       float64 `json:"Std. Error"`
		DF       float64 `json:"df"`
		P        float64 `json:"Pr(>|t|)"`
	} `json:"fixef"`
	FixefSat []struct {
		Estimate float64 `json:"Estimate"`
		SE       float64 `json:"Std. Error"`
		DF       float64 `json:"df"`
	} `json:"fixef_satterthwaite"`
}

type oracleSet struct {
	REML       oracleFit  `json:"reml"`
	ML         oracleFit  `json:"ml"`
	Closed     closedForm `json:"closed_form_reml"`
	Tight      oracleFit  `json:"tight_fit"`
	RanefBatch map[string][]struct {
		Value float64 `json:"value"`
	}
}

// closedForm holds the closed_form_reml record (numbers plus a note).
type closedForm map[string]any

func (c closedForm) get(t *testing.T, k string) float64 {
	t.Helper()
	v, ok := c[k].(float64)
	if !ok {
		t.Fatalf("closed form %q missing", k)
	}
	return v
}

func loadOracle(t *testing.T) map[string]json.RawMessage {
	t.Helper()
	var m map[string]json.RawMessage
	testkit.ReadJSON(t, testkit.SharedPath(t, "oracle/ref/case03_dyestuff_penicillin.json"), &m)
	return m
}

// TestDyestuff checks Yield ~ 1 + (1|Batch) against the closed-form
// balanced-ANOVA solution and lme4 1.1-31 values in
// shared/reference/oracle/ref/case03_dyestuff_penicillin.json.
func TestDyestuff(t *testing.T) {
	m := loadOracle(t)
	rows := readCSV(t, "oracle/data/case03_dyestuff.csv")
	var set oracleSet
	if err := json.Unmarshal(m["dyestuff"], &set); err != nil {
		t.Fatal(err)
	}
	y := make([]float64, len(rows))
	lab := make([]string, len(rows))
	for i, r := range rows {
		y[i], _ = strconv.ParseFloat(r["Yield"], 64)
		lab[i] = r["Batch"]
	}
	idx, lv := codes(lab)
	g := []Grouping{{Name: "Batch", Index: idx, Levels: lv}}
	fit, err := Fit(y, ones(len(y)), g, nil)
	if err != nil {
		t.Fatal(err)
	}
	// Closed form (ANOVA = REML when MS_batch > MS_within): 1764.05, 2451.25, df 5.
	testkit.CheckWithin(t, "batch variance", fit.Components[0].Variance, set.Closed.get(t, "var_batch"), 1e-8, 0)
	testkit.CheckWithin(t, "residual variance", fit.Components[1].Variance, set.Closed.get(t, "var_resid"), 1e-8, 0)
	testkit.CheckWithin(t, "published batch variance (agri/values.json, memory+computed)", fit.Components[0].Variance, 1764.05, 1e-8, 0)
	testkit.CheckWithin(t, "intercept", fit.Coef[0].Estimate, set.Closed.get(t, "intercept"), 1e-12, 0)
	testkit.CheckWithin(t, "se intercept", fit.Coef[0].SE, set.Closed.get(t, "se_intercept"), 1e-8, 0)
	testkit.CheckWithin(t, "df intercept", fit.Coef[0].DF, set.Closed.get(t, "df_intercept"), 1e-6, 0)
	testkit.CheckWithin(t, "share batch", fit.Components[0].Share, 1764.05/(1764.05+2451.25), 1e-8, 0)
	testkit.CheckWithin(t, "REML criterion (lme4)", fit.Objective, set.Tight.REMLCriterion, 0, 1e-8)
	kr, err := fit.KR()
	if err != nil {
		t.Fatal(err)
	}
	testkit.CheckWithin(t, "KR df intercept (balanced: 5)", kr.DF([]float64{1}), 5, 1e-8, 0)
	ml, err := Fit(y, ones(len(y)), g, &Options{Criterion: ML})
	if err != nil {
		t.Fatal(err)
	}
	// ML batch variance 1388.33 (agri/values.json); deviance/AIC/BIC from lme4.
	testkit.CheckWithin(t, "ML batch variance", ml.Components[0].Variance, set.ML.Varcomp[0].Variance, 1e-6, 0)
	testkit.CheckWithin(t, "ML deviance", ml.Objective, set.ML.Deviance, 0, 1e-7)
	testkit.CheckWithin(t, "ML AIC", ml.AIC, set.ML.AIC, 0, 1e-7)
	testkit.CheckWithin(t, "ML BIC", ml.BIC, set.ML.BIC, 0, 1e-7)
	testkit.CheckWithin(t, "ML se intercept", ml.Coef[0].SE, set.ML.Fixef[0].SE, 1e-6, 0)
}

// TestPenicillin checks the crossed diameter ~ 1 + (1|plate) + (1|sample)
// against the balanced two-way closed form in the oracle JSON.
func TestPenicillin(t *testing.T) {
	m := loadOracle(t)
	rows := readCSV(t, "oracle/data/case03_penicillin.csv")
	var set oracleSet
	if err := json.Unmarshal(m["penicillin"], &set); err != nil {
		t.Fatal(err)
	}
	y := make([]float64, len(rows))
	pl := make([]string, len(rows))
	sa := make([]string, len(rows))
	for i, r := range rows {
		y[i], _ = strconv.ParseFloat(r["diameter"], 64)
		pl[i], sa[i] = r["plate"], r["sample"]
	}
	pi, pn := codes(pl)
	si, sn := codes(sa)
	g := []Grouping{{Name: "plate", Index: pi, Levels: pn}, {Name: "sample", Index: si, Levels: sn}}
	fit, err := Fit(y, ones(len(y)), g, nil)
	if err != nil {
		t.Fatal(err)
	}
	testkit.CheckWithin(t, "plate variance", fit.Components[0].Variance, set.Closed.get(t, "var_plate"), 1e-7, 0)
	testkit.CheckWithin(t, "sample variance", fit.Components[1].Variance, set.Closed.get(t, "var_sample"), 1e-7, 0)
	testkit.CheckWithin(t, "residual variance", fit.Components[2].Variance, set.Closed.get(t, "var_resid"), 1e-7, 0)
	testkit.CheckWithin(t, "se intercept", fit.Coef[0].SE, set.Closed.get(t, "se_intercept"), 1e-7, 0)
	testkit.CheckWithin(t, "REML criterion (lme4 tight)", fit.Objective, set.Tight.REMLCriterion, 0, 1e-8)
	// lmerTest 3.1-3 Satterthwaite df on the tight fit (numerical
	// derivatives); measured 5.1e-7, so the 1e-6 floor leaves a margin of 2.
	testkit.CheckWithin(t, "df intercept", fit.Coef[0].DF, set.Tight.FixefSat[0].DF, 1e-6, 0)
	ml, err := Fit(y, ones(len(y)), g, &Options{Criterion: ML})
	if err != nil {
		t.Fatal(err)
	}
	testkit.CheckWithin(t, "ML deviance", ml.Objective, set.ML.Deviance, 0, 1e-6)
	// lme4 default convergence: variance components within about 1e-4.
	testkit.CheckWithin(t, "ML sample variance", ml.Components[1].Variance, set.ML.Varcomp[1].Variance, 1e-4, 0)
}

// oatsModel builds yield ~ nitro*gen with sum-to-zero coding, (1|block) + (1|block:gen).
func oatsModel(t *testing.T) ([]float64, *mat.Dense, []Grouping, [][]int) {
	rows := readCSV(t, "agri/agridat_yates.oats.txt")
	n := len(rows)
	y := make([]float64, n)
	nit, gen, blk, wp := make([]string, n), make([]string, n), make([]string, n), make([]string, n)
	for i, r := range rows {
		y[i], _ = strconv.ParseFloat(r["yield"], 64)
		nit[i], gen[i], blk[i] = r["nitro"], r["gen"], r["block"]
		wp[i] = r["block"] + "/" + r["gen"]
	}
	ni, nn := codes(nit)
	gi, gn := codes(gen)
	bi, bn := codes(blk)
	wi, wn := codes(wp)
	X, terms := sumCoded(n, [][]int{ni, gi}, []int{nn, gn})
	return y, X, []Grouping{{Name: "block", Index: bi, Levels: bn}, {Name: "wholeplot", Index: wi, Levels: wn}}, terms
}

// sumCoded builds intercept + A + B + A:B with sum-to-zero coding for two
// factors; it returns the columns of each term.
func sumCoded(n int, f [][]int, lv []int) (*mat.Dense, [][]int) {
	code := func(c, k, j int) float64 { // column j (0..k-2) of level c
		if c == k-1 {
			return -1
		}
		if c == j {
			return 1
		}
		return 0
	}
	p := 1 + (lv[0] - 1) + (lv[1] - 1) + (lv[0]-1)*(lv[1]-1)
	X := mat.NewDense(n, p, nil)
	terms := make([][]int, 3)
	for i := 0; i < n; i++ {
		X.Set(i, 0, 1)
		col := 1
		for j := 0; j < lv[0]-1; j++ {
			X.Set(i, col, code(f[0][i], lv[0], j))
			if i == 0 {
				terms[0] = append(terms[0], col)
			}
			col++
		}
		for j := 0; j < lv[1]-1; j++ {
			X.Set(i, col, code(f[1][i], lv[1], j))
			if i == 0 {
				terms[1] = append(terms[1], col)
			}
			col++
		}
		for j := 0; j < lv[0]-1; j++ {
			for k := 0; k < lv[1]-1; k++ {
				X.Set(i, col, code(f[0][i], lv[0], j)*code(f[1][i], lv[1], k))
				if i == 0 {
					terms[2] = append(terms[2], col)
				}
				col++
			}
		}
	}
	return X, terms
}

// TestOatsClosedForm: in the balanced split-plot the REML components equal
// the ANOVA estimates (agri/values.json: block 214.477083, whole plot
// 106.061806, residual 177.083333), and Satterthwaite and Kenward-Roger df
// equal the stratum df: 10 for variety, 45 for nitrogen and N x V.
// F values from Yates (1935) via agri/values.json: F(V) 1.48534, F(N) 37.68565.
func TestOatsClosedForm(t *testing.T) {
	y, X, g, terms := oatsModel(t)
	fit, err := Fit(y, X, g, nil)
	if err != nil {
		t.Fatal(err)
	}
	testkit.CheckWithin(t, "block", fit.Components[0].Variance, (3175.05555555556-601.330555555556)/12, 1e-8, 0)
	testkit.CheckWithin(t, "whole plot", fit.Components[1].Variance, (601.330555555556-177.083333333333)/4, 1e-8, 0)
	testkit.CheckWithin(t, "residual", fit.Components[2].Variance, 7968.75/45, 1e-8, 0)
	// Closed-form df; measured agreement 7.8e-9 (Satterthwaite, numerical
	// Hessian) and 3.4e-15 (Kenward-Roger).
	for _, m := range []Method{Satterthwaite, KenwardRoger} {
		tt, err := fit.TermTests(terms, 3, m)
		if err != nil {
			t.Fatal(err)
		}
		testkit.CheckWithin(t, m.String()+" nitrogen df", tt[0].DenDF, 45, dfTol(m), 0)
		testkit.CheckWithin(t, m.String()+" variety df", tt[1].DenDF, 10, dfTol(m), 0)
		testkit.CheckWithin(t, m.String()+" NxV df", tt[2].DenDF, 45, dfTol(m), 0)
		testkit.CheckWithin(t, m.String()+" F nitrogen", tt[0].F, 37.68565, 1e-6, 0)
		testkit.CheckWithin(t, m.String()+" F variety", tt[1].F, 1.48534, 1e-5, 0)
		testkit.CheckWithin(t, m.String()+" F NxV", tt[2].F, 0.30282, 1e-4, 0)
		testkit.CheckWithin(t, m.String()+" p nitrogen", tt[0].P, 2.4577e-12, 0, 1e-15)
		testkit.CheckWithin(t, m.String()+" p variety", tt[1].P, 0.27239, 0, 1e-5)
	}
}

// TestBoundaryEqualsOLS: Dyestuff2 (Box & Tiao 1973) has MS_between <
// MS_within, so the REML batch variance is 0 (agri/values.json) and the fit
// equals OLS: residual variance 13.8063 and SE = s/sqrt(n).
func TestBoundaryEqualsOLS(t *testing.T) {
	rows := readCSV(t, "agri/Dyestuff2.csv")
	y := make([]float64, len(rows))
	lab := make([]string, len(rows))
	for i, r := range rows {
		y[i], _ = strconv.ParseFloat(r["Yield"], 64)
		lab[i] = r["Batch"]
	}
	idx, lv := codes(lab)
	fit, err := Fit(y, ones(len(y)), []Grouping{{Name: "Batch", Index: idx, Levels: lv}}, nil)
	if err != nil {
		t.Fatal(err)
	}
	if !fit.Boundary || !fit.Components[0].Boundary || fit.Components[0].Variance != 0 {
		t.Errorf("expected a boundary fit, got %+v", fit.Components[0])
	}
	n := float64(len(y))
	var mean, ss float64
	for _, v := range y {
		mean += v / n
	}
	for _, v := range y {
		ss += (v - mean) * (v - mean)
	}
	s2 := ss / (n - 1)
	testkit.CheckWithin(t, "residual variance (OLS, computed)", fit.Sigma*fit.Sigma, s2, 1e-10, 0)
	testkit.CheckWithin(t, "residual variance (agri/values.json)", fit.Sigma*fit.Sigma, 13.8063, 1e-5, 0)
	testkit.CheckWithin(t, "intercept", fit.Coef[0].Estimate, mean, 1e-12, 0)
	testkit.CheckWithin(t, "se", fit.Coef[0].SE, math.Sqrt(s2/n), 1e-10, 0)
	for i := range y {
		testkit.CheckWithin(t, "fitted", fit.Fitted[i], mean, 1e-10, 1e-10)
	}
}
