package multcomp

import (
	"errors"
	"fmt"
	"math"
	"math/rand/v2"

	"gonum.org/v1/gonum/mat"

	"furrow/stats/dist"
	"furrow/stats/internal/fsum"
)

// Settings of the randomised quasi-Monte Carlo fallback. QMCSeed is fixed
// and recorded so that a result can be reproduced exactly.
const (
	// QMCSeed seeds the random shifts of the lattice rule.
	QMCSeed uint64 = 20260101
	// QMCTolerance is the target absolute error estimate.
	QMCTolerance = 1e-4
	qmcShifts    = 12
	qmcMinPoints = 250
	qmcMaxPoints = 1 << 16
)

// QMCResult is a multivariate t probability computed by randomised
// quasi-Monte Carlo.
type QMCResult struct {
	P float64 // the probability
	// AbsError is 3 standard errors of the mean over the independent
	// random shifts: an estimate of the absolute error at about 99%.
	AbsError float64
	Points   int    // lattice points per shift
	Shifts   int    // number of random shifts
	Seed     uint64 // seed of the shifts
}

// mvtQMC holds the reordered Cholesky factor for the separation-of-
// variables transformation of Genz (1992) J Comput Graph Stat 1:141, with
// the χ variable added as the first coordinate for the multivariate t
// (Genz & Bretz 2002 J Comput Graph Stat 11:950; Genz & Bretz 2009,
// Computation of Multivariate Normal and t Probabilities, §4.1-4.2). The
// bounds are -c <= T_i <= c (two-sided) or T_i <= c (one-sided).
type mvtQMC struct {
	m     int
	l     [][]float64 // lower Cholesky factor of the reordered correlation
	df    float64
	two   bool
	n     int // lattice points per shift, fixed after the first call
	shift [][]float64
	gen   []float64 // generating vector: fractional parts of √prime
	chi   *chiInverse
}

// chiInverse maps u in (0, 1) to s = sqrt(χ²_ν⁻¹(u)/ν) through z = Φ⁻¹(u):
// s as a function of z is smooth (close to linear for large ν), so
// Chebyshev pieces of unit width on |z| <= 9, built from the exact
// quantile at their nodes, reproduce it to about 1e-13 at the cost of one
// normal quantile per point instead of an inverse incomplete gamma.
type chiInverse struct {
	df     float64
	pieces [18]*chebPiece
}

func newChiInverse(df float64) *chiInverse { return &chiInverse{df: df} }

func (ci *chiInverse) exact(z float64) float64 {
	var x float64
	if z > 0 {
		x = dist.ChiSqUpperQuantile(normCDF(-z), ci.df)
	} else {
		x = dist.ChiSqQuantile(normCDF(z), ci.df)
	}
	return math.Sqrt(x / ci.df)
}

func (ci *chiInverse) at(u float64) float64 {
	z := dist.NormalQuantile(u)
	if !(math.Abs(z) < 9) {
		return ci.exact(z)
	}
	j := int(math.Floor(z + 9))
	if ci.pieces[j] == nil {
		lo := float64(j) - 9
		ci.pieces[j] = newChebPiece(ci.exact, lo, lo+1)
	}
	return ci.pieces[j].eval(z)
}

// newMVTQMC prepares the rule for the correlation corr with the variables
// reordered for the bound c: at each step the remaining variable with the
// smallest conditional probability of its interval is taken next, the
// earlier ones being replaced by their truncated-normal expectations
// (Gibson, Glasbey & Elston 1994; Genz & Bretz 2009 §4.1.3). The bounds
// are all equal here, so the ordering needs no permutation of them.
func newMVTQMC(corr mat.Symmetric, c, df float64, two bool) (*mvtQMC, error) {
	m := corr.SymmetricDim()
	s := make([][]float64, m)
	for i := range s {
		s[i] = make([]float64, m)
		for j := range s[i] {
			s[i][j] = corr.At(i, j)
		}
	}
	l := make([][]float64, m)
	for i := range l {
		l[i] = make([]float64, m)
	}
	y := make([]float64, m)
	lo, hi := math.Inf(-1), c
	if two {
		lo = -c
	}
	for i := 0; i < m; i++ {
		best, bp := math.Inf(1), i
		for j := i; j < m; j++ {
			v := s[j][j]
			var mu float64
			for k := 0; k < i; k++ {
				v -= l[j][k] * l[j][k]
				mu += l[j][k] * y[k]
			}
			if v <= 1e-12 {
				continue
			}
			sd := math.Sqrt(v)
			p := normCDF((hi-mu)/sd) - normCDF((lo-mu)/sd)
			if p < best {
				best, bp = p, j
			}
		}
		if bp != i {
			s[i], s[bp] = s[bp], s[i]
			for r := range s {
				s[r][i], s[r][bp] = s[r][bp], s[r][i]
			}
			l[i], l[bp] = l[bp], l[i]
		}
		v := s[i][i]
		var mu float64
		for k := 0; k < i; k++ {
			v -= l[i][k] * l[i][k]
			mu += l[i][k] * y[k]
		}
		if v < -1e-10 {
			return nil, errors.New("correlation matrix is not positive semidefinite")
		}
		if v <= 1e-12 {
			// Singular direction: the component is a combination of the
			// earlier ones; its bound is checked exactly in the sample.
			l[i][i] = 0
		} else {
			l[i][i] = math.Sqrt(v)
		}
		for r := i + 1; r < m; r++ {
			a := s[r][i]
			for k := 0; k < i; k++ {
				a -= l[r][k] * l[i][k]
			}
			if l[i][i] > 0 {
				l[r][i] = a / l[i][i]
			} else if math.Abs(a) > 1e-8 {
				return nil, errors.New("correlation matrix is not positive semidefinite")
			}
		}
		if l[i][i] > 0 {
			a, b := (lo-mu)/l[i][i], (hi-mu)/l[i][i]
			pr := normCDF(b) - normCDF(a)
			if pr > 1e-300 {
				y[i] = (normPDF(a) - normPDF(b)) / pr
			}
		}
	}
	q := &mvtQMC{m: m, l: l, df: df, two: two, chi: newChiInverse(df)}
	// Richtmyer generating vector: fractional parts of square roots of the
	// first primes (Richtmyer 1951; Genz & Bretz 2009 §4.2.2).
	primes := firstPrimes(m + 1)
	q.gen = make([]float64, m+1)
	for i, p := range primes {
		v := math.Sqrt(float64(p))
		q.gen[i] = v - math.Floor(v)
	}
	rng := rand.New(rand.NewPCG(QMCSeed, QMCSeed^0x9e3779b97f4a7c15))
	q.shift = make([][]float64, qmcShifts)
	for k := range q.shift {
		q.shift[k] = make([]float64, m+1)
		for i := range q.shift[k] {
			q.shift[k][i] = rng.Float64()
		}
	}
	return q, nil
}

func firstPrimes(n int) []int {
	var ps []int
	for c := 2; len(ps) < n; c++ {
		prime := true
		for _, p := range ps {
			if p*p > c {
				break
			}
			if c%p == 0 {
				prime = false
				break
			}
		}
		if prime {
			ps = append(ps, c)
		}
	}
	return ps
}

// sample returns the integrand at the unit-cube point w (length m+1): the
// product of the conditional interval probabilities, for the inside
// probability P(all T_i within the bounds).
func (q *mvtQMC) sample(w []float64, c float64, yb []float64) float64 {
	s := 1.0
	if !math.IsInf(q.df, 1) {
		s = q.chi.at(w[q.m])
	}
	hi := c * s
	lo := math.Inf(-1)
	if q.two {
		lo = -hi
	}
	f := 1.0
	for i := 0; i < q.m; i++ {
		var t float64
		for k := 0; k < i; k++ {
			t += q.l[i][k] * yb[k]
		}
		d := q.l[i][i]
		if d == 0 {
			if t < lo || t > hi {
				return 0
			}
			yb[i] = 0
			continue
		}
		a, b := normCDF((lo-t)/d), normCDF((hi-t)/d)
		if b <= a {
			return 0
		}
		f *= b - a
		if i+1 < q.m {
			u := a + w[i]*(b-a)
			yb[i] = dist.NormalQuantile(math.Min(math.Max(u, 1e-300), 1-1e-16))
		}
	}
	return f
}

// inside returns the estimate of P(all T_i within the bounds) and 3
// standard errors over the shifts, with n points per shift (each point
// used with its antithetic partner, after the baker's transformation).
func (q *mvtQMC) inside(c float64, n int) (float64, float64) {
	w := make([]float64, q.m+1)
	wa := make([]float64, q.m+1)
	yb := make([]float64, q.m)
	var mean, m2 float64
	for k, sh := range q.shift {
		var acc fsum.Sum
		for j := 1; j <= n; j++ {
			for i := range w {
				v := float64(j)*q.gen[i] + sh[i]
				v -= math.Floor(v)
				v = math.Abs(2*v - 1) // baker's (tent) transformation
				w[i], wa[i] = v, 1-v
			}
			acc.Add(0.5 * (q.sample(w, c, yb) + q.sample(wa, c, yb)))
		}
		est := acc.Value() / float64(n)
		d := est - mean
		mean += d / float64(k+1)
		m2 += d * (est - mean)
	}
	r := float64(len(q.shift))
	se := math.Sqrt(m2 / (r * (r - 1)))
	return mean, 3 * se
}

// upper returns P(max T_i >= c) (or of |T_i|) with its error estimate.
// The first call fixes the number of points by doubling from qmcMinPoints
// until the error estimate is below QMCTolerance (or qmcMaxPoints is
// reached); later calls reuse the same points, so the estimate is a
// smooth function of c for root finding.
func (q *mvtQMC) upper(c float64) QMCResult {
	res := QMCResult{Shifts: qmcShifts, Seed: QMCSeed}
	if q.two && c <= 0 {
		res.P = 1
		return res
	}
	var in, e float64
	if q.n == 0 {
		n := qmcMinPoints
		for {
			in, e = q.inside(c, n)
			if e <= QMCTolerance || 2*n > qmcMaxPoints {
				break
			}
			n *= 2
		}
		q.n = n
	} else {
		in, e = q.inside(c, q.n)
	}
	res.P = math.Min(1, math.Max(0, 1-in))
	res.AbsError = e
	res.Points = q.n
	return res
}

// MaxTUpperQMC returns P(max |T_i| >= c) (TwoSided) or P(max T_i >= c)
// (Greater; Less gives the same by symmetry) for multivariate t statistics
// with any positive semidefinite correlation matrix corr and df degrees
// of freedom (+Inf: normal), by randomised quasi-Monte Carlo (Genz 1992 J
// Comput Graph Stat 1:141; Genz & Bretz 2002 J Comput Graph Stat 11:950):
// a Richtmyer lattice rule with 12 random shifts from the fixed seed
// QMCSeed, antithetic points and the baker's transformation. The result
// carries the error estimate and the rule's size. The accuracy is
// absolute (about QMCTolerance), not relative: small p-values are
// resolved only to that level.
func MaxTUpperQMC(c float64, corr mat.Symmetric, df float64, side Side) (QMCResult, error) {
	if err := checkCorr(corr); err != nil {
		return QMCResult{}, err
	}
	if math.IsNaN(df) || df <= 0 {
		return QMCResult{}, fmt.Errorf("multivariate t needs positive degrees of freedom, got %v", df)
	}
	if math.IsNaN(c) {
		return QMCResult{}, errors.New("multivariate t bound is NaN")
	}
	q, err := newMVTQMC(corr, c, df, side == TwoSided)
	if err != nil {
		return QMCResult{}, err
	}
	return q.upper(c), nil
}
