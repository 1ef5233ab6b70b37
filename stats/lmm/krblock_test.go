package lmm

import (
	"fmt"
	"testing"

	"furrow/internal/testkit"
)

// TestKRBlockEqualsDense: the block (Woodbury) route to the Kenward-Roger
// pieces gives the same adjusted covariance and df as the dense route over
// all random levels, on the multi-factor gradient cases (nested chains,
// crossed factors, missing cells, weights).
func TestKRBlockEqualsDense(t *testing.T) {
	for _, c := range gradCases(t) {
		if len(c.g) < 2 {
			continue
		}
		fit, err := Fit(c.y, c.X, c.g, &Options{Weights: c.w})
		if err != nil {
			t.Fatal(err)
		}
		// The block route through the public path, the dense one directly.
		block, err := fit.KR()
		if err != nil {
			t.Fatal(err)
		}
		kr, err := fit.sys.kenwardRogerWith(fit.theta, fit.Sigma*fit.Sigma, fit.covS, (*system).krDense)
		if err != nil {
			t.Fatal(err)
		}
		views := [2]*KRView{block, {r: fit, kr: kr}}
		b, d := views[0].CoefCov(), views[1].CoefCov()
		p, _ := b.Dims()
		for i := 0; i < p; i++ {
			for j := 0; j <= i; j++ {
				testkit.CheckWithin(t, fmt.Sprintf("%s KR covariance [%d,%d]", c.name, i, j), b.At(i, j), d.At(i, j), 1e-9, 1e-14)
			}
			l := make([]float64, p)
			l[i] = 1
			testkit.CheckWithin(t, fmt.Sprintf("%s KR df %d", c.name, i), views[0].DF(l), views[1].DF(l), 1e-9, 0)
		}
	}
}

// TestKRCrossedLarge: Kenward-Roger works for the crossed 50 x 200 x 3
// trial (10250 random levels), whose balanced rep contrasts lie in the
// residual stratum: the df equal the classical error df
// (50*200*3 - 50*200 - 2 = 19998), as in TestOatsClosedForm's balanced case.
func TestKRCrossedLarge(t *testing.T) {
	y, X, g, terms := crossedTrial(50, 200, 3)
	fit, err := Fit(y, X, g, nil)
	if err != nil {
		t.Fatal(err)
	}
	tt, err := fit.TermTests(terms, 3, KenwardRoger)
	if err != nil {
		t.Fatal(err)
	}
	testkit.CheckWithin(t, "KR df of rep", tt[0].DenDF, 19998, dfTol(KenwardRoger), 0) // measured 9.6e-13
	st, err := fit.TermTests(terms, 3, Satterthwaite)
	if err != nil {
		t.Fatal(err)
	}
	testkit.CheckWithin(t, "Satterthwaite df of rep", st[0].DenDF, 19998, dfTol(Satterthwaite), 0) // measured 3.6e-9
	testkit.CheckWithin(t, "KR F equals Satterthwaite F (balanced)", tt[0].F, st[0].F, 1e-8, 0)
}

// dfTol is the relative tolerance on a df against an exact (closed-form)
// value: Satterthwaite's uses a finite-difference Hessian (worst measured
// 2.3e-8, TestBalancedStratumDF), Kenward-Roger's is analytic (worst
// measured 9.6e-13, the crossed 50 x 200 x 3 trial).
func dfTol(m Method) float64 {
	if m == KenwardRoger {
		return 1e-10
	}
	return 1e-6
}
