package infer

import (
	"testing"

	"furrow/internal/testkit"
)

type tostRef struct {
	X, Y        []float64
	LowerMargin float64 `json:"lower_margin"`
	UpperMargin float64 `json:"upper_margin"`
	TLower      float64 `json:"t_lower"`
	PLower      float64 `json:"p_lower"`
	TUpper      float64 `json:"t_upper"`
	PUpper      float64 `json:"p_upper"`
	DF          float64 `json:"df"`
	CILower     float64 `json:"ci_lower"`
	CIUpper     float64 `json:"ci_upper"`
	RatioLower  float64 `json:"ratio_lower"`
	RatioUpper  float64 `json:"ratio_upper"`
}

// twoGroups fits the two-sample pooled model on analysis-scale data and
// returns the difference x - y.
func twoGroups(t *testing.T, x, y []float64) Estimate {
	g := make([]string, 0, len(x)+len(y))
	v := make([]float64, 0, len(x)+len(y))
	for _, a := range x {
		g, v = append(g, "x"), append(v, a)
	}
	for _, b := range y {
		g, v = append(g, "y"), append(v, b)
	}
	m, L := oneWay(t, g, []string{"x", "y"}, v)
	d, err := VersusControl(m, L, []string{"x", "y"}, 1, Options{})
	if err != nil {
		t.Fatal(err)
	}
	return d[0]
}

// TOST against two one-sided pooled t.tests in R 4.2.2 (testdata/ref.R in
// stats/multcomp; PlantGrowth trt2 vs ctrl), and on the log scale with the
// ratio margin 0.80-1.25 (17 digits). Same formulas: agreement measured on
// linux/amd64 beside each tolerance (testkit.Close; p relative).
func TestTOSTAgainstTwoTTests(t *testing.T) {
	for _, c := range []struct {
		key    string
		tr     Transform
		margin func(r tostRef) Margin
	}{
		{"tost_plantgrowth", Transform{Kind: TransformNone}, func(r tostRef) Margin {
			return Margin{Scale: MarginDifference, Lower: r.LowerMargin, Upper: r.UpperMargin}
		}},
		{"tost_plantgrowth_log", Transform{Kind: TransformLog}, func(r tostRef) Margin {
			return Margin{Scale: MarginRatio, Lower: r.RatioLower, Upper: r.RatioUpper}
		}},
	} {
		var r tostRef
		refJSON(t, c.key, &r)
		d := twoGroups(t, r.X, r.Y)
		e, err := TOST(d, c.tr, c.margin(r), 0.05)
		if err != nil {
			t.Fatal(err)
		}
		for _, v := range []struct {
			what      string
			got, want float64
			tol       float64
		}{
			{"lower margin", e.Lower, r.LowerMargin, 1e-14}, // agreement 2.8e-16
			{"upper margin", e.Upper, r.UpperMargin, 5e-15}, // 2.2e-16
			{"t lower", e.TLower, r.TLower, 5e-13},          // 1.6e-14
			{"t upper", e.TUpper, r.TUpper, 5e-13},          // 1.4e-14
			{"ci lower", e.CILower, r.CILower, 1e-13},       // 3.5e-15
			{"ci upper", e.CIUpper, r.CIUpper, 1e-13}} {     // 2.8e-15
			testkit.CheckClose(t, c.key+" "+v.what+" (R t.test)", v.got, v.want, v.tol)
		}
		testkit.CheckRelClose(t, c.key+" p lower (R t.test)", e.PLower, r.PLower, 5e-12) // 2.2e-13
		testkit.CheckRelClose(t, c.key+" p upper (R t.test)", e.PUpper, r.PUpper, 2e-12) // 9.6e-14
		if e.DF != r.DF {
			t.Errorf("%s df = %v, R t.test %v", c.key, e.DF, r.DF)
		}
		want := r.PLower < 0.05 && r.PUpper < 0.05
		if e.Equivalent != want {
			t.Errorf("%s: equivalent = %v, R p-values %v %v", c.key, e.Equivalent, r.PLower, r.PUpper)
		}
		// Non-inferiority is the matching one-sided half.
		ni, err := NonInferiorityTest(d, c.tr, c.margin(r), HigherIsBetter, 0.05)
		if err != nil {
			t.Fatal(err)
		}
		testkit.CheckRelClose(t, c.key+" non-inferiority (higher better) p", ni.P, r.PLower, 5e-12)         // 2.2e-13
		testkit.CheckClose(t, c.key+" non-inferiority (higher better) bound", ni.CIBound, r.CILower, 1e-13) // 3.5e-15
		nl, err := NonInferiorityTest(d, c.tr, c.margin(r), LowerIsBetter, 0.05)
		if err != nil {
			t.Fatal(err)
		}
		testkit.CheckRelClose(t, c.key+" non-inferiority (lower better) p", nl.P, r.PUpper, 2e-12)         // 9.6e-14
		testkit.CheckClose(t, c.key+" non-inferiority (lower better) bound", nl.CIBound, r.CIUpper, 1e-13) // 2.8e-15
	}
}

// Back-transforms: exact identities, checked to rounding (worst measured
// on linux/amd64: 8.3e-16 relative, 1.7e-16 absolute).
func TestInverseTransforms(t *testing.T) {
	for _, tr := range []Transform{{Kind: TransformLog}, {Kind: TransformLogOffset, Offset: 1}, {Kind: TransformLog10},
		{Kind: TransformSqrt}, {Kind: TransformReciprocal}, {Kind: TransformArcsine}, {Kind: TransformBoxCox, Lambda: 0.5},
		{Kind: TransformBoxCox, Lambda: -1}, {Kind: TransformBoxCox, Lambda: 0}} {
		for _, y := range []float64{0.05, 0.3, 0.9} {
			x, err := tr.Apply(y)
			if err != nil {
				t.Fatal(err)
			}
			if back := tr.Inverse(x); !testkit.Within(back, y, 1e-14, 1e-15) {
				t.Errorf("%v: inverse(apply(%v)) = %v", tr, y, back)
			}
		}
	}
	// The reciprocal reverses the interval.
	b, err := BackTransformMeans(Transform{Kind: TransformReciprocal}, []Estimate{{Estimate: 0.5, Lower: 0.25, Upper: 1}})
	if err != nil {
		t.Fatal(err)
	}
	if b[0].Response != 2 || b[0].Lower != 1 || b[0].Upper != 4 {
		t.Errorf("reciprocal back-transform %+v, want 2 (1, 4)", b[0])
	}
	if _, err := BackTransformDifferences(Transform{Kind: TransformSqrt}, nil); err == nil {
		t.Error("ratio of sqrt-scale means accepted")
	}
	if _, err := (Transform{Kind: TransformLog}).Apply(0); err == nil {
		t.Error("log(0) accepted")
	}
}
