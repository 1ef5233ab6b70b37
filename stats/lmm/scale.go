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

// newColMap finds the intercept and computes the centres of X (rows
// weighted by wts, nil for unit weights) and y's weighted mean, in one
// pass; the scales are set later from the triangular factor of the
// centred columns (setScales). The means are summed by blocks of rows
// (any centre gives the same fit; the centre only has to be close to the
// mean for the centred columns to keep their digits). A non-finite entry
// of X is an error.
func newColMap(y []float64, X mat.Matrix, wts []float64) (*colMap, error) {
	n, p := X.Dims()
	cm := &colMap{p: p, ic: -1, center: make([]float64, p), scale: make([]float64, p)}
	for j := range cm.scale {
		cm.scale[j] = 1
	}
	get := rowGetter(X)
	row := make([]float64, p)
	first := make([]float64, p)
	differ := make([]uint64, p) // nonzero once a value differs from the first
	const block = 1024
	sums := make([]fsum.Sum, p)
	part := make([]float64, p)
	var sw, sy fsum.Sum
	var pw, py float64
	for i := 0; i < n; i++ {
		get(i, row)
		if i == 0 {
			copy(first, row)
		}
		w := 1.0
		if wts != nil {
			w = wts[i]
		}
		pw += w
		py += w * y[i]
		for j, v := range row {
			part[j] += w * v
			differ[j] |= math.Float64bits(v) ^ math.Float64bits(first[j])
		}
		if (i+1)%block == 0 || i == n-1 {
			sw.Add(pw)
			sy.Add(py)
			pw, py = 0, 0
			for j := range part {
				sums[j].Add(part[j])
				part[j] = 0
			}
		}
	}
	// A non-finite entry makes its column's sum non-finite; only then are
	// the rows searched for it.
	for j := range sums {
		if v := sums[j].Value(); math.IsNaN(v) || math.IsInf(v, 0) {
			for i := 0; i < n; i++ {
				get(i, row)
				if v := row[j]; math.IsNaN(v) || math.IsInf(v, 0) {
					return nil, fmt.Errorf("model matrix row %d, column %d is not a finite number", i, j)
				}
			}
			return nil, fmt.Errorf("model matrix column %d: the sum of its values overflows (rescale it)", j)
		}
	}
	for j := 0; j < p; j++ {
		if differ[j] == 0 && first[j] != 0 {
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
	return cm, nil
}

// setScales sets s_j to the norm of column j of R, the triangular factor
// of the weighted centred columns (so the weighted norm of the centred
// column j), 1 where that is zero or not finite, and divides those
// columns of R by it. Householder QR is invariant under column scaling up
// to rounding of the order of its backward error (Higham 2002, Accuracy
// and Stability of Numerical Algorithms, 2nd ed., sec. 19.3, as stats/lm
// notes), so scaling R rather than X costs no accuracy.
func (cm *colMap) setScales(R *mat.Dense) {
	cm.ldScale = 0
	for j := 0; j < cm.p; j++ {
		var ss float64
		big := 0.0
		for i := 0; i <= j; i++ {
			big = math.Max(big, math.Abs(R.At(i, j)))
		}
		if big > 0 {
			for i := 0; i <= j; i++ {
				r := R.At(i, j) / big
				ss += r * r
			}
		}
		s := big * math.Sqrt(ss)
		if !(s > 0) || math.IsInf(s, 0) {
			s = 1
		}
		cm.scale[j] = s
		cm.ldScale += 2 * math.Log(s)
	}
	cm.scaleCols(R)
}

// scaleCols divides the first p columns of R by the scales.
func (cm *colMap) scaleCols(R *mat.Dense) {
	r, _ := R.Dims()
	for j := 0; j < cm.p; j++ {
		for i := 0; i < r; i++ {
			R.Set(i, j, R.At(i, j)/cm.scale[j])
		}
	}
}

// centredRows returns a function copying row i of X - 1 c' into dst (the
// centred columns, not yet scaled); it is safe for concurrent use.
func (cm *colMap) centredRows(X mat.Matrix) func(i int, dst []float64) {
	c := cm.center
	if rv, ok := X.(mat.RawMatrixer); ok {
		raw := rv.RawMatrix()
		return func(i int, dst []float64) {
			src := raw.Data[i*raw.Stride : i*raw.Stride+raw.Cols]
			for j, v := range src {
				dst[j] = v - c[j]
			}
		}
	}
	return func(i int, dst []float64) {
		for j := range dst {
			dst[j] = X.At(i, j) - c[j]
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
