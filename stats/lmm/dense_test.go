package lmm

import (
	"math"
	"testing"

	"gonum.org/v1/gonum/mat"

	"furrow/internal/testkit"
)

// denseREML computes the profiled REML criterion, beta and the BLUPs by
// forming H = I + Z Lambda Lambda' Z' (N x N) directly: an independent
// check of the structured elimination (Harville 1977, eq. for the
// restricted likelihood; BLUP b = Lambda Lambda' Z' H^{-1} (y - X beta)).
func denseREML(y []float64, X *mat.Dense, g []Grouping, theta []float64) (float64, []float64, [][]float64) {
	n, p := X.Dims()
	H := mat.NewSymDense(n, nil)
	for i := 0; i < n; i++ {
		for j := 0; j <= i; j++ {
			v := 0.0
			if i == j {
				v = 1
			}
			for k, gr := range g {
				if gr.Index[i] == gr.Index[j] {
					v += theta[k] * theta[k]
				}
			}
			H.SetSym(i, j, v)
		}
	}
	var ch mat.Cholesky
	if !ch.Factorize(H) {
		panic("H not positive definite")
	}
	ldH := ch.LogDet()
	var HiX mat.Dense
	if err := ch.SolveTo(&HiX, X); err != nil {
		panic(err)
	}
	var XtHiX mat.Dense
	XtHiX.Mul(X.T(), &HiX)
	var cx mat.Cholesky
	if !cx.Factorize(mat.NewSymDense(p, XtHiX.RawMatrix().Data)) {
		panic("X'H^{-1}X not positive definite")
	}
	yv := mat.NewVecDense(n, append([]float64(nil), y...))
	var Hiy mat.VecDense
	if err := ch.SolveVecTo(&Hiy, yv); err != nil {
		panic(err)
	}
	var rhs mat.VecDense
	rhs.MulVec(X.T(), &Hiy)
	var beta mat.VecDense
	if err := cx.SolveVecTo(&beta, &rhs); err != nil {
		panic(err)
	}
	var r mat.VecDense
	r.MulVec(X, &beta)
	r.SubVec(yv, &r)
	var Hir mat.VecDense
	if err := ch.SolveVecTo(&Hir, &r); err != nil {
		panic(err)
	}
	q := mat.Dot(&r, &Hir)
	np := float64(n - p)
	crit := ldH + cx.LogDet() + np*(1+math.Log(2*math.Pi*q/np))
	blups := make([][]float64, len(g))
	for k, gr := range g {
		b := make([]float64, gr.Levels)
		for i := 0; i < n; i++ {
			b[gr.Index[i]] += theta[k] * theta[k] * Hir.AtVec(i)
		}
		blups[k] = b
	}
	return crit, mat.Col(nil, 0, &beta), blups
}

// TestStructuredEqualsDense: for small crossed and nested designs with
// missing cells (site, genotype, site:genotype: a nested chain plus a
// crossed rest block), the structured criterion, fixed effects and BLUPs
// equal a direct N x N computation at several theta and at the optimum.
func TestStructuredEqualsDense(t *testing.T) {
	y, _, g, _ := crossedTrial(5, 7, 2)
	// Drop some rows to unbalance the design.
	keep := []int{}
	for i := range y {
		if i%5 != 3 && i%11 != 0 {
			keep = append(keep, i)
		}
	}
	n := len(keep)
	ys := make([]float64, n)
	Xs := mat.NewDense(n, 2, nil)
	gs := make([]Grouping, len(g))
	for k := range g {
		gs[k] = Grouping{Name: g[k].Name, Index: make([]int, n), Levels: g[k].Levels}
	}
	for r, i := range keep {
		ys[r] = y[i]
		Xs.Set(r, 0, 1)
		Xs.Set(r, 1, float64(i%3)) // a covariate
		for k := range g {
			gs[k].Index[r] = g[k].Index[i]
		}
	}
	fit, err := Fit(ys, Xs, gs, nil)
	if err != nil {
		t.Fatal(err)
	}
	s := fit.sys
	if s.s != 2 || s.m == 0 {
		t.Fatalf("expected a two-factor chain and a rest block, got chain %d rest %d", s.s, s.m)
	}
	for _, th := range [][]float64{{0.5, 1.2, 2}, {0, 0.7, 1.1}, {1.5, 0, 0.3}} {
		// th is in the caller's order: site, genotype, site:genotype.
		sorted := make([]float64, 3)
		for k, gi := range s.ord {
			sorted[k] = th[gi]
		}
		e, err := s.eval(sorted, nil)
		if err != nil {
			t.Fatal(err)
		}
		want, _, _ := denseREML(ys, Xs, gs, th)
		testkit.CheckWithin(t, "criterion vs dense", s.profiled(e, REML), want, 1e-11, 0)
	}
	_, beta, blups := denseREML(ys, Xs, gs, fit.Theta())
	for j := range beta {
		testkit.CheckWithin(t, "beta vs dense", fit.Coef[j].Estimate, beta[j], 1e-9, 1e-12)
	}
	for k := range blups {
		for a := range blups[k] {
			testkit.CheckWithin(t, "blup vs dense "+gs[k].Name, fit.BLUPs[k][a], blups[k][a], 1e-8, 1e-10)
		}
	}
}
