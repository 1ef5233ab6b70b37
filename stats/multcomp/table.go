package multcomp

import (
	"math"
	"sync"
)

// chebN is the number of Chebyshev nodes per table piece.
const chebN = 32

// chebPiece is the Chebyshev interpolant of degree chebN-1 of a function on
// [lo, hi].
type chebPiece struct {
	lo, hi float64
	c      [chebN]float64
}

// chebNodes holds cos(π(j+1/2)/n), the Chebyshev points of the first kind,
// and the cosines needed for the coefficients, computed once.
var chebCos = func() (t [chebN][chebN]float64) {
	const n = chebN
	for k := 0; k < n; k++ {
		for j := 0; j < n; j++ {
			t[k][j] = math.Cos(math.Pi * float64(k) * (float64(j) + 0.5) / float64(n))
		}
	}
	return t
}()

// newChebPiece interpolates f at the Chebyshev points of [lo, hi]:
//
//	f(x) ≈ Σ_k c_k T_k(t),  t = (2x - lo - hi)/(hi - lo),
//	c_k = (2/n) Σ_j f(x_j) cos(πk(j+1/2)/n)  (c_0 halved)
//
// (Mason & Handscomb 2003, Chebyshev Polynomials, §6.3). For a function
// analytic in a neighbourhood of the interval the error falls geometrically
// with n.
func newChebPiece(f func(float64) float64, lo, hi float64) *chebPiece {
	p := &chebPiece{lo: lo, hi: hi}
	var fx [chebN]float64
	h, m := 0.5*(hi-lo), 0.5*(hi+lo)
	for j := 0; j < chebN; j++ {
		fx[j] = f(m + h*chebCos[1][j])
	}
	for k := 0; k < chebN; k++ {
		var s float64
		for j := 0; j < chebN; j++ {
			s += fx[j] * chebCos[k][j]
		}
		p.c[k] = 2 * s / chebN
	}
	p.c[0] *= 0.5
	return p
}

// eval returns the interpolant at x by Clenshaw's recurrence.
func (p *chebPiece) eval(x float64) float64 {
	t := (2*x - p.lo - p.hi) / (p.hi - p.lo)
	t2 := 2 * t
	var b1, b2 float64
	for k := chebN - 1; k >= 1; k-- {
		b1, b2 = t2*b1-b2+p.c[k], b1
	}
	return t*b1 - b2 + p.c[0]
}

// Piece layout: unit width on |x| < tableMid, width 2 beyond, up to
// tableMax. The pieces do not depend on the function, so a value never
// depends on which other values were asked for before.
const (
	tableMid = 12.0
	tableMax = 80.0
)

// pieceIndex returns the index of the piece holding x >= 0 and its bounds.
func pieceIndex(x float64) (int, float64, float64) {
	if x < tableMid {
		j := int(x / pieceW)
		return j, float64(j) * pieceW, float64(j+1) * pieceW
	}
	j0 := int(tableMid / pieceW)
	j := int((x - tableMid) / (4 * pieceW))
	lo := tableMid + 4*pieceW*float64(j)
	return j0 + j, lo, lo + 4*pieceW
}

// pieceW is the piece width below tableMid; beyond it pieces are 4·pieceW
// wide. With 32 nodes this reproduces the tail logarithms to about 3e-13
// for up to 100 means (the range) or 15 comparisons (the maximum).
const pieceW = 2.0

// logTable is a lazily built piecewise Chebyshev interpolant of
// r(x) = log T(x) - shape(x) for a tail function T, on -tableMax < x <
// tableMax, where shape carries the known leading behaviour (-a·x² for a
// tail falling like exp(-a x²), (k-1)·log x for a distribution function
// rising like x^{k-1} from zero). Subtracting it leaves a slowly varying
// function that few nodes reproduce to about 1e-13 absolute, that
// is, T to about 1e-13 relative (checked in the tests against the direct
// integral at many points). Pieces are built on first use from the direct
// evaluation logT, which must be accurate to rounding.
type logTable struct {
	mu       sync.Mutex // guards pos, neg and builds; pieces are immutable
	logT     func(x float64) float64
	shape    func(x float64) float64
	pos, neg []*chebPiece
	builds   int // number of pieces built, for the tests
}

func newLogTable(logT, shape func(float64) float64) *logTable {
	return &logTable{logT: logT, shape: shape}
}

// quadShape returns the shape function -a·x².
func quadShape(a float64) func(float64) float64 {
	return func(x float64) float64 { return -a * x * x }
}

// piece returns the piece holding x, building it if needed, or nil when x
// is outside the table.
func (t *logTable) piece(x float64) *chebPiece {
	if !(math.Abs(x) < tableMax) {
		return nil
	}
	t.mu.Lock()
	defer t.mu.Unlock()
	list := &t.pos
	ax := x
	if x < 0 {
		list = &t.neg
		ax = -x
	}
	j, lo, hi := pieceIndex(ax)
	for len(*list) <= j {
		*list = append(*list, nil)
	}
	if p := (*list)[j]; p != nil {
		return p
	}
	if x < 0 {
		lo, hi = -hi, -lo
	}
	r := func(x float64) float64 { return t.logT(x) - t.shape(x) }
	p := newChebPiece(r, lo, hi)
	(*list)[j] = p
	t.builds++
	return p
}

// log returns log T(x) from the interpolant; outside the table it returns
// the direct value.
func (t *logTable) log(x float64) float64 {
	p := t.piece(x)
	if p == nil {
		return t.logT(x)
	}
	return p.eval(x) + t.shape(x)
}
