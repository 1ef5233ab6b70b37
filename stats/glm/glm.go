package glm

import (
	"errors"
	"fmt"
	"math"

	"gonum.org/v1/gonum/mat"

	"furrow/stats/design"
	"furrow/stats/dist"
	"furrow/stats/internal/fsum"
	"furrow/stats/lm"
)

// DefaultTol is the default convergence tolerance of the iterations: the
// fit has converged when |D - D_old| / (|D| + 0.1) < DefaultTol, D the
// deviance after an iteration and D_old the one before (the criterion of
// R's glm.fit, with a tighter default than its 1e-8: with a non-canonical
// link, IRLS is Fisher scoring and converges only linearly, and a
// deviance change of 1e-8 can leave the estimates off by 1e-4 of their
// standard errors).
const DefaultTol = 1e-12

// DefaultMaxIter is the default limit on the IRLS iterations (and on the
// alternations between θ and the coefficients of a negative binomial fit).
const DefaultMaxIter = 100

// polishTol ends the polishing steps after convergence: a step with
// Σ w (Δη)² below polishTol (|D| + 0.1) moves the estimates by about 1e-12
// of their standard errors.
const polishTol = 1e-24

// maxHalvings limits the step halvings of one iteration: 2^-40 of a step
// is below the rounding of the estimates.
const maxHalvings = 40

// Dispersion selects how the dispersion φ that scales the covariance of
// the estimates is obtained.
type Dispersion int

const (
	// FixedDispersion: φ = 1, the family's own variance (Poisson,
	// binomial, negative binomial at its θ). Tests use z and χ².
	FixedDispersion Dispersion = iota
	// PearsonDispersion, the quasi-likelihood fit (Wedderburn 1974,
	// Biometrika 61:439; McCullagh & Nelder 1989, sec. 9.2): the same
	// estimates, with φ = X²/(N - Rank), X² the Pearson statistic. Tests
	// use t and F with N - Rank denominator degrees of freedom; there is
	// no likelihood, so LogLik and AIC are NaN. Poisson and binomial only.
	PearsonDispersion
)

// Options are the optional settings of a fit. The zero value (or nil)
// means the family's default link, one trial per binomial observation, no
// offset, unit prior weights, φ = 1, θ estimated, DefaultTol,
// DefaultMaxIter and lm.DefaultTol.
type Options struct {
	// Link is the link function; DefaultLink is the family's usual one.
	Link Link
	// Trials are the binomial trials per observation (whole numbers > 0,
	// at least the successes y). Nil means 1 each (Bernoulli responses).
	// Only for Binomial.
	Trials []float64
	// Offset is added to the linear predictor, e.g. log plot area or log
	// trap nights for counts per unit of effort. Nil means 0.
	Offset []float64
	// Weights are prior weights (finite, >= 0): observation i contributes
	// Weights[i] times its log-likelihood. Rows with weight 0 do not count
	// as observations. Nil means all 1.
	Weights []float64
	// Dispersion selects φ = 1 or the quasi-likelihood φ = X²/df.
	Dispersion Dispersion
	// Theta fixes θ of a NegBinomial fit when > 0; 0 estimates it by
	// maximum likelihood.
	Theta float64
	// Tol is the convergence tolerance on the relative change of the
	// deviance (see DefaultTol); 0 means DefaultTol.
	Tol float64
	// MaxIter limits the iterations; 0 means DefaultMaxIter.
	MaxIter int
	// RankTol is the rank tolerance of stats/lm's pivoted QR that decides
	// aliasing; 0 means lm.DefaultTol.
	RankTol float64
}

// Result is a fitted generalised linear model. Slices indexed by
// coefficient follow the columns of X; aliased coefficients have NaN in
// Estimate, StdErr, Stat and PValue. Slices indexed by observation have
// one entry per row of X.
type Result struct {
	Family Family
	Link   Link
	// Quasi reports a PearsonDispersion fit.
	Quasi bool

	// N is the number of observations (rows with a positive prior weight).
	N int
	// P is the number of columns of X, Rank the number found independent.
	P, Rank int
	// DFResid = N - Rank and DFNull = N - 1 (N without an intercept).
	DFResid, DFNull int
	// Names are the column names (from the design matrix; "x1".. otherwise).
	Names []string
	// Intercept reports whether X has an intercept (a constant column).
	Intercept bool
	// Aliased lists the columns found linearly dependent on earlier ones.
	Aliased []int

	// Estimate, StdErr, Stat and PValue form the coefficient table. Stat
	// is Estimate/StdErr, a z statistic with a normal p-value, or a t
	// statistic on DFResid degrees of freedom when Quasi.
	Estimate, StdErr, Stat, PValue []float64

	// Phi is the dispersion scaling the covariance: 1, or X²/DFResid.
	Phi float64
	// Deviance is 2 Σ w_i [log f(y_i; y_i) - log f(y_i; μ_i)] and
	// NullDeviance that of the model with the intercept (and offset) only,
	// or the offset alone without an intercept.
	Deviance, NullDeviance float64
	// LogLik is Σ w_i log f(y_i; μ_i) at the estimates and AIC = -2 LogLik
	// + 2 (Rank + 1 when θ is estimated); NaN when Quasi.
	LogLik, AIC float64
	// Pearson is the Pearson statistic X² = Σ w_i (y_i - μ_i)²/V(μ_i) (on
	// the count scale for the binomial).
	Pearson float64
	// Theta and ThetaSE are θ of a negative binomial fit and, when it was
	// estimated, its standard error from the observed information
	// (NaN when fixed; both NaN for other families).
	Theta, ThetaSE float64

	// Iter counts the IRLS iterations (over all alternations for an
	// estimated θ); Alternations counts the θ updates (0 otherwise).
	Iter, Alternations int

	// Fitted is the mean μ_i (binomial: the probability of success; the
	// expected count is Trials[i]·Fitted[i]); Eta is the linear predictor
	// η_i = x_i'b + offset_i.
	Fitted, Eta []float64
	// Working residuals (y - μ) dη/dμ, Pearson residuals
	// (y - μ) √w/√V(μ) and deviance residuals sign(y - μ) √d_i (d_i the
	// observation's deviance contribution); binomial on the proportion
	// scale y/trials, as R's residuals.glm.
	WorkingResid, PearsonResid, DevianceResid []float64
	// Leverage is the diagonal of the hat matrix of the last weighted
	// least-squares step, W^½ X (X'WX)^-1 X' W^½ (McCullagh & Nelder 1989,
	// sec. 12.7.1).
	Leverage []float64
	// Weights are the working weights w_i (dμ/dη)²/V(μ_i) of that step.
	Weights []float64

	prob *problem
	m    model
	wls  *lm.Result
	coef []float64
	cov  *mat.SymDense // φ (X'WX)^-1
	rawY []float64
}

// problem holds the validated data of a fit.
type problem struct {
	x       *mat.Dense
	fam     Family
	y       []float64 // counts (binomial: successes)
	n       []float64 // binomial trials (nil: all 1)
	yy      []float64 // response on the mean's scale (binomial: y/n)
	w       []float64 // prior weights (nil: all 1)
	pw      []float64 // prior weights times trials
	offset  []float64 // nil: 0
	rankTol float64
	tol     float64
	maxIter int
	npos    int

	names   []string
	aliased []int // decided by the first weighted least-squares step
	checked bool  // separation checked
}

func (p *problem) trials(i int) float64 {
	if p.n == nil {
		return 1
	}
	return p.n[i]
}

func (p *problem) off(i int) float64 {
	if p.offset == nil {
		return 0
	}
	return p.offset[i]
}

// Fit fits the generalised linear model g(E y) = X b + offset of family
// fam by iteratively reweighted least squares.
//
// y holds counts (Poisson, NegBinomial) or numbers of successes
// (Binomial, out of opt.Trials). They must be whole numbers >= 0 (and at
// most the trials); a quasi fit (PearsonDispersion) also takes
// non-negative non-integer values. Errors are returned for data problems:
// non-finite or invalid values, separation (a *SeparationError naming the
// diverging coefficients), θ without a finite estimate
// (ErrThetaInfinite), no residual degrees of freedom, non-convergence.
// Fit panics if the lengths of y, opt.Trials, opt.Offset or opt.Weights
// differ from the rows of x, or fam is unknown (programmer misuse). x, y
// and the option slices are not modified; the Result keeps a reference to
// x, which must not change while the Result is in use.
func Fit(x mat.Matrix, y []float64, fam Family, opt *Options) (*Result, error) {
	return fit(x, y, fam, opt, nil)
}

// FitModel is Fit on a design matrix; the Result then knows the column
// names.
func FitModel(m *design.Matrix, y []float64, fam Family, opt *Options) (*Result, error) {
	if m == nil || m.X == nil {
		panic("glm: nil design matrix")
	}
	return fit(m.X, y, fam, opt, m)
}

func fit(x mat.Matrix, y []float64, fam Family, opt *Options, dm *design.Matrix) (*Result, error) {
	if opt == nil {
		opt = &Options{}
	}
	if fam != Poisson && fam != Binomial && fam != NegBinomial {
		panic(fmt.Sprintf("glm: unknown family %d", int(fam)))
	}
	nr, pc := x.Dims()
	for _, s := range []struct {
		name string
		v    []float64
	}{{"response", y}, {"trials", opt.Trials}, {"offset", opt.Offset}, {"weights", opt.Weights}} {
		if s.v != nil && len(s.v) != nr || s.name == "response" && len(s.v) != nr {
			panic(fmt.Sprintf("glm: %s has %d values, X has %d rows", s.name, len(s.v), nr))
		}
	}
	link, err := resolveLink(fam, opt.Link)
	if err != nil {
		return nil, fmt.Errorf("fitting glm: %w", err)
	}
	quasi := opt.Dispersion == PearsonDispersion
	if opt.Dispersion != FixedDispersion && !quasi {
		return nil, fmt.Errorf("fitting glm: unknown dispersion %d", int(opt.Dispersion))
	}
	if quasi && fam == NegBinomial {
		return nil, errors.New("fitting glm: the quasi-likelihood dispersion applies to the poisson and binomial families only")
	}
	if opt.Trials != nil && fam != Binomial {
		return nil, fmt.Errorf("fitting glm: trials given for the %v family", fam)
	}
	if !(opt.Theta >= 0) || math.IsInf(opt.Theta, 0) || opt.Theta != 0 && fam != NegBinomial {
		return nil, fmt.Errorf("fitting glm: theta %g must be finite and > 0, and only for the negative binomial", opt.Theta)
	}
	p := &problem{fam: fam, y: y, n: opt.Trials, w: opt.Weights, offset: opt.Offset,
		rankTol: opt.RankTol, tol: opt.Tol, maxIter: opt.MaxIter}
	if p.rankTol == 0 {
		p.rankTol = lm.DefaultTol
	}
	if p.tol == 0 {
		p.tol = DefaultTol
	}
	if !(p.tol > 0 && p.tol < 1) {
		return nil, fmt.Errorf("fitting glm: convergence tolerance %g not in (0, 1)", p.tol)
	}
	if p.maxIter == 0 {
		p.maxIter = DefaultMaxIter
	}
	if p.maxIter < 0 {
		return nil, fmt.Errorf("fitting glm: iteration limit %d < 0", p.maxIter)
	}
	if err := p.validate(quasi); err != nil {
		return nil, fmt.Errorf("fitting glm: %w", err)
	}
	xd, ok := x.(*mat.Dense)
	if !ok {
		xd = mat.DenseCopyOf(x)
	}
	p.x = xd
	if dm != nil {
		p.names = append([]string(nil), dm.Names...)
	} else {
		p.names = make([]string, pc)
		for j := range p.names {
			p.names[j] = fmt.Sprintf("x%d", j+1)
		}
	}

	res := &Result{Family: fam, Link: link, Quasi: quasi, P: pc, prob: p, Theta: math.NaN(), ThetaSE: math.NaN()}
	var st *irlsState
	switch {
	case fam == NegBinomial && opt.Theta == 0:
		st, err = p.negbin(link, res)
	case fam == NegBinomial:
		res.m = model{fam: fam, link: link, theta: opt.Theta}
		res.Theta = opt.Theta
		st, err = p.irls(res.m, nil, true)
	default:
		res.m = model{fam: fam, link: link}
		st, err = p.irls(res.m, nil, true)
	}
	if err != nil {
		return nil, fmt.Errorf("fitting glm: %w", err)
	}
	res.Iter += st.iter
	if err := res.finish(st); err != nil {
		return nil, fmt.Errorf("fitting glm: %w", err)
	}
	return res, nil
}

// validate checks the response, trials, weights and offset, and forms the
// response on the mean's scale and the prior weights times trials.
func (p *problem) validate(quasi bool) error {
	n := len(p.y)
	p.yy = make([]float64, n)
	p.pw = make([]float64, n)
	what := "count"
	if p.fam == Binomial {
		what = "number of successes"
	}
	for i, v := range p.y {
		if math.IsNaN(v) || math.IsInf(v, 0) {
			return fmt.Errorf("%s at row %d is %g, must be finite", what, i, v)
		}
		if v < 0 {
			return fmt.Errorf("%s at row %d is %g, must be >= 0", what, i, v)
		}
		if !quasi && v != math.Trunc(v) {
			return fmt.Errorf("%s at row %d is %g, must be a whole number (a quasi fit takes non-integer values)", what, i, v)
		}
		w := 1.0
		if p.w != nil {
			w = p.w[i]
			if math.IsNaN(w) || math.IsInf(w, 0) || w < 0 {
				return fmt.Errorf("weight at row %d is %g, must be finite and >= 0", i, w)
			}
		}
		if p.offset != nil {
			if o := p.offset[i]; math.IsNaN(o) || math.IsInf(o, 0) {
				return fmt.Errorf("offset at row %d is %g, must be finite", i, o)
			}
		}
		t := 1.0
		if p.fam == Binomial {
			t = p.trials(i)
			switch {
			case math.IsNaN(t) || math.IsInf(t, 0) || t != math.Trunc(t):
				return fmt.Errorf("trials at row %d are %g, must be a whole number", i, t)
			case t <= 0:
				return fmt.Errorf("trials at row %d are %g, must be > 0", i, t)
			case v > t:
				return fmt.Errorf("successes at row %d (%g) exceed the trials (%g)", i, v, t)
			}
		}
		p.yy[i] = v / t
		p.pw[i] = w * t
		if w > 0 {
			p.npos++
		}
	}
	if p.npos == 0 {
		return errors.New("no observation has a positive weight")
	}
	return nil
}

// irlsState is the state of the iterations after a step.
type irlsState struct {
	eta, mu, mu1m, dmu []float64
	dev                float64
	wls                *lm.Result // the last weighted least-squares step
	beta               []float64  // coefficients with 0 for aliased
	iter               int
}

// eval sets mu, mu1m and dmu from eta, and returns the deviance, or NaN
// when a mean of an observation with positive weight is at or beyond the
// boundary of its range.
func (p *problem) eval(m model, s *irlsState) float64 {
	var dev fsum.Sum
	bad := false
	for i, e := range s.eta {
		mu, mu1m, dmu := m.link.inverse(e)
		s.mu[i], s.mu1m[i], s.dmu[i] = mu, mu1m, dmu
		if p.pw[i] == 0 {
			continue
		}
		if !(mu > 0) || math.IsInf(mu, 0) || !(dmu > 0) || math.IsInf(dmu, 0) ||
			m.fam == Binomial && !(mu1m > 0) {
			bad = true
			continue
		}
		w := 1.0
		if p.w != nil {
			w = p.w[i]
		}
		dev.Add(w * m.unitDeviance(p.y[i], p.trials(i), mu, mu1m))
	}
	if bad {
		return math.NaN()
	}
	return dev.Value()
}

func newState(n int) *irlsState {
	return &irlsState{eta: make([]float64, n), mu: make([]float64, n), mu1m: make([]float64, n), dmu: make([]float64, n)}
}

// irls runs iteratively reweighted least squares (McCullagh & Nelder 1989,
// sec. 2.5): from the current means, the working response
// z = η - offset + (y - μ) dη/dμ is regressed on X with working weights
// w (dμ/dη)²/V(μ) by stats/lm's QR, and the new linear predictor taken
// from the fit. A step that increases the deviance (or leaves the range of
// the means) is halved, in η, towards the previous one (step halving as
// in Marschner 2011, R Journal 3(2):12). Convergence is declared on the
// relative change of the deviance (Options.Tol); then steps continue
// while their size Σ w (Δη)² shrinks, so that the estimates are accurate
// to rounding even where the iterations converge only linearly, and the
// covariance and leverage come from weights at the converged means.
//
// start, when not nil, is the converged state of an earlier fit of the
// same X (the previous θ of a negative binomial fit); nil starts from the
// data. check runs the separation check on the first step.
func (p *problem) irls(m model, start *irlsState, check bool) (*irlsState, error) {
	n := len(p.y)
	cur := newState(n)
	inSpan := false // cur.eta = X cur.beta + offset
	if start != nil {
		copy(cur.eta, start.eta)
		cur.beta = append([]float64(nil), start.beta...)
		inSpan = true
	} else {
		for i := range cur.eta {
			var mu0 float64
			if m.fam == Binomial {
				mu0 = (p.y[i] + 0.5) / (p.trials(i) + 1)
			} else {
				mu0 = p.yy[i] + 0.5
			}
			cur.eta[i] = m.link.apply(mu0)
		}
	}
	cur.dev = p.eval(m, cur)
	if math.IsNaN(cur.dev) {
		return nil, errors.New("the starting values give means outside their range")
	}
	z := make([]float64, n)
	ww := make([]float64, n)
	next := newState(n)
	converged := false // the deviance criterion has been met
	polish := 0        // steps taken since
	lastStep := math.Inf(1)
	for it := 1; ; it++ {
		if !converged && it > p.maxIter {
			return nil, fmt.Errorf("the iterations did not converge in %d steps (relative deviance change above %g)", p.maxIter, p.tol)
		}
		for i := range z {
			z[i] = cur.eta[i] - p.off(i) + (p.yy[i]-cur.mu[i])/cur.dmu[i]
			if p.pw[i] == 0 {
				ww[i] = 0
				continue
			}
			ww[i] = p.pw[i] * cur.dmu[i] * cur.dmu[i] / m.variance(cur.mu[i], cur.mu1m[i])
		}
		fit, err := lm.Fit(p.x, z, &lm.Options{Weights: ww, Tol: p.rankTol})
		if err != nil {
			return nil, err
		}
		if err := p.aliasing(fit, check); err != nil {
			return nil, err
		}
		next.wls = fit
		next.beta = fit.Coefficients()
		for i := range next.eta {
			next.eta[i] = fit.Fitted[i] + p.off(i)
		}
		next.dev = p.eval(m, next)
		// Step halving: a step to means outside their range, or (from a
		// point in the column space) one that increases the deviance by
		// more than its rounding error could, is halved towards the
		// current point.
		worse := func() bool {
			return math.IsNaN(next.dev) || inSpan && next.dev-cur.dev > 1e-12*(math.Abs(cur.dev)+0.1)
		}
		halvings := 0
		for worse() && halvings < maxHalvings {
			halvings++
			for i := range next.eta {
				next.eta[i] = (next.eta[i] + cur.eta[i]) / 2
			}
			if inSpan {
				for j := range next.beta {
					next.beta[j] = (next.beta[j] + cur.beta[j]) / 2
				}
			}
			next.dev = p.eval(m, next)
		}
		if math.IsNaN(next.dev) {
			return nil, fmt.Errorf("the means leave their range at iteration %d, whatever the step", it)
		}
		if worse() {
			// No step along the direction decreases the deviance: the
			// current point is the minimum to rounding. Its covariance
			// comes from this step's weights, those at the current means.
			cur.wls = fit
			cur.iter = it
			return cur, nil
		}
		change := math.Abs(next.dev-cur.dev) / (math.Abs(next.dev) + 0.1)
		// Size of the step, Σ w (Δη)² relative to the deviance: free of
		// the cancellation in the deviance change.
		var step float64
		for i := range ww {
			d := next.eta[i] - cur.eta[i]
			step += ww[i] * d * d
		}
		step /= math.Abs(next.dev) + 0.1
		wasInSpan := inSpan
		inSpan = inSpan || halvings == 0
		cur, next = next, cur
		cur.iter = it
		if converged {
			polish++
			// Polish: IRLS with a non-canonical link converges linearly,
			// and a tiny deviance change can leave the estimates off in
			// their eighth digit. Steps continue while they shrink, until
			// they are below rounding (or 30 of them).
			if step < polishTol || step > lastStep/2 || polish == 30 {
				return cur, nil
			}
		} else if wasInSpan && change < p.tol {
			converged = true
		}
		lastStep = step
	}
}

// aliasing records the aliased columns of the first step (and runs the
// separation check once), and refuses a later step whose rank decision
// differs.
func (p *problem) aliasing(fit *lm.Result, check bool) error {
	if p.aliased == nil {
		p.aliased = append([]int{}, fit.Aliased...)
		if check && !p.checked {
			p.checked = true
			keep := make([]int, 0, fit.P)
			al := map[int]bool{}
			for _, j := range fit.Aliased {
				al[j] = true
			}
			for j := 0; j < fit.P; j++ {
				if !al[j] {
					keep = append(keep, j)
				}
			}
			se, err := checkSeparation(p.x, keep, p.names, p)
			if err != nil {
				return err
			}
			if se != nil {
				return se
			}
		}
		return nil
	}
	if len(fit.Aliased) != len(p.aliased) {
		return fmt.Errorf("the rank of X under the working weights changed (%d aliased columns, then %d); the model is too close to singular", len(p.aliased), len(fit.Aliased))
	}
	for k, j := range fit.Aliased {
		if p.aliased[k] != j {
			return errors.New("the aliased columns changed under the working weights; the model is too close to singular")
		}
	}
	return nil
}

// negbin estimates θ and the coefficients by alternating maximisations:
// a Poisson fit for starting means, then θ by Newton's method for the
// current means (thetaML) and the coefficients by IRLS for the current θ,
// until the log-likelihood changes by less than Tol (relative) and θ by
// less than 1e-9 (relative). The two blocks are asymptotically orthogonal
// (Lawless 1987, Can J Stat 15:209), which makes the alternation converge
// quickly; it is the scheme of Venables & Ripley (2002, Modern Applied
// Statistics with S, sec. 7.4). The coefficients and θ are finally refined
// so that both are at the maximum: the last IRLS runs at the final θ.
func (p *problem) negbin(link Link, res *Result) (*irlsState, error) {
	st, err := p.irls(model{fam: Poisson, link: link}, nil, true)
	if err != nil {
		return nil, err
	}
	res.Iter += st.iter
	theta := thetaStart(p.y, st.mu, p.w)
	llOld := math.Inf(-1)
	for alt := 1; ; alt++ {
		if alt > p.maxIter {
			return nil, fmt.Errorf("theta and the coefficients did not converge in %d alternations", p.maxIter)
		}
		nt, _, err := thetaML(theta, p.y, st.mu, p.w)
		if err != nil {
			return nil, err
		}
		m := model{fam: NegBinomial, link: link, theta: nt}
		st, err = p.irls(m, st, false)
		if err != nil {
			return nil, err
		}
		res.Iter += st.iter
		res.Alternations = alt
		ll, _, _ := thetaLogLik(nt, p.y, st.mu, p.w)
		dth := math.Abs(nt-theta) / nt
		theta = nt
		if dth < 1e-9 && math.Abs(ll-llOld) < p.tol*(math.Abs(ll)+0.1) {
			break
		}
		llOld = ll
	}
	// θ for the final means, and its observed information there.
	nt, ni, err := thetaML(theta, p.y, st.mu, p.w)
	if err != nil {
		return nil, err
	}
	if math.Abs(nt-theta) > 1e-7*nt {
		return nil, fmt.Errorf("theta did not settle (%.10g, then %.10g)", theta, nt)
	}
	res.m = model{fam: NegBinomial, link: link, theta: theta}
	res.Theta = theta
	res.ThetaSE = 1 / math.Sqrt(ni)
	return st, nil
}

// finish fills the Result from the converged state.
func (r *Result) finish(st *irlsState) error {
	p := r.prob
	m := r.m
	n := len(p.y)
	fit := st.wls
	r.wls = fit
	r.N = p.npos
	r.Rank = fit.Rank
	r.DFResid = r.N - r.Rank
	if r.DFResid <= 0 {
		return fmt.Errorf("no residual degrees of freedom (%d observations, rank %d)", r.N, r.Rank)
	}
	r.Names = p.names
	r.Intercept = fit.Intercept
	r.Aliased = append([]int(nil), fit.Aliased...)
	r.coef = st.beta
	for i := 0; i < n; i++ {
		if p.pw[i] > 0 && (m.fam != Binomial && st.mu[i] < 1e-300 || m.fam == Binomial && (st.mu[i] < 1e-300 || st.mu1m[i] < 1e-300)) {
			return fmt.Errorf("the fitted mean at row %d is at the boundary of its range", i)
		}
	}

	// Observation quantities.
	r.Fitted = append([]float64(nil), st.mu...)
	r.Eta = append([]float64(nil), st.eta...)
	r.WorkingResid = make([]float64, n)
	r.PearsonResid = make([]float64, n)
	r.DevianceResid = make([]float64, n)
	var pear, ll fsum.Sum
	for i := 0; i < n; i++ {
		mu, mu1m := st.mu[i], st.mu1m[i]
		d := p.yy[i] - mu
		r.WorkingResid[i] = d / st.dmu[i]
		v := m.variance(mu, mu1m)
		r.PearsonResid[i] = d * math.Sqrt(p.pw[i]/v)
		w := 1.0
		if p.w != nil {
			w = p.w[i]
		}
		dev := w * m.unitDeviance(p.y[i], p.trials(i), mu, mu1m)
		r.DevianceResid[i] = math.Copysign(math.Sqrt(math.Max(dev, 0)), d)
		if p.pw[i] == 0 {
			continue
		}
		pear.Add(r.PearsonResid[i] * r.PearsonResid[i])
		ll.Add(w * m.logDensity(p.y[i], p.trials(i), mu, mu1m))
	}
	r.Deviance = st.dev
	r.Pearson = pear.Value()
	r.LogLik, r.AIC = math.NaN(), math.NaN()
	if !r.Quasi {
		r.LogLik = ll.Value()
		k := float64(r.Rank)
		if !math.IsNaN(r.ThetaSE) {
			k++
		}
		r.AIC = -2*r.LogLik + 2*k
	}
	r.Phi = 1
	if r.Quasi {
		r.Phi = r.Pearson / float64(r.DFResid)
	}
	r.Weights = make([]float64, n)
	for i := range r.Weights {
		if p.pw[i] > 0 {
			r.Weights[i] = p.pw[i] * st.dmu[i] * st.dmu[i] / m.variance(st.mu[i], st.mu1m[i])
		}
	}
	r.Leverage = append([]float64(nil), fit.Influence().Leverage...)

	// Coefficient table.
	u := fit.UnscaledCov()
	r.cov = mat.NewSymDense(r.P, nil)
	for i := 0; i < r.P; i++ {
		for j := i; j < r.P; j++ {
			r.cov.SetSym(i, j, r.Phi*u.At(i, j))
		}
	}
	r.Estimate = make([]float64, r.P)
	r.StdErr = make([]float64, r.P)
	r.Stat = make([]float64, r.P)
	r.PValue = make([]float64, r.P)
	df := float64(r.DFResid)
	for j := 0; j < r.P; j++ {
		b := r.coef[j]
		se := math.Sqrt(r.cov.At(j, j))
		r.Estimate[j], r.StdErr[j], r.Stat[j] = b, se, b/se
		if r.Quasi {
			r.PValue[j] = dist.TTwoSided(b/se, df)
		} else {
			r.PValue[j] = dist.NormalTwoSided(b / se)
		}
	}
	for _, j := range r.Aliased {
		nan := math.NaN()
		r.Estimate[j], r.StdErr[j], r.Stat[j], r.PValue[j] = nan, nan, nan, nan
	}

	// Null deviance: the intercept-only model with the offset, or the
	// offset alone.
	r.DFNull = r.N
	if r.Intercept {
		r.DFNull--
		nd, err := p.nullDeviance(m)
		if err != nil {
			return fmt.Errorf("null model: %w", err)
		}
		r.NullDeviance = nd
	} else {
		s := newState(n)
		for i := range s.eta {
			s.eta[i] = p.off(i)
		}
		r.NullDeviance = p.eval(m, s)
	}
	return nil
}

// nullDeviance fits the intercept-only model (with the offset). Without an
// offset its estimate is the weighted mean of the response, for every link.
func (p *problem) nullDeviance(m model) (float64, error) {
	n := len(p.y)
	s := newState(n)
	if p.offset == nil {
		var sy, sw fsum.Sum
		for i := range p.yy {
			sy.Add(p.pw[i] * p.yy[i])
			sw.Add(p.pw[i])
		}
		mu := sy.Value() / sw.Value()
		if mu <= 0 || m.fam == Binomial && mu >= 1 {
			return 0, nil // every response at the boundary: the null model fits exactly
		}
		e := m.link.apply(mu)
		for i := range s.eta {
			s.eta[i] = e
		}
		return p.eval(m, s), nil
	}
	// One column of ones: the weighted least-squares step of IRLS is a
	// weighted mean of the working response, summed with compensation.
	var b float64
	{
		var sy, sw fsum.Sum
		for i := range p.yy {
			sy.Add(p.pw[i] * p.yy[i])
			sw.Add(p.pw[i])
		}
		var so fsum.Sum
		for i := range p.yy {
			so.Add(p.pw[i] * p.off(i))
		}
		mu := sy.Value() / sw.Value()
		if mu <= 0 || m.fam == Binomial && mu >= 1 {
			return 0, errors.New("every response is at the boundary")
		}
		b = m.link.apply(mu) - so.Value()/sw.Value()
	}
	for i := range s.eta {
		s.eta[i] = b + p.off(i)
	}
	dev := p.eval(m, s)
	polish := -1 // steps since convergence; -1 before
	for it := 1; it <= p.maxIter+polish+1; it++ {
		var num, den fsum.Sum
		for i := range p.yy {
			if p.pw[i] == 0 {
				continue
			}
			w := p.pw[i] * s.dmu[i] * s.dmu[i] / m.variance(s.mu[i], s.mu1m[i])
			num.Add(w * (p.yy[i] - s.mu[i]) / s.dmu[i])
			den.Add(w)
		}
		step := num.Value() / den.Value()
		var nd float64
		for h := 0; h <= maxHalvings; h++ {
			for i := range s.eta {
				s.eta[i] = b + step + p.off(i)
			}
			nd = p.eval(m, s)
			if !math.IsNaN(nd) && nd-dev <= 1e-12*(math.Abs(dev)+0.1) {
				break
			}
			step /= 2
		}
		if math.IsNaN(nd) {
			return 0, errors.New("the means leave their range")
		}
		change := math.Abs(nd-dev) / (math.Abs(nd) + 0.1)
		b += step
		dev = nd
		if polish >= 0 {
			// Polish as irls does, until the step is below rounding.
			polish++
			if math.Abs(step) <= 1e-15*(1+math.Abs(b)) || polish == 30 {
				return dev, nil
			}
		} else if change < p.tol {
			polish = 0
		}
	}
	return 0, fmt.Errorf("the iterations did not converge in %d steps", p.maxIter)
}

// Coefficients returns a copy of the estimates, with 0 for aliased
// coefficients (the solution that drops the aliased columns).
func (r *Result) Coefficients() []float64 { return append([]float64(nil), r.coef...) }

// CoefCov returns a copy of the P x P covariance matrix φ (X'WX)^-1 of the
// estimates. Rows and columns of aliased coefficients are zero.
func (r *Result) CoefCov() *mat.SymDense {
	c := mat.NewSymDense(r.P, nil)
	c.CopySym(r.cov)
	return c
}

// DF returns the degrees of freedom of a contrast: DFResid for a quasi
// fit (t tests), +Inf otherwise (z tests).
func (r *Result) DF(l []float64) float64 {
	if r.Quasi {
		return float64(r.DFResid)
	}
	return math.Inf(1)
}

// Estimable reports whether l'b is estimable (l avoids the null space
// that the aliased columns imply; stats/lm's test on the last step).
func (r *Result) Estimable(l []float64) bool { return r.wls.Estimable(l) }

// AliasedNames returns the names of the aliased columns.
func (r *Result) AliasedNames() []string {
	out := make([]string, len(r.Aliased))
	for i, j := range r.Aliased {
		out[i] = r.Names[j]
	}
	return out
}
