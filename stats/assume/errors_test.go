package assume

import (
	"errors"
	"math"
	"testing"

	"gonum.org/v1/gonum/mat"

	"furrow/internal/testkit"
)

// TestDegenerate checks that data problems give errors, never panics.
func TestDegenerate(t *testing.T) {
	nan := math.NaN()
	ok := []float64{1, 2, 3.5, 4}
	cases := map[string]func() error{
		"ad n=7":            func() error { _, e := AndersonDarling([]float64{1, 2, 3, 4, 5, 6, 7}); return e },
		"ad constant":       func() error { _, e := AndersonDarling([]float64{3, 3, 3, 3, 3, 3, 3, 3}); return e },
		"ad nan":            func() error { _, e := AndersonDarling([]float64{1, 2, 3, 4, 5, 6, 7, nan}); return e },
		"levene one group":  func() error { _, e := Levene([][]float64{ok}); return e },
		"levene size one":   func() error { _, e := Levene([][]float64{ok, {5}}); return e },
		"levene nan":        func() error { _, e := Levene([][]float64{ok, {5, nan}}); return e },
		"levene pairs only": func() error { _, e := Levene([][]float64{{1, 2}, {5, 9}}); return e },
		"bf constant":       func() error { _, e := BrownForsythe([][]float64{{1, 1, 1}, {2, 2, 2}}); return e },
		"bartlett zero var": func() error { _, e := Bartlett([][]float64{ok, {2, 2, 2}}); return e },
		"bartlett empty":    func() error { _, e := Bartlett([][]float64{ok, nil}); return e },
		"moments n=3":       func() error { _, e := Moments([]float64{1, 2, 3}); return e },
		"moments constant":  func() error { _, e := Moments([]float64{7, 7, 7, 7, 7}); return e },
		"moments inf":       func() error { _, e := Moments([]float64{1, 2, 3, math.Inf(-1)}); return e },
		"bp length":         func() error { _, e := BreuschPaganFitted(ok, []float64{1, 2}); return e },
		"bp empty":          func() error { _, e := BreuschPaganFitted(nil, nil); return e },
		"bp too few":        func() error { _, e := BreuschPaganFitted([]float64{1, -1}, []float64{1, 2}); return e },
		"bp constant fit":   func() error { _, e := BreuschPaganFitted(ok, []float64{2, 2, 2, 2}); return e },
		"bp equal e2":       func() error { _, e := BreuschPaganFitted([]float64{1, -1, 1, -1}, []float64{1, 2, 3, 4}); return e },
		"bp nan fit":        func() error { _, e := BreuschPaganFitted(ok, []float64{1, nan, 3, 4}); return e },
		"bp collinear": func() error {
			z := mat.NewDense(4, 2, []float64{1, 2, 2, 4, 3, 6, 4, 8})
			_, e := BreuschPagan(ok, z)
			return e
		},
	}
	for name, f := range cases {
		if err := f(); err == nil {
			t.Errorf("%s: no error", name)
		}
	}
	if _, err := Levene([][]float64{ok, {5}}); !errors.Is(err, ErrTooFew) {
		t.Errorf("group of size one: %v, want ErrTooFew", err)
	}
}

// TestBartlettEqualVariances checks a property: identical spreads give
// K² = 0 and p = 1.
func TestBartlettEqualVariances(t *testing.T) {
	r, err := Bartlett([][]float64{{1, 2, 3}, {11, 12, 13}, {-5, -4, -3}})
	if err != nil {
		t.Fatal(err)
	}
	// Measured exact on linux/amd64; a few ulps are allowed.
	testkit.CheckClose(t, "K²", r.Stat, 0, 1e-15)
	testkit.CheckClose(t, "p", r.P, 1, 1e-15)
}
