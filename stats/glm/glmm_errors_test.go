package glm

import (
	"math"
	"strings"
	"testing"

	"gonum.org/v1/gonum/mat"
)

// Degenerate inputs: each must give an error or a flagged fit, never a
// panic or a NaN reported as converged.
func TestMixedDegenerate(t *testing.T) {
	X, y, g := plotCounts(400)
	// a plot whose counts are all zero: the mode is finite (the penalty
	// bounds it), the fit converges.
	y0 := append([]float64(nil), y...)
	for i := 0; i < 10; i++ {
		y0[i] = 0
	}
	r, err := FitMixed(X, y0, Poisson, g, nil)
	if err != nil || !r.Converged || math.IsNaN(r.LogLik) || math.IsNaN(r.Modes[0][0]) {
		t.Fatalf("all-zero plot: %v %+v", err, r)
	}
	if r.Modes[0][0] >= 0 {
		t.Errorf("all-zero plot: mode %g, want negative", r.Modes[0][0])
	}
	// a treatment with all zero counts: complete separation, an error.
	ys := append([]float64(nil), y...)
	for i := range ys {
		if X.At(i, 1) == 1 {
			ys[i] = 0
		}
	}
	if _, err := FitMixed(X, ys, Poisson, g, nil); err == nil || !strings.Contains(err.Error(), "mixed model") {
		t.Errorf("separation: err = %v, want an error", err)
	}
	// no plot variation at all: counts identical within treatment, the
	// variance is at its boundary and flagged.
	yc := make([]float64, len(y))
	for i := range yc {
		yc[i] = float64(2 + i%3)
	}
	r, err = FitMixed(X, yc, Poisson, g, nil)
	if err != nil {
		t.Fatalf("zero variance: %v", err)
	}
	if !r.Boundary[0] || r.SD[0] > 1e-3 || math.IsNaN(r.LogLik) {
		t.Errorf("zero variance: boundary %v, sd %g", r.Boundary, r.SD)
	}
	// bad codes, too many points for crossed terms, negative counts.
	bad := []RandomIntercept{{Name: "plot", Index: make([]int, len(y)), Levels: 0}}
	if _, err := FitMixed(X, y, Poisson, bad, nil); err == nil {
		t.Error("zero levels accepted")
	}
	if _, err := FitMixed(X, y, Poisson, append(g, g[0]), &MixedOptions{Points: 5}); err == nil {
		t.Error("quadrature with two factors accepted")
	}
	yn := append([]float64(nil), y...)
	yn[3] = -1
	if _, err := FitMixed(X, yn, Poisson, g, nil); err == nil {
		t.Error("negative count accepted")
	}
}

// The Wald statistic of one coefficient is its z squared, and the F form
// with DFNone has the χ² p-value.
func TestMixedWald(t *testing.T) {
	X, y, g := plotCounts(400)
	r, err := FitMixed(X, y, Poisson, g, nil)
	if err != nil {
		t.Fatal(err)
	}
	L := mat.NewDense(1, 4, []float64{0, 1, 0, 0})
	w, err := r.WaldChi2(L)
	if err != nil {
		t.Fatal(err)
	}
	if d := math.Abs(w.Stat - r.Z[1]*r.Z[1]); d > 1e-9*w.Stat {
		t.Errorf("wald %g, z² %g", w.Stat, r.Z[1]*r.Z[1])
	}
	if d := math.Abs(w.P - r.PValue[1]); d > 1e-12 {
		t.Errorf("wald p %g, z p %g", w.P, r.PValue[1])
	}
	f, err := r.WaldF(L, DFResidual)
	if err != nil || f.DF2 != r.N-r.P || f.P <= w.P {
		t.Errorf("F: %+v %v", f, err)
	}
}
