package infer

import (
	"math"
	"testing"

	"gonum.org/v1/gonum/mat"

	"furrow/stats/multcomp"

	"furrow/internal/testkit"
)

type warpRef struct {
	Breaks  []float64
	Wool    []string
	Tension []string
	Coef    []float64
	DFResid float64 `json:"df_resid"`
}

// warpFit fits f(breaks) ~ wool * tension with treatment coding in R's
// column order and returns the fit and the L of the tension marginal means
// (equal weights over wool), as emmeans builds it.
func warpFit(t *testing.T, w warpRef, tr Transform) (*ols, *mat.Dense) {
	x := mat.NewDense(len(w.Breaks), 6, nil)
	y := make([]float64, len(w.Breaks))
	cell := func(wool, tension string) []float64 {
		b := 0.0
		if wool == "B" {
			b = 1
		}
		m, h := 0.0, 0.0
		switch tension {
		case "M":
			m = 1
		case "H":
			h = 1
		}
		return []float64{1, b, m, h, b * m, b * h}
	}
	for i := range w.Breaks {
		x.SetRow(i, cell(w.Wool[i], w.Tension[i]))
		v, err := tr.Apply(w.Breaks[i])
		if err != nil {
			t.Fatal(err)
		}
		y[i] = v
	}
	L := mat.NewDense(3, 6, nil)
	for i, lev := range []string{"L", "M", "H"} {
		a, b := cell("A", lev), cell("B", lev)
		for j := range a {
			L.Set(i, j, 0.5*(a[j]+b[j]))
		}
	}
	return fitOLS(t, x, y), L
}

// emmeans 1.8.4.1 on lm(log(breaks) ~ wool*tension) for warpbreaks with
// rows 2, 11, 30, 47 dropped (testdata/ref.R in stats/multcomp). emmeans
// computes the same formulas, so 1e-9 relative.
func TestMarginalMeansLogAgainstEmmeans(t *testing.T) {
	var w warpRef
	refJSON(t, "warpbreaks", &w)
	var r struct {
		Level                                  []string
		Emmean, SE, DF, Lower, Upper           []float64
		Response, ResponseLower, ResponseUpper []float64
		Pairs                                  []string
		PairsEstimate, PairsSE, PairsT, PairsP []float64
		PairsLower, PairsUpper                 []float64
		Ratio, RatioLower, RatioUpper          []float64
		TrtVsCtrl                              []string
		TrtVsCtrlRatio, TrtVsCtrlLower         []float64
		TrtVsCtrlUpper, TrtVsCtrlP             []float64
		JointF, JointDF1, JointDF2, JointP     float64
	}
	refJSON(t, "emmeans_log", &struct {
		Level         *[]string  `json:"level"`
		Emmean        *[]float64 `json:"emmean"`
		SE            *[]float64 `json:"SE"`
		DF            *[]float64 `json:"df"`
		Lower         *[]float64 `json:"lower"`
		Upper         *[]float64 `json:"upper"`
		Response      *[]float64 `json:"response"`
		ResponseLower *[]float64 `json:"response_lower"`
		ResponseUpper *[]float64 `json:"response_upper"`
		Pairs         *[]string  `json:"pairs"`
		PairsEstimate *[]float64 `json:"pairs_estimate"`
		PairsSE       *[]float64 `json:"pairs_SE"`
		PairsT        *[]float64 `json:"pairs_t"`
		PairsP        *[]float64 `json:"pairs_p"`
		PairsLower    *[]float64 `json:"pairs_lower"`
		PairsUpper    *[]float64 `json:"pairs_upper"`
		Ratio         *[]float64 `json:"ratio"`
		RatioLower    *[]float64 `json:"ratio_lower"`
		RatioUpper    *[]float64 `json:"ratio_upper"`
		TrtVsCtrl     *[]string  `json:"trt_vs_ctrl"`
		TVCRatio      *[]float64 `json:"trt_vs_ctrl_ratio"`
		TVCLower      *[]float64 `json:"trt_vs_ctrl_lower"`
		TVCUpper      *[]float64 `json:"trt_vs_ctrl_upper"`
		TVCP          *[]float64 `json:"trt_vs_ctrl_p"`
		JointF        *float64   `json:"joint_F"`
		JointDF1      *float64   `json:"joint_df1"`
		JointDF2      *float64   `json:"joint_df2"`
		JointP        *float64   `json:"joint_p"`
	}{&r.Level, &r.Emmean, &r.SE, &r.DF, &r.Lower, &r.Upper, &r.Response, &r.ResponseLower, &r.ResponseUpper,
		&r.Pairs, &r.PairsEstimate, &r.PairsSE, &r.PairsT, &r.PairsP, &r.PairsLower, &r.PairsUpper,
		&r.Ratio, &r.RatioLower, &r.RatioUpper, &r.TrtVsCtrl, &r.TrtVsCtrlRatio, &r.TrtVsCtrlLower,
		&r.TrtVsCtrlUpper, &r.TrtVsCtrlP, &r.JointF, &r.JointDF1, &r.JointDF2, &r.JointP})

	tr := Transform{Kind: TransformLog}
	m, L := warpFit(t, w, tr)
	for i, b := range m.beta {
		if !testkit.Within(b, w.Coef[i], 1e-10, 1e-12) {
			t.Errorf("coefficient %d = %.15g, R lm %.15g", i, b, w.Coef[i])
		}
	}
	labels := []string{"L", "M", "H"}
	means, err := MarginalMeans(m, L, labels, Options{})
	if err != nil {
		t.Fatal(err)
	}
	back, err := BackTransformMeans(tr, means)
	if err != nil {
		t.Fatal(err)
	}
	for i, e := range means {
		chk := func(what string, got, want float64) {
			if !testkit.Within(got, want, 1e-9, 1e-12) {
				t.Errorf("%s %s = %.15g, emmeans %.15g", e.Label, what, got, want)
			}
		}
		chk("emmean", e.Estimate, r.Emmean[i])
		chk("SE", e.SE, r.SE[i])
		chk("df", e.DF, r.DF[i])
		chk("lower", e.Lower, r.Lower[i])
		chk("upper", e.Upper, r.Upper[i])
		chk("response", back[i].Response, r.Response[i])
		chk("response lower", back[i].Lower, r.ResponseLower[i])
		chk("response upper", back[i].Upper, r.ResponseUpper[i])
	}
	pw, err := Pairwise(m, L, labels, Options{})
	if err != nil {
		t.Fatal(err)
	}
	ratios, err := BackTransformDifferences(tr, pw)
	if err != nil {
		t.Fatal(err)
	}
	for i, e := range pw {
		if e.Label != r.Pairs[i] {
			t.Fatalf("pair %d is %q, emmeans %q", i, e.Label, r.Pairs[i])
		}
		for _, c := range []struct {
			what      string
			got, want float64
		}{{"estimate", e.Estimate, r.PairsEstimate[i]}, {"SE", e.SE, r.PairsSE[i]}, {"t", e.T, r.PairsT[i]},
			{"p", e.P, r.PairsP[i]}, {"lower", e.Lower, r.PairsLower[i]}, {"upper", e.Upper, r.PairsUpper[i]},
			{"ratio", ratios[i].Ratio, r.Ratio[i]}, {"ratio lower", ratios[i].Lower, r.RatioLower[i]},
			{"ratio upper", ratios[i].Upper, r.RatioUpper[i]}} {
			if !testkit.Within(c.got, c.want, 1e-9, 1e-13) {
				t.Errorf("%s %s = %.15g, emmeans %.15g", e.Label, c.what, c.got, c.want)
			}
		}
	}
	vc, err := VersusControl(m, L, labels, 0, Options{})
	if err != nil {
		t.Fatal(err)
	}
	vr, _ := BackTransformDifferences(tr, vc)
	for i, e := range vc {
		// emmeans labels the response-scale contrast "M / L".
		for _, c := range []struct {
			what      string
			got, want float64
		}{{"ratio", vr[i].Ratio, r.TrtVsCtrlRatio[i]}, {"lower", vr[i].Lower, r.TrtVsCtrlLower[i]},
			{"upper", vr[i].Upper, r.TrtVsCtrlUpper[i]}, {"p", e.P, r.TrtVsCtrlP[i]}} {
			if !testkit.Within(c.got, c.want, 1e-9, 1e-13) {
				t.Errorf("%s (%s) %s = %.15g, emmeans %.15g", e.Label, r.TrtVsCtrl[i], c.what, c.got, c.want)
			}
		}
	}
	// Joint test of the three pairwise rows (rank 2). emmeans stores F.ratio
	// rounded to 3 decimals, so F is checked to 5e-4 and p tightly.
	D := mat.NewDense(len(pw), 6, nil)
	for i, e := range pw {
		D.SetRow(i, e.L)
	}
	f, err := WaldF(m, D, m.df)
	if err != nil {
		t.Fatal(err)
	}
	if !testkit.Within(f.F, r.JointF, 0, 5e-4) || f.NumDF != r.JointDF1 || f.DenDF != r.JointDF2 || !testkit.Within(f.P, r.JointP, 1e-9, 1e-15) {
		t.Errorf("joint F = %.12g on (%v, %v), p %.12g; emmeans test(joint=TRUE) %.12g on (%v, %v), p %.12g",
			f.F, f.NumDF, f.DenDF, f.P, r.JointF, r.JointDF1, r.JointDF2, r.JointP)
	}
}

// emmeans 1.8.4.1 type="response" on lm(sqrt(breaks) ~ wool*tension):
// means squared, interval endpoints squared.
func TestMarginalMeansSqrtAgainstEmmeans(t *testing.T) {
	var w warpRef
	refJSON(t, "warpbreaks", &w)
	var r struct{ Response, Lower, Upper []float64 }
	refJSON(t, "emmeans_sqrt", &r)
	tr := Transform{Kind: TransformSqrt}
	m, L := warpFit(t, w, tr)
	means, err := MarginalMeans(m, L, []string{"L", "M", "H"}, Options{})
	if err != nil {
		t.Fatal(err)
	}
	back, _ := BackTransformMeans(tr, means)
	for i, b := range back {
		if !testkit.Within(b.Response, r.Response[i], 1e-9, 0) || !testkit.Within(b.Lower, r.Lower[i], 1e-9, 0) || !testkit.Within(b.Upper, r.Upper[i], 1e-9, 0) {
			t.Errorf("%s: %.12g (%.12g, %.12g), emmeans %.12g (%.12g, %.12g)", b.Label, b.Response, b.Lower, b.Upper, r.Response[i], r.Lower[i], r.Upper[i])
		}
	}
}

// Dunnett through Adjust on the chickwts cell-means fit: against the
// deterministic quadrature of testdata/ref.R (R integrate, rel.tol 1e-12)
// at 1e-8 relative, and multcomp glht (randomised Genz-Bretz, abseps 1e-9)
// at 1e-6 absolute. Tukey against R TukeyHSD: p at R ptukey's accuracy
// (2e-7 absolute), limits at R qtukey's eps (1e-4 of the half-width).
func TestFamiliesChickwts(t *testing.T) {
	var cw struct {
		Weight []float64
		Feed   []string
		Levels []string
	}
	refJSON(t, "chickwts", &cw)
	var dn struct {
		PQuad        []float64 `json:"p_quadrature"`
		PQuadGreater []float64 `json:"p_quadrature_greater"`
		PGlht        []float64 `json:"p_glht_genzbretz"`
		Crit         float64   `json:"critical_quadrature"`
		CritGreater  float64   `json:"critical_quadrature_greater"`
		Estimate     []float64
	}
	refJSON(t, "dunnett_chickwts", &dn)
	var tk struct {
		Comparison     []string
		Diff, Lwr, Upr []float64
		PAdj           []float64 `json:"p_adj"`
	}
	refJSON(t, "tukey_chickwts", &tk)
	m, L := oneWay(t, cw.Feed, cw.Levels, cw.Weight)

	vc, err := VersusControl(m, L, cw.Levels, 0, Options{})
	if err != nil {
		t.Fatal(err)
	}
	a, err := Adjust(m, vc, MethodDunnett, 0)
	if err != nil {
		t.Fatal(err)
	}
	if !testkit.Within(a.Critical, dn.Crit, 1e-8, 0) {
		t.Errorf("dunnett critical %.12g, quadrature in R %.12g", a.Critical, dn.Crit)
	}
	for i := range vc {
		if !testkit.Within(vc[i].Estimate, dn.Estimate[i], 1e-10, 1e-10) {
			t.Errorf("%s estimate %.12g, glht %.12g", vc[i].Label, vc[i].Estimate, dn.Estimate[i])
		}
		if !testkit.Within(a.PAdjusted[i], dn.PQuad[i], 1e-8, 1e-11) {
			t.Errorf("%s dunnett p %.15g, quadrature in R %.15g", vc[i].Label, a.PAdjusted[i], dn.PQuad[i])
		}
		if !testkit.Within(a.PAdjusted[i], dn.PGlht[i], 0, 1e-6) {
			t.Errorf("%s dunnett p %.15g, glht %.15g", vc[i].Label, a.PAdjusted[i], dn.PGlht[i])
		}
	}
	vg, _ := VersusControl(m, L, cw.Levels, 0, Options{Side: Greater})
	ag, err := Adjust(m, vg, MethodDunnett, 0)
	if err != nil {
		t.Fatal(err)
	}
	if !testkit.Within(ag.Critical, dn.CritGreater, 1e-8, 0) {
		t.Errorf("one-sided dunnett critical %.12g, quadrature in R %.12g", ag.Critical, dn.CritGreater)
	}
	for i := range vg {
		if !testkit.Within(ag.PAdjusted[i], dn.PQuadGreater[i], 1e-8, 1e-11) {
			t.Errorf("%s one-sided dunnett p %.15g, quadrature in R %.15g", vg[i].Label, ag.PAdjusted[i], dn.PQuadGreater[i])
		}
		if !math.IsInf(ag.Upper[i], 1) {
			t.Errorf("one-sided upper limit %v", ag.Upper[i])
		}
	}

	// TukeyHSD reports level_j - level_i for i < j; Pairwise gives i - j.
	pw, err := Pairwise(m, L, cw.Levels, Options{})
	if err != nil {
		t.Fatal(err)
	}
	at, err := Adjust(m, pw, MethodTukey, len(cw.Levels))
	if err != nil {
		t.Fatal(err)
	}
	for i, e := range pw {
		if !testkit.Within(-e.Estimate, tk.Diff[i], 1e-10, 1e-10) {
			t.Errorf("%s: %.12g, TukeyHSD %s %.12g", e.Label, e.Estimate, tk.Comparison[i], tk.Diff[i])
		}
		if !testkit.Within(at.PAdjusted[i], tk.PAdj[i], 0, 2e-7) {
			t.Errorf("%s: tukey p %.12g, TukeyHSD %.12g", e.Label, at.PAdjusted[i], tk.PAdj[i])
		}
		half := 0.5 * (tk.Upr[i] - tk.Lwr[i])
		if !testkit.Within(-at.Upper[i], tk.Lwr[i], 0, 1e-4*half) || !testkit.Within(-at.Lower[i], tk.Upr[i], 0, 1e-4*half) {
			t.Errorf("%s: tukey limits (%.8g, %.8g), TukeyHSD (%.8g, %.8g)", e.Label, -at.Upper[i], -at.Lower[i], tk.Lwr[i], tk.Upr[i])
		}
	}

	// Holm on the pairwise p-values equals multcomp.Adjust on them.
	ah, err := Adjust(m, pw, multcomp.Holm, 0)
	if err != nil {
		t.Fatal(err)
	}
	if len(ah.PAdjusted) != len(pw) || !math.IsNaN(ah.Critical) {
		t.Errorf("holm family: %d p-values, critical %v", len(ah.PAdjusted), ah.Critical)
	}
}
