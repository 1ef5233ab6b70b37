package lmm

import (
	"errors"
	"math"
	"math/rand/v2"
	"testing"

	"gonum.org/v1/gonum/mat"

	"furrow/internal/testkit"
)

// TestGridNotBeaten: the REML criterion at the optimum is not beaten by any
// point of a grid around it (relative steps up to 5%), for every case of
// testdata/ref.json.
func TestGridNotBeaten(t *testing.T) {
	for _, c := range loadRef(t) {
		y, X, g := c.model()
		fit, err := Fit(y, X, g, &Options{Weights: c.Weights})
		if err != nil {
			t.Fatal(err)
		}
		s := fit.sys
		best := fit.Objective
		th := append([]float64(nil), fit.theta...)
		steps := []float64{-0.05, -0.01, -1e-3, 0, 1e-3, 0.01, 0.05}
		idx := make([]int, len(th))
		for {
			x := make([]float64, len(th))
			for k := range th {
				x[k] = th[k]*(1+steps[idx[k]]) + 1e-3*steps[idx[k]]
			}
			e, err := s.eval(x, nil)
			if err == nil {
				if v := s.profiled(e, REML); v < best-1e-9 {
					t.Errorf("%s: criterion %.12f at %v beats optimum %.12f at %v", c.Label, v, x, best, th)
				}
			}
			k := 0
			for ; k < len(idx); k++ {
				idx[k]++
				if idx[k] < len(steps) {
					break
				}
				idx[k] = 0
			}
			if k == len(idx) {
				break
			}
		}
	}
}

// ols returns the OLS coefficients and residual variance by QR.
func ols(y []float64, X *mat.Dense) ([]float64, float64, *mat.Dense) {
	n, p := X.Dims()
	var qr mat.QR
	qr.Factorize(X)
	b := mat.NewDense(p, 1, nil)
	if err := qr.SolveTo(b, false, mat.NewDense(n, 1, append([]float64(nil), y...))); err != nil {
		panic(err)
	}
	var rss float64
	for i := 0; i < n; i++ {
		r := y[i] - mat.Dot(X.RowView(i), b.ColView(0))
		rss += r * r
	}
	s2 := rss / float64(n-p)
	var xtx, inv mat.Dense
	xtx.Mul(X.T(), X)
	if err := inv.Inverse(&xtx); err != nil {
		panic(err)
	}
	inv.Scale(s2, &inv)
	return mat.Col(nil, 0, b), s2, &inv
}

// TestZeroComponentEqualsOLS: a seeded data set whose group effect is
// absent and whose group means are deliberately under-dispersed gives a
// boundary fit; the fit then equals the OLS fit (coefficients, SEs,
// residual variance), and the Satterthwaite df equal n - p.
func TestZeroComponentEqualsOLS(t *testing.T) {
	rng := rand.New(rand.NewPCG(7, 11))
	n, q := 60, 10
	y := make([]float64, n)
	X := mat.NewDense(n, 2, nil)
	idx := make([]int, n)
	for i := range y {
		idx[i] = i % q
		x := float64(i%7) - 3
		X.Set(i, 0, 1)
		X.Set(i, 1, x)
		y[i] = 2 + 0.5*x + rng.NormFloat64()
	}
	// Remove the group means of the noise so MS_between < MS_within.
	mean := make([]float64, q)
	for i, a := range idx {
		mean[a] += (y[i] - 2 - 0.5*X.At(i, 1)) / float64(n/q)
	}
	for i, a := range idx {
		y[i] -= 0.9 * mean[a]
	}
	fit, err := Fit(y, X, []Grouping{{Name: "g", Index: idx, Levels: q}}, nil)
	if err != nil {
		t.Fatal(err)
	}
	if !fit.Components[0].Boundary {
		t.Fatalf("expected boundary fit, got %+v", fit.Components[0])
	}
	b, s2, cov := ols(y, X)
	testkit.CheckWithin(t, "sigma^2 vs OLS", fit.Sigma*fit.Sigma, s2, 1e-9, 0)
	for j := range b {
		testkit.CheckWithin(t, "beta vs OLS", fit.Coef[j].Estimate, b[j], 1e-9, 1e-12)
		testkit.CheckWithin(t, "se vs OLS", fit.Coef[j].SE, math.Sqrt(cov.At(j, j)), 1e-9, 0)
	}
}

// TestBalancedStratumDF: balanced repeated measures (plots nested in
// treatments, times within plots) -> the treatment test has the whole-plot
// error df (plots - treatments) and the time test the sub-plot df, for
// both Satterthwaite and Kenward-Roger (classical split-plot ANOVA).
func TestBalancedStratumDF(t *testing.T) {
	rng := rand.New(rand.NewPCG(3, 5))
	plots, trts, times := 12, 3, 4
	n := plots * times
	trt := make([]int, n)
	tim := make([]int, n)
	plot := make([]int, n)
	y := make([]float64, n)
	u := make([]float64, plots)
	for i := range u {
		u[i] = 2 * rng.NormFloat64()
	}
	for i := 0; i < n; i++ {
		plot[i] = i / times
		trt[i] = plot[i] % trts
		tim[i] = i % times
		y[i] = 10 + float64(trt[i]) + 0.3*float64(tim[i]) + u[plot[i]] + rng.NormFloat64()
	}
	X, terms := sumCoded(n, [][]int{trt, tim}, []int{trts, times})
	fit, err := Fit(y, X, []Grouping{{Name: "plot", Index: plot, Levels: plots}}, nil)
	if err != nil {
		t.Fatal(err)
	}
	if fit.Components[0].Boundary {
		t.Skip("seeded data gave a boundary fit")
	}
	// Closed-form df; measured agreement 2.3e-8 (Satterthwaite, numerical
	// Hessian) and 1.4e-15 (Kenward-Roger).
	for _, m := range []Method{Satterthwaite, KenwardRoger} {
		tt, err := fit.TermTests(terms, 3, m)
		if err != nil {
			t.Fatal(err)
		}
		testkit.CheckWithin(t, m.String()+" treatment df", tt[0].DenDF, float64(plots-trts), dfTol(m), 0)
		testkit.CheckWithin(t, m.String()+" time df", tt[1].DenDF, float64((plots-trts)*(times-1)), dfTol(m), 0)
		testkit.CheckWithin(t, m.String()+" interaction df", tt[2].DenDF, float64((plots-trts)*(times-1)), dfTol(m), 0)
	}
}

// TestDegenerate: inputs that cannot carry a mixed model give clear errors,
// never a panic.
func TestDegenerate(t *testing.T) {
	n := 12
	y := make([]float64, n)
	idx := make([]int, n)
	one := make([]int, n)
	each := make([]int, n)
	for i := range y {
		y[i] = float64(i%5) + 0.1*float64(i)
		idx[i] = i % 4
		each[i] = i
	}
	X := ones(n)
	cases := []struct {
		name string
		y    []float64
		X    *mat.Dense
		g    []Grouping
		want error
	}{
		{"one level", y, X, []Grouping{{Name: "g", Index: one, Levels: 1}}, ErrDegenerateGrouping},
		{"groups of size one", y, X, []Grouping{{Name: "g", Index: each, Levels: n}}, ErrDegenerateGrouping},
		{"constant response", make([]float64, n), X, []Grouping{{Name: "g", Index: idx, Levels: 4}}, ErrNoResidual},
	}
	// Fixed effect for every group level, and the same groups random.
	Xa := mat.NewDense(n, 4, nil)
	for i := 0; i < n; i++ {
		Xa.Set(i, idx[i], 1)
	}
	cases = append(cases, struct {
		name string
		y    []float64
		X    *mat.Dense
		g    []Grouping
		want error
	}{"aliased with random term", y, Xa, []Grouping{{Name: "g", Index: idx, Levels: 4}}, ErrAliased})
	// Rank-deficient X.
	Xr := mat.NewDense(n, 2, nil)
	for i := 0; i < n; i++ {
		Xr.Set(i, 0, 1)
		Xr.Set(i, 1, 2)
	}
	cases = append(cases, struct {
		name string
		y    []float64
		X    *mat.Dense
		g    []Grouping
		want error
	}{"rank deficient", y, Xr, []Grouping{{Name: "g", Index: idx, Levels: 4}}, ErrRankDeficient})
	for _, c := range cases {
		_, err := Fit(c.y, c.X, c.g, nil)
		if !errors.Is(err, c.want) {
			t.Errorf("%s: error %v, want %v", c.name, err, c.want)
		}
	}
	// Bad codes and NaN response are errors too.
	bad := append([]int(nil), idx...)
	bad[3] = 9
	if _, err := Fit(y, X, []Grouping{{Name: "g", Index: bad, Levels: 4}}, nil); err == nil {
		t.Error("code out of range accepted")
	}
	yn := append([]float64(nil), y...)
	yn[0] = math.NaN()
	if _, err := Fit(yn, X, []Grouping{{Name: "g", Index: idx, Levels: 4}}, nil); err == nil {
		t.Error("NaN response accepted")
	}
	// Inputs are not modified.
	y0 := append([]float64(nil), y...)
	if _, err := Fit(y, X, []Grouping{{Name: "g", Index: idx, Levels: 4}}, nil); err != nil {
		t.Fatal(err)
	}
	for i := range y {
		if y[i] != y0[i] {
			t.Fatal("response modified")
		}
	}
}
