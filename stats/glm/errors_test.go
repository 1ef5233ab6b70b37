package glm

import (
	"errors"
	"math"
	"strings"
	"testing"

	"gonum.org/v1/gonum/mat"

	"furrow/stats/design"
)

// blocked returns the model matrix of block + trt for nt treatments in nb
// complete blocks (plot i: treatment i % nt, block i / nt).
func blocked(t testing.TB, nt, nb int) *design.Matrix { return blockedReps(t, nt, nb, 1) }

// blockedReps is blocked with the whole trial repeated reps times (plot i:
// treatment i % nt, block (i / nt) % nb).
func blockedReps(t testing.TB, nt, nb, reps int) *design.Matrix {
	n := nt * nb * reps
	trt := design.Factor{Name: "trt", Codes: make([]int, n)}
	blk := design.Factor{Name: "block", Codes: make([]int, n)}
	for j := 0; j < nt; j++ {
		trt.Levels = append(trt.Levels, "T"+string(rune('1'+j)))
	}
	for j := 0; j < nb; j++ {
		blk.Levels = append(blk.Levels, "B"+string(rune('1'+j)))
	}
	for i := 0; i < n; i++ {
		trt.Codes[i] = i % nt
		blk.Codes[i] = (i / nt) % nb
	}
	fr, err := design.NewFrame([]design.Factor{trt, blk}, nil)
	if err != nil {
		t.Fatal(err)
	}
	m, err := design.Build(fr, design.Spec{Intercept: true, Terms: []design.Term{{Vars: []string{"block"}}, {Vars: []string{"trt"}}}})
	if err != nil {
		t.Fatal(err)
	}
	return m
}

// oneway returns the model matrix of trt alone for nt treatments with
// reps plots each (plot i: treatment i % nt); with nt = 1, the intercept.
func oneway(t testing.TB, nt, reps int) *design.Matrix {
	n := nt * reps
	trt := design.Factor{Name: "trt", Codes: make([]int, n)}
	for j := 0; j < nt; j++ {
		trt.Levels = append(trt.Levels, "T"+string(rune('1'+j)))
	}
	for i := 0; i < n; i++ {
		trt.Codes[i] = i % nt
	}
	fr, err := design.NewFrame([]design.Factor{trt}, nil)
	if err != nil {
		t.Fatal(err)
	}
	var terms []design.Term
	if nt > 1 {
		terms = []design.Term{{Vars: []string{"trt"}}}
	}
	m, err := design.Build(fr, design.Spec{Intercept: true, Terms: terms})
	if err != nil {
		t.Fatal(err)
	}
	return m
}

func wantErr(t *testing.T, what string, err error, contains ...string) {
	t.Helper()
	if err == nil {
		t.Errorf("%s: no error, want one containing %q", what, contains)
		return
	}
	for _, c := range contains {
		if !strings.Contains(err.Error(), c) {
			t.Errorf("%s: error %q, want it to contain %q", what, err, c)
		}
	}
}

// TestDataErrors: every data problem is a returned error naming the row.
func TestDataErrors(t *testing.T) {
	m := blocked(t, 3, 2)
	y := []float64{3, 5, 2, 4, 6, 1}
	n := []float64{10, 10, 10, 10, 10, 10}
	cases := []struct {
		name string
		fam  Family
		y    []float64
		opt  *Options
		want []string
	}{
		{"negative count", Poisson, []float64{3, -1, 2, 4, 6, 1}, nil, []string{"count at row 1", ">= 0"}},
		{"non-integer count", Poisson, []float64{3, 5, 2.5, 4, 6, 1}, nil, []string{"count at row 2", "whole number"}},
		{"NaN count", NegBinomial, []float64{3, 5, 2, math.NaN(), 6, 1}, nil, []string{"row 3", "finite"}},
		{"successes above trials", Binomial, []float64{3, 5, 12, 4, 6, 1}, &Options{Trials: n}, []string{"successes at row 2", "exceed the trials"}},
		{"zero trials", Binomial, y, &Options{Trials: []float64{10, 0, 10, 10, 10, 10}}, []string{"trials at row 1", "> 0"}},
		{"non-integer trials", Binomial, y, &Options{Trials: []float64{10, 10, 10.5, 10, 10, 10}}, []string{"trials at row 2", "whole number"}},
		{"Bernoulli above 1", Binomial, y, nil, []string{"successes at row 0", "exceed the trials"}},
		{"negative weight", Poisson, y, &Options{Weights: []float64{1, 1, -1, 1, 1, 1}}, []string{"weight at row 2"}},
		{"infinite offset", Poisson, y, &Options{Offset: []float64{0, 0, 0, math.Inf(1), 0, 0}}, []string{"offset at row 3"}},
		{"all weights 0", Poisson, y, &Options{Weights: make([]float64, 6)}, []string{"no observation has a positive weight"}},
		{"probit for counts", Poisson, y, &Options{Link: Probit}, []string{"poisson family takes no probit link"}},
		{"quasi negbin", NegBinomial, y, &Options{Dispersion: PearsonDispersion}, []string{"poisson and binomial families only"}},
		{"trials for counts", Poisson, y, &Options{Trials: n}, []string{"trials given"}},
		{"theta for poisson", Poisson, y, &Options{Theta: 2}, []string{"theta"}},
	}
	for _, c := range cases {
		_, err := FitModel(m, c.y, c.fam, c.opt)
		wantErr(t, c.name, err, append([]string{"fitting glm: "}, c.want...)...)
	}
	// Non-integer counts are fine in a quasi fit.
	if _, err := FitModel(m, []float64{3, 5, 2.5, 4, 6, 1}, Poisson, &Options{Dispersion: PearsonDispersion}); err != nil {
		t.Errorf("quasi-Poisson with a non-integer response: %v", err)
	}
	// No residual degrees of freedom.
	sat := mat.NewDense(2, 2, []float64{1, 0, 1, 1})
	_, err := Fit(sat, []float64{3, 5}, Poisson, nil)
	wantErr(t, "saturated", err, "no residual degrees of freedom")
	// Misuse panics.
	defer func() {
		if r := recover(); r == nil || !strings.HasPrefix(r.(string), "glm: ") {
			t.Errorf("length mismatch: recovered %v, want a panic starting with glm:", r)
		}
	}()
	FitModel(m, y[:5], Poisson, nil)
}

// TestInputsUnchanged: no input slice or matrix is modified.
func TestInputsUnchanged(t *testing.T) {
	m := blocked(t, 3, 3)
	y := []float64{3, 5, 2, 4, 6, 1, 7, 2, 0}
	n := []float64{10, 12, 10, 9, 10, 10, 11, 10, 10}
	off := []float64{0.1, 0, 0.2, 0, 0, 0.3, 0, 0, 0.1}
	w := []float64{1, 2, 1, 1, 0.5, 1, 1, 1, 1}
	cy, cn, co, cw := append([]float64(nil), y...), append([]float64(nil), n...), append([]float64(nil), off...), append([]float64(nil), w...)
	cx := mat.DenseCopyOf(m.X)
	for _, fam := range []Family{Poisson, Binomial, NegBinomial} {
		opt := &Options{Offset: off, Weights: w}
		if fam == Binomial {
			opt.Trials = n
		}
		r, err := FitModel(m, y, fam, opt)
		if err != nil && !errors.Is(err, ErrThetaInfinite) {
			t.Fatalf("%v: %v", fam, err)
		}
		if r != nil {
			r.QuantileResiduals(1)
			r.ZeroInflation()
		}
	}
	for i := range y {
		if y[i] != cy[i] || n[i] != cn[i] || off[i] != co[i] || w[i] != cw[i] {
			t.Fatalf("an input slice changed at %d", i)
		}
	}
	if !mat.Equal(cx, m.X) {
		t.Fatal("X changed")
	}
}

// TestSeparation: a treatment with all zero counts, all successes, a
// reference level with none, and a covariate that separates Bernoulli
// responses are each refused, naming the diverging coefficients.
func TestSeparation(t *testing.T) {
	m := blocked(t, 4, 3) // columns: (intercept), block[B2], block[B3], trt[T2], trt[T3], trt[T4]
	sep := func(err error) *SeparationError {
		var se *SeparationError
		if !errors.As(err, &se) {
			t.Fatalf("error %v, want a *SeparationError", err)
		}
		return se
	}
	// T3 has no insects in any block.
	y := []float64{5, 3, 0, 7, 6, 2, 0, 9, 4, 4, 0, 8}
	for _, fam := range []Family{Poisson, NegBinomial} {
		_, err := FitModel(m, y, fam, nil)
		se := sep(err)
		if len(se.Coefs) != 1 || se.Coefs[0] != "trt[T3]" || se.Signs[0] != -1 || !se.Localised {
			t.Errorf("%v: %+v, want trt[T3] -> -Inf", fam, se)
		}
		if want := []int{2, 6, 10}; !equalInts(se.Rows, want) {
			t.Errorf("%v: rows %v, want %v", fam, se.Rows, want)
		}
		wantErr(t, "message", err, "trt[T3] -> -Inf diverges", "3 observations", "rows 2, 6, 10")
	}
	// A zero elsewhere does not matter: T3 still all zero, T1 has one zero.
	y2 := []float64{0, 3, 0, 7, 6, 2, 0, 9, 4, 4, 0, 8}
	se := sep(func() error { _, err := FitModel(m, y2, Poisson, nil); return err }())
	if len(se.Coefs) != 1 || se.Coefs[0] != "trt[T3]" {
		t.Errorf("extra zero: %+v", se)
	}
	// The reference level T1 all zero: the intercept goes to -Inf and the
	// other treatments to +Inf (their differences from T1).
	y3 := []float64{0, 3, 2, 7, 0, 2, 5, 9, 0, 4, 3, 8}
	se = sep(func() error { _, err := FitModel(m, y3, Poisson, nil); return err }())
	wantC := []string{"(intercept)", "trt[T2]", "trt[T3]", "trt[T4]"}
	wantS := []int{-1, 1, 1, 1}
	if !equalStrings(se.Coefs, wantC) || !equalInts(se.Signs, wantS) {
		t.Errorf("reference level: %v %v, want %v %v", se.Coefs, se.Signs, wantC, wantS)
	}
	// All seeds of T4 germinated (binomial, quasi-complete separation).
	n := []float64{20, 20, 20, 20, 20, 20, 20, 20, 20, 20, 20, 20}
	g := []float64{12, 9, 14, 20, 11, 8, 15, 20, 13, 10, 12, 20}
	for _, link := range []Link{Logit, Probit, CLogLog} {
		_, err := FitModel(m, g, Binomial, &Options{Trials: n, Link: link})
		se := sep(err)
		if len(se.Coefs) != 1 || se.Coefs[0] != "trt[T4]" || se.Signs[0] != 1 {
			t.Errorf("%v: %+v, want trt[T4] -> +Inf", link, se)
		}
	}
	// Quasi fits are refused the same way.
	_, err := FitModel(m, g, Binomial, &Options{Trials: n, Dispersion: PearsonDispersion})
	sep(err)
	// Complete separation of Bernoulli responses by a covariate.
	x := mat.NewDense(8, 2, []float64{1, 1, 1, 2, 1, 3, 1, 4, 1, 5, 1, 6, 1, 7, 1, 8})
	_, err = Fit(x, []float64{0, 0, 0, 0, 1, 1, 1, 1}, Binomial, nil)
	se = sep(err)
	if !equalStrings(se.Coefs, []string{"x1", "x2"}) || !equalInts(se.Signs, []int{-1, 1}) || len(se.Rows) != 8 {
		t.Errorf("covariate: %+v, want x1 -> -Inf, x2 -> +Inf on all 8 rows", se)
	}
	// Overlap at one point: no separation, the fit exists.
	if _, err := Fit(x, []float64{0, 0, 0, 1, 0, 1, 1, 1}, Binomial, nil); err != nil {
		t.Errorf("overlapping Bernoulli responses: %v", err)
	}
	// All counts zero: every coefficient diverges.
	_, err = FitModel(m, make([]float64, 12), Poisson, nil)
	se = sep(err)
	if len(se.Rows) != 12 {
		t.Errorf("all zero: %+v", se)
	}
}

func equalInts(a, b []int) bool {
	if len(a) != len(b) {
		return false
	}
	for i := range a {
		if a[i] != b[i] {
			return false
		}
	}
	return true
}

func equalStrings(a, b []string) bool {
	if len(a) != len(b) {
		return false
	}
	for i := range a {
		if a[i] != b[i] {
			return false
		}
	}
	return true
}

func asSep(err error, se **SeparationError) bool { return errors.As(err, se) }

// TestNoConvergenceAndTheta: an iteration limit too small to converge is
// an error, and so is a negative binomial fit of counts with no
// over-dispersion (θ → ∞), which wraps ErrThetaInfinite.
func TestNoConvergenceAndTheta(t *testing.T) {
	m := blocked(t, 3, 4)
	y := []float64{12, 7, 3, 15, 8, 2, 11, 9, 4, 14, 6, 3}
	_, err := FitModel(m, y, Poisson, &Options{MaxIter: 2})
	wantErr(t, "two iterations", err, "did not converge in 2 steps")
	// Counts closer to their means than Poisson counts would be.
	_, err = FitModel(m, y, NegBinomial, nil)
	if !errors.Is(err, ErrThetaInfinite) {
		t.Errorf("under-dispersed counts: %v, want ErrThetaInfinite", err)
	}
	for _, o := range []*Options{{Tol: 1}, {Tol: -1}, {MaxIter: -1}, {Dispersion: Dispersion(7)}} {
		if _, err := FitModel(m, y, Poisson, o); err == nil {
			t.Errorf("options %+v: no error", *o)
		}
	}
}
