package lm

import (
	"testing"

	"gonum.org/v1/gonum/mat"

	"furrow/internal/testkit"
)

// TestUnscaledCov: (X'WX)^-1 times Sigma² is the covariance of the
// estimates (property), and an exact fit (Sigma 0) still has it: for
// X = [1 t] with t = 0, 1, 2, 3 and unit weights, X'X = [[4, 6], [6, 14]],
// whose inverse is [[0.7, -0.3], [-0.3, 0.2]] (worked by hand).
func TestUnscaledCov(t *testing.T) {
	x := mat.NewDense(4, 2, []float64{1, 0, 1, 1, 1, 2, 1, 3})
	exact, err := Fit(x, []float64{1, 3, 5, 7}, nil)
	if err != nil {
		t.Fatal(err)
	}
	want := []float64{0.7, -0.3, -0.3, 0.2}
	u := exact.UnscaledCov()
	for k, w := range want {
		testkit.CheckClose(t, "exact fit (X'X)^-1", u.At(k/2, k%2), w, 1e-14)
	}
	fit, err := Fit(x, []float64{1.2, 2.7, 5.4, 6.9}, &Options{Weights: []float64{1, 2, 0.5, 1}})
	if err != nil {
		t.Fatal(err)
	}
	u, c := fit.UnscaledCov(), fit.CoefCov()
	s2 := fit.Sigma * fit.Sigma
	for i := 0; i < 2; i++ {
		for j := 0; j < 2; j++ {
			testkit.CheckClose(t, "Sigma² (X'WX)^-1", s2*u.At(i, j), c.At(i, j), 1e-13)
		}
	}
}
