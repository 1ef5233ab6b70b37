package lmm

import (
	"errors"
	"math"

	"gonum.org/v1/gonum/floats"
	"gonum.org/v1/gonum/mat"
	"gonum.org/v1/gonum/optimize"
)

// gradEvaluator evaluates the criterion and its analytic gradient with its
// own work arrays, counting factorisations.
type gradEvaluator struct {
	s     *system
	crit  Criterion
	wk    *work
	sw    *selWork
	evals int
}

func (s *system) newGradEvaluator(crit Criterion) *gradEvaluator {
	sw := s.newSel()
	sw.needML = crit == ML
	return &gradEvaluator{s: s, crit: crit, wk: s.newWork(), sw: sw}
}

// at returns the profiled criterion and fills g with its gradient; with
// sigma2 > 0 it returns the unprofiled criterion at that residual variance
// and its gradient in theta.
func (ge *gradEvaluator) at(x, g []float64, sigma2 float64, wantJ bool) (float64, *parts, error) {
	ge.evals++
	pr, err := ge.s.gradParts(x, ge.wk, ge.sw, wantJ)
	if err != nil {
		return math.Inf(1), nil, err
	}
	ge.s.profGrad(x, pr, ge.crit, sigma2, g)
	if sigma2 > 0 {
		return ge.s.deviance(pr.e, math.Sqrt(sigma2), ge.crit), pr, nil
	}
	return ge.s.profiled(pr.e, ge.crit), pr, nil
}

// fdHessian is the Hessian of the criterion by central differences of the
// analytic gradient (steps 1e-4 relative, so truncation and rounding errors
// both stay near 1e-8 of the curvature), symmetrised.
func (ge *gradEvaluator) fdHessian(x []float64, sigma2 float64) (*mat.SymDense, error) {
	k := len(x)
	H := mat.NewDense(k, k, nil)
	xx := make([]float64, k)
	gp := make([]float64, k)
	gm := make([]float64, k)
	for i := 0; i < k; i++ {
		h := 1e-4 * math.Max(math.Abs(x[i]), 1e-2)
		copy(xx, x)
		xx[i] = x[i] + h
		if _, _, err := ge.at(xx, gp, sigma2, false); err != nil {
			return nil, err
		}
		xx[i] = x[i] - h
		if _, _, err := ge.at(xx, gm, sigma2, false); err != nil {
			return nil, err
		}
		for j := 0; j < k; j++ {
			H.Set(j, i, (gp[j]-gm[j])/(2*h))
		}
	}
	Hs := symPart(H)
	return Hs, nil
}

// fwdHessian is the Hessian by forward differences of the analytic
// gradient g at x (k gradient evaluations), symmetrised: enough for Newton
// steps, whose convergence only needs the Hessian to a few digits.
func (ge *gradEvaluator) fwdHessian(x, g []float64) (*mat.SymDense, error) {
	k := len(x)
	H := mat.NewDense(k, k, nil)
	xx := make([]float64, k)
	gp := make([]float64, k)
	for i := 0; i < k; i++ {
		h := 1e-5 * math.Max(math.Abs(x[i]), 1e-2)
		copy(xx, x)
		xx[i] = x[i] + h
		if _, _, err := ge.at(xx, gp, 0, false); err != nil {
			return nil, err
		}
		for j := 0; j < k; j++ {
			H.Set(j, i, (gp[j]-g[j])/h)
		}
	}
	Hs := symPart(H)
	return Hs, nil
}

// minimizeAnalytic optimises the profiled criterion over theta by Newton
// steps on the analytic gradient. The Hessian is a forward difference of
// the gradient; after a step that reduced the gradient well it is carried
// on by a BFGS update instead (Nocedal & Wright 2006, Numerical
// Optimization, eq. 6.19). Steps are shifted to positive definiteness
// (Levenberg) and backtracked (Armijo); where the predicted decrease is
// below the rounding level of the criterion, a step is accepted when it
// reduces the gradient. The criterion is even in each theta, so the search
// is unconstrained and the absolute values are returned; a theta that goes
// to zero is a boundary fit.
//
// x0 is the starting point (sorted-factor order); nil means the moment
// estimates of startTheta.
func (s *system) minimizeAnalytic(crit Criterion, x0 []float64, maxIter int) ([]float64, optimize.Status, int, int, error) {
	k := s.nf
	ge := s.newGradEvaluator(crit)
	if x0 == nil {
		x0 = s.startTheta()
	}
	x := append([]float64(nil), x0...)
	g := make([]float64, k)
	f, _, err := ge.at(x, g, 0, false)
	if err != nil {
		return nil, 0, 0, ge.evals, errors.New("criterion is not finite at the starting values")
	}
	H, err := ge.fwdHessian(x, g)
	if err != nil {
		return nil, 0, 0, ge.evals, err
	}
	fresh := true
	status := optimize.NotTerminated
	iters := 0
	gn := make([]float64, k)
	xn := make([]float64, k)
	relStep := func(st []float64, t float64) float64 {
		r := 0.0
		for i := range x {
			r = math.Max(r, t*math.Abs(st[i])/math.Max(math.Abs(x[i]), 1e-2))
		}
		return r
	}
	for ; iters < maxIter; iters++ {
		step, ok := newtonStep(H, g)
		if !ok {
			break
		}
		slope := floats.Dot(g, step) // decrease rate along -step
		if relStep(step, 1) <= 1e-10 {
			status = optimize.Success
			break
		}
		// Within the rounding level of the criterion the gradient, which
		// is accurate there, decides.
		nearNoise := slope <= 1e-9*math.Max(1, math.Abs(f))
		// Far from zero, no step shrinks a |theta| by more than a factor 4
		// or flips its sign: the quadratic model is poor there (the
		// criterion is even, flat near zero). Close to zero Newton steps
		// are reliable and boundary fits converge quadratically.
		// The offending components are cut back; if that spoils the
		// descent, the whole step is shortened instead.
		clamped := append([]float64(nil), step...)
		tmax := 1.0
		for i := range x {
			if math.Abs(x[i]) >= 1e-3 && step[i] != 0 {
				if r := (x[i] - step[i]) / x[i]; r < 0.25 {
					clamped[i] = 0.75 * x[i]
					tmax = math.Min(tmax, 0.75*x[i]/step[i])
				}
			}
		}
		if cs := floats.Dot(g, clamped); cs > 0.1*slope {
			step, slope = clamped, cs
		} else {
			floats.Scale(tmax, step)
			slope *= tmax
		}
		t := 1.0
		accepted := false
		var fn float64
		for ls := 0; ls < 40; ls++ {
			for i := range x {
				xn[i] = x[i] - t*step[i]
			}
			var err error
			fn, _, err = ge.at(xn, gn, 0, false)
			if err == nil {
				if (!nearNoise && fn <= f-1e-4*t*slope) ||
					(nearNoise && floats.Norm(gn, 2) < floats.Norm(g, 2)) {
					accepted = true
					break
				}
			}
			t /= 2
		}
		if !accepted {
			if !fresh {
				if H, err = ge.fwdHessian(x, g); err != nil {
					return nil, 0, iters, ge.evals, err
				}
				fresh = true
				continue
			}
			// Converged to the rounding level when the step is small.
			if relStep(step, 1) <= 1e-6 {
				status = optimize.Success
			} else {
				status = optimize.FunctionConvergence
			}
			break
		}
		sk := make([]float64, k)
		yk := make([]float64, k)
		for i := range x {
			sk[i] = xn[i] - x[i]
			yk[i] = gn[i] - g[i]
		}
		small := relStep(step, t) <= 1e-10
		gRatio := floats.Norm(gn, 2) / floats.Norm(g, 2)
		copy(x, xn)
		copy(g, gn)
		f = fn
		if small {
			status = optimize.Success
			break
		}
		// Boundary probe: a small theta whose gradient points to zero is
		// tried at zero. Where the criterion is flat to fourth order at
		// the boundary, Newton steps only shrink theta geometrically.
		probed := false
		for i := range x {
			if x[i] == 0 || math.Abs(x[i]) >= 1e-3 || x[i]*g[i] <= 0 {
				continue
			}
			copy(xn, x)
			xn[i] = 0
			if fp, _, err := ge.at(xn, gn, 0, false); err == nil && fp <= f+1e-12*math.Max(1, math.Abs(f)) {
				copy(x, xn)
				copy(g, gn)
				f = fp
				probed = true
			}
		}
		if probed || t < 1 || gRatio > 0.5 {
			if H, err = ge.fwdHessian(x, g); err != nil {
				return nil, 0, iters, ge.evals, err
			}
			fresh = true
			continue
		}
		bfgsUpdate(H, sk, yk)
		fresh = false
	}
	if iters >= maxIter {
		status = optimize.IterationLimit
	}
	for i := range x {
		x[i] = math.Abs(x[i])
		if x[i] < 1e-10 {
			x[i] = 0
		}
	}
	if floats.Norm(g, math.Inf(1)) > 1e-5*math.Max(1, math.Abs(f)) && status != optimize.IterationLimit {
		status = optimize.Failure
	}
	return x, status, iters, ge.evals, nil
}

// bfgsUpdate applies the BFGS update of the Hessian approximation
// B += y y'/(y's) - B s s' B/(s'B s), skipped when the curvature condition
// y's > 0 fails.
func bfgsUpdate(B *mat.SymDense, sk, yk []float64) {
	k := len(sk)
	ys := floats.Dot(yk, sk)
	sv := mat.NewVecDense(k, sk)
	var bs mat.VecDense
	bs.MulVec(B, sv)
	sbs := mat.Dot(sv, &bs)
	if !(ys > 1e-12*math.Sqrt(floats.Dot(yk, yk)*floats.Dot(sk, sk))) || !(sbs > 0) {
		return
	}
	for i := 0; i < k; i++ {
		for j := 0; j <= i; j++ {
			B.SetSym(i, j, B.At(i, j)+yk[i]*yk[j]/ys-bs.AtVec(i)*bs.AtVec(j)/sbs)
		}
	}
}

// satterthwaiteAnalytic is satterthwaite with analytic derivatives: the
// theta block of the Hessian of the unprofiled criterion D(theta, sigma) is
// a central difference of its analytic gradient at fixed sigma, the sigma
// row and the derivatives of Cov(beta) = sigma^2 (X'V^{-1}X)^{-1} are
// analytic: d Cov/d theta_k = sigma^2 (2/theta_k) sum_a Sigma_aX Sigma_aX'.
func (s *system) satterthwaiteAnalytic(theta []float64, sigma float64, crit Criterion, cov *mat.SymDense) (*satInfo, error) {
	k, p := s.nf, s.p
	s2 := sigma * sigma
	ge := s.newGradEvaluator(crit)
	g := make([]float64, k)
	_, pr, err := ge.at(theta, g, s2, true)
	if err != nil {
		return nil, err
	}
	Hth, err := ge.fdHessian(theta, s2)
	if err != nil {
		return nil, err
	}
	H := mat.NewSymDense(k+1, nil)
	for i := 0; i < k; i++ {
		for j := 0; j <= i; j++ {
			H.SetSym(i, j, Hth.At(i, j))
		}
	}
	J := make([]*mat.SymDense, k+1)
	for i := 0; i < k; i++ {
		J[i] = mat.NewSymDense(p, nil)
		if theta[i] == 0 {
			continue
		}
		dr2 := -2 * pr.uu[i] / theta[i]
		H.SetSym(k, i, -2*dr2/(s2*sigma))
		J[i].ScaleSym(2*s2/theta[i], pr.sux[i])
	}
	return s.satFinish(H, J, sigma, pr.e.r2, crit, cov)
}
