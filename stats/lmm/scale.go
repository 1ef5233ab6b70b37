package lmm

import (
	"fmt"
	"math"

	"gonum.org/v1/gonum/mat"

	"furrow/stats/internal/fsum"
)

// colMap is the centring and scaling of the fixed-effect columns that the
// fit works in, as stats/lm does: with an intercept (a constant nonzero
// column ic, value kappa), the columns after it and the response are
// centred by their weighted means; every column is then divided by the
// weighted norm of its centred values. The fit uses
//
//	Xs = X M,  M[j][j] = 1/s_j,  M[ic][j] = -c_j/(kappa s_j) for j > ic,
//
// and the response y - ybar, so the coefficients of X are
//
//	b = M g + (ybar/kappa) e_ic
//
// for the coefficients g of Xs; l'b = (M'l)'g + l_ic ybar/kappa and
// Cov(b) = M Cov(g) M'. M is upper triangular (only columns after the
// intercept are centred), so the columns 0..j of Xs span what those of X
// span and sequential (Type I) hypotheses are the same in both. A column
// before the intercept is therefore scaled but not centred; the design
// matrices of stats/design put the intercept first.
//
// Any centre gives the same fit, the intercept taking up the difference;
// centring keeps a large common offset of a covariate out of the
// factorisations (where it would cost about log10(offset/spread) digits),
// and unit column norms make the rank and aliasing decisions relative to
// each column, so a covariate in small or large units is neither refused
// nor favoured. The mixed-model criterion is invariant under this change
// except for the REML term log|X'V^{-1}X|, which gains 2 sum_j log s_j
// (ldScale); ML is unchanged.
type colMap struct {
	p      int
	ic     int // intercept column, -1 if none
	kappa  float64
	center []float64 // c_j; 0 where a column is not centred
	scale  []float64 // s_j > 0
	ybar   float64   // weighted mean of y when there is an intercept, else 0
	// ldScale is 2 sum_j log s_j, the REML criterion's change.
	ldScale float64
}

// newColMap computes the centres and scales of X (rows weighted by wts,
// nil for unit weights) and y's weighted mean. Means are compensated sums;
// norms are accumulated scaled by the largest entry, so neither over- nor
// underflows. A column whose centred values are all zero keeps scale 1 and
// is found rank deficient later. A non-finite entry of X is an error.
func newColMap(y []float64, X mat.Matrix, wts []float64) (*colMap, error) {
	n, p := X.Dims()
	cm := &colMap{p: p, ic: -1, center: make([]float64, p), scale: make([]float64, p)}
	get := rowGetter(X)
	row := make([]float64, p)
	first := make([]float64, p)
	constant := make([]bool, p)
	for j := range constant {
		constant[j] = true
	}
	sums := make([]fsum.Sum, p)
	var sw, sy fsum.Sum
	for i := 0; i < n; i++ {
		get(i, row)
		if i == 0 {
			copy(first, row)
		}
		w := 1.0
		if wts != nil {
			w = wts[i]
		}
		sw.Add(w)
		sy.Add(w * y[i])
		for j, v := range row {
			if math.IsNaN(v) || math.IsInf(v, 0) {
				return nil, fmt.Errorf("model matrix row %d, column %d is not a finite number", i, j)
			}
			sums[j].Add(w * v)
			if v != first[j] {
				constant[j] = false
			}
		}
	}
	for j := 0; j < p; j++ {
		if constant[j] && first[j] != 0 {
			cm.ic, cm.kappa = j, first[j]
			break
		}
	}
	if cm.ic >= 0 {
		tw := sw.Value()
		cm.ybar = sy.Value() / tw
		for j := cm.ic + 1; j < p; j++ {
			cm.center[j] = sums[j].Value() / tw
		}
	}
	// Weighted norms of the centred columns, scaled by the running largest
	// magnitude (the update of LAPACK's dlassq).
	big := make([]float64, p)
	ssq := make([]float64, p)
	for i := 0; i < n; i++ {
		get(i, row)
		sw := 1.0
		if wts != nil {
			sw = math.Sqrt(wts[i])
		}
		for j, v := range row {
			a := math.Abs(sw * (v - cm.center[j]))
			if a == 0 {
				continue
			}
			if a > big[j] {
				r := big[j] / a
				ssq[j] = 1 + ssq[j]*r*r
				big[j] = a
			} else {
				r := a / big[j]
				ssq[j] += r * r
			}
		}
	}
	for j := 0; j < p; j++ {
		s := big[j] * math.Sqrt(ssq[j])
		if !(s > 0) || math.IsInf(s, 0) {
			s = 1
		}
		cm.scale[j] = s
		cm.ldScale += 2 * math.Log(s)
	}
	return cm, nil
}

// rowGetter returns a function copying row i of Xs = (X - 1 c') S^{-1}
// into dst.
func (cm *colMap) rowGetter(X mat.Matrix) func(i int, dst []float64) {
	get := rowGetter(X)
	return func(i int, dst []float64) {
		get(i, dst)
		for j := range dst {
			dst[j] = (dst[j] - cm.center[j]) / cm.scale[j]
		}
	}
}

// centredY returns y - ybar (y itself, not a copy, when ybar is 0).
func (cm *colMap) centredY(y []float64) []float64 {
	if cm.ybar == 0 {
		return y
	}
	out := make([]float64, len(y))
	for i, v := range y {
		out[i] = v - cm.ybar
	}
	return out
}

// coef returns b = M g + (ybar/kappa) e_ic.
func (cm *colMap) coef(g []float64) []float64 {
	b := make([]float64, cm.p)
	for j := range b {
		b[j] = g[j] / cm.scale[j]
	}
	if cm.ic >= 0 {
		// The intercept: the centres moved back, and the mean of y.
		var s fsum.Sum
		s.Add(b[cm.ic])
		for j := cm.ic + 1; j < cm.p; j++ {
			s.Add(-cm.center[j] / cm.kappa * b[j])
		}
		s.Add(cm.ybar / cm.kappa)
		b[cm.ic] = s.Value()
	}
	return b
}

// contrast returns M'l, the contrast of g equal to l'b up to the constant
// l_ic ybar/kappa (offset).
func (cm *colMap) contrast(l []float64) (ls []float64, offset float64) {
	ls = make([]float64, cm.p)
	for j := range ls {
		v := l[j]
		if cm.ic >= 0 && j > cm.ic && cm.center[j] != 0 {
			v -= l[cm.ic] * cm.center[j] / cm.kappa
		}
		ls[j] = v / cm.scale[j]
	}
	if cm.ic >= 0 {
		offset = l[cm.ic] * cm.ybar / cm.kappa
	}
	return ls, offset
}

// hypothesis returns L M for a hypothesis matrix L on b.
func (cm *colMap) hypothesis(L mat.Matrix) *mat.Dense {
	r, _ := L.Dims()
	out := mat.NewDense(r, cm.p, nil)
	row := make([]float64, cm.p)
	for i := 0; i < r; i++ {
		for j := range row {
			row[j] = L.At(i, j)
		}
		ls, _ := cm.contrast(row)
		out.SetRow(i, ls)
	}
	return out
}

// cov returns M C M' for a covariance C of g.
func (cm *colMap) cov(C *mat.SymDense) *mat.SymDense {
	p := cm.p
	// B = M C, then B M'.
	Md := mat.NewDense(p, p, nil)
	for j := 0; j < p; j++ {
		Md.Set(j, j, 1/cm.scale[j])
		if cm.ic >= 0 && j > cm.ic {
			Md.Set(cm.ic, j, -cm.center[j]/(cm.kappa*cm.scale[j]))
		}
	}
	var B, D mat.Dense
	B.Mul(Md, C)
	D.Mul(&B, Md.T())
	return symPart(&D)
}
