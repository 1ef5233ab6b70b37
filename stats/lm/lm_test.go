package lm

import (
	"fmt"
	"math"
	"math/rand/v2"
	"strings"
	"testing"

	"gonum.org/v1/gonum/mat"

	"furrow/internal/testkit"
)

func TestFitErrors(t *testing.T) {
	x2 := mat.NewDense(3, 3, []float64{1, 1, 2, 1, 2, 3, 1, 3, 5})
	cases := []struct {
		name string
		x    *mat.Dense
		y    []float64
		opt  *Options
		want string
	}{
		{"n equals p", mat.NewDense(2, 2, []float64{1, 1, 1, 2}), []float64{1, 2}, nil, "no residual degrees of freedom"},
		{"all NaN", mat.NewDense(3, 1, []float64{1, 1, 1}), []float64{math.NaN(), math.NaN(), math.NaN()}, nil, "no finite value"},
		{"one NaN", mat.NewDense(3, 1, []float64{1, 1, 1}), []float64{1, math.NaN(), 2}, nil, "row 1"},
		{"zero X", mat.NewDense(3, 2, nil), []float64{1, 2, 3}, nil, "no nonzero column"},
		{"negative weight", mat.NewDense(3, 1, []float64{1, 1, 1}), []float64{1, 2, 3}, &Options{Weights: []float64{1, -1, 1}}, "weight at row 1"},
		{"singular, no df left", x2, []float64{1, 2, 4}, nil, "no residual degrees of freedom"},
	}
	for _, c := range cases {
		_, err := Fit(c.x, c.y, c.opt)
		if err == nil || !strings.Contains(err.Error(), c.want) {
			t.Errorf("%s: error %v, want one containing %q", c.name, err, c.want)
		}
	}
	defer func() {
		if recover() == nil {
			t.Error("mismatched lengths: want a panic (programmer misuse)")
		}
	}()
	Fit(mat.NewDense(3, 1, []float64{1, 1, 1}), []float64{1, 2}, nil)
}

// Values near the float64 limit overflow the sums of squares: an error,
// not a result full of NaN.
func TestOverflowIsError(t *testing.T) {
	x := mat.NewDense(3, 2, []float64{1, 1e300, 1, 2e300, 1, 3e300})
	if res, err := Fit(x, []float64{2, 4, 7}, nil); err == nil {
		t.Errorf("fit with X near 1e300 accepted: RSS %v", res.RSS)
	}
}

func TestConstantResponse(t *testing.T) {
	x := mat.NewDense(4, 2, []float64{1, 1, 1, 2, 1, 3, 1, 4})
	res, err := Fit(x, []float64{5, 5, 5, 5}, nil)
	if err != nil {
		t.Fatal(err)
	}
	// Exact: intercept 5, slope 0, zero residuals. Measured exact on
	// linux/amd64; a few ulps are allowed.
	testkit.CheckClose(t, "intercept", res.Estimate[0], 5, 1e-15)
	testkit.CheckClose(t, "slope", res.Estimate[1], 0, 1e-15)
	testkit.CheckClose(t, "sigma", res.Sigma, 0, 1e-15)
	if !math.IsNaN(res.R2) {
		t.Errorf("R2 = %g, want NaN (no variation)", res.R2)
	}
}

// TestSingularNamed: a duplicated column is aliased and named; the fit
// equals the fit without it (property, exact up to rounding).
func TestSingularNamed(t *testing.T) {
	r := rand.New(rand.NewPCG(3, 4))
	n := 30
	x := mat.NewDense(n, 4, nil)
	xs := mat.NewDense(n, 3, nil)
	y := make([]float64, n)
	for i := 0; i < n; i++ {
		a, b := r.NormFloat64(), r.NormFloat64()
		x.SetRow(i, []float64{1, a, b, a + 2*b})
		xs.SetRow(i, []float64{1, a, b})
		y[i] = 1 + a - b + r.NormFloat64()
	}
	res, err := Fit(x, y, nil)
	if err != nil {
		t.Fatal(err)
	}
	if len(res.Aliased) != 1 || res.Aliased[0] != 3 {
		t.Fatalf("aliased %v, want [3]", res.Aliased)
	}
	sub, err := Fit(xs, y, nil)
	if err != nil {
		t.Fatal(err)
	}
	// Measured identical on linux/amd64 (the aliased column is pivoted out
	// before the kept ones are reduced); a few ulps are allowed.
	for j := 0; j < 3; j++ {
		testkit.CheckClose(t, "coefficient", res.Estimate[j], sub.Estimate[j], 1e-15)
		testkit.CheckClose(t, "SE", res.StdErr[j], sub.StdErr[j], 1e-15)
	}
	// x4 = a + 2b: the null direction is (0, 1, 2, -1), so b4 alone is not
	// estimable but b2 + b4 (the total coefficient of a) is.
	if res.Estimable([]float64{0, 0, 0, 1}) || !res.Estimable([]float64{0, 1, 0, 1}) {
		t.Error("estimability of contrasts on the aliased column is wrong")
	}
	// Property: residuals are orthogonal to every column of X.
	for j := 0; j < 4; j++ {
		var s, norm float64
		for i := 0; i < n; i++ {
			s += x.At(i, j) * res.Resid[i]
			norm += x.At(i, j) * x.At(i, j)
		}
		// Measured at most 2.4e-16 of the scale |x_j| sigma sqrt(n).
		testkit.CheckWithin(t, fmt.Sprintf("X'e[%d]", j), s, 0, 0, 1e-14*math.Sqrt(norm)*res.Sigma*math.Sqrt(float64(n)))
	}
}

func benchFit(b *testing.B, n int) {
	const p = 30
	r := rand.New(rand.NewPCG(5, 6))
	x := mat.NewDense(n, p, nil)
	y := make([]float64, n)
	for i := 0; i < n; i++ {
		row := x.RawRowView(i)
		row[0] = 1
		for j := 1; j < p; j++ {
			row[j] = r.NormFloat64()
		}
		y[i] = row[1] + r.NormFloat64()
	}
	b.ResetTimer()
	for range b.N {
		if _, err := Fit(x, y, nil); err != nil {
			b.Fatal(err)
		}
	}
}

func BenchmarkFit1e3(b *testing.B) { benchFit(b, 1_000) }
func BenchmarkFit1e5(b *testing.B) { benchFit(b, 100_000) }
func BenchmarkFit1e6(b *testing.B) { benchFit(b, 1_000_000) }
