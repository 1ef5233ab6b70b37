package lm

import (
	"math"
	"runtime"
	"sync"
	"sync/atomic"

	"gonum.org/v1/gonum/floats"
	"gonum.org/v1/gonum/mat"
)

// Row blocking of the large factorisation. A block of blockRows rows of the
// working matrix (p+1 columns) stays in the processor cache while its
// reflectors are formed and applied; chunkRows rows (a whole number of
// blocks) are the unit of parallel work. Both are constants, so the
// arithmetic, and hence every result, depends only on the data, never on
// the number of processors or on scheduling.
const (
	blockRows = 256
	chunkRows = 64 * blockRows
)

// tsqr is an unpivoted Householder QR of the n x (p+1) matrix [Z y] (Z the
// centred, weighted columns, y the centred, weighted response) computed as
// a tall-skinny QR over row blocks (Demmel, Grigori, Hoemmen & Langou 2012,
// "Communication-optimal parallel and sequential QR and LU factorizations",
// SIAM J Sci Comput 34:A206-A239): within a chunk the blocks are reduced
// one after another against the chunk's running triangle (their sequential
// TSQR), the chunks run in parallel, and the chunk triangles are then
// combined in chunk order, so the reduction order is fixed.
//
// Every reduction step is the QR of a p x (p+1) upper-triangular "top"
// stacked on a dense block. Reflector k of that step has support on row k of
// the top and on all rows of the block (the top is triangular), so it is
// stored as one scalar v0 for the top, its tail in the block's own storage,
// and v'v. The top of each chunk starts as p zero rows; these extra rows
// carry no data, and Q (of order n + p*chunks) is applied to vectors that
// are zero there.
//
// Q is never formed. The factor R (the final top) is small and goes on to
// the rank-revealing pivoted QR (pqr), as in the R-factor approach to
// rank-revealing QR (Chan 1987, "Rank revealing QR factorizations", Linear
// Algebra Appl 88/89:67-82): column norms and the remaining norms the pivot
// rule tests are invariant under the orthogonal Q, so the aliasing decisions
// are those of a pivoted QR of Z itself.
type tsqr struct {
	n, p   int
	m      int         // number of chunks
	buf    [][]float64 // per chunk, block-major: block at row r0 holds bl x (p+1) column-major at (r0-chunk start)*(p+1)
	v0     []float64   // per block and reflector (block index * p + k)
	vtv    []float64
	tops   [][]float64 // per chunk: p x (p+1) upper triangle, column-major (stride p)
	cv0    []float64   // combine reflectors of chunk c >= 1 (c*p + k)
	cvtv   []float64
	ncols  int // p + 1
	nblock int
}

// parallel calls f(c) for c = 0..m-1 on up to GOMAXPROCS goroutines. Each
// call writes only its own outputs, so results do not depend on the order.
func parallel(m int, f func(c int)) {
	w := runtime.GOMAXPROCS(0)
	if w > m {
		w = m
	}
	if w <= 1 {
		for c := 0; c < m; c++ {
			f(c)
		}
		return
	}
	var next atomic.Int64
	var wg sync.WaitGroup
	for range w {
		wg.Add(1)
		go func() {
			defer wg.Done()
			for {
				c := int(next.Add(1) - 1)
				if c >= m {
					return
				}
				f(c)
			}
		}()
	}
	wg.Wait()
}

// chunkPool keeps chunk buffers of finished factorisations for the next
// one: a fit of a large model is rarely alone (a cascade refits on the
// same rows), and fresh memory of this size costs page faults on first
// touch, about a third of the copying time. Buffers are fully overwritten
// before use.
var chunkPool sync.Pool

func getChunk(size int) []float64 {
	if v, ok := chunkPool.Get().(*[]float64); ok && cap(*v) >= size {
		return (*v)[:size]
	}
	return make([]float64, size)
}

// release hands the chunk buffers back to the pool; t must not be used after.
func (t *tsqr) release() {
	for c := range t.buf {
		b := t.buf[c]
		chunkPool.Put(&b)
		t.buf[c] = nil
	}
}

// chunks returns the number of chunks of n rows.
func chunks(n int) int { return (n + chunkRows - 1) / chunkRows }

// blockLen returns the number of rows of the block starting at row r0.
func blockLen(n, r0 int) int { return min(blockRows, n-r0) }

// newTSQR copies Z (z_ij = sw_i (x_ij - center_j)) and the response
// column sw_i (y_i - ybar) into row blocks and factorises them.
func newTSQR(x *mat.Dense, y, sw, center []float64, ybar float64) *tsqr {
	n, p := x.Dims()
	t := &tsqr{n: n, p: p, m: chunks(n), ncols: p + 1}
	t.nblock = (n + blockRows - 1) / blockRows
	t.buf = make([][]float64, t.m)
	raw := x.RawMatrix()
	t.v0 = make([]float64, t.nblock*p)
	t.vtv = make([]float64, t.nblock*p)
	t.tops = make([][]float64, t.m)
	t.cv0 = make([]float64, t.m*p)
	t.cvtv = make([]float64, t.m*p)
	parallel(t.m, func(c int) {
		top := make([]float64, p*t.ncols)
		t.tops[c] = top
		lo := c * chunkRows
		cb := getChunk((min(n, lo+chunkRows) - lo) * t.ncols) // every entry is written below
		t.buf[c] = cb
		for r0 := c * chunkRows; r0 < min(n, (c+1)*chunkRows); r0 += blockRows {
			bl := blockLen(n, r0)
			blk := cb[(r0-lo)*t.ncols : (r0-lo+bl)*t.ncols]
			// Column by column: sequential writes, and the block's rows of X
			// stay in cache after the first column has been read.
			bsw := sw[r0 : r0+bl]
			for j := 0; j < p; j++ {
				col := blk[j*bl : (j+1)*bl]
				cj := center[j]
				idx := r0*raw.Stride + j
				for i, s := range bsw {
					col[i] = s * (raw.Data[idx] - cj)
					idx += raw.Stride
				}
			}
			col := blk[p*bl : (p+1)*bl]
			for i, s := range bsw {
				col[i] = s * (y[r0+i] - ybar)
			}
			bi := r0 / blockRows
			qrBlock(top, blk, bl, p, t.ncols, t.v0[bi*p:(bi+1)*p], t.vtv[bi*p:(bi+1)*p])
		}
	})
	for c := 1; c < t.m; c++ {
		qrBlock(t.tops[0], t.tops[c], p, p, t.ncols, t.cv0[c*p:(c+1)*p], t.cvtv[c*p:(c+1)*p])
	}
	return t
}

// qrBlock reduces the stacked matrix [top; blk] (top p x ncols upper
// triangular, stride p; blk bl x ncols column-major) by p Householder
// reflectors (Golub 1965, Numer Math 7:206), overwriting top with the new
// triangle and the first p columns of blk with the reflector tails.
// Reflector H = I - 2 v v'/(v'v), v = x - alpha e_k, alpha = -sign(x_k)||x||,
// which avoids cancellation; a zero column gives the identity (vtv 0).
func qrBlock(top, blk []float64, bl, p, ncols int, v0, vtv []float64) {
	for k := 0; k < p; k++ {
		tail := blk[k*bl : (k+1)*bl]
		tk := top[k*p+k]
		ss := tk*tk + floats.Dot(tail, tail)
		if ss == 0 {
			v0[k], vtv[k] = 0, 0
			continue
		}
		nrm := math.Sqrt(ss)
		alpha := -math.Copysign(nrm, tk)
		v := tk - alpha
		d := 2 * nrm * (nrm + math.Abs(tk))
		v0[k], vtv[k] = v, d
		top[k*p+k] = alpha
		for c := k + 1; c < ncols; c++ {
			col := blk[c*bl : (c+1)*bl]
			s := -2 * (v*top[c*p+k] + floats.Dot(tail, col)) / d
			top[c*p+k] += s * v
			floats.AddScaled(col, s, tail)
		}
	}
}

// applyBlock applies the p reflectors of one reduction step to the pair
// (top, seg), in order (Q') or in reverse order (Q); each reflector is its
// own inverse.
func applyBlock(top, seg, blk []float64, bl, p int, v0, vtv []float64, reverse bool) {
	for i := 0; i < p; i++ {
		k := i
		if reverse {
			k = p - 1 - i
		}
		if vtv[k] == 0 {
			continue
		}
		tail := blk[k*bl : (k+1)*bl]
		s := -2 * (v0[k]*top[k] + floats.Dot(tail, seg)) / vtv[k]
		top[k] += s * v0[k]
		floats.AddScaled(seg, s, tail)
	}
}

// qt overwrites f (length n) with the block coordinates of Q'f and returns
// the chunk tops: tops[0] holds the coordinates along R (first p), the
// others belong to the orthogonal complement, as do the entries of f.
func (t *tsqr) qt(f []float64) [][]float64 {
	p := t.p
	tops := make([][]float64, t.m)
	parallel(t.m, func(c int) {
		top := make([]float64, p)
		tops[c] = top
		lo := c * chunkRows
		for r0 := lo; r0 < min(t.n, (c+1)*chunkRows); r0 += blockRows {
			bl := blockLen(t.n, r0)
			bi := r0 / blockRows
			applyBlock(top, f[r0:r0+bl], t.buf[c][(r0-lo)*t.ncols:(r0-lo+bl)*t.ncols], bl, p, t.v0[bi*p:(bi+1)*p], t.vtv[bi*p:(bi+1)*p], false)
		}
	})
	for c := 1; c < t.m; c++ {
		applyBlock(tops[0], tops[c], t.tops[c], p, p, t.cv0[c*p:(c+1)*p], t.cvtv[c*p:(c+1)*p], false)
	}
	return tops
}

// q is the inverse of qt: it overwrites f with Q applied to the coordinates
// held in f and tops (the entries of the zero rows that tops stand for are
// dropped). tops is overwritten.
func (t *tsqr) q(f []float64, tops [][]float64) {
	p := t.p
	for c := t.m - 1; c >= 1; c-- {
		applyBlock(tops[0], tops[c], t.tops[c], p, p, t.cv0[c*p:(c+1)*p], t.cvtv[c*p:(c+1)*p], true)
	}
	parallel(t.m, func(c int) {
		top := tops[c]
		lo := c * chunkRows
		for r0 := lo + ((min(t.n, (c+1)*chunkRows)-lo-1)/blockRows)*blockRows; r0 >= lo; r0 -= blockRows {
			bl := blockLen(t.n, r0)
			bi := r0 / blockRows
			applyBlock(top, f[r0:r0+bl], t.buf[c][(r0-lo)*t.ncols:(r0-lo+bl)*t.ncols], bl, p, t.v0[bi*p:(bi+1)*p], t.vtv[bi*p:(bi+1)*p], true)
		}
	})
}

// rfactor returns the columns of R (p x p, column j of length p) and
// Q'y restricted to the first p coordinates.
func (t *tsqr) rfactor() (cols [][]float64, qty []float64) {
	p := t.p
	r := t.tops[0]
	cols = make([][]float64, p)
	for j := range cols {
		cols[j] = append([]float64(nil), r[j*p:(j+1)*p]...)
	}
	return cols, append([]float64(nil), r[p*p:(p+1)*p]...)
}

// xStats is what one pass over the rows of X finds: the first non-finite
// entry, weighted column sums and which columns are constant.
type xStats struct {
	badRow, badCol int
	sum            []float64
	constant       []bool
}

// scanX checks X for non-finite entries, sums w_i x_ij by column and, when
// wantConst, marks the columns equal to their value at row i0 on every row
// with a positive weight. Chunk results are combined in chunk order.
func scanX(x *mat.Dense, w []float64, i0 int, wantConst bool) xStats {
	n, p := x.Dims()
	m := chunks(n)
	parts := make([]xStats, m)
	v0 := x.RawRowView(i0)
	parallel(m, func(c int) {
		st := xStats{badRow: -1, sum: make([]float64, p)}
		if wantConst {
			st.constant = make([]bool, p)
			for j := range st.constant {
				st.constant[j] = true
			}
		}
		for i := c * chunkRows; i < min(n, (c+1)*chunkRows); i++ {
			row := x.RawRowView(i)
			wi := 1.0
			if w != nil {
				wi = w[i]
			}
			for j, v := range row {
				if math.IsNaN(v) || math.IsInf(v, 0) {
					if st.badRow < 0 {
						st.badRow, st.badCol = i, j
					}
					continue
				}
				st.sum[j] += wi * v
			}
			if wantConst && wi > 0 {
				for j, v := range row {
					if v != v0[j] {
						st.constant[j] = false
					}
				}
			}
		}
		parts[c] = st
	})
	out := xStats{badRow: -1, sum: make([]float64, p)}
	if wantConst {
		out.constant = make([]bool, p)
		for j := range out.constant {
			out.constant[j] = true
		}
	}
	for _, st := range parts {
		if out.badRow < 0 && st.badRow >= 0 {
			out.badRow, out.badCol = st.badRow, st.badCol
		}
		for j := range out.sum {
			out.sum[j] += st.sum[j]
			if wantConst && !st.constant[j] {
				out.constant[j] = false
			}
		}
	}
	return out
}

// Modes of rowPass.
const (
	passFirst = iota // set rr from the residual, then f and the sums of X'(sw rr)
	passStep         // f and the sums of X'(sw rr) from the given rr
	passFinal        // residuals and fitted values only
)

// rowPass computes, row by row, the residual e_i = y_i - x_i'b in twice the
// working precision (Ogita, Rump & Oishi 2005, Dot2) and from it, by mode:
// the weighted residual estimate rr_i = sw_i e_i (passFirst); the
// refinement residual f_i = sw_i (e_i - rr_i/sw_i) (passFirst, passStep);
// the compensated sums X'(sw rr) (returned, passFirst and passStep); or
// resid_i = e_i and fitted_i = y_i - e_i (passFinal, into rr and f). Chunks
// run in parallel; their compensated sums are added in chunk order.
func rowPass(x *mat.Dense, y, sw, b, rr, f []float64, mode int) []float64 {
	n, p := x.Dims()
	m := chunks(n)
	hs := make([][]float64, m)
	ls := make([][]float64, m)
	parallel(m, func(c int) {
		var s, cc []float64
		if mode != passFinal {
			s = make([]float64, p)
			cc = make([]float64, p)
		}
		for i := c * chunkRows; i < min(n, (c+1)*chunkRows); i++ {
			hi, lo := dot2Row(y[i], x.RawRowView(i), b)
			row := x.RawRowView(i)
			if mode == passFinal {
				e := hi + lo
				rr[i] = e
				f[i] = y[i] - e
				continue
			}
			if sw[i] == 0 {
				if mode == passFirst {
					rr[i] = 0
				}
				f[i] = 0
				continue
			}
			if mode == passFirst {
				rr[i] = sw[i] * (hi + lo)
			}
			h2, l2 := twoSum(hi, -rr[i]/sw[i])
			f[i] = sw[i] * (h2 + (l2 + lo))
			ri := rr[i] * sw[i]
			for j, v := range row {
				ph, pl := twoProd(v, ri)
				var e float64
				s[j], e = twoSum(s[j], ph)
				cc[j] += e + pl
			}
		}
		hs[c], ls[c] = s, cc
	})
	if mode == passFinal {
		return nil
	}
	s := make([]float64, p)
	cc := make([]float64, p)
	for c := 0; c < m; c++ {
		for j := range s {
			var e float64
			s[j], e = twoSum(s[j], hs[c][j])
			cc[j] += e + ls[c][j]
		}
	}
	for j := range s {
		s[j] += cc[j]
	}
	return s
}

// dot2Row returns y0 - x'b as an unevaluated sum hi+lo, accurate as if
// computed in twice the working precision (Ogita, Rump & Oishi 2005, Dot2).
// Even and odd terms go to two independent accumulators, which shortens
// the chain of dependent additions; they are joined by an exact TwoSum.
func dot2Row(y0 float64, x, b []float64) (hi, lo float64) {
	b = b[:len(x)]
	h1, l1 := y0, 0.0
	h2, l2 := 0.0, 0.0
	j := 0
	for ; j+1 < len(x); j += 2 {
		p1, q1 := twoProd(-x[j], b[j])
		p2, q2 := twoProd(-x[j+1], b[j+1])
		var e1, e2 float64
		h1, e1 = twoSum(h1, p1)
		h2, e2 = twoSum(h2, p2)
		l1 += e1 + q1
		l2 += e2 + q2
	}
	if j < len(x) {
		p1, q1 := twoProd(-x[j], b[j])
		var e1 float64
		h1, e1 = twoSum(h1, p1)
		l1 += e1 + q1
	}
	hi, e := twoSum(h1, h2)
	return hi, e + l1 + l2
}
