package lmm

import (
	"errors"
	"fmt"
	"math"
	"sync"

	"gonum.org/v1/gonum/floats"
	"gonum.org/v1/gonum/mat"
	"gonum.org/v1/gonum/optimize"

	"furrow/stats/dist"
)

// Grouping is one grouping factor of a random intercept: Index holds the
// level code (0..Levels-1) of every row.
type Grouping struct {
	// Name labels the random term in results and errors.
	Name string
	// Index is the level code per row of the data.
	Index []int
	// Levels is the number of levels; codes must lie in 0..Levels-1.
	Levels int
}

// Criterion selects the estimation criterion.
type Criterion int

const (
	// REML is restricted maximum likelihood (Patterson & Thompson 1971), the default.
	REML Criterion = iota
	// ML is maximum likelihood.
	ML
)

// String returns "REML" or "ML".
func (c Criterion) String() string {
	if c == ML {
		return "ML"
	}
	return "REML"
}

// Method selects the denominator degrees of freedom method.
type Method int

const (
	// Satterthwaite uses the Satterthwaite (1946) approximation with the
	// observed information of the criterion; the default.
	Satterthwaite Method = iota
	// KenwardRoger uses the Kenward & Roger (1997) adjusted covariance and df.
	KenwardRoger
)

// String returns the method name.
func (m Method) String() string {
	if m == KenwardRoger {
		return "Kenward-Roger"
	}
	return "Satterthwaite"
}

// Options are optional settings for Fit. The zero value means REML,
// unit weights and 95% intervals.
type Options struct {
	// Criterion is REML (default) or ML.
	Criterion Criterion
	// Weights are optional positive prior weights (residual variance sigma^2/w).
	Weights []float64
	// Level is the confidence level of the intervals; 0 means 0.95.
	Level float64
	// MaxIter bounds the optimiser's major iterations; 0 means 500.
	MaxIter int
}

// Errors the data can cause; test with errors.Is.
var (
	// ErrRankDeficient reports a model matrix without full column rank.
	ErrRankDeficient = errors.New("model matrix is rank deficient")
	// ErrAliased reports a fixed effect aliased with a random term.
	ErrAliased = errors.New("fixed effects are aliased with a random term")
	// ErrNoResidual reports a response fitted exactly by the fixed effects.
	ErrNoResidual = errors.New("response has no residual variance after the fixed effects")
	// ErrDegenerateGrouping reports a grouping factor that cannot carry a variance.
	ErrDegenerateGrouping = errors.New("grouping factor cannot be estimated")
)

// Coef is one fixed effect with its Satterthwaite inference.
type Coef struct {
	Estimate, SE, DF, T, P, Lower, Upper float64
}

// Component is the variance component of one random term (or the residual).
type Component struct {
	// Name is the grouping's name, or "residual".
	Name string
	// Variance, SD: the estimated variance and its square root.
	Variance, SD float64
	// Share is the variance as a share of the total variance (the
	// intraclass correlation of the term).
	Share float64
	// Theta is the relative standard deviation SD/sigma (0 for the residual).
	Theta float64
	// Boundary is true when the estimate sits on the boundary 0.
	Boundary bool
}

// Result is a fitted linear mixed model. Its methods Coefficients, CoefCov
// and DF (Satterthwaite) give the inputs of linear contrasts.
type Result struct {
	// Criterion used for the fit.
	Criterion Criterion
	// N observations, P fixed-effect columns.
	N, P int
	// Coef holds the fixed effects with SE, Satterthwaite df, t, p and CI.
	Coef []Coef
	// Components per random term, in the caller's order, followed by the residual.
	Components []Component
	// Sigma is the residual standard deviation.
	Sigma float64
	// Objective is the minimised criterion: the REML criterion (-2 REML
	// log-likelihood) or the deviance (-2 log-likelihood).
	Objective float64
	// LogLik is -Objective/2; AIC and BIC use it with P + terms + 1 parameters.
	LogLik, AIC, BIC float64
	// Boundary is true when any variance component is at zero.
	Boundary bool
	// Status is Success when the optimum was verified (Newton decrement
	// below 1e-9 with a positive definite Hessian off the boundary, and
	// every variance at zero a minimum in the direction into the feasible
	// region), else IterationLimit or Failure, and the fit must then not be
	// used as converged. Iterations and Evaluations count the major
	// iterations and criterion evaluations of all searches and checks.
	Status                  optimize.Status
	Iterations, Evaluations int
	// BLUPs are the predicted random effects per grouping (caller's order), per level.
	BLUPs [][]float64
	// Fitted are the conditional fitted values X b + Z u.
	Fitted []float64
	// Resid are the conditional residuals y - X b - Z u.
	Resid []float64
	// MarginalResid are y - X b.
	MarginalResid []float64

	// beta and cov are the coefficients of the caller's X and their
	// covariance; gamma and covS those of the centred, scaled columns the
	// fit works in (sys.cm), which every test and df is computed from.
	beta  []float64
	cov   *mat.SymDense
	gamma []float64
	covS  *mat.SymDense
	level float64
	names []string

	sys   *system
	theta []float64 // sorted-factor order
	sat   *satInfo

	krOnce sync.Once
	kr     *krInfo
	krErr  error
}

// Fit fits y = X b + sum_k Z_k u_k + e with independent random intercepts
// for each grouping, by REML (default) or ML. X must have full column rank:
// a column is rank deficient when the part of it not explained by the
// columns before it has at most 1e-10 of its own centred norm, whatever
// its units. The fit works on centred, scaled columns (see colMap) and
// reports everything for the columns of X as given. Inputs are not
// modified.
func Fit(y []float64, X mat.Matrix, groups []Grouping, opt *Options) (*Result, error) {
	if opt == nil {
		opt = &Options{}
	}
	sys, err := newSystem(y, X, groups, opt.Weights)
	if err != nil {
		return nil, fmt.Errorf("fitting mixed model: %w", err)
	}
	if err := sys.checkGroupings(groups); err != nil {
		return nil, fmt.Errorf("fitting mixed model: %w", err)
	}
	p1 := sys.p + 1
	ry := math.Abs(sys.rxy[sys.p*p1+sys.p])
	var yy float64
	for i := 0; i < p1; i++ {
		yy = math.Hypot(yy, sys.rxy[i*p1+sys.p])
	}
	if ry <= 1e-12*yy || ry == 0 {
		return nil, fmt.Errorf("fitting mixed model: %w", ErrNoResidual)
	}
	crit := opt.Criterion
	maxIter := opt.MaxIter
	if maxIter <= 0 {
		maxIter = 500
	}
	// Quasi-Newton on the analytic gradient from moment estimates, the
	// optimum verified (second-order conditions, boundary included); the
	// derivative-free Newton search on differences of the criterion is the
	// fallback.
	theta, status, iters, evals, err := sys.fitTheta(crit, maxIter)
	if err != nil {
		return nil, fmt.Errorf("fitting mixed model: %w", err)
	}
	level := opt.Level
	if level <= 0 || level >= 1 {
		level = 0.95
	}
	r, err := sys.finish(theta, crit, groups, level)
	if err != nil {
		return nil, fmt.Errorf("fitting mixed model: %w", err)
	}
	r.Status, r.Iterations, r.Evaluations = status, iters, evals
	r.fillFitted(y, X, groups)
	sat, err := sys.satterthwaiteAnalytic(theta, r.Sigma, crit, r.covS)
	if err != nil {
		sat, err = sys.satterthwaite(theta, r.Sigma, crit)
	}
	if err != nil {
		return nil, fmt.Errorf("fitting mixed model: satterthwaite: %w", err)
	}
	r.sat = sat
	for j := range r.Coef {
		l := make([]float64, sys.p)
		l[j] = 1
		c, err := r.Contrast(l, Satterthwaite)
		if err != nil {
			return nil, fmt.Errorf("fitting mixed model: coefficient %d: %w", j, err)
		}
		c.Estimate = r.beta[j]
		r.Coef[j] = fillT(c, level)
	}
	return r, nil
}

// fillT completes t, p and the interval from estimate, SE and DF.
func fillT(c Coef, level float64) Coef {
	c.T = c.Estimate / c.SE
	c.P = dist.TTwoSided(c.T, c.DF)
	q := dist.TUpperQuantile((1-level)/2, c.DF)
	c.Lower, c.Upper = c.Estimate-q*c.SE, c.Estimate+q*c.SE
	return c
}

// checkGroupings rejects groupings that cannot carry a variance component.
func (s *system) checkGroupings(groups []Grouping) error {
	p, p1 := s.p, s.p+1
	v := make([]float64, p)
	for k, gi := range s.ord {
		g := groups[gi]
		nonempty := 0
		for _, d := range s.d[k] {
			if d > 0 {
				nonempty++
			}
		}
		if nonempty < 2 {
			return fmt.Errorf("%w: %q has %d level with data; a variance needs at least two", ErrDegenerateGrouping, g.Name, nonempty)
		}
		if nonempty >= s.n {
			return fmt.Errorf("%w: %q has a level for every observation, so its variance is confounded with the residual", ErrDegenerateGrouping, g.Name)
		}
		// Complete aliasing: every indicator of g lies in the span of X.
		aliased := true
		for a, d := range s.d[k] {
			if d == 0 {
				continue
			}
			z := s.zxy[k][a*p1 : a*p1+p]
			// Solve R' v = z (R upper, so R' lower).
			var ss float64
			for i := 0; i < p; i++ {
				sum := z[i]
				for j := 0; j < i; j++ {
					sum -= s.rxy[j*p1+i] * v[j]
				}
				v[i] = sum / s.rxy[i*p1+i]
				ss += v[i] * v[i]
			}
			if d-ss > 1e-8*d {
				aliased = false
				break
			}
		}
		if aliased {
			return fmt.Errorf("%w: the levels of %q are spanned by the fixed effects", ErrAliased, g.Name)
		}
	}
	return nil
}

// profiled returns the profiled criterion (Bates et al. 2015, eq. 34 and 41).
func (s *system) profiled(e evalOut, crit Criterion) float64 {
	n := float64(s.n)
	if crit == ML {
		return e.ldL2 + n*(1+math.Log(2*math.Pi*e.r2/n)) - s.sumLogW
	}
	np := n - float64(s.p)
	return e.ldL2 + e.ldRX2 + np*(1+math.Log(2*math.Pi*e.r2/np)) - s.sumLogW
}

// deviance returns the criterion at (theta, sigma) without profiling sigma.
func (s *system) deviance(e evalOut, sigma float64, crit Criterion) float64 {
	n := float64(s.n)
	s2 := sigma * sigma
	if crit == ML {
		return e.ldL2 + n*math.Log(2*math.Pi*s2) + e.r2/s2 - s.sumLogW
	}
	np := n - float64(s.p)
	return e.ldL2 + e.ldRX2 + np*math.Log(2*math.Pi*s2) + e.r2/s2 - s.sumLogW
}

// minimize is the fallback of minimizeAnalytic, using only values of the
// criterion. It optimises the profiled criterion over theta. The criterion is an
// even function of each theta, so the search is unconstrained and the
// absolute values are returned: the bound theta >= 0 holds by symmetry.
// A damped Newton search on central-difference derivatives (gonum's BFGS
// as fallback) is followed by Newton steps on a Richardson-extrapolated
// gradient. The status is Success when the final gradient is at the noise
// floor of the criterion, IterationLimit or Failure otherwise. The search
// starts at x0.
func minimize(f func([]float64) float64, x0 []float64, maxIter int) ([]float64, optimize.Status, int, int, error) {
	k := len(x0)
	evals := 0
	fc := func(x []float64) float64 { evals++; return f(x) }
	grad := func(g, x []float64) {
		xx := make([]float64, len(x))
		for i := range x {
			copy(xx, x)
			h := 1e-4 * math.Max(math.Abs(x[i]), 1e-2)
			xx[i] = x[i] + h
			fp := fc(xx)
			xx[i] = x[i] - h
			fm := fc(xx)
			g[i] = (fp - fm) / (2 * h)
		}
	}
	if math.IsInf(fc(x0), 1) {
		return nil, 0, 0, evals, errors.New("criterion is not finite at the starting values")
	}
	// Damped Newton with a Levenberg shift and backtracking: each step costs
	// O(k^2) criterion evaluations, far fewer in total than a quasi-Newton
	// search on these small, smooth problems.
	x := append([]float64(nil), x0...)
	status := optimize.NotTerminated
	iters := 0
	{
		fx := fc(x)
		g := make([]float64, k)
		for ; iters < maxIter; iters++ {
			grad(g, x)
			if floats.Norm(g, math.Inf(1)) <= 1e-6*math.Max(1, math.Abs(fx)) {
				status = optimize.GradientThreshold
				break
			}
			H := hessianOnce(fc, x, fx, 1e-4, 1e-1)
			step, ok := newtonStep(H, g)
			if !ok {
				break
			}
			t := 1.0
			moved := false
			for ls := 0; ls < 40; ls++ {
				xn := make([]float64, k)
				for i := range x {
					xn[i] = x[i] - t*step[i]
				}
				if fn := fc(xn); fn < fx {
					x, fx = xn, fn
					moved = true
					break
				}
				t /= 2
			}
			if !moved {
				status = optimize.FunctionConvergence
				break
			}
		}
		if iters >= maxIter {
			status = optimize.IterationLimit
		}
	}
	if status == optimize.NotTerminated {
		// Newton could not proceed: fall back to gonum's BFGS.
		prob := optimize.Problem{Func: fc, Grad: grad}
		set := &optimize.Settings{
			GradientThreshold: 1e-6,
			MajorIterations:   maxIter,
			Converger:         &optimize.FunctionConverge{Absolute: 1e-10, Relative: 1e-13, Iterations: 10},
		}
		res, err := optimize.Minimize(prob, x, set, &optimize.BFGS{})
		if err != nil && res == nil {
			return nil, 0, 0, evals, fmt.Errorf("optimiser: %w", err)
		}
		x = append([]float64(nil), res.X...)
		status = res.Status
		iters += res.Stats.MajorIterations
	}
	// Newton polish on a Richardson-extrapolated central-difference
	// gradient: accurate to about 1e-10 where the criterion itself is too
	// flat to separate points closer than 1e-7.
	fx := fc(x)
	g := make([]float64, k)
	gn := make([]float64, k)
	rgrad(fc, g, x)
	for it := 0; it < 6; it++ {
		if floats.Norm(g, math.Inf(1)) <= 1e-9*math.Max(1, math.Abs(fx)) {
			break
		}
		H := hessianOnce(fc, x, fx, 1e-3, 1e-1)
		var ch mat.Cholesky
		if !ch.Factorize(H) {
			break
		}
		step := mat.NewVecDense(k, nil)
		if err := ch.SolveVecTo(step, mat.NewVecDense(k, g)); err != nil {
			break
		}
		xn := make([]float64, k)
		for i := range x {
			xn[i] = x[i] - step.AtVec(i)
		}
		fn := fc(xn)
		iters++
		rgrad(fc, gn, xn)
		if !(fn <= fx+1e-9*math.Abs(fx)) || floats.Norm(gn, math.Inf(1)) >= floats.Norm(g, math.Inf(1)) {
			break
		}
		small := true
		for i := range x {
			if math.Abs(step.AtVec(i)) > 1e-11*math.Max(1, math.Abs(x[i])) {
				small = false
			}
		}
		x, fx = xn, fn
		copy(g, gn)
		if small {
			break
		}
	}
	for i := range x {
		x[i] = math.Abs(x[i])
		if x[i] < 1e-10 {
			x[i] = 0
		}
	}
	// Convergence is judged on the polished point: a gradient at the noise
	// floor of the criterion means the optimum is found whatever stopped
	// the quasi-Newton run (line searches often fail on flat criteria).
	if floats.Norm(g, math.Inf(1)) <= 1e-5*math.Max(1, math.Abs(fx)) {
		status = optimize.Success
	} else if status != optimize.IterationLimit {
		status = optimize.Failure
	}
	return x, status, iters, evals, nil
}

// rgrad is a central-difference gradient with one Richardson extrapolation.
func rgrad(f func([]float64) float64, g, x []float64) {
	xx := make([]float64, len(x))
	for i := range x {
		h := 1e-3 * math.Max(math.Abs(x[i]), 1e-2)
		var d [2]float64
		for lev := 0; lev < 2; lev++ {
			copy(xx, x)
			xx[i] = x[i] + h
			fp := f(xx)
			xx[i] = x[i] - h
			fm := f(xx)
			d[lev] = (fp - fm) / (2 * h)
			h /= 2
		}
		g[i] = (4*d[1] - d[0]) / 3
	}
}

// newtonStep solves (H + lambda I) s = g with the smallest shift lambda >= 0
// that makes the matrix positive definite.
func newtonStep(H *mat.SymDense, g []float64) ([]float64, bool) {
	k := len(g)
	scale := 0.0
	for i := 0; i < k; i++ {
		scale = math.Max(scale, math.Abs(H.At(i, i)))
	}
	if scale == 0 || math.IsNaN(scale) {
		scale = 1
	}
	lambda := 0.0
	for try := 0; try < 30; try++ {
		A := mat.NewSymDense(k, nil)
		A.CopySym(H)
		for i := 0; i < k; i++ {
			A.SetSym(i, i, A.At(i, i)+lambda)
		}
		var ch mat.Cholesky
		if ch.Factorize(A) {
			s := mat.NewVecDense(k, nil)
			if err := ch.SolveVecTo(s, mat.NewVecDense(k, g)); err == nil {
				return s.RawVector().Data, true
			}
		}
		if lambda == 0 {
			lambda = 1e-6 * scale
		} else {
			lambda *= 10
		}
	}
	return nil, false
}

// hessianOnce is the plain central-difference Hessian (no extrapolation),
// with steps rel*max(|x_i|, floor).
func hessianOnce(f func([]float64) float64, x []float64, fx, rel, floor float64) *mat.SymDense {
	k := len(x)
	H := mat.NewSymDense(k, nil)
	xx := make([]float64, k)
	hs := make([]float64, k)
	for i := range x {
		hs[i] = rel * math.Max(math.Abs(x[i]), floor)
	}
	for i := 0; i < k; i++ {
		copy(xx, x)
		xx[i] = x[i] + hs[i]
		fp := f(xx)
		xx[i] = x[i] - hs[i]
		fm := f(xx)
		H.SetSym(i, i, (fp-2*fx+fm)/(hs[i]*hs[i]))
		for j := 0; j < i; j++ {
			copy(xx, x)
			xx[i], xx[j] = x[i]+hs[i], x[j]+hs[j]
			fpp := f(xx)
			xx[j] = x[j] - hs[j]
			fpm := f(xx)
			xx[i] = x[i] - hs[i]
			fmm := f(xx)
			xx[j] = x[j] + hs[j]
			fmp := f(xx)
			H.SetSym(i, j, (fpp-fpm-fmp+fmm)/(4*hs[i]*hs[j]))
		}
	}
	return H
}

// covBeta returns sigma^2 (Lxx Lxx')^{-1}.
func covBeta(e evalOut, p int, sigma2 float64) *mat.SymDense {
	L := mat.NewTriDense(p, mat.Lower, nil)
	for i := 0; i < p; i++ {
		for j := 0; j <= i; j++ {
			L.SetTri(i, j, e.lxx[i*p+j])
		}
	}
	var li mat.TriDense
	if err := li.InverseTri(L); err != nil {
		return nil
	}
	c := mat.NewSymDense(p, nil)
	// (L L')^{-1} = L^{-T} L^{-1}
	for i := 0; i < p; i++ {
		for j := 0; j <= i; j++ {
			var s float64
			for k := i; k < p; k++ {
				s += li.At(k, i) * li.At(k, j)
			}
			c.SetSym(i, j, sigma2*s)
		}
	}
	return c
}

// betaFrom solves Lxx' b = lxy.
func betaFrom(e evalOut, p int) []float64 {
	b := make([]float64, p)
	for i := p - 1; i >= 0; i-- {
		s := e.lxy[i]
		for k := i + 1; k < p; k++ {
			s -= e.lxx[k*p+i] * b[k]
		}
		b[i] = s / e.lxx[i*p+i]
	}
	return b
}

// finish evaluates the fit at the optimum and fills the result.
func (s *system) finish(theta []float64, crit Criterion, groups []Grouping, level float64) (*Result, error) {
	wk := s.newWork()
	e, err := s.eval(theta, wk)
	if err != nil {
		return nil, err
	}
	n, p := s.n, s.p
	obj := s.profiled(e, crit)
	df := float64(n - p)
	if crit == ML {
		df = float64(n)
	}
	sigma2 := e.r2 / df
	sigma := math.Sqrt(sigma2)
	gamma := betaFrom(e, p)
	covS := covBeta(e, p, sigma2)
	if covS == nil {
		return nil, fmt.Errorf("%w: singular fixed-effect covariance", ErrAliased)
	}
	beta := s.cm.coef(gamma)
	r := &Result{Criterion: crit, N: n, P: p, Sigma: sigma, Objective: obj, beta: beta, cov: s.cm.cov(covS),
		gamma: gamma, covS: covS, level: level, sys: s, theta: theta}
	r.LogLik = -obj / 2
	npar := float64(p + s.nf + 1)
	r.AIC = obj + 2*npar
	r.BIC = obj + math.Log(float64(n))*npar
	r.Coef = make([]Coef, p)
	// Components, caller order.
	r.Components = make([]Component, len(groups)+1)
	total := sigma2
	for k := range s.ord {
		total += sigma2 * theta[k] * theta[k]
	}
	for k, gi := range s.ord {
		v := sigma2 * theta[k] * theta[k]
		r.Components[gi] = Component{Name: groups[gi].Name, Variance: v, SD: math.Sqrt(v), Share: v / total,
			Theta: theta[k], Boundary: theta[k] == 0}
		if theta[k] == 0 {
			r.Boundary = true
		}
	}
	r.Components[len(groups)] = Component{Name: "residual", Variance: sigma2, SD: sigma, Share: sigma2 / total}
	// BLUPs by back-substitution.
	u, err := s.backsolve(theta, gamma, wk)
	if err != nil {
		return nil, err
	}
	r.BLUPs = make([][]float64, len(groups))
	for k, gi := range s.ord {
		b := make([]float64, s.q[k])
		for a := range b {
			b[a] = theta[k] * u[k][a]
		}
		r.BLUPs[gi] = b
	}
	r.Fitted = make([]float64, n)
	r.Resid = make([]float64, n)
	r.MarginalResid = make([]float64, n)
	return r, nil
}

// backsolve returns the spherical random effects u (sorted-factor order)
// from the factorisation kept in wk.
func (s *system) backsolve(theta, beta []float64, wk *work) ([][]float64, error) {
	p, m := s.p, s.m
	p1 := p + 1
	t := m + p1
	u := make([][]float64, s.nf)
	for k := range u {
		u[k] = make([]float64, s.q[k])
	}
	if s.buckets != nil {
		// Single factor: (theta^2 d + 1) u = theta (zy - zx b).
		th := theta[0]
		for a, d := range s.d[0] {
			z := s.zxy[0][a*p1 : (a+1)*p1]
			r := z[p]
			for c := 0; c < p; c++ {
				r -= z[c] * beta[c]
			}
			u[0][a] = th * r / (th*th*d + 1)
		}
		return u, nil
	}
	// Rest columns: solve L_rr' x_r = l_r - L_Xr' b, where the Cholesky of the
	// tail is kept in wk.T (lower). Row i of the tail factor: T[i*t + j].
	T := wk.T
	xr := make([]float64, m)
	for i := m - 1; i >= 0; i-- {
		sum := T[(m+p)*t+i]
		for c := 0; c < p; c++ {
			sum -= T[(m+c)*t+i] * beta[c]
		}
		for k := i + 1; k < m; k++ {
			sum -= T[k*t+i] * xr[k]
		}
		xr[i] = sum / T[i*t+i]
	}
	i := 0
	for k := s.s; k < s.nf; k++ {
		for a := 0; a < s.q[k]; a++ {
			u[k][a] = xr[i]
			i++
		}
	}
	// Chain factors, coarsest first: D_a x_a = rhs_a - couplings . later values.
	for j := s.s - 1; j >= 0; j-- {
		na := s.s - 1 - j
		for a := 0; a < s.q[j]; a++ {
			if s.d[j][a] == 0 {
				continue
			}
			da := wk.dv[j][a*p1 : (a+1)*p1]
			sum := da[p]
			for c := 0; c < p; c++ {
				sum -= da[c] * beta[c]
			}
			if m > 0 {
				for e := s.ptr[j][a]; e < s.ptr[j][a+1]; e++ {
					sum -= wk.sv[j][e] * xr[s.col[j][e]]
				}
			}
			b := a
			for ii := 0; ii < na; ii++ {
				jj := j + 1 + ii
				b = s.par[jj-1][b]
				sum -= wk.anc[j][a*na+ii] * u[jj][b]
			}
			u[j][a] = sum / (1 + wk.D[j][a])
		}
	}
	return u, nil
}

// fillFitted computes fitted values and both kinds of residuals, from the
// centred, scaled columns (a large offset of a covariate would otherwise
// cancel between its term and the intercept).
func (r *Result) fillFitted(y []float64, X mat.Matrix, groups []Grouping) {
	row := make([]float64, r.P)
	cm := r.sys.cm
	getRow := cm.centredRows(X)
	gs := make([]float64, r.P) // coefficients of the centred columns
	for j := range gs {
		gs[j] = r.gamma[j] / cm.scale[j]
	}
	for i := range y {
		getRow(i, row)
		xb := cm.ybar
		for j, v := range row {
			xb += v * gs[j]
		}
		zu := 0.0
		for k, g := range groups {
			zu += r.BLUPs[k][g.Index[i]]
		}
		r.Fitted[i] = xb + zu
		r.Resid[i] = y[i] - xb - zu
		r.MarginalResid[i] = y[i] - xb
	}
}
