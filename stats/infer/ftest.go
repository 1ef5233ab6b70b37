package infer

import (
	"errors"
	"fmt"
	"math"

	"gonum.org/v1/gonum/mat"

	"furrow/stats/dist"
	"furrow/stats/internal/fsum"
)

// FTest is a Wald F test of H0: Lβ = 0.
type FTest struct {
	F     float64
	NumDF float64 // rank of L V L' (redundant rows of L are dropped)
	DenDF float64 // +Inf gives the chi-squared test F·NumDF ~ χ²(NumDF)
	P     float64
}

// rankTol is the relative eigenvalue threshold below which a direction of
// L V L' is treated as redundant.
const rankTol = 1e-9

// WaldF returns the Wald F test of Lβ = 0 with the given denominator
// degrees of freedom:
//
//	F = (Lβ)' (L V L')⁻ (Lβ) / q,   q = rank(L V L'),
//
// where the generalised inverse uses the eigen-decomposition of L V L' and
// drops eigenvalues below 1e-9 of the largest, so linearly dependent rows of
// L (the same hypothesis written twice) count once. For ordinary least
// squares the denominator df is the residual df and F is the classical
// extra-sum-of-squares test; for mixed models the caller supplies the
// Satterthwaite or Kenward-Roger df, or use WaldFWith.
func WaldF(m Model, L mat.Matrix, denDF float64) (FTest, error) {
	return WaldFWith(m, L, func(mat.Matrix) float64 { return denDF })
}

// WaldFWith is WaldF with the denominator df computed from L by denDF
// (called once, with a copy of L).
func WaldFWith(m Model, L mat.Matrix, denDF func(L mat.Matrix) float64) (FTest, error) {
	beta, v, err := modelParts(m)
	if err != nil {
		return FTest{}, fmt.Errorf("wald f test: %w", err)
	}
	r, c := L.Dims()
	if c != len(beta) {
		return FTest{}, fmt.Errorf("wald f test: L has %d columns for %d coefficients", c, len(beta))
	}
	if r == 0 {
		return FTest{}, errors.New("wald f test: L has no rows")
	}
	lb := mat.NewVecDense(r, nil)
	lb.MulVec(L, mat.NewVecDense(c, beta))
	var lv mat.Dense
	lv.Mul(L, v)
	var lvl mat.Dense
	lvl.Mul(&lv, L.T())
	s := mat.NewSymDense(r, nil)
	for i := 0; i < r; i++ {
		for j := i; j < r; j++ {
			s.SetSym(i, j, 0.5*(lvl.At(i, j)+lvl.At(j, i)))
		}
	}
	var eig mat.EigenSym
	if !eig.Factorize(s, true) {
		return FTest{}, errors.New("wald f test: eigen-decomposition of L V L' did not converge")
	}
	vals := eig.Values(nil)
	var vecs mat.Dense
	eig.VectorsTo(&vecs)
	maxv := 0.0
	for _, e := range vals {
		maxv = math.Max(maxv, e)
	}
	if !(maxv > 0) {
		return FTest{}, errors.New("wald f test: L V L' is zero; the hypothesis is not estimable")
	}
	var q int
	var stat fsum.Sum
	for k, e := range vals {
		if e <= rankTol*maxv {
			continue
		}
		q++
		var u float64
		for i := 0; i < r; i++ {
			u += vecs.At(i, k) * lb.AtVec(i)
		}
		stat.Add(u * u / e)
	}
	ddf := denDF(mat.DenseCopyOf(L))
	if math.IsNaN(ddf) || ddf <= 0 {
		return FTest{}, fmt.Errorf("wald f test: denominator degrees of freedom %v", ddf)
	}
	f := stat.Value() / float64(q)
	res := FTest{F: f, NumDF: float64(q), DenDF: ddf}
	if math.IsInf(ddf, 1) {
		res.P = dist.ChiSqUpper(f*float64(q), float64(q))
	} else {
		res.P = dist.FUpper(f, float64(q), ddf)
	}
	return res, nil
}
