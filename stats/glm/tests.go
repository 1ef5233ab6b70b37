package glm

import (
	"errors"
	"fmt"
	"math"

	"gonum.org/v1/gonum/mat"

	"furrow/stats/dist"
)

// Test is the result of a likelihood-ratio or Wald test.
type Test struct {
	// Stat is the χ² statistic on DF degrees of freedom, or the F
	// statistic on (DF, DF2) degrees of freedom when F is true (quasi fits).
	Stat float64
	DF   int
	DF2  int
	F    bool
	// P is the upper-tail p-value.
	P float64
}

// LRTest compares nested models fitted to the same data, small within
// big (the caller vouches for the nesting: the columns of small in the
// column space of big; the test only checks the counts).
//
// For fixed dispersion the statistic is the deviance difference
// D_small - D_big = 2 (ℓ_big - ℓ_small), referred to χ² on
// Rank_big - Rank_small degrees of freedom (McCullagh & Nelder 1989, sec.
// 2.3); for a negative binomial with θ estimated in each model it is
// 2 (ℓ_big - ℓ_small), each at its own θ. For quasi fits it is
// F = (D_small - D_big)/(df φ_big) on (df, DFResid_big) degrees of
// freedom, φ_big the Pearson dispersion of the bigger model (sec. 9.3).
func LRTest(small, big *Result) (*Test, error) {
	if small == nil || big == nil {
		panic("glm: nil model")
	}
	switch {
	case small.Family != big.Family || small.Link != big.Link:
		return nil, fmt.Errorf("likelihood-ratio test: the models differ in family or link (%v/%v, %v/%v)", small.Family, small.Link, big.Family, big.Link)
	case small.Quasi != big.Quasi:
		return nil, errors.New("likelihood-ratio test: one model is a quasi fit and the other is not")
	case small.N != big.N || len(small.Fitted) != len(big.Fitted) || !sameData(small.prob, big.prob):
		return nil, errors.New("likelihood-ratio test: the models were fitted to different data")
	case small.Rank >= big.Rank:
		return nil, fmt.Errorf("likelihood-ratio test: the smaller model has rank %d, not below the bigger one's %d", small.Rank, big.Rank)
	case small.Family == NegBinomial && math.IsNaN(small.ThetaSE) != math.IsNaN(big.ThetaSE):
		return nil, errors.New("likelihood-ratio test: theta is estimated in one model and fixed in the other")
	}
	df := big.Rank - small.Rank
	t := &Test{DF: df}
	var stat float64
	if small.Family == NegBinomial && !math.IsNaN(small.ThetaSE) {
		stat = 2 * (big.LogLik - small.LogLik)
	} else {
		stat = small.Deviance - big.Deviance
	}
	// A bigger model fits at least as well; a difference below rounding
	// is 0, a clearly negative one means the models are not nested.
	if stat < 0 {
		if stat < -1e-8*(math.Abs(small.Deviance)+1) {
			return nil, fmt.Errorf("likelihood-ratio test: the bigger model fits worse (statistic %.6g); the models are not nested", stat)
		}
		stat = 0
	}
	if big.Quasi {
		t.F = true
		t.DF2 = big.DFResid
		t.Stat = stat / (float64(df) * big.Phi)
		t.P = dist.FUpper(t.Stat, float64(df), float64(big.DFResid))
		return t, nil
	}
	t.Stat = stat
	t.P = dist.ChiSqUpper(stat, float64(df))
	return t, nil
}

// sameData reports whether two problems hold the same response, trials,
// weights and offset (by value).
func sameData(a, b *problem) bool {
	eq := func(x, y []float64) bool {
		if len(x) != len(y) {
			return false
		}
		for i := range x {
			if x[i] != y[i] {
				return false
			}
		}
		return true
	}
	return eq(a.y, b.y) && eq(a.pw, b.pw) && eq(a.offset, b.offset)
}

// Wald tests the linear hypothesis L b = 0 (L is q x P, of full row rank
// q): W = (L b)' (L V L')^-1 (L b), V = CoefCov, referred to χ² on q
// degrees of freedom, or F = W/q on (q, DFResid) when the fit is quasi
// (Wald 1943, Trans Am Math Soc 54:426; McCullagh & Nelder 1989, sec.
// 4.4.5). L V L' is factorised by Cholesky; the hypothesis must avoid the
// aliased coefficients (each row estimable) and its rows must be
// independent. Wald panics if L does not have P columns.
func (r *Result) Wald(l mat.Matrix) (*Test, error) {
	q, pc := l.Dims()
	if pc != r.P {
		panic(fmt.Sprintf("glm: hypothesis matrix has %d columns, the model %d coefficients", pc, r.P))
	}
	if q == 0 {
		return nil, errors.New("wald test: the hypothesis has no rows")
	}
	row := make([]float64, pc)
	for i := 0; i < q; i++ {
		mat.Row(row, i, l)
		if !r.Estimable(row) {
			return nil, fmt.Errorf("wald test: row %d of the hypothesis is not estimable (it involves aliased coefficients)", i)
		}
	}
	lb := mat.NewVecDense(q, nil)
	lb.MulVec(l, mat.NewVecDense(pc, r.coef))
	var lv mat.Dense
	lv.Mul(l, r.cov)
	m := mat.NewSymDense(q, nil)
	for i := 0; i < q; i++ {
		for j := i; j < q; j++ {
			var s float64
			for k := 0; k < pc; k++ {
				s += lv.At(i, k) * l.At(j, k)
			}
			m.SetSym(i, j, s)
		}
	}
	var ch mat.Cholesky
	if !ch.Factorize(m) {
		return nil, errors.New("wald test: L V L' is not positive definite (dependent rows, or a hypothesis on a constant)")
	}
	if c := ch.Cond(); c > 1e12 {
		return nil, fmt.Errorf("wald test: L V L' is nearly singular (condition %.3g); the rows of the hypothesis are nearly dependent", c)
	}
	var sol mat.VecDense
	if err := ch.SolveVecTo(&sol, lb); err != nil {
		return nil, fmt.Errorf("wald test: %w", err)
	}
	w := mat.Dot(lb, &sol)
	t := &Test{DF: q}
	if r.Quasi {
		t.F = true
		t.DF2 = r.DFResid
		t.Stat = w / float64(q)
		t.P = dist.FUpper(t.Stat, float64(q), float64(r.DFResid))
		return t, nil
	}
	t.Stat = w
	t.P = dist.ChiSqUpper(w, float64(q))
	return t, nil
}
