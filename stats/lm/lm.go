package lm

import (
	"errors"
	"fmt"
	"math"

	"gonum.org/v1/gonum/floats"
	"gonum.org/v1/gonum/mat"

	"furrow/stats/design"
	"furrow/stats/dist"
)

// DefaultTol is the default relative tolerance of the rank test: a column
// is aliased when the part of it not explained by the columns before it has
// a norm of at most DefaultTol times its own (centred, scaled) norm.
const DefaultTol = 1e-10

// refineSteps is the largest number of refinement steps on the augmented
// system; refinement stops earlier once the correction is negligible.
const refineSteps = 3

// Options are the optional settings of a fit. The zero value (or nil)
// means unweighted, DefaultTol and 95% intervals.
type Options struct {
	// Weights are observation weights (inverse variances), one per row, all
	// finite and >= 0. Rows with weight 0 do not count as observations. Nil
	// means all 1.
	Weights []float64
	// Tol is the rank tolerance; 0 means DefaultTol.
	Tol float64
	// Level is the confidence level of the coefficient intervals; 0 means 0.95.
	Level float64
}

// Result is a least-squares fit. Slices indexed by coefficient follow the
// columns of X. Aliased coefficients have NaN in Estimate, StdErr, TValue,
// PValue, Lower and Upper.
type Result struct {
	// N is the number of observations (rows with a positive weight).
	N int
	// P is the number of columns of X, Rank the number found independent.
	P, Rank int
	// DFResid is the residual degrees of freedom, N - Rank.
	DFResid int
	// Names are the column names (from the design matrix; "x1".. otherwise).
	Names []string
	// Intercept reports whether the model has an intercept (a constant
	// column): R2 is then centred, otherwise uncentred.
	Intercept bool
	// Aliased lists the columns found linearly dependent on earlier ones.
	Aliased []int

	Estimate, StdErr, TValue, PValue []float64
	// Lower and Upper are the confidence limits at Level.
	Lower, Upper []float64
	Level        float64

	// Sigma is the residual standard error, RSS the (weighted) residual sum of squares.
	Sigma, RSS float64
	// R2 and AdjR2 are the coefficient of determination and its adjusted
	// version; NaN when the response has no variation.
	R2, AdjR2 float64
	// ModelSS, ModelDF, ModelF and ModelP test all coefficients other than
	// the intercept (all coefficients without an intercept).
	ModelSS       float64
	ModelDF       int
	ModelF        float64
	ModelP        float64
	LogLik        float64
	AIC, BIC      float64
	Fitted, Resid []float64

	x      *mat.Dense
	w      []float64
	dm     *design.Matrix
	q      *pqr
	z      []float64 // Q'y (centred, weighted) for the first Rank positions
	ic     int       // intercept column or -1
	kappa  float64   // value of the intercept column
	center []float64
	scale  []float64
	coef   []float64 // estimates with 0 for aliased
	cov    *mat.SymDense
	tol    float64
	infl   *Influence
}

// Fit fits y = X b + e by least squares (weighted when opt.Weights is set).
//
// The columns are centred (when X has a constant column), factorised by a
// tall-skinny Householder QR over row blocks (see tsqr) whose small R factor,
// scaled to unit column norms, gets the pivoted QR that detects aliasing
// (see pqr); the solution is refined with residuals computed in twice the
// working precision (Björck 1967, BIT 7:257), and mapped back to the
// original columns with its covariance matrix.
//
// Errors are returned for data problems: non-finite values, negative
// weights, no independent column, and no residual degrees of freedom
// (N <= Rank). A constant response is fine (zero residuals, Sigma 0). Fit
// panics if len(y) or len(opt.Weights) differ from the rows of x
// (programmer misuse). x and y are not modified; the Result keeps a
// reference to x for the influence measures, so x must not change while
// the Result is in use.
func Fit(x mat.Matrix, y []float64, opt *Options) (*Result, error) {
	return fit(x, y, opt, nil)
}

// FitModel is Fit on a design matrix; the Result then knows the column names
// and terms, and can produce ANOVA tables.
func FitModel(m *design.Matrix, y []float64, opt *Options) (*Result, error) {
	if m == nil || m.X == nil {
		panic("lm: nil design matrix")
	}
	return fit(m.X, y, opt, m)
}

func fit(x mat.Matrix, y []float64, opt *Options, dm *design.Matrix) (*Result, error) {
	if opt == nil {
		opt = &Options{}
	}
	n, p := x.Dims()
	if len(y) != n {
		panic(fmt.Sprintf("lm: response has %d values, X has %d rows", len(y), n))
	}
	w := opt.Weights
	if w != nil && len(w) != n {
		panic(fmt.Sprintf("lm: %d weights for %d rows", len(w), n))
	}
	tol := opt.Tol
	if tol == 0 {
		tol = DefaultTol
	}
	if !(tol > 0 && tol < 1) {
		return nil, fmt.Errorf("fitting linear model: rank tolerance %g not in (0, 1)", tol)
	}
	level := opt.Level
	if level == 0 {
		level = 0.95
	}
	if !(level > 0 && level < 1) {
		return nil, fmt.Errorf("fitting linear model: confidence level %g not in (0, 1)", level)
	}
	xd, ok := x.(*mat.Dense)
	if !ok {
		xd = mat.DenseCopyOf(x)
	}
	if p == 0 {
		return nil, errors.New("fitting linear model: X has no columns")
	}
	nan, firstNaN := 0, -1
	for i, v := range y {
		if math.IsNaN(v) || math.IsInf(v, 0) {
			if nan == 0 {
				firstNaN = i
			}
			nan++
		}
	}
	if nan == n {
		return nil, errors.New("fitting linear model: the response has no finite value")
	}
	if nan > 0 {
		return nil, fmt.Errorf("fitting linear model: response is not finite at row %d (%d such rows; drop them first)", firstNaN, nan)
	}
	npos := n
	if w != nil {
		npos = 0
		for i, v := range w {
			if math.IsNaN(v) || math.IsInf(v, 0) || v < 0 {
				return nil, fmt.Errorf("fitting linear model: weight at row %d is %g, must be finite and >= 0", i, v)
			}
			if v > 0 {
				npos++
			}
		}
	}
	i0 := firstPositive(w)
	st := scanX(xd, w, i0, dm == nil)
	if st.badRow >= 0 {
		return nil, fmt.Errorf("fitting linear model: X is not finite at row %d, column %d", st.badRow, st.badCol)
	}
	if npos <= 0 {
		return nil, errors.New("fitting linear model: no observation has a positive weight")
	}
	sw := make([]float64, n) // square roots of the weights
	for i := range sw {
		if w == nil {
			sw[i] = 1
		} else {
			sw[i] = math.Sqrt(w[i])
		}
	}

	res := &Result{N: npos, P: p, x: xd, w: w, dm: dm, tol: tol, ic: -1, Level: level}
	if dm != nil {
		res.Names = append([]string(nil), dm.Names...)
		if dm.Intercept {
			res.ic = 0
		}
	} else {
		res.Names = make([]string, p)
		for j := range res.Names {
			res.Names[j] = fmt.Sprintf("x%d", j+1)
		}
		for j, c := range st.constant {
			if c && xd.At(i0, j) != 0 {
				res.ic = j
				break
			}
		}
	}
	res.Intercept = res.ic >= 0
	if res.ic >= 0 {
		res.kappa = xd.At(i0, res.ic)
		if res.kappa == 0 {
			res.ic = -1
			res.Intercept = false
		}
	}

	// Centre the columns (when there is an intercept) by their weighted
	// means. Any centre gives the same fit, the intercept taking up the
	// difference; centring only keeps a large common offset out of the
	// factorisation, so one pass, summed by chunks, is enough.
	res.center = make([]float64, p)
	res.scale = make([]float64, p)
	var ybar float64
	if res.ic >= 0 {
		ybar = wmean(y, w)
		sumw := float64(n)
		if w != nil {
			sumw = floats.Sum(w)
		}
		for j := 0; j < p; j++ {
			if j != res.ic {
				res.center[j] = st.sum[j] / sumw
			}
		}
	}

	// Unpivoted TSQR of the centred, weighted [Z y], then the pivoted QR
	// of its R with every column scaled to unit norm. Householder QR is
	// column-scaling invariant up to rounding of the same order as its
	// backward error (columnwise; Higham 2002, Accuracy and Stability of
	// Numerical Algorithms, 2nd ed., sec. 19.3), so scaling R rather than Z
	// costs no accuracy, and the scale (the column norm of Z) is read off R.
	big := newTSQR(xd, y, sw, res.center, ybar)
	rcols, qty := big.rfactor()
	for j, c := range rcols {
		s := floats.Norm(c, 2)
		if s == 0 {
			s = 1
		}
		res.scale[j] = s
		floats.Scale(1/s, c)
	}
	q := factorize(rcols, p, tol, res.ic)
	res.q = q
	res.Rank = q.rank
	if q.rank == 0 {
		return nil, errors.New("fitting linear model: X has no nonzero column")
	}
	res.DFResid = npos - q.rank
	if res.DFResid <= 0 {
		return nil, fmt.Errorf("fitting linear model: no residual degrees of freedom (%d observations, rank %d)", npos, q.rank)
	}
	for k := q.rank; k < p; k++ {
		res.Aliased = append(res.Aliased, q.piv[k])
	}

	q.qtApply(qty)
	res.z = append([]float64(nil), qty[:q.rank]...)
	g := append([]float64(nil), res.z...)
	q.solveR(g)
	b := res.toOriginal(g)
	if res.ic >= 0 {
		b[res.ic] += ybar / res.kappa
	}

	// Iterative refinement of solution and residual together on the
	// augmented system [I Z; Z' 0][r; g] = [y; 0] (Björck 1967, "Iterative
	// refinement of linear least squares solutions I", BIT 7:257-278), with
	// the residuals f = y - r - Xb and g = -Z'r in twice the working
	// precision. Unlike refining the solution alone (Golub 1965), this also
	// converges for large-residual problems. Q is the full orthogonal factor
	// (TSQR reflectors, then those of the pivoted QR of R).
	res.coef = b
	rr := make([]float64, n) // weighted residual estimate
	fv := make([]float64, n)
	for it := 0; it < refineSteps; it++ {
		mode := passStep
		if it == 0 {
			mode = passFirst
		}
		gv := res.mapZtr(rowPass(xd, y, sw, b, rr, fv, mode))
		for k := range gv {
			gv[k] = -gv[k]
		}
		// h = R^-T g
		h := gv
		for k := 0; k < q.rank; k++ {
			s := h[k]
			for m := 0; m < k; m++ {
				s -= q.r(m, k) * h[m]
			}
			h[k] = s / q.rdiag[k]
		}
		tops := big.qt(fv)
		t0 := tops[0]
		q.qtApply(t0)
		dg := make([]float64, q.rank)
		for k := range dg {
			dg[k] = t0[k] - h[k]
			t0[k] = h[k]
		}
		q.qApply(t0)
		big.q(fv, tops) // dr = Q [h; d2]
		q.solveR(dg)
		db := res.toOriginal(dg)
		var nb, ndb float64
		for j := range b {
			b[j] += db[j]
			nb = math.Max(nb, math.Abs(b[j]))
			ndb = math.Max(ndb, math.Abs(db[j]))
		}
		for i := range rr {
			rr[i] += fv[i]
		}
		if ndb <= 1e-15*nb {
			break // converged: the correction is below rounding of b
		}
	}
	res.coef = b
	big.release()

	// Residuals, fitted values, sums of squares.
	res.Resid = rr
	res.Fitted = fv
	rowPass(xd, y, sw, b, res.Resid, res.Fitted, passFinal)
	res.RSS = sumSq2(res.Resid, w)
	if math.IsNaN(res.RSS) || math.IsInf(res.RSS, 0) {
		// Sums of squares of values near the float64 limit overflow; a fit
		// of NaNs must not be handed on as a result.
		return nil, errors.New("fitting linear model: sums of squares overflow (values too large; rescale X or the response)")
	}
	df := float64(res.DFResid)
	res.Sigma = math.Sqrt(res.RSS / df)

	// Model sum of squares: sum of w (f - fbar)^2, or sum w f^2 without intercept.
	f := res.Fitted
	if res.ic >= 0 {
		fbar := wmean(f, w)
		f = make([]float64, n)
		for i, v := range res.Fitted {
			f[i] = v - fbar
		}
	}
	res.ModelSS = sumSq2(f, w)
	res.ModelDF = q.rank
	if res.ic >= 0 {
		res.ModelDF--
	}
	res.R2 = math.NaN()
	res.AdjR2 = math.NaN()
	if tot := res.ModelSS + res.RSS; tot > 0 {
		res.R2 = res.ModelSS / tot
		dfint := 0.0
		if res.ic >= 0 {
			dfint = 1
		}
		res.AdjR2 = 1 - (1-res.R2)*(float64(npos)-dfint)/df
	}
	res.ModelF, res.ModelP = math.NaN(), math.NaN()
	if res.ModelDF > 0 {
		res.ModelF = (res.ModelSS / float64(res.ModelDF)) / (res.RSS / df)
		res.ModelP = dist.FUpper(res.ModelF, float64(res.ModelDF), df)
	}

	// Log-likelihood of the normal model with variance sigma^2/w at the ML
	// estimate of sigma^2.
	var sumlogw float64
	if w != nil {
		for _, v := range w {
			if v > 0 {
				sumlogw += math.Log(v)
			}
		}
	}
	nf := float64(npos)
	res.LogLik = 0.5 * (sumlogw - nf*(math.Log(2*math.Pi)+1-math.Log(nf)+math.Log(res.RSS)))
	k := float64(q.rank + 1)
	res.AIC = -2*res.LogLik + 2*k
	res.BIC = -2*res.LogLik + math.Log(nf)*k

	res.cov = res.covariance(res.Sigma * res.Sigma)
	res.coefTable()
	return res, nil
}

// mapZtr maps the sums s = X'(sqrt(w) r) to Z'r for the centred, scaled,
// weighted columns Z = sqrt(W) X T (T the map of toOriginal), by pivot
// position.
func (r *Result) mapZtr(s []float64) []float64 {
	out := make([]float64, r.q.rank)
	for k := range out {
		j := r.q.piv[k]
		v := s[j]
		if r.ic >= 0 && j != r.ic {
			v -= s[r.ic] * r.center[j] / r.kappa
		}
		out[k] = v / r.scale[j]
	}
	return out
}

// toOriginal maps coefficients of the centred, scaled columns (by pivot
// position, length Rank) to the original columns (length P, zero where
// aliased).
func (r *Result) toOriginal(g []float64) []float64 {
	b := make([]float64, r.P)
	for k := 0; k < r.q.rank; k++ {
		j := r.q.piv[k]
		b[j] = g[k] / r.scale[j]
	}
	r.uncentre(b)
	return b
}

// uncentre moves the centring of the columns into the intercept of b (in
// place): b_ic -= sum_{j != ic} center_j/kappa b_j.
func (r *Result) uncentre(b []float64) {
	if r.ic < 0 {
		return
	}
	var s float64
	for j := range b {
		if j != r.ic {
			s += r.center[j] / r.kappa * b[j]
		}
	}
	b[r.ic] -= s
}

// covariance returns s2 B B' with B = A R11^{-1}, A the map toOriginal.
func (r *Result) covariance(s2 float64) *mat.SymDense {
	q := r.q
	rk := q.rank
	ri := q.rinv()
	B := mat.NewDense(r.P, rk, nil)
	col := make([]float64, rk)
	for c := 0; c < rk; c++ {
		for k := 0; k < rk; k++ {
			col[k] = ri[k*rk+c]
		}
		bc := r.toOriginal(col)
		for j := 0; j < r.P; j++ {
			B.Set(j, c, bc[j])
		}
	}
	cov := mat.NewSymDense(r.P, nil)
	cov.SymOuterK(s2, B)
	return cov
}

func (r *Result) coefTable() {
	p := r.P
	r.Estimate = make([]float64, p)
	r.StdErr = make([]float64, p)
	r.TValue = make([]float64, p)
	r.PValue = make([]float64, p)
	r.Lower = make([]float64, p)
	r.Upper = make([]float64, p)
	df := float64(r.DFResid)
	tq := dist.TUpperQuantile((1-r.Level)/2, df)
	for j := 0; j < p; j++ {
		b := r.coef[j]
		se := math.Sqrt(r.cov.At(j, j))
		t := b / se
		r.Estimate[j], r.StdErr[j], r.TValue[j] = b, se, t
		r.PValue[j] = dist.TTwoSided(t, df)
		r.Lower[j], r.Upper[j] = b-tq*se, b+tq*se
	}
	for _, j := range r.Aliased {
		nan := math.NaN()
		r.Estimate[j], r.StdErr[j], r.TValue[j], r.PValue[j], r.Lower[j], r.Upper[j] = nan, nan, nan, nan, nan, nan
	}
}

// Coefficients returns a copy of the estimates, with 0 for aliased
// coefficients (the solution that drops the aliased columns).
func (r *Result) Coefficients() []float64 { return append([]float64(nil), r.coef...) }

// CoefCov returns a copy of the P x P covariance matrix of the estimates.
// Rows and columns of aliased coefficients are zero; a contrast that gives
// weight to them is only meaningful if Estimable says so.
func (r *Result) CoefCov() *mat.SymDense {
	c := mat.NewSymDense(r.P, nil)
	c.CopySym(r.cov)
	return c
}

// UnscaledCov returns the P x P matrix (X'WX)^-1, the covariance of the
// estimates divided by Sigma², computed from R without the residual (so
// also for an exact fit, Sigma 0). Rows and columns of aliased
// coefficients are zero. Weighted iterative fits (stats/glm) scale it by
// their own dispersion.
func (r *Result) UnscaledCov() *mat.SymDense { return r.covariance(1) }

// DF returns the degrees of freedom of the contrast l: the residual degrees
// of freedom, the same for every contrast in a fixed-effects model.
func (r *Result) DF(l []float64) float64 { return float64(r.DFResid) }

// Estimable reports whether l'b is estimable, i.e. l is orthogonal to every
// null-space direction of X implied by the aliased columns (relative
// tolerance 1e-8). It panics if len(l) != P.
func (r *Result) Estimable(l []float64) bool {
	if len(l) != r.P {
		panic("lm: contrast length does not match the coefficients")
	}
	for _, d := range r.nullSpace() {
		var s, nl, nd float64
		for j := range l {
			s += l[j] * d[j]
			nl += l[j] * l[j]
			nd += d[j] * d[j]
		}
		if math.Abs(s) > 1e-8*math.Sqrt(nl*nd) {
			return false
		}
	}
	return true
}

// nullSpace returns one direction d (X d = 0) per aliased column.
func (r *Result) nullSpace() [][]float64 {
	q := r.q
	rk := q.rank
	var out [][]float64
	for k := rk; k < r.P; k++ {
		a := make([]float64, rk)
		for i := 0; i < rk; i++ {
			a[i] = q.r(i, k)
		}
		q.solveR(a)
		// gamma: 1 at the aliased column, -a at the pivots.
		d := make([]float64, r.P)
		for i := 0; i < rk; i++ {
			d[q.piv[i]] = -a[i] / r.scale[q.piv[i]]
		}
		j := q.piv[k]
		d[j] = 1 / r.scale[j]
		r.uncentre(d)
		out = append(out, d)
	}
	return out
}

// AliasedNames returns the names of the aliased columns.
func (r *Result) AliasedNames() []string {
	out := make([]string, len(r.Aliased))
	for i, j := range r.Aliased {
		out[i] = r.Names[j]
	}
	return out
}

// Influence holds per-observation diagnostics. Rows with weight 0 have
// leverage 0 and NaN for the scaled residuals and Cook's distance.
type Influence struct {
	// Leverage is the diagonal of the hat matrix.
	Leverage []float64
	// Standardized are e_i sqrt(w_i) / (sigma sqrt(1 - h_i)).
	Standardized []float64
	// Studentized are externally studentised residuals, using the residual
	// standard error with observation i deleted.
	Studentized []float64
	// Cook is Cook's distance (Cook 1977, Technometrics 19:15).
	Cook []float64
}

// Influence computes leverage, standardised and studentised residuals and
// Cook's distance. The leverage of row i is ||R^-T z_i||^2 with z_i the
// centred, scaled, weighted row (no n x n hat matrix is formed). An
// observation with leverage 1 has NaN scaled residuals.
func (r *Result) Influence() *Influence {
	if r.infl != nil {
		return r.infl
	}
	q := r.q
	rk := q.rank
	n, _ := r.x.Dims()
	inf := &Influence{Leverage: make([]float64, n), Standardized: make([]float64, n), Studentized: make([]float64, n), Cook: make([]float64, n)}
	df := float64(r.DFResid)
	s2 := r.RSS / df
	// R11 row-major, for the forward substitutions.
	rm := make([]float64, rk*rk)
	for m := 0; m < rk; m++ {
		for k := m; k < rk; k++ {
			rm[m*rk+k] = q.r(m, k)
		}
	}
	// Rows are independent; chunks of rows run in parallel.
	parallel(chunks(n), func(c int) {
		u := make([]float64, rk)
		for i := c * chunkRows; i < min(n, (c+1)*chunkRows); i++ {
			wi := 1.0
			if r.w != nil {
				wi = r.w[i]
			}
			if wi == 0 {
				inf.Leverage[i] = 0
				nan := math.NaN()
				inf.Standardized[i], inf.Studentized[i], inf.Cook[i] = nan, nan, nan
				continue
			}
			row := r.x.RawRowView(i)
			sw := math.Sqrt(wi)
			// Forward substitution R' u = z.
			var h float64
			for k := 0; k < rk; k++ {
				j := q.piv[k]
				s := sw * (row[j] - r.center[j]) / r.scale[j]
				for m := 0; m < k; m++ {
					s -= rm[m*rk+k] * u[m]
				}
				u[k] = s / rm[k*rk+k]
				h += u[k] * u[k]
			}
			inf.Leverage[i] = h
			e := sw * r.Resid[i]
			om := 1 - h
			inf.Standardized[i] = e / math.Sqrt(s2*om)
			s2i := (r.RSS - e*e/om) / (df - 1)
			inf.Studentized[i] = e / math.Sqrt(s2i*om)
			inf.Cook[i] = e * e * h / (float64(rk) * s2 * om * om)
		}
	})
	r.infl = inf
	return inf
}

// wmean is a weighted two-pass mean.
func wmean(x, w []float64) float64 {
	var s, sw float64
	for i, v := range x {
		wi := 1.0
		if w != nil {
			wi = w[i]
		}
		s += wi * v
		sw += wi
	}
	mu := s / sw
	var c float64
	for i, v := range x {
		wi := 1.0
		if w != nil {
			wi = w[i]
		}
		c += wi * (v - mu)
	}
	return mu + c/sw
}

func firstPositive(w []float64) int {
	for i, v := range w {
		if v > 0 {
			return i
		}
	}
	return 0
}
