package multcomp

import "math"

// chiLog evaluates the log density of u = log s for s = sqrt(χ²_ν/ν):
//
//	g_ν(u) = log f_ν(e^u) + u = log 2 + h log h - log Γ(h) + ν u - h e^{2u},  h = ν/2,
//
// where f_ν(s) = 2 h^h / Γ(h) · s^{ν-1} exp(-h s²) is the density of s. For
// h >= 20 the leading terms cancel; with d = e^u - 1 and Stirling's series
// log Γ(h) = (h-1/2) log h - h + log(2π)/2 + δ(h) it is rewritten as
//
//	log 2 + log(h)/2 - log(2π)/2 - δ(h) + h(2(log1p(d) - d) - d²)
//
// which keeps the density's relative accuracy for ν in the millions.
type chiLog struct {
	nu, h, c float64
	big      bool
}

func newChiLog(nu float64) chiLog {
	h := 0.5 * nu
	if h < 20 {
		return chiLog{nu: nu, h: h, c: math.Ln2 + h*math.Log(h) - lgamma(h)}
	}
	return chiLog{nu: nu, h: h, big: true,
		c: math.Ln2 + 0.5*math.Log(h) - 0.5*math.Log(2*math.Pi) - stirlingDelta(h)}
}

func (g chiLog) at(u float64) float64 {
	if !g.big {
		return g.c + g.nu*u - g.h*math.Exp(2*u)
	}
	d := math.Expm1(u)
	return g.c + g.h*(2*log1pMinus(d)-d*d)
}

// mixSpec describes a tail function T of x >= 0 (or of x <= 0) to be mixed
// over the studentising variable: logT gives log T(x), and lo, hi cheap
// bounds lo(x) <= log T(x) <= hi(x), used only to find where the mixture's
// integrand matters.
type mixSpec struct {
	logT, lo, hi func(x float64) float64
}

// mixRelTol is the relative tolerance of the outer integral; farCut is the
// log ratio to the peak below which the integrand uses the bounds instead
// of T itself (contributing at most about 1e-15 of the peak per unit of u).
const (
	mixRelTol = 1e-12
	farCut    = 34.0
)

// logMix returns log ∫ f_ν(s) T(c s) ds, the mixture of T over s =
// sqrt(χ²_ν/ν), for finite ν > 0 and c != 0. In u = log s the integrand
// exp(g_ν(u) + log T(c e^u)) is smooth and unimodal (close to log-concave):
// it falls like e^{νu} on the left and doubly exponentially on the right.
// The peak û of the lower-bound integrand is found by golden-section
// search, its curvature gives a width σ, and the range is cut where the
// upper-bound integrand is below e^{-42} of the lower-bound peak, so the
// part cut off is below 1e-18 of the integral. Gauss-Legendre panels of
// width 1.5σ near the peak, growing geometrically outwards, are then
// refined adaptively to mixRelTol. The value is returned as a logarithm
// so that tails far below the smallest double keep their accuracy until
// the caller exponentiates.
func logMix(sp mixSpec, c, nu float64) float64 {
	g := newChiLog(nu)
	lower := func(u float64) float64 { return g.at(u) + sp.lo(c*math.Exp(u)) }
	upper := func(u float64) float64 { return g.at(u) + sp.hi(c*math.Exp(u)) }

	// Bracket and locate the peak of the lower-bound integrand.
	step := math.Min(1, 1/math.Sqrt(2*nu))
	u0 := 0.0
	f0 := lower(u0)
	dir := 1.0
	if lower(u0-step) > f0 {
		dir = -1
	}
	a, b := u0-dir*step, u0
	fb := f0
	for i := 0; i < 200; i++ {
		nx := b + dir*step
		fn := lower(nx)
		if !(fn > fb) {
			b = nx
			break
		}
		a, b, fb = b, nx, fn
		step *= 2
	}
	if a > b {
		a, b = b, a
	}
	// Golden-section search on [a, b].
	const gr = 0.6180339887498949
	x1, x2 := b-gr*(b-a), a+gr*(b-a)
	f1, f2 := lower(x1), lower(x2)
	tol := 1e-3 * math.Min(1, 1/math.Sqrt(2*nu))
	for i := 0; i < 200 && b-a > tol; i++ {
		if f1 >= f2 {
			b, x2, f2 = x2, x1, f1
			x1 = b - gr*(b-a)
			f1 = lower(x1)
		} else {
			a, x1, f1 = x1, x2, f2
			x2 = a + gr*(b-a)
			f2 = lower(x2)
		}
	}
	up := 0.5 * (a + b)
	ref := lower(up)
	if math.IsInf(ref, -1) || math.IsNaN(ref) {
		return math.Inf(-1)
	}
	// Width from the curvature of the lower-bound integrand.
	hstep := 0.05 * math.Min(1, 1/math.Sqrt(2*nu))
	curv := (lower(up+hstep) - 2*ref + lower(up-hstep)) / (hstep * hstep)
	sigma := math.Min(1, 1/math.Sqrt(2*nu))
	if curv < 0 && !math.IsInf(curv, 0) {
		sigma = math.Min(sigma*4, 1/math.Sqrt(-curv))
	}
	// Cut points: step outwards with doubling steps until the upper-bound
	// integrand is negligible.
	const cut = 42
	edge := func(dir float64) float64 {
		d := sigma
		x := up
		for i := 0; i < 400; i++ {
			x = up + dir*d
			if upper(x) < ref-cut {
				return x
			}
			d *= 1.5
		}
		return x
	}
	ulo, uhi := edge(-1), edge(1)
	breaks := []float64{ulo}
	var left []float64
	for d := 1.5 * sigma; up-d > ulo; {
		left = append(left, up-d)
		if d < 6*sigma {
			d += 1.5 * sigma
		} else {
			d *= 1.5
		}
	}
	for i := len(left) - 1; i >= 0; i-- {
		breaks = append(breaks, left[i])
	}
	breaks = append(breaks, up)
	for d := 1.5 * sigma; up+d < uhi; {
		breaks = append(breaks, up+d)
		if d < 6*sigma {
			d += 1.5 * sigma
		} else {
			d *= 1.5
		}
	}
	breaks = append(breaks, uhi)
	f := func(u float64) float64 {
		x := c * math.Exp(u)
		gu := g.at(u)
		hu := gu + sp.hi(x)
		if hu < ref-farCut {
			// Far from the peak the bounds' midpoint is used instead of
			// the table; its error is below e^{-farCut} of the peak.
			return math.Exp(gu + 0.5*(sp.lo(x)+sp.hi(x)) - ref)
		}
		return math.Exp(gu + sp.logT(x) - ref)
	}
	v := integrate(f, breaks, 0, mixRelTol)
	if !(v > 0) {
		return math.Inf(-1)
	}
	return ref + math.Log(v)
}
