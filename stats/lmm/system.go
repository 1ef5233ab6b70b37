package lmm

import (
	"errors"
	"fmt"
	"math"
	"sort"
	"sync"

	"gonum.org/v1/gonum/blas"
	"gonum.org/v1/gonum/blas/blas64"
	"gonum.org/v1/gonum/mat"
)

// system holds the cross-products of the data that the criterion needs,
// computed once, so that an evaluation at a new theta never touches the N
// rows again. Factors are sorted by number of levels, largest first.
//
// The scaled mixed-model matrix (penalised least squares form of Bates et
// al. 2015, J Stat Softw 67(1), eq. 16-18) is ordered as
//
//	[chain factors (each a diagonal block) | rest factors | X | y]
//
// The chain is the longest run of factors, largest first, in which every
// factor is nested in the next one; eliminating those levels one at a time
// (finest first) causes no fill-in outside the stored pattern. The rest
// factors, X and y form a dense tail block that receives the Schur
// complement and is factored by Cholesky.
type system struct {
	n, p int
	// cm is the centring and scaling of X (and the centring of y) that
	// every cross-product below is taken in (scale.go).
	cm  *colMap
	nf  int         // number of grouping factors
	ord []int       // ord[k] = index into the caller's groupings of sorted factor k
	q   []int       // levels per sorted factor
	d   [][]float64 // weighted count per level, per sorted factor
	zxy [][]float64 // per sorted factor: q_k x (p+1) row-major sums of w*[x y]
	s   int         // chain length
	par [][]int     // par[j][a]: level of chain factor j+1 containing level a of chain factor j

	// Sparse coupling of chain levels to rest-factor levels (CSR per chain factor).
	ptr [][]int     // row pointers
	col [][]int     // tail column (0..m-1)
	val [][]float64 // unscaled weighted cross counts
	up  [][]int     // entry index of the same column in the parent's row (chain factor j+1)

	m       int        // number of rest random columns
	facOf   []int      // sorted factor of each rest column
	restC   []float64  // m x m unscaled Z'WZ among the rest factors
	xtx     []float64  // (p+1)x(p+1) [X y]'W[X y], from a QR of sqrt(w)[X y]
	rxy     []float64  // upper-triangular R of that QR, (p+1)x(p+1) row-major
	rx      *mat.Dense // the same factor without weights (Type I hypotheses)
	sumLogW float64

	buckets []bucket // single factor with few distinct weighted counts

	// denseRows marks chain factors whose tail rows are mostly full: their
	// outer products are applied as one symmetric rank-k update.
	denseRows []bool

	mu sync.Mutex
	wk *work
}

// bucket gathers levels of a single grouping factor with equal weighted
// count: their contribution to the Schur complement is sum_j z_j z_j' times
// a scalar that depends only on the count.
type bucket struct {
	d     float64
	count float64
	s     []float64 // (p+1)x(p+1) sum of zxy zxy'
}

// work holds the per-evaluation arrays.
type work struct {
	D     [][]float64 // chain pivots minus one (exact for small theta)
	anc   [][]float64
	sv    [][]float64
	dv    [][]float64
	T     []float64
	pos   []int
	ridx  []int
	rval  []float64
	batch []float64
	// pre, when non-nil, receives the first m columns of rows 0..m+p-1 of
	// the tail block before its factorisation (for the gradient).
	pre []float64
}

// evalOut is the result of one evaluation of the factorisation at theta.
type evalOut struct {
	ldL2  float64   // log det of L_theta squared
	ldRX2 float64   // log det of R_X squared
	r2    float64   // penalised residual sum of squares
	lxx   []float64 // p x p lower Cholesky factor of the X Schur complement
	lxy   []float64 // p vector: X part of the y column of the factor
}

func newSystem(y []float64, X mat.Matrix, groups []Grouping, wts []float64) (*system, error) {
	n := len(y)
	r, p := X.Dims()
	if r != n {
		return nil, fmt.Errorf("lmm: X has %d rows but y has %d", r, n)
	}
	if p == 0 {
		return nil, errors.New("model matrix has no columns")
	}
	if len(groups) == 0 {
		return nil, errors.New("no grouping factor given: use an ordinary least-squares fit")
	}
	if wts != nil && len(wts) != n {
		return nil, fmt.Errorf("weights have %d entries but y has %d", len(wts), n)
	}
	if n <= p {
		return nil, fmt.Errorf("too few observations: %d rows for %d fixed-effect columns", n, p)
	}
	for i, v := range y {
		if math.IsNaN(v) || math.IsInf(v, 0) {
			return nil, fmt.Errorf("response row %d is not a finite number", i)
		}
		if wts != nil && (!(wts[i] > 0) || math.IsInf(wts[i], 0)) {
			return nil, fmt.Errorf("weight row %d is %v: weights must be positive and finite", i, wts[i])
		}
	}
	for _, g := range groups {
		if len(g.Index) != n {
			return nil, fmt.Errorf("grouping %q has %d codes but y has %d rows", g.Name, len(g.Index), n)
		}
		for i, c := range g.Index {
			if c < 0 || c >= g.Levels {
				return nil, fmt.Errorf("grouping %q row %d: level code %d outside 0..%d", g.Name, i, c, g.Levels-1)
			}
		}
	}
	s := &system{n: n, p: p, nf: len(groups)}
	cm, err := newColMap(y, X, wts)
	if err != nil {
		return nil, err
	}
	s.cm = cm
	y = s.cm.centredY(y)
	getRow := s.cm.centredRows(X)
	if err := s.crossXY(y, getRow, wts); err != nil {
		return nil, err
	}
	// Sort factors by number of levels, largest first (stable: ties keep caller order).
	s.ord = make([]int, len(groups))
	for i := range s.ord {
		s.ord[i] = i
	}
	sort.SliceStable(s.ord, func(a, b int) bool { return groups[s.ord[a]].Levels > groups[s.ord[b]].Levels })
	s.q = make([]int, s.nf)
	s.d = make([][]float64, s.nf)
	s.zxy = make([][]float64, s.nf)
	p1 := p + 1
	row := make([]float64, p)
	for k, gi := range s.ord {
		g := groups[gi]
		s.q[k] = g.Levels
		d := make([]float64, g.Levels)
		z := make([]float64, g.Levels*p1)
		for i := 0; i < n; i++ {
			w := 1.0
			if wts != nil {
				w = wts[i]
			}
			a := g.Index[i]
			d[a] += w
			getRow(i, row)
			zr := z[a*p1 : (a+1)*p1]
			for c, v := range row {
				zr[c] += w * v
			}
			zr[p] += w * y[i]
		}
		// The sums of the scaled columns.
		for a := 0; a < g.Levels; a++ {
			for c := 0; c < p; c++ {
				z[a*p1+c] /= s.cm.scale[c]
			}
		}
		s.d[k] = d
		s.zxy[k] = z
	}
	// Chain: sorted factors 0..s-1, each nested in the next.
	s.s = 1
	for k := 0; k+1 < s.nf; k++ {
		par, ok := nestedIn(groups[s.ord[k]], groups[s.ord[k+1]])
		if !ok {
			break
		}
		s.par = append(s.par, par)
		s.s++
	}
	// Rest columns.
	off := make([]int, s.nf)
	for k := s.s; k < s.nf; k++ {
		off[k] = s.m
		for i := 0; i < s.q[k]; i++ {
			s.facOf = append(s.facOf, k)
		}
		s.m += s.q[k]
	}
	if s.m > 20000 {
		return nil, fmt.Errorf("crossed grouping factors with %d levels outside the largest nested chain: too large for the dense Schur complement", s.m)
	}
	if s.m > 0 {
		m := s.m
		s.restC = make([]float64, m*m)
		for i := 0; i < n; i++ {
			w := 1.0
			if wts != nil {
				w = wts[i]
			}
			for k := s.s; k < s.nf; k++ {
				a := off[k] + groups[s.ord[k]].Index[i]
				for l := s.s; l <= k; l++ {
					b := off[l] + groups[s.ord[l]].Index[i]
					s.restC[a*m+b] += w
					if a != b {
						s.restC[b*m+a] += w
					}
				}
			}
		}
		// Chain coupling to rest columns.
		s.ptr = make([][]int, s.s)
		s.col = make([][]int, s.s)
		s.val = make([][]float64, s.s)
		s.up = make([][]int, s.s)
		for j := 0; j < s.s; j++ {
			gj := groups[s.ord[j]]
			cells := make([]map[int]float64, gj.Levels)
			for i := 0; i < n; i++ {
				w := 1.0
				if wts != nil {
					w = wts[i]
				}
				a := gj.Index[i]
				if cells[a] == nil {
					cells[a] = make(map[int]float64)
				}
				for k := s.s; k < s.nf; k++ {
					cells[a][off[k]+groups[s.ord[k]].Index[i]] += w
				}
			}
			ptr := make([]int, gj.Levels+1)
			var cols []int
			var vals []float64
			for a := 0; a < gj.Levels; a++ {
				keys := make([]int, 0, len(cells[a]))
				for c := range cells[a] {
					keys = append(keys, c)
				}
				sort.Ints(keys)
				for _, c := range keys {
					cols = append(cols, c)
					vals = append(vals, cells[a][c])
				}
				ptr[a+1] = len(cols)
			}
			s.ptr[j], s.col[j], s.val[j] = ptr, cols, vals
		}
		for j := 0; j+1 < s.s; j++ {
			up := make([]int, len(s.col[j]))
			for a := 0; a < s.q[j]; a++ {
				b := s.par[j][a]
				pc := s.col[j+1][s.ptr[j+1][b]:s.ptr[j+1][b+1]]
				for e := s.ptr[j][a]; e < s.ptr[j][a+1]; e++ {
					k := sort.SearchInts(pc, s.col[j][e])
					up[e] = s.ptr[j+1][b] + k
				}
			}
			s.up[j] = up
		}
	}
	s.denseRows = make([]bool, s.s)
	for j := 0; j < s.s; j++ {
		nnz := 0
		if s.m > 0 {
			nnz = len(s.col[j])
		}
		t := s.m + p1
		full := float64(nnz+s.q[j]*p1) / float64(s.q[j]*t)
		s.denseRows[j] = full > 0.5 && s.q[j]*t <= 1<<23
	}
	if s.nf == 1 {
		s.makeBuckets()
	}
	return s, nil
}

// nestedIn reports whether every level of f occurs with a single level of g,
// and returns that level per level of f.
func nestedIn(f, g Grouping) ([]int, bool) {
	par := make([]int, f.Levels)
	for i := range par {
		par[i] = -1
	}
	for i, a := range f.Index {
		b := g.Index[i]
		if par[a] == -1 {
			par[a] = b
		} else if par[a] != b {
			return nil, false
		}
	}
	for i := range par {
		if par[i] == -1 {
			par[i] = 0 // empty level: couples to nothing
		}
	}
	return par, true
}

// rowGetter returns a function copying row i of X into dst, reading the
// backing array directly when X exposes one.
func rowGetter(X mat.Matrix) func(i int, dst []float64) {
	if rv, ok := X.(mat.RawMatrixer); ok {
		raw := rv.RawMatrix()
		return func(i int, dst []float64) {
			copy(dst, raw.Data[i*raw.Stride:i*raw.Stride+raw.Cols])
		}
	}
	return func(i int, dst []float64) {
		for j := range dst {
			dst[j] = X.At(i, j)
		}
	}
}

// crossXY computes [X y]'W[X y] as R'R from a Householder QR of
// sqrt(w)[X y], taken in row blocks (tall-skinny QR, two goroutines), so
// that the cross-product never comes from summing squares directly. X is
// read through getRow (the centred columns); the column scales are read
// off the factor (colMap.setScales) and the factors scaled.
func (s *system) crossXY(y []float64, getRow func(int, []float64), wts []float64) error {
	n, p := s.n, s.p
	p1 := p + 1
	for i := 0; i < n; i++ {
		if wts != nil {
			s.sumLogW += math.Log(wts[i])
		}
	}
	R := tsqr(y, getRow, wts, n, p)
	s.cm.setScales(R)
	if wts != nil {
		s.rx = tsqr(y, getRow, nil, n, p)
		s.cm.scaleCols(s.rx)
	} else {
		s.rx = R
	}
	s.rxy = make([]float64, p1*p1)
	for i := 0; i < p1; i++ {
		for j := i; j < p1; j++ {
			s.rxy[i*p1+j] = R.At(i, j)
		}
	}
	s.xtx = make([]float64, p1*p1)
	for i := 0; i < p1; i++ {
		for j := 0; j <= i; j++ {
			var sum float64
			for k := 0; k <= j; k++ {
				sum += s.rxy[k*p1+i] * s.rxy[k*p1+j]
			}
			s.xtx[i*p1+j] = sum
			s.xtx[j*p1+i] = sum
		}
	}
	// Rank of X from the diagonal of R: the columns have unit weighted
	// norm (colMap), so |R_jj| is the norm of the part of column j not
	// explained by the columns before it relative to the column's own
	// norm, whatever its units.
	for j := 0; j < p; j++ {
		if !(math.Abs(s.rxy[j*p1+j]) > rankTol) {
			return fmt.Errorf("%w: column %d of X is a linear combination of the columns before it", ErrRankDeficient, j)
		}
	}
	return nil
}

// rankTol is the relative rank tolerance of the fixed-effect columns, that
// of stats/lm (lm.DefaultTol): a column is aliased when the part of it not
// explained by the columns before it has at most rankTol times its own
// (centred, weighted) norm.
const rankTol = 1e-10

// tsqr returns the (p+1)x(p+1) upper-triangular factor of a Householder QR
// of sqrt(w)[X y], taken in row blocks over two goroutines (tall-skinny QR);
// getRow copies a row of X and must be safe for concurrent use.
func tsqr(y []float64, getRow func(int, []float64), wts []float64, n, p int) *mat.Dense {
	p1 := p + 1
	const chunk = 4096
	half := n / 2
	if n < 2*chunk {
		half = n
	}
	parts := [][2]int{{0, half}}
	if half < n {
		parts = append(parts, [2]int{half, n})
	}
	rs := make([]*mat.Dense, len(parts))
	var wg sync.WaitGroup
	for pi, pr := range parts {
		wg.Add(1)
		go func(pi int, lo, hi int) {
			defer wg.Done()
			var R *mat.Dense
			row := make([]float64, p)
			for start := lo; start < hi; start += chunk {
				end := min(start+chunk, hi)
				extra := 0
				if R != nil {
					extra = p1
				}
				rows := end - start + extra
				blk := mat.NewDense(max(rows, p1), p1, nil)
				if R != nil {
					blk.Slice(0, p1, 0, p1).(*mat.Dense).Copy(R)
				}
				for i := start; i < end; i++ {
					w := 1.0
					if wts != nil {
						w = math.Sqrt(wts[i])
					}
					getRow(i, row)
					r := blk.RawRowView(extra + i - start)
					for c, v := range row {
						r[c] = w * v
					}
					r[p] = w * y[i]
				}
				R = upperR(blk)
			}
			rs[pi] = R
		}(pi, pr[0], pr[1])
	}
	wg.Wait()
	R := rs[0]
	if len(rs) == 2 {
		blk := mat.NewDense(2*p1, p1, nil)
		blk.Slice(0, p1, 0, p1).(*mat.Dense).Copy(rs[0])
		blk.Slice(p1, 2*p1, 0, p1).(*mat.Dense).Copy(rs[1])
		R = upperR(blk)
	}
	return R
}

// upperR returns the p1 x p1 upper-triangular factor of a QR of a (rows >= p1).
func upperR(a *mat.Dense) *mat.Dense {
	var qr mat.QR
	qr.Factorize(a)
	_, c := a.Dims()
	var r mat.Dense
	qr.RTo(&r)
	out := mat.NewDense(c, c, nil)
	out.Copy(r.Slice(0, c, 0, c))
	return out
}

func (s *system) makeBuckets() {
	p1 := s.p + 1
	idx := make(map[float64]int)
	var bs []bucket
	for a, d := range s.d[0] {
		if d == 0 {
			continue
		}
		bi, ok := idx[d]
		if !ok {
			if len(bs) > 64 || len(bs) > s.q[0]/4 {
				return // too many distinct counts: use the per-level path
			}
			bi = len(bs)
			idx[d] = bi
			bs = append(bs, bucket{d: d, s: make([]float64, p1*p1)})
		}
		b := &bs[bi]
		b.count++
		z := s.zxy[0][a*p1 : (a+1)*p1]
		for i := 0; i < p1; i++ {
			zi := z[i]
			if zi == 0 {
				continue
			}
			bi := b.s[i*p1 : i*p1+i+1]
			for j := 0; j <= i; j++ {
				bi[j] += zi * z[j]
			}
		}
	}
	sort.Slice(bs, func(i, j int) bool { return bs[i].d < bs[j].d })
	s.buckets = bs
}

func (s *system) newWork() *work {
	w := &work{}
	t := s.m + s.p + 1
	w.T = make([]float64, t*t)
	if s.buckets != nil {
		return w
	}
	p1 := s.p + 1
	w.D = make([][]float64, s.s)
	w.anc = make([][]float64, s.s)
	w.sv = make([][]float64, s.s)
	w.dv = make([][]float64, s.s)
	maxnnz := 0
	for j := 0; j < s.s; j++ {
		w.D[j] = make([]float64, s.q[j])
		w.anc[j] = make([]float64, s.q[j]*(s.s-1-j))
		if s.m > 0 {
			w.sv[j] = make([]float64, len(s.val[j]))
			for a := 0; a < s.q[j]; a++ {
				maxnnz = max(maxnnz, s.ptr[j][a+1]-s.ptr[j][a])
			}
		}
		w.dv[j] = make([]float64, s.q[j]*p1)
	}
	w.pos = make([]int, maxnnz)
	w.ridx = make([]int, maxnnz+p1)
	w.rval = make([]float64, maxnnz+p1)
	return w
}

// eval factors the scaled mixed-model matrix at theta (sorted-factor order,
// any sign: the criterion is even in each theta). If keep is non-nil, the
// work arrays are copied there for back-substitution.
func (s *system) eval(theta []float64, keep *work) (evalOut, error) {
	s.mu.Lock()
	defer s.mu.Unlock()
	if s.wk == nil {
		s.wk = s.newWork()
	}
	w := s.wk
	if keep != nil {
		w = keep
	}
	var out evalOut
	p, m := s.p, s.m
	p1 := p + 1
	t := m + p1
	T := w.T
	// Tail block, lower triangle.
	for i := range T {
		T[i] = 0
	}
	for i := 0; i < m; i++ {
		ti := theta[s.facOf[i]]
		for j := 0; j <= i; j++ {
			T[i*t+j] = ti * theta[s.facOf[j]] * s.restC[i*m+j]
		}
	}
	if m > 0 {
		i := 0
		for k := s.s; k < s.nf; k++ {
			for a := 0; a < s.q[k]; a++ {
				z := s.zxy[k][a*p1 : (a+1)*p1]
				for c := 0; c < p1; c++ {
					T[(m+c)*t+i] = theta[k] * z[c]
				}
				i++
			}
		}
	}
	for i := 0; i < p1; i++ {
		for j := 0; j <= i; j++ {
			T[(m+i)*t+m+j] = s.xtx[i*p1+j]
		}
	}
	if s.buckets != nil {
		th2 := theta[0] * theta[0]
		for _, b := range s.buckets {
			f := th2 / (1 + th2*b.d)
			out.ldL2 += b.count * math.Log1p(th2*b.d)
			for i := 0; i < p1; i++ {
				for j := 0; j <= i; j++ {
					T[i*t+j] -= f * b.s[i*p1+j]
				}
			}
		}
	} else {
		out.ldL2 += s.eliminateChain(theta, w)
	}
	// The identity of the rest block is added only now, so that the
	// copy for the gradient holds S - I exactly.
	if w.pre != nil {
		for i := 0; i < m+p; i++ {
			for j := 0; j < m && j <= i; j++ {
				w.pre[i*m+j] = T[i*t+j]
			}
		}
	}
	for i := 0; i < m; i++ {
		T[i*t+i]++
	}
	// Dense Cholesky of the tail (lower, in place).
	for j := 0; j < t; j++ {
		dj := T[j*t+j]
		for k := 0; k < j; k++ {
			dj -= T[j*t+k] * T[j*t+k]
		}
		if !(dj > 0) {
			if j < m {
				return out, fmt.Errorf("random-effects block is not positive definite at theta %v", theta)
			}
			if j < m+p {
				return out, fmt.Errorf("%w (fixed-effect column %d after the random effects)", ErrAliased, j-m)
			}
			return out, ErrNoResidual
		}
		ljj := math.Sqrt(dj)
		T[j*t+j] = ljj
		for i := j + 1; i < t; i++ {
			v := T[i*t+j]
			ri, rj := T[i*t:i*t+j], T[j*t:j*t+j]
			for k := range rj {
				v -= ri[k] * rj[k]
			}
			T[i*t+j] = v / ljj
		}
		if j < m {
			out.ldL2 += 2 * math.Log(ljj)
		} else if j < m+p {
			out.ldRX2 += 2 * math.Log(ljj)
		} else {
			out.r2 = ljj * ljj
		}
	}
	// log|X'V^{-1}X| of the caller's X, not of the scaled columns.
	out.ldRX2 += s.cm.ldScale
	out.lxx = make([]float64, p*p)
	out.lxy = make([]float64, p)
	for i := 0; i < p; i++ {
		for j := 0; j <= i; j++ {
			out.lxx[i*p+j] = T[(m+i)*t+m+j]
		}
		out.lxy[i] = T[(m+p)*t+m+i]
	}
	// Guard against a numerically aliased fixed effect: a pivot far below its
	// unpenalised size means the column is absorbed by the random effects.
	for j := 0; j < p; j++ {
		if out.lxx[j*p+j] <= 1e-9*math.Abs(s.rxy[j*p1+j]) {
			return out, fmt.Errorf("%w (fixed-effect column %d)", ErrAliased, j)
		}
	}
	return out, nil
}

// eliminateChain performs the diagonal eliminations of the chain factors and
// accumulates their Schur complement into the tail block; it returns the sum
// of the logs of the pivots.
func (s *system) eliminateChain(theta []float64, w *work) float64 {
	p1 := s.p + 1
	m := s.m
	t := m + p1
	T := w.T
	// Initialise.
	for j := 0; j < s.s; j++ {
		tj := theta[j]
		na := s.s - 1 - j
		D, anc, dv := w.D[j], w.anc[j], w.dv[j]
		for a, d := range s.d[j] {
			D[a] = tj * tj * d // pivot minus one, kept exactly for the gradient
			for i := 0; i < na; i++ {
				anc[a*na+i] = tj * theta[j+1+i] * d
			}
		}
		z := s.zxy[j]
		for i, v := range z {
			dv[i] = tj * v
		}
		if m > 0 {
			sv := w.sv[j]
			for e, c := range s.col[j] {
				sv[e] = tj * theta[s.facOf[c]] * s.val[j][e]
			}
		}
	}
	// Pivots are >= 1 (Schur complements of I + Lambda'Z'WZ Lambda), so
	// their product is accumulated and logged only when it grows large.
	var ld float64
	prod := 1.0
	for j := 0; j < s.s; j++ {
		na := s.s - 1 - j
		D, anc, dv := w.D[j], w.anc[j], w.dv[j]
		dense := s.denseRows[j]
		if dense {
			if len(w.batch) < s.q[j]*t {
				w.batch = make([]float64, s.q[j]*t)
			}
		}
		for a := 0; a < s.q[j]; a++ {
			piv := 1 + D[a]
			prod *= piv
			if prod > 1e200 {
				ld += math.Log(prod)
				prod = 1
			}
			if s.d[j][a] == 0 {
				if dense {
					br := w.batch[a*t : (a+1)*t]
					for i := range br {
						br[i] = 0
					}
				}
				continue
			}
			ra := anc[a*na : (a+1)*na]
			da := dv[a*p1 : (a+1)*p1]
			var lo, hi int
			if m > 0 {
				lo, hi = s.ptr[j][a], s.ptr[j][a+1]
				for e := lo; e < hi; e++ {
					w.pos[e-lo] = e
				}
			}
			b := a
			for i := 0; i < na; i++ {
				jj := j + 1 + i
				b = s.par[jj-1][b]
				f := ra[i] / piv
				w.D[jj][b] -= f * ra[i]
				nb := s.s - 1 - jj
				rb := w.anc[jj][b*nb : (b+1)*nb]
				for k := i + 1; k < na; k++ {
					rb[k-i-1] -= f * ra[k]
				}
				db := w.dv[jj][b*p1 : (b+1)*p1]
				for c := range db {
					db[c] -= f * da[c]
				}
				if m > 0 {
					svj, svjj := w.sv[j], w.sv[jj]
					for e := lo; e < hi; e++ {
						pe := s.up[jj-1][w.pos[e-lo]]
						w.pos[e-lo] = pe
						svjj[pe] -= f * svj[e]
					}
				}
			}
			// Outer product into the tail: gathered for a dense batch update
			// when the rows of this factor are mostly full, else scattered.
			inv := 1 / piv
			if dense {
				br := w.batch[a*t : (a+1)*t]
				for i := range br {
					br[i] = 0
				}
				sc := math.Sqrt(inv)
				if m > 0 {
					for e := lo; e < hi; e++ {
						br[s.col[j][e]] = sc * w.sv[j][e]
					}
				}
				for c := 0; c < p1; c++ {
					br[m+c] = sc * da[c]
				}
				continue
			}
			nr := 0
			if m > 0 {
				for e := lo; e < hi; e++ {
					w.ridx[nr] = s.col[j][e]
					w.rval[nr] = w.sv[j][e]
					nr++
				}
			}
			for c := 0; c < p1; c++ {
				w.ridx[nr] = m + c
				w.rval[nr] = da[c]
				nr++
			}
			for x := 0; x < nr; x++ {
				vx := w.rval[x] * inv
				if vx == 0 {
					continue
				}
				row := T[w.ridx[x]*t:]
				for yy := 0; yy <= x; yy++ {
					row[w.ridx[yy]] -= vx * w.rval[yy]
				}
			}
		}
		if dense {
			blas64.Syrk(blas.Trans, -1, blas64.General{Rows: s.q[j], Cols: t, Stride: t, Data: w.batch[:s.q[j]*t]},
				1, blas64.Symmetric{Uplo: blas.Lower, N: t, Stride: t, Data: T})
		}
	}
	return ld + math.Log(prod)
}
