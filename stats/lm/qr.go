package lm

import (
	"math"

	"gonum.org/v1/gonum/floats"
)

// pqr is a Householder QR factorisation with column pivoting of an n x p
// matrix held column by column (cols[j] is column j, length n).
//
// Householder reflections for least squares follow Golub (1965) "Numerical
// methods for solving linear least squares problems", Numer Math 7:206-216;
// pivoting for rank detection follows Businger & Golub (1965) "Linear least
// squares solutions by Householder transformations", Numer Math 7:269-276.
// The pivot rule is the "limited" one: columns are taken in their given
// order, and a column whose remaining norm is at most tol times its
// original norm is declared aliased (linearly dependent on the columns
// before it) and moved behind the others. This keeps the model order, so
// the aliased column named is the later one (an interaction confounded with
// blocks, the cell that is empty), as users of ANOVA tables expect.
type pqr struct {
	n, p  int
	cols  [][]float64 // reflector k is stored in cols[piv[k]][k:]; entries above hold R
	rdiag []float64   // diagonal of R, by pivot position
	vnorm []float64   // v'v of reflector k
	piv   []int       // piv[k] = original column at position k; the first rank are independent
	rank  int
}

// factorize computes the factorisation in place on cols (which it takes
// over). Column first (if >= 0) is taken as the first pivot.
func factorize(cols [][]float64, n int, tol float64, first int) *pqr {
	p := len(cols)
	q := &pqr{n: n, p: p, cols: cols, rdiag: make([]float64, p), vnorm: make([]float64, p)}
	orig := make([]float64, p)
	for j, c := range cols {
		orig[j] = math.Sqrt(floats.Dot(c, c))
	}
	order := make([]int, 0, p)
	if first >= 0 {
		order = append(order, first)
	}
	for j := 0; j < p; j++ {
		if j != first {
			order = append(order, j)
		}
	}
	var aliased []int
	used := make([]bool, p)
	k := 0
	for _, j := range order {
		if k >= n {
			aliased = append(aliased, j)
			continue
		}
		x := cols[j][k:]
		nrm := math.Sqrt(floats.Dot(x, x))
		if orig[j] == 0 || nrm <= tol*orig[j] {
			aliased = append(aliased, j)
			continue
		}
		// Reflector H = I - 2 v v'/(v'v), with v = x - alpha e1 and alpha = -sign(x0)||x||, so that
		// H x = alpha e1 without cancellation.
		alpha := -math.Copysign(nrm, x[0])
		x[0] -= alpha
		vtv := 2 * nrm * (nrm + math.Abs(x[0]+alpha))
		q.rdiag[k] = alpha
		q.vnorm[k] = vtv
		q.piv = append(q.piv, j)
		used[j] = true
		// Apply to every column not yet used as a pivot.
		for _, c := range order {
			if used[c] {
				continue
			}
			y := cols[c][k:]
			s := -2 * floats.Dot(x, y) / vtv
			floats.AddScaled(y, s, x)
		}
		k++
	}
	q.rank = k
	q.piv = append(q.piv, aliased...)
	return q
}

// qtApply overwrites y (length n) with Q'y.
func (q *pqr) qtApply(y []float64) {
	for k := 0; k < q.rank; k++ {
		v := q.cols[q.piv[k]][k:]
		yy := y[k:]
		s := -2 * floats.Dot(v, yy) / q.vnorm[k]
		floats.AddScaled(yy, s, v)
	}
}

// qApply overwrites y (length n) with Qy.
func (q *pqr) qApply(y []float64) {
	for k := q.rank - 1; k >= 0; k-- {
		v := q.cols[q.piv[k]][k:]
		yy := y[k:]
		s := -2 * floats.Dot(v, yy) / q.vnorm[k]
		floats.AddScaled(yy, s, v)
	}
}

// r returns R[i][k] for row i and pivot position k (k may be an aliased
// position >= rank, then the entry is the aliased column's coordinate).
func (q *pqr) r(i, k int) float64 {
	if i == k && k < q.rank {
		return q.rdiag[k]
	}
	if i > k && k < q.rank {
		return 0
	}
	return q.cols[q.piv[k]][i]
}

// solveR solves R11 g = b for the leading rank x rank block (b is
// overwritten by g).
func (q *pqr) solveR(b []float64) {
	for i := q.rank - 1; i >= 0; i-- {
		s := b[i]
		for k := i + 1; k < q.rank; k++ {
			s -= q.r(i, k) * b[k]
		}
		b[i] = s / q.rdiag[i]
	}
}

// rinv returns the inverse of R11 as a dense upper-triangular rank x rank
// matrix, row-major.
func (q *pqr) rinv() []float64 {
	r := q.rank
	out := make([]float64, r*r)
	for j := 0; j < r; j++ {
		// Solve R x = e_j; x has zeros below j.
		out[j*r+j] = 1 / q.rdiag[j]
		for i := j - 1; i >= 0; i-- {
			var s float64
			for k := i + 1; k <= j; k++ {
				s += q.r(i, k) * out[k*r+j]
			}
			out[i*r+j] = -s / q.rdiag[i]
		}
	}
	return out
}

// twoProd returns a*b as an unevaluated sum hi+lo (Ogita, Rump & Oishi 2005,
// "Accurate sum and dot product", SIAM J Sci Comput 26:1955, Alg. 3.3 via FMA).
func twoProd(a, b float64) (hi, lo float64) {
	hi = a * b
	lo = math.FMA(a, b, -hi)
	return
}

// twoSum returns a+b as hi+lo exactly (Knuth's TwoSum, ibid. Alg. 3.1).
func twoSum(a, b float64) (hi, lo float64) {
	hi = a + b
	z := hi - a
	lo = (a - (hi - z)) + (b - z)
	return
}

// dot2 returns y0 - x·b - r0 computed in twice the working precision
// (Ogita, Rump & Oishi 2005, Dot2).
func dot2(y0 float64, x, b []float64, r0 float64) float64 {
	s, c := twoSum(y0, -r0)
	for i, xi := range x {
		h, l := twoProd(-xi, b[i])
		var e float64
		s, e = twoSum(s, h)
		c += e + l
	}
	return s + c
}

// sumSq2 returns sum w_i x_i^2 with compensation (Ogita, Rump & Oishi 2005).
func sumSq2(x, w []float64) float64 {
	s, c := 0.0, 0.0
	for i, xi := range x {
		wi := 1.0
		if w != nil {
			wi = w[i]
		}
		h, l := twoProd(xi, xi*wi)
		var e float64
		s, e = twoSum(s, h)
		c += e + l
	}
	return s + c
}
