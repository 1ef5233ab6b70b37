package lmm

import (
	"errors"
	"math"

	"gonum.org/v1/gonum/floats"
	"gonum.org/v1/gonum/mat"
	"gonum.org/v1/gonum/optimize"
)

// Tolerances of the verified optimum, in units of the criterion (-2 log
// likelihood), whatever the size of the data.
const (
	// decTol bounds the Newton decrement g'H^{-1}g/2 over the components
	// off the boundary: the criterion is then within about decTol of the
	// minimum of its local quadratic model (the decrement as stopping rule
	// of Newton's method: Boyd & Vandenberghe 2004, Convex Optimization,
	// sec. 9.5; section recalled).
	decTol = 1e-9
	// boundaryGain is the largest gain in the criterion accepted from
	// moving a component at zero into the feasible region.
	boundaryGain = 1e-9
	// maxRestarts bounds the restarts of the search from a perturbed point.
	maxRestarts = 3
	// maxPolish bounds the Newton steps of verify (and MaxIter does too).
	maxPolish = 20
)

// fitTheta minimises the profiled criterion and verifies the result: the
// quasi-Newton search on the analytic gradient from the moment estimates
// of startTheta, then verify; a point verify rejects with a way out (a
// saddle: a component at zero that is not a minimum, or negative
// curvature off the boundary) restarts the search from there, at most
// maxRestarts times; failing all that, the derivative-free search
// from the same start, verified in turn. The status is Success only for a
// verified minimum; otherwise IterationLimit when a search used up maxIter
// iterations, Failure when not, and theta is the best point found.
func (s *system) fitTheta(crit Criterion, maxIter int) ([]float64, optimize.Status, int, int, error) {
	return s.fitThetaFrom(crit, s.startTheta(), maxIter)
}

// fitThetaFrom is fitTheta from the starting point x0.
func (s *system) fitThetaFrom(crit Criterion, x0 []float64, maxIter int) ([]float64, optimize.Status, int, int, error) {
	iters, evals := 0, 0
	steps := min(maxIter, maxPolish)
	hitLimit := false
	var best []float64
	bestF := math.Inf(1)
	keep := func(x []float64) {
		if x == nil {
			return
		}
		if f := s.criterionAt(x, crit); f < bestF {
			best, bestF = append([]float64(nil), x...), f
		}
	}
	start := x0
	for r := 0; r <= maxRestarts; r++ {
		theta, st, it, ev, err := s.minimizeAnalytic(crit, start, maxIter)
		iters += it
		evals += ev
		if err != nil {
			break
		}
		hitLimit = hitLimit || st == optimize.IterationLimit
		v := s.verify(crit, theta, steps)
		iters += v.iters
		evals += v.evals
		if v.ok {
			return v.theta, optimize.Success, iters, evals, nil
		}
		keep(v.theta)
		if v.restart == nil {
			break
		}
		start = v.restart
	}
	// The derivative-free search on differences of the criterion.
	obj := func(th []float64) float64 { return s.criterionAt(th, crit) }
	theta, st, it, ev, err := minimize(obj, x0, maxIter)
	iters += it
	evals += ev
	if err == nil {
		hitLimit = hitLimit || st == optimize.IterationLimit
		v := s.verify(crit, theta, steps)
		iters += v.iters
		evals += v.evals
		if v.ok {
			return v.theta, optimize.Success, iters, evals, nil
		}
		keep(v.theta)
	}
	if best == nil {
		if err == nil {
			err = errNotFinite
		}
		return nil, 0, iters, evals, err
	}
	status := optimize.Failure
	if hitLimit {
		status = optimize.IterationLimit
	}
	return best, status, iters, evals, nil
}

// errNotFinite reports a criterion that could not be evaluated at the start.
var errNotFinite = errors.New("criterion is not finite at the starting values")

// criterionAt is the profiled criterion at theta, +Inf where the
// factorisation fails.
func (s *system) criterionAt(theta []float64, crit Criterion) float64 {
	e, err := s.eval(theta, nil)
	if err != nil {
		return math.Inf(1)
	}
	return s.profiled(e, crit)
}

// verdict is the outcome of verify.
type verdict struct {
	ok           bool
	theta        []float64 // the (polished) point
	restart      []float64 // where to restart the search, when not ok and there is a way out
	iters, evals int
}

// verify checks that theta (sorted-factor order, theta >= 0) is a minimum
// of the profiled criterion and polishes it: on the components off the
// boundary, Newton steps with a fresh difference Hessian of the analytic
// gradient until the Newton decrement is below decTol with a positive
// definite Hessian; for every component at zero, the second-order check of
// boundaryCheck. A Hessian that is not positive definite (a saddle or a
// maximum off the boundary) is left by a shifted Newton step; where no
// step helps, or after maxSteps steps, the point is rejected.
func (s *system) verify(crit Criterion, theta []float64, maxSteps int) (v verdict) {
	ge := s.newGradEvaluator(crit)
	k := len(theta)
	x := append([]float64(nil), theta...)
	for i := range x {
		x[i] = math.Abs(x[i])
		if x[i] < 1e-10 {
			x[i] = 0
		}
	}
	g := make([]float64, k)
	gn := make([]float64, k)
	xn := make([]float64, k)
	v.theta = x
	defer func() { v.evals = ge.evals }()
	for it := 0; it <= maxSteps; it++ {
		f, _, err := ge.at(x, g, 0, false)
		if err != nil {
			return v
		}
		for c := 0; c < k; c++ {
			if x[c] != 0 {
				continue
			}
			if rs := s.boundaryCheck(ge, x, f, c); rs != nil {
				v.restart = rs
				return v
			}
		}
		var free []int
		for c := 0; c < k; c++ {
			if x[c] > 0 {
				free = append(free, c)
			}
		}
		if len(free) == 0 {
			v.ok = true
			return v
		}
		Hf, err := ge.fwdHessian(x, g)
		if err != nil {
			return v
		}
		nf := len(free)
		H := mat.NewSymDense(nf, nil)
		gf := make([]float64, nf)
		for a, i := range free {
			gf[a] = g[i]
			for b := 0; b <= a; b++ {
				H.SetSym(a, b, Hf.At(i, free[b]))
			}
		}
		var ch mat.Cholesky
		pd := ch.Factorize(H)
		var step []float64
		if pd {
			sv := mat.NewVecDense(nf, nil)
			if err := ch.SolveVecTo(sv, mat.NewVecDense(nf, gf)); err != nil {
				pd = false
			} else {
				step = sv.RawVector().Data
				if floats.Dot(gf, step)/2 <= decTol {
					v.ok = true
					return v
				}
			}
		}
		if !pd {
			// Negative curvature: a saddle (or a maximum), not a minimum.
			if rs := s.negativeCurvature(ge, x, f, free, H, gf); rs != nil {
				v.restart = rs
				return v
			}
		}
		if it == maxSteps {
			return v
		}
		if !pd {
			var ok bool
			if step, ok = newtonStep(H, gf); !ok {
				return v
			}
		}
		slope := floats.Dot(gf, step)
		accepted := false
		t := 1.0
		for ls := 0; ls < 30; ls++ {
			copy(xn, x)
			for a, i := range free {
				xn[i] = math.Abs(x[i] - t*step[a])
				if xn[i] < 1e-10 {
					xn[i] = 0
				}
			}
			fn, _, err := ge.at(xn, gn, 0, false)
			if err == nil && (fn < f-1e-4*t*slope ||
				(fn <= f+1e-12*math.Max(1, math.Abs(f)) && floats.Norm(gn, 2) < floats.Norm(g, 2))) {
				accepted = true
				break
			}
			t /= 2
		}
		v.iters++
		if !accepted {
			return v
		}
		copy(x, xn)
	}
	return v
}

// negativeCurvature looks for a way out of a point whose Hessian H (over
// the free components) has a negative eigenvalue: along the eigenvector of
// the most negative eigenvalue, signed to descend, a few steps of growing
// length are tried (a direction of negative curvature, as in Moré &
// Sorensen 1979, Math Program 16:1; recalled). It returns the best point when it gains more
// than boundaryGain, else nil.
func (s *system) negativeCurvature(ge *gradEvaluator, x []float64, f float64, free []int, H *mat.SymDense, gf []float64) []float64 {
	var es mat.EigenSym
	if !es.Factorize(H, true) {
		return nil
	}
	vals := es.Values(nil)
	maxAbs := 0.0
	for _, l := range vals {
		maxAbs = math.Max(maxAbs, math.Abs(l))
	}
	if !(vals[0] < -1e-8*maxAbs) {
		return nil
	}
	var V mat.Dense
	es.VectorsTo(&V)
	d := mat.Col(nil, 0, &V)
	if floats.Dot(d, gf) > 0 {
		floats.Scale(-1, d)
	}
	scale := 0.0
	for _, i := range free {
		scale = math.Max(scale, x[i])
	}
	scale = math.Max(scale, startMin)
	g := make([]float64, len(x))
	var best []float64
	bestF := f - boundaryGain
	for _, a := range []float64{0.01, 0.03, 0.1, 0.3, 1} {
		xt := append([]float64(nil), x...)
		for b, i := range free {
			xt[i] = math.Min(math.Abs(x[i]+a*scale*d[b]), startMax)
		}
		if ft, _, err := ge.at(xt, g, 0, false); err == nil && ft < bestF {
			best, bestF = xt, ft
		}
	}
	return best
}

// boundaryCheck tests whether theta_c = 0 is a minimum in the direction
// into the feasible region, tau_c = theta_c^2 >= 0. The criterion is even
// in theta_c, so its first derivative there is zero whatever the data;
// the first-order condition is on tau_c: r = df/dtau_c >= 0 (the
// Karush-Kuhn-Tucker condition of the bound), and where r is about zero
// the curvature d2f/dtau_c^2 must not be negative (the second-order
// condition; Nocedal & Wright 2006, Numerical Optimization, ch. 12). r is g_c/(2 theta_c) at theta_c = 1e-4 (the
// gradient keeps full relative precision there) and at 1e-2, and their
// difference gives the curvature. When the quadratic model in tau_c, or
// the criterion at theta_c = 1e-2, gains more than boundaryGain, the point
// is a saddle, not a minimum: boundaryCheck returns the point to restart
// from (the model's minimiser in tau_c, or the best of a few trial values
// when the model is concave); nil when theta_c = 0 passes.
func (s *system) boundaryCheck(ge *gradEvaluator, x []float64, f float64, c int) []float64 {
	const h1, h2 = 1e-4, 1e-2
	k := len(x)
	g1 := make([]float64, k)
	g2 := make([]float64, k)
	x1 := append([]float64(nil), x...)
	x1[c] = h1
	if _, _, err := ge.at(x1, g1, 0, false); err != nil {
		return nil
	}
	x2 := append([]float64(nil), x...)
	x2[c] = h2
	f2, _, err := ge.at(x2, g2, 0, false)
	if err != nil {
		return nil
	}
	r1 := g1[c] / (2 * h1)
	r2 := g2[c] / (2 * h2)
	curv := (r2 - r1) / (h2*h2 - h1*h1)
	gain := 0.0
	tauStar := math.NaN()
	if r1 < 0 {
		if curv > 0 {
			tauStar = -r1 / curv
			gain = r1 * r1 / (2 * curv)
		} else {
			gain = math.Inf(1)
		}
	}
	if gain <= boundaryGain && !(f2 < f-boundaryGain) {
		return nil
	}
	out := append([]float64(nil), x...)
	if tauStar > 0 {
		out[c] = math.Min(math.Max(math.Sqrt(tauStar), h2), startMax)
		return out
	}
	// Concave in tau_c (or the gain shows only further out): the best of
	// a few trial values.
	bestF := math.Inf(1)
	for _, t := range []float64{h2, startMin, 0.5, 1, 2} {
		xt := append([]float64(nil), x...)
		xt[c] = t
		if ft, _, err := ge.at(xt, g1, 0, false); err == nil && ft < bestF {
			bestF = ft
			out[c] = t
		}
	}
	return out
}
