package glm

import (
	"errors"
	"fmt"
	"math"
	"sort"

	"gonum.org/v1/gonum/mat"

	"furrow/stats/dist"
)

// RandomIntercept is one grouping factor with a random intercept per level.
type RandomIntercept struct {
	// Name labels the term in results and errors.
	Name string
	// Index is the level code per row; codes lie in 0..Levels-1.
	Index []int
	// Levels is the number of levels.
	Levels int
}

// MixedOptions are the options of [FitMixed]; the zero value (or nil)
// means the family's default link, one trial each, no offset and the
// Laplace approximation.
type MixedOptions struct {
	// Link is the link function; DefaultLink is the family's usual one.
	Link Link
	// Trials are the binomial trials per row (nil: 1 each).
	Trials []float64
	// Offset is added to the linear predictor (nil: 0).
	Offset []float64
	// Points is the number of adaptive Gauss-Hermite points; 0 or 1 is
	// the Laplace approximation, more needs exactly one grouping factor.
	Points int
}

// MixedResult is a fitted generalised linear mixed model with random
// intercepts.
type MixedResult struct {
	Family Family
	Link   Link
	// Points is the number of quadrature points (1: Laplace).
	Points int
	// N rows, P fixed-effect columns.
	N, P int
	// Coef, StdErr, Z and PValue are the fixed effects with their Wald z
	// tests; Cov is their covariance from the penalised system.
	Coef, StdErr, Z, PValue []float64
	Cov                     *mat.SymDense
	// Terms names the random terms; SD is each term's standard deviation,
	// SDStdErr its standard error from the Hessian of the deviance.
	Terms        []string
	SD, SDStdErr []float64
	// Boundary flags a term whose standard deviation is at zero.
	Boundary []bool
	// Modes are the conditional modes of the random intercepts per term.
	Modes [][]float64
	// LogLik is the approximated marginal log-likelihood, Deviance -2 LogLik.
	LogLik, Deviance float64
	// Converged reports that the optimiser met its criterion, checked on
	// the gradient at the end; Gradient is the largest |gradient| there.
	Converged  bool
	Gradient   float64
	Iterations int
}

// gprob is the GLMM problem.
type gprob struct {
	n, p   int
	x      []float64 // row major
	y, tr  []float64
	off    []float64
	m      model
	g      []RandomIntercept
	d      int // index of the diagonal factor
	others []int
	ostart []int
	qo     int
	pat    [][]int // per level of d: other columns touched (sorted)
	pos    [][]int // per row, per other factor: position in pat
	rows   [][]int // rows per level of d
	nagq   int
	z, w   []float64
	lc     []float64 // the log-likelihood constant per row (log y!, binomial coefficient)
}

// FitMixed fits a GLMM with random intercepts by the Laplace approximation
// or, with Points > 1 and one grouping factor, adaptive Gauss-Hermite
// quadrature (Pinheiro & Bates 1995, J Comput Graph Stat 4:12). The
// conditional modes come from penalised IRLS on the spherical random
// effects u (b = θ u) with the penalised system solved by a block
// Cholesky: the factor with most levels is diagonal, the others and (for
// the covariance) the fixed effects form a dense Schur complement (Bates
// et al. 2015, J Stat Softw 67(1), sec. 5). The deviance in (θ, β) is then
// minimised jointly by damped Newton steps on finite-difference
// derivatives; convergence is checked on the gradient. Cov is the inverse
// of the fixed-effect Schur complement of the penalised system at the
// optimum (not the Hessian of the deviance).
func FitMixed(x mat.Matrix, y []float64, fam Family, groups []RandomIntercept, opt *MixedOptions) (*MixedResult, error) {
	if opt == nil {
		opt = &MixedOptions{}
	}
	n, p := x.Dims()
	if fam == NegBinomial {
		return nil, errors.New("mixed model: the negative binomial family is not supported yet")
	}
	link, err := resolveLink(fam, opt.Link)
	if err != nil {
		return nil, fmt.Errorf("mixed model: %w", err)
	}
	if len(y) != n {
		return nil, fmt.Errorf("mixed model: %d responses for %d rows", len(y), n)
	}
	if len(groups) == 0 {
		return nil, errors.New("mixed model: no random term")
	}
	if opt.Points > 1 && len(groups) != 1 {
		return nil, fmt.Errorf("mixed model: adaptive quadrature (%d points) needs exactly one grouping factor, not %d", opt.Points, len(groups))
	}
	if opt.Points > 50 {
		return nil, fmt.Errorf("mixed model: %d quadrature points, at most 50", opt.Points)
	}
	for k, g := range groups {
		if len(g.Index) != n || g.Levels < 1 {
			return nil, fmt.Errorf("mixed model: term %q has %d codes for %d rows and %d levels", g.Name, len(g.Index), n, g.Levels)
		}
		for i, c := range g.Index {
			if c < 0 || c >= g.Levels {
				return nil, fmt.Errorf("mixed model: term %q row %d: level %d outside 0..%d", g.Name, i+1, c, g.Levels-1)
			}
		}
		_ = k
	}
	// Starting values and the checks of the data (counts, trials,
	// separation, aliasing) from the fixed-effect fit.
	gf, err := Fit(x, y, fam, &Options{Link: link, Trials: opt.Trials, Offset: opt.Offset})
	if err != nil {
		return nil, fmt.Errorf("mixed model: %w", err)
	}
	if len(gf.Aliased) > 0 {
		return nil, fmt.Errorf("mixed model: fixed-effect column %d is aliased", gf.Aliased[0]+1)
	}
	pr := &gprob{n: n, p: p, y: y, m: model{fam: fam, link: link}, g: groups}
	pr.x = make([]float64, n*p)
	for i := 0; i < n; i++ {
		for j := 0; j < p; j++ {
			pr.x[i*p+j] = x.At(i, j)
		}
	}
	pr.tr = make([]float64, n)
	pr.off = make([]float64, n)
	for i := range pr.tr {
		pr.tr[i] = 1
		if opt.Trials != nil {
			pr.tr[i] = opt.Trials[i]
		}
		if opt.Offset != nil {
			pr.off[i] = opt.Offset[i]
		}
	}
	pr.setup()
	pr.lc = make([]float64, n)
	for i := range pr.lc {
		pr.lc[i] = lgamma1(y[i] + 1)
		if fam == Binomial {
			pr.lc[i] += lgamma1(pr.tr[i]-y[i]+1) - lgamma1(pr.tr[i]+1)
		}
	}
	pr.nagq = 1
	if opt.Points > 1 {
		pr.nagq = opt.Points
		pr.z, pr.w = gaussHermite(opt.Points)
	}
	K := len(groups)
	par := make([]float64, K+p)
	for k := range groups {
		par[k] = 0.5
	}
	copy(par[K:], gf.Coefficients())
	u := make([]float64, pr.q())
	res, err := pr.optimise(par, u)
	if err != nil {
		return nil, fmt.Errorf("mixed model: %w", err)
	}
	return res, nil
}

func (pr *gprob) q() int { return pr.g[pr.d].Levels + pr.qo }

func (pr *gprob) setup() {
	for k, g := range pr.g {
		if g.Levels > pr.g[pr.d].Levels {
			pr.d = k
		}
	}
	pr.qo = 0
	for k, g := range pr.g {
		if k != pr.d {
			pr.others = append(pr.others, k)
			pr.ostart = append(pr.ostart, pr.qo)
			pr.qo += g.Levels
		}
	}
	L := pr.g[pr.d].Levels
	pr.rows = make([][]int, L)
	sets := make([]map[int]bool, L)
	for i := 0; i < pr.n; i++ {
		a := pr.g[pr.d].Index[i]
		pr.rows[a] = append(pr.rows[a], i)
		if sets[a] == nil {
			sets[a] = map[int]bool{}
		}
		for j, k := range pr.others {
			sets[a][pr.ostart[j]+pr.g[k].Index[i]] = true
		}
	}
	pr.pat = make([][]int, L)
	for a := range sets {
		for c := range sets[a] {
			pr.pat[a] = append(pr.pat[a], c)
		}
		sort.Ints(pr.pat[a])
	}
	pr.pos = make([][]int, pr.n)
	for i := 0; i < pr.n; i++ {
		a := pr.g[pr.d].Index[i]
		pr.pos[i] = make([]int, len(pr.others))
		for j, k := range pr.others {
			pr.pos[i][j] = sort.SearchInts(pr.pat[a], pr.ostart[j]+pr.g[k].Index[i])
		}
	}
}

// obs returns log p(y_i), the score d log p/dη and the Fisher weight.
func (pr *gprob) obs(i int, eta float64) (lp, s, w float64) {
	mu, mu1m, dmu := pr.m.link.inverse(eta)
	if pr.m.fam == Binomial {
		const tiny = 1e-300
		mu = math.Max(mu, tiny)
		mu1m = math.Max(mu1m, tiny)
	}
	v := pr.m.variance(mu, mu1m)
	n := pr.tr[i]
	y := pr.y[i]
	lp = -pr.lc[i]
	if pr.m.fam == Poisson {
		lp -= mu
		if y > 0 {
			lp += y * eta
		}
	} else {
		if y > 0 {
			lp += y * math.Log(mu)
		}
		if n > y {
			lp += (n - y) * math.Log(mu1m)
		}
	}
	s = (pr.y[i] - n*mu) * dmu / v
	w = n * dmu * dmu / v
	return
}

// sys is the factorised penalised system.
type sys struct {
	D   []float64   // diagonal block
	B   [][]float64 // per level of d: values at pat (and then the β columns)
	S   *mat.Cholesky
	Sd  *mat.SymDense
	ld  float64 // log det of the u block
	nb  int     // β columns in the dense block (0 or p)
	ok  bool
	dim int
}

// eta computes the linear predictor.
func (pr *gprob) eta(th, beta, u []float64, out []float64) {
	L := pr.g[pr.d].Levels
	for i := 0; i < pr.n; i++ {
		e := pr.off[i]
		xi := pr.x[i*pr.p : (i+1)*pr.p]
		for j, b := range beta {
			e += xi[j] * b
		}
		e += th[pr.d] * u[pr.g[pr.d].Index[i]]
		for j, k := range pr.others {
			e += th[k] * u[L+pr.ostart[j]+pr.g[k].Index[i]]
		}
		out[i] = e
	}
}

// build forms and factorises the penalised system at weights w; withBeta
// appends the fixed effects to the dense block.
func (pr *gprob) build(th, w []float64, withBeta bool) *sys {
	L := pr.g[pr.d].Levels
	nb := 0
	if withBeta {
		nb = pr.p
	}
	dim := pr.qo + nb
	s := &sys{D: make([]float64, L), B: make([][]float64, L), nb: nb, dim: dim}
	for a := range s.B {
		s.B[a] = make([]float64, len(pr.pat[a])+nb)
		s.D[a] = 1
	}
	C := make([]float64, dim*dim)
	for j := 0; j < pr.qo; j++ {
		C[j*dim+j] = 1
	}
	td := th[pr.d]
	cols := make([]int, 0, len(pr.others)+nb)
	vals := make([]float64, 0, len(pr.others)+nb)
	for i := 0; i < pr.n; i++ {
		a := pr.g[pr.d].Index[i]
		wi := w[i]
		s.D[a] += wi * td * td
		cols, vals = cols[:0], vals[:0]
		for j, k := range pr.others {
			s.B[a][pr.pos[i][j]] += wi * td * th[k]
			cols = append(cols, pr.ostart[j]+pr.g[k].Index[i])
			vals = append(vals, th[k])
		}
		if withBeta {
			xi := pr.x[i*pr.p : (i+1)*pr.p]
			np := len(pr.pat[a])
			for j := 0; j < pr.p; j++ {
				s.B[a][np+j] += wi * td * xi[j]
				cols = append(cols, pr.qo+j)
				vals = append(vals, xi[j])
			}
		}
		for r, cr := range cols {
			for c, cc := range cols {
				C[cr*dim+cc] += wi * vals[r] * vals[c]
			}
		}
	}
	s.ld = 0
	for a := range s.D {
		s.ld += math.Log(s.D[a])
		np := len(pr.pat[a])
		ca := func(t int) int {
			if t < np {
				return pr.pat[a][t]
			}
			return pr.qo + t - np
		}
		b := s.B[a]
		for r := range b {
			for c := range b {
				C[ca(r)*dim+ca(c)] -= b[r] * b[c] / s.D[a]
			}
		}
	}
	s.ok = true
	if dim > 0 {
		s.Sd = mat.NewSymDense(dim, C)
		s.S = &mat.Cholesky{}
		if !s.S.Factorize(s.Sd) {
			s.ok = false
			return s
		}
		if pr.qo > 0 {
			var cu mat.Cholesky
			if !cu.Factorize(mat.NewSymDense(pr.qo, subSym(C, dim, pr.qo))) {
				s.ok = false
				return s
			}
			s.ld += cu.LogDet()
		}
	}
	return s
}

func subSym(C []float64, dim, k int) []float64 {
	out := make([]float64, k*k)
	for r := 0; r < k; r++ {
		copy(out[r*k:(r+1)*k], C[r*dim:r*dim+k])
	}
	return out
}

// solve solves the system for right-hand side (rd, ro) in place.
func (pr *gprob) solve(s *sys, rd, ro []float64) {
	if s.dim > 0 {
		t := append([]float64(nil), ro...)
		for a, b := range s.B {
			np := len(pr.pat[a])
			for r, v := range b {
				c := pr.qo + r - np
				if r < np {
					c = pr.pat[a][r]
				}
				t[c] -= v * rd[a] / s.D[a]
			}
		}
		var dv mat.VecDense
		_ = s.S.SolveVecTo(&dv, mat.NewVecDense(len(t), t))
		for j := range ro {
			ro[j] = dv.AtVec(j)
		}
	}
	for a, b := range s.B {
		np := len(pr.pat[a])
		v := rd[a]
		for r, bv := range b {
			c := pr.qo + r - np
			if r < np {
				c = pr.pat[a][r]
			}
			v -= bv * ro[c]
		}
		rd[a] = v / s.D[a]
	}
}

// pirls finds the conditional modes u for (θ, β) in place and returns
// -2 Σ log p, ||u||², the final weights and system.
func (pr *gprob) pirls(th, beta, u []float64) (float64, []float64, *sys, error) {
	L := pr.g[pr.d].Levels
	eta := make([]float64, pr.n)
	w := make([]float64, pr.n)
	sc := make([]float64, pr.n)
	obj := func(u []float64) float64 {
		pr.eta(th, beta, u, eta)
		t := 0.0
		for i := range eta {
			lp, s, wi := pr.obs(i, eta[i])
			t += -2 * lp
			sc[i], w[i] = s, wi
		}
		for _, v := range u {
			t += v * v
		}
		return t
	}
	f := obj(u)
	if math.IsNaN(f) || math.IsInf(f, 0) {
		return 0, nil, nil, errors.New("the log-likelihood is not finite at the start of penalised IRLS")
	}
	prevDec := math.Inf(1)
	small := 0
	for it := 0; it < 300; it++ {
		s := pr.build(th, w, false)
		if !s.ok {
			return 0, nil, nil, errors.New("the penalised system is not positive definite")
		}
		r := make([]float64, len(u))
		for i := 0; i < pr.n; i++ {
			r[pr.g[pr.d].Index[i]] += th[pr.d] * sc[i]
			for j, k := range pr.others {
				r[L+pr.ostart[j]+pr.g[k].Index[i]] += th[k] * sc[i]
			}
		}
		for j := range r {
			r[j] -= u[j]
		}
		d := append([]float64(nil), r...)
		pr.solve(s, d[:L], d[L:])
		dec := 0.0
		for j := range d {
			dec += d[j] * r[j]
		}
		if dec < 1e-22*(1+math.Abs(f)) || (dec < 1e-16*(1+math.Abs(f)) && dec >= prevDec) {
			small++
			if small >= 1 {
				break
			}
		}
		prevDec = dec
		un := make([]float64, len(u))
		step := 1.0
		var fn float64
		for h := 0; h < 40; h++ {
			for j := range u {
				un[j] = u[j] + step*d[j]
			}
			fn = obj(un)
			if fn <= f+1e-12*math.Abs(f) {
				break
			}
			step /= 2
		}
		if !(fn <= f+1e-12*math.Abs(f)) {
			obj(u)
			break
		}
		copy(u, un)
		f = fn
	}
	// weights at the final modes
	f = obj(u)
	s := pr.build(th, w, false)
	if !s.ok {
		return 0, nil, nil, errors.New("the penalised system is not positive definite")
	}
	return f, w, s, nil
}

// dev returns the approximated deviance at par = (θ, β), updating u.
func (pr *gprob) dev(par, u []float64) (float64, error) {
	K := len(pr.g)
	th, beta := par[:K], par[K:]
	f, _, s, err := pr.pirls(th, beta, u)
	if err != nil {
		return 0, err
	}
	if pr.nagq <= 1 {
		return f + s.ld, nil
	}
	// adaptive Gauss-Hermite for one factor: u_a + sd_a z_k
	t := th[0]
	total := 0.0
	eta0 := make([]float64, pr.n)
	pr.eta(th, beta, u, eta0)
	for a, rows := range pr.rows {
		sd := 1 / math.Sqrt(s.D[a])
		ls := make([]float64, len(pr.z))
		mx := math.Inf(-1)
		for k, z := range pr.z {
			uk := u[a] + sd*z
			l := 0.0
			for _, i := range rows {
				lp, _, _ := pr.obs(i, eta0[i]+t*sd*z)
				l += lp
			}
			ls[k] = math.Log(pr.w[k]) + l - uk*uk/2 + z*z/2
			mx = math.Max(mx, ls[k])
		}
		sum := 0.0
		for _, v := range ls {
			sum += math.Exp(v - mx)
		}
		total += -2*math.Log(sd) - 2*(mx+math.Log(sum))
	}
	return total, nil
}

// gaussHermite returns nodes and weights (summing to 1) for the standard
// normal density by the Golub-Welsch eigenvalue method (Golub & Welsch
// 1969, Math Comp 23:221).
func gaussHermite(k int) ([]float64, []float64) {
	J := mat.NewSymDense(k, nil)
	for i := 1; i < k; i++ {
		J.SetSym(i-1, i, math.Sqrt(float64(i)))
	}
	var es mat.EigenSym
	es.Factorize(J, true)
	z := es.Values(nil)
	var v mat.Dense
	es.VectorsTo(&v)
	w := make([]float64, k)
	for i := range w {
		w[i] = v.At(0, i) * v.At(0, i)
	}
	return z, w
}

// optimise minimises the deviance over par by damped Newton steps on
// central-difference derivatives.
func (pr *gprob) optimise(par, u []float64) (*MixedResult, error) {
	m := len(par)
	K := len(pr.g)
	f0, err := pr.dev(par, u)
	if err != nil {
		return nil, err
	}
	ev := func(x []float64) float64 {
		uu := append([]float64(nil), u...)
		v, err := pr.dev(x, uu)
		if err != nil || math.IsNaN(v) {
			return math.Inf(1)
		}
		return v
	}
	derivs := func(x []float64, f float64) ([]float64, *mat.SymDense) {
		g := make([]float64, m)
		H := mat.NewSymDense(m, nil)
		h := make([]float64, m)
		for i := range h {
			h[i] = 1e-4 * math.Max(1, math.Abs(x[i]))
		}
		xp := append([]float64(nil), x...)
		fp := make([]float64, m)
		fm := make([]float64, m)
		for i := 0; i < m; i++ {
			xp[i] = x[i] + h[i]
			fp[i] = ev(xp)
			xp[i] = x[i] - h[i]
			fm[i] = ev(xp)
			xp[i] = x[i]
			g[i] = (fp[i] - fm[i]) / (2 * h[i])
			H.SetSym(i, i, (fp[i]-2*f+fm[i])/(h[i]*h[i]))
		}
		for i := 0; i < m; i++ {
			for j := i + 1; j < m; j++ {
				xp[i], xp[j] = x[i]+h[i], x[j]+h[j]
				a := ev(xp)
				xp[i], xp[j] = x[i]-h[i], x[j]-h[j]
				b := ev(xp)
				xp[i], xp[j] = x[i]+h[i], x[j]-h[j]
				c := ev(xp)
				xp[i], xp[j] = x[i]-h[i], x[j]+h[j]
				d := ev(xp)
				xp[i], xp[j] = x[i], x[j]
				H.SetSym(i, j, (a+b-c-d)/(4*h[i]*h[j]))
			}
		}
		return g, H
	}
	x := append([]float64(nil), par...)
	f := f0
	var g []float64
	var H *mat.SymDense
	converged := false
	lambda := 0.0
	it := 0
	for it = 0; it < 200; it++ {
		g, H = derivs(x, f)
		var step []float64
		for try := 0; try < 60; try++ {
			A := mat.NewSymDense(m, nil)
			A.CopySym(H)
			for i := 0; i < m; i++ {
				A.SetSym(i, i, A.At(i, i)+lambda*math.Max(1, math.Abs(H.At(i, i))))
			}
			var ch mat.Cholesky
			if ch.Factorize(A) {
				var sv mat.VecDense
				if ch.SolveVecTo(&sv, mat.NewVecDense(m, g)) == nil {
					step = make([]float64, m)
					for i := range step {
						step[i] = -sv.AtVec(i)
					}
					break
				}
			}
			if lambda == 0 {
				lambda = 1e-6
			} else {
				lambda *= 10
			}
		}
		if step == nil {
			return nil, errors.New("the Hessian of the deviance could not be regularised")
		}
		dec := 0.0
		for i := range step {
			dec -= step[i] * g[i]
		}
		if dec < 1e-11 && lambda == 0 {
			converged = true
			break
		}
		xn := make([]float64, m)
		t := 1.0
		var fn float64
		ok := false
		for h := 0; h < 40; h++ {
			for i := range xn {
				xn[i] = x[i] + t*step[i]
			}
			fn = ev(xn)
			if fn < f+1e-4*t*(-dec) || (fn <= f && dec < 1e-8) {
				ok = true
				break
			}
			t /= 2
		}
		if !ok {
			if lambda > 0 || dec < 1e-9 {
				if dec < 1e-9 {
					converged = true
				}
				break
			}
			lambda = 1e-3
			continue
		}
		if t == 1 {
			lambda /= 10
			if lambda < 1e-8 {
				lambda = 0
			}
		}
		x = xn
		uu := u
		if _, err := pr.dev(x, uu); err != nil {
			return nil, err
		}
		f = fn
	}
	// The final check: the undamped Newton decrement g'H⁻¹g at the end,
	// with H positive definite.
	g, H = derivs(x, f)
	converged = false
	var fc mat.Cholesky
	if fc.Factorize(H) {
		var sv mat.VecDense
		if fc.SolveVecTo(&sv, mat.NewVecDense(m, g)) == nil {
			converged = mat.Dot(&sv, mat.NewVecDense(m, g)) < 1e-9
		}
	}
	f, err = pr.dev(x, u)
	if err != nil {
		return nil, err
	}
	if math.IsNaN(f) || math.IsInf(f, 0) {
		return nil, errors.New("the deviance is not finite at the optimum")
	}
	res := &MixedResult{Family: pr.m.fam, Link: pr.m.link, Points: pr.nagq, N: pr.n, P: pr.p,
		LogLik: -f / 2, Deviance: f, Iterations: it}
	for _, v := range g {
		res.Gradient = math.Max(res.Gradient, math.Abs(v))
	}
	res.Converged = converged && res.Gradient < 1e-3
	th := make([]float64, K)
	for k := range th {
		th[k] = math.Abs(x[k])
	}
	beta := x[K:]
	// covariance of β from the penalised system at the modes
	_, w, _, err := pr.pirls(x[:K], beta, u)
	if err != nil {
		return nil, err
	}
	s := pr.build(x[:K], w, true)
	if !s.ok {
		return nil, errors.New("the penalised system with the fixed effects is singular")
	}
	var inv mat.SymDense
	if err := s.S.InverseTo(&inv); err != nil {
		return nil, fmt.Errorf("inverting the penalised system: %w", err)
	}
	res.Cov = mat.NewSymDense(pr.p, nil)
	for i := 0; i < pr.p; i++ {
		for j := i; j < pr.p; j++ {
			res.Cov.SetSym(i, j, inv.At(pr.qo+i, pr.qo+j))
		}
	}
	res.Coef = append([]float64(nil), beta...)
	res.StdErr = make([]float64, pr.p)
	res.Z = make([]float64, pr.p)
	res.PValue = make([]float64, pr.p)
	for j := range beta {
		res.StdErr[j] = math.Sqrt(res.Cov.At(j, j))
		res.Z[j] = beta[j] / res.StdErr[j]
		res.PValue[j] = dist.NormalTwoSided(res.Z[j])
	}
	var hch mat.Cholesky
	var hinv mat.SymDense
	hok := hch.Factorize(H) && hch.InverseTo(&hinv) == nil
	L := pr.g[pr.d].Levels
	for k, gr := range pr.g {
		res.Terms = append(res.Terms, gr.Name)
		res.SD = append(res.SD, th[k])
		se := math.NaN()
		if hok {
			se = math.Sqrt(2 * hinv.At(k, k))
		}
		res.SDStdErr = append(res.SDStdErr, se)
		res.Boundary = append(res.Boundary, th[k] < 1e-4)
		md := make([]float64, gr.Levels)
		for l := range md {
			if k == pr.d {
				md[l] = th[k] * u[l]
			} else {
				j := 0
				for jj, kk := range pr.others {
					if kk == k {
						j = jj
					}
				}
				md[l] = th[k] * u[L+pr.ostart[j]+l]
			}
			if x[k] < 0 {
				md[l] = -md[l]
			}
		}
		res.Modes = append(res.Modes, md)
	}
	return res, nil
}

// MixedDF selects the denominator degrees of freedom of [MixedResult.WaldF].
type MixedDF int

const (
	// DFNone refers the F statistic to F(q, ∞), that is χ²/q.
	DFNone MixedDF = iota
	// DFResidual uses N - P denominator degrees of freedom.
	DFResidual
)

// WaldChi2 tests L β = 0: W = (Lβ)'(L V L')⁻¹(Lβ) on q = rows of L
// degrees of freedom (Wald 1943, Trans Am Math Soc 54:426).
func (r *MixedResult) WaldChi2(l mat.Matrix) (*Test, error) {
	w, q, err := r.wald(l)
	if err != nil {
		return nil, err
	}
	return &Test{Stat: w, DF: q, P: dist.ChiSqUpper(w, float64(q))}, nil
}

// WaldF returns F = W/q on (q, df2) degrees of freedom with df2 from the
// declared rule (DFNone: the χ² p-value, DF2 = 0).
func (r *MixedResult) WaldF(l mat.Matrix, df MixedDF) (*Test, error) {
	w, q, err := r.wald(l)
	if err != nil {
		return nil, err
	}
	t := &Test{Stat: w / float64(q), DF: q, F: true}
	switch df {
	case DFNone:
		t.P = dist.ChiSqUpper(w, float64(q))
	case DFResidual:
		t.DF2 = r.N - r.P
		if t.DF2 < 1 {
			return nil, errors.New("wald F test: no residual degrees of freedom")
		}
		t.P = dist.FUpper(t.Stat, float64(q), float64(t.DF2))
	default:
		return nil, fmt.Errorf("wald F test: unknown degrees-of-freedom rule %d", int(df))
	}
	return t, nil
}

func (r *MixedResult) wald(l mat.Matrix) (float64, int, error) {
	q, pc := l.Dims()
	if pc != r.P || q == 0 {
		return 0, 0, fmt.Errorf("wald test: hypothesis is %d x %d, the model has %d coefficients", q, pc, r.P)
	}
	var lb mat.VecDense
	lb.MulVec(l, mat.NewVecDense(r.P, r.Coef))
	var lv, lvl mat.Dense
	lv.Mul(l, r.Cov)
	lvl.Mul(&lv, l.T())
	var ch mat.Cholesky
	if !ch.Factorize(mat.NewSymDense(q, lvl.RawMatrix().Data)) {
		return 0, 0, errors.New("wald test: the rows of the hypothesis are dependent")
	}
	var s mat.VecDense
	if err := ch.SolveVecTo(&s, &lb); err != nil {
		return 0, 0, fmt.Errorf("wald test: %w", err)
	}
	return mat.Dot(&lb, &s), q, nil
}
