package infer

import (
	"fmt"
	"math"
	"testing"

	"gonum.org/v1/gonum/mat"

	"furrow/internal/testkit"
)

// Robson's orthogonal polynomials for the rates 0, 60, 120, 180, 300
// against R's contr.poly(5, scores = rates) (QR of the centred powers),
// and the trend contrasts over the nitrogen means, marginal and within
// each regime, against emmeans with those coefficients as a custom
// contrast. The coefficients agree to 2.2e-16 absolute (tolerance 2e-14).
func TestPolynomialContrastsAgainstEmmeans(t *testing.T) {
	r := loadContrastRef(t)
	polys, err := OrthogonalPolynomials(r.Poly.Values, 4)
	if err != nil {
		t.Fatal(err)
	}
	var wc float64
	for d := range polys {
		for i := range polys[d] {
			testkit.CheckWithin(t, fmt.Sprintf("%s coefficient %d (contr.poly)", r.Poly.Names[d], i+1), polys[d][i], r.Poly.Coef[d][i], 0, 2e-14)
			wc = math.Max(wc, math.Abs(polys[d][i]-r.Poly.Coef[d][i]))
		}
	}
	m, dm := nitrogenFit(t, r, Transform{Kind: TransformNone})
	levels := r.NitrogenData.NitrogenLevels
	cs, err := PolynomialContrasts(levels, r.NitrogenData.Rates, 4)
	if err != nil {
		t.Fatal(err)
	}
	var worst agreement
	L, _, err := dm.MeansGrid([]string{"nitrogen"})
	if err != nil {
		t.Fatal(err)
	}
	got, err := LevelContrasts(m, L, levels, cs, Options{})
	if err != nil {
		t.Fatal(err)
	}
	want := r.table(t, "poly_n")
	for i, e := range got {
		if e.Label != want.Contrast[i] {
			t.Errorf("trend %d named %q, emmeans %q", i+1, e.Label, want.Contrast[i])
		}
	}
	checkEstimates(t, "poly_n", got, want, &worst)
	by, err := LevelContrastsBy(m, groupsOf(t, dm, "nitrogen", "irrigation"), cs, Options{})
	if err != nil {
		t.Fatal(err)
	}
	want = r.table(t, "poly_n_by_i")
	checkBy(t, "poly_n_by_i", "irrigation", by, want.Irrigation)
	checkEstimates(t, "poly_n_by_i", flatten(by), want, &worst)
	t.Logf("worst disagreement: coefficients %.2g absolute, estimates %.2g, p %.2g", wc, worst.est, worst.p)
}

// Interaction contrasts of irrigation pairs by the nitrogen trends:
// contrast(emm, interaction = c("pairwise", <Robson trends>)).
func TestInteractionTrendsAgainstEmmeans(t *testing.T) {
	r := loadContrastRef(t)
	trends, err := PolynomialContrasts(r.NitrogenData.NitrogenLevels, r.NitrogenData.Rates, 4)
	if err != nil {
		t.Fatal(err)
	}
	var worst agreement
	var wr float64
	checkInteraction(t, r, "int_pairwise_robson", Transform{Kind: TransformNone}, trends, &worst, &wr)
	t.Logf("worst relative disagreement: estimates %.2g, p %.2g", worst.est, worst.p)
}

// Orthogonal polynomial coefficients are orthonormal and sum to zero, and
// the linear one increases with the values, for unequal spacings, values
// far from zero, a wide range and twelve levels to degree 11; for three
// equally spaced values they are (-1, 0, 1)/√2 and (1, -2, 1)/√6 (worked
// by hand). Measured on linux/amd64: sums within 2.1e-16 of zero, inner
// products within 2.3e-16 of 0 or 1 (tolerances 2e-15 and 1e-14).
func TestOrthogonalPolynomialsProperties(t *testing.T) {
	for _, x := range [][]float64{
		{0, 60, 120, 180, 300},
		{2001, 2002, 2003, 2005, 2008, 2013, 2021},
		{0, 1, 10, 100, 1000},
		{-3.5, 0.25, 0.5, 7},
		{300, 0, 120, 60, 180}, // any order
		{1e6, 1e6 + 1, 1e6 + 3},
		{0, 25, 50, 100, 150, 200, 300, 400, 600, 800, 1200, 1600},
	} {
		polys, err := OrthogonalPolynomials(x, len(x)-1)
		if err != nil {
			t.Fatal(err)
		}
		for a := range polys {
			var s float64
			for _, v := range polys[a] {
				s += v
			}
			testkit.CheckWithin(t, fmt.Sprintf("%v degree %d sum", x, a+1), s, 0, 0, 2e-15)
			for b := a; b < len(polys); b++ {
				want := 0.0
				if a == b {
					want = 1
				}
				testkit.CheckWithin(t, fmt.Sprintf("%v degrees %d·%d", x, a+1, b+1), dot(polys[a], polys[b]), want, 0, 1e-14)
			}
		}
		// The linear contrast is increasing in x.
		for i := range x {
			for j := range x {
				if x[i] < x[j] && !(polys[0][i] < polys[0][j]) {
					t.Errorf("%v: linear coefficient of %v is not below that of %v", x, x[i], x[j])
				}
			}
		}
	}
	p, err := OrthogonalPolynomials([]float64{1, 2, 3}, 2)
	if err != nil {
		t.Fatal(err)
	}
	r2, r6 := 1/math.Sqrt2, 1/math.Sqrt(6)
	testkit.CheckSlice(t, "linear of 1, 2, 3", p[0], []float64{-r2, 0, r2}, 1e-15)
	testkit.CheckSlice(t, "quadratic of 1, 2, 3", p[1], []float64{r6, -2 * r6, r6}, 1e-15)
}

// On means exactly linear in the rates, μ_i = α + β x_i, the linear trend
// estimate is β·sqrt(Σ (x_i - x̄)²) and the higher trends vanish. The
// model is the cell-means identity (β the means, V = I) with 10 df.
// Measured: the slope relation to 1.9e-16 relative, the higher trends
// within 4.7e-15 of zero.
func TestLinearTrendSlope(t *testing.T) {
	x := []float64{0, 60, 120, 180, 300}
	alpha, slope := 12.5, 0.037
	k := len(x)
	beta := make([]float64, k)
	for i := range x {
		beta[i] = alpha + slope*x[i]
	}
	m := &ols{beta: beta, cov: identitySym(k), df: 10}
	L := mat.NewDense(k, k, nil)
	for i := 0; i < k; i++ {
		L.Set(i, i, 1)
	}
	levels := []string{"0", "60", "120", "180", "300"}
	cs, err := PolynomialContrasts(levels, x, 4)
	if err != nil {
		t.Fatal(err)
	}
	got, err := LevelContrasts(m, L, levels, cs, Options{})
	if err != nil {
		t.Fatal(err)
	}
	var ss float64
	for _, v := range x {
		ss += (v - 132) * (v - 132) // mean 660/5 = 132
	}
	testkit.CheckRelClose(t, "linear trend / sqrt(Sxx)", got[0].Estimate/math.Sqrt(ss), slope, 1e-14)
	testkit.CheckClose(t, "linear trend SE (unit coefficients, V = I)", got[0].SE, 1, 1e-14)
	for _, e := range got[1:] {
		// The means are about 10 to 24; their rounding leaves a few 1e-15.
		testkit.CheckWithin(t, e.Label+" trend on linear means", e.Estimate, 0, 0, 1e-13)
	}
}

func TestPolynomialContrastErrors(t *testing.T) {
	for _, c := range []struct {
		levels []string
		x      []float64
		degree int
	}{
		{[]string{"0", "60"}, []float64{0, 60, 120}, 1},        // lengths differ
		{[]string{"0", "0", "60"}, []float64{0, 1, 2}, 1},      // level twice
		{[]string{"0", "60", "120"}, []float64{0, 60, 60}, 1},  // value twice
		{[]string{"0", "60", "120"}, []float64{0, 60, 120}, 3}, // degree too high
		{[]string{"0", "60", "120"}, []float64{0, 60, 120}, 0}, // degree too low
		{[]string{"0", "60"}, []float64{0, math.Inf(1)}, 1},    // not finite
		{[]string{"0"}, []float64{0}, 1},                       // one level
		{[]string{"a", "b", "c"}, []float64{0, 1e-12, 1}, 2},   // too close for a quadratic
	} {
		if _, err := PolynomialContrasts(c.levels, c.x, c.degree); err == nil {
			t.Errorf("polynomial contrasts %v at %v degree %d: want an error", c.levels, c.x, c.degree)
		}
	}
}
