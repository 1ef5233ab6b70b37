package multcomp

import (
	"errors"
	"fmt"
	"math"
)

// Quadrature tolerances for the studentised range and the many-to-one
// probabilities: absolute and relative to the integral.
const (
	quadAbsTol = 1e-15
	quadRelTol = 1e-11
)

// innerWidth is the width of the fixed z panels of the range integral and
// innerLo their left end; the grid does not move with w, so Φ(z) and φ(z) at
// its nodes are computed once per studentised-range evaluation.
const (
	innerWidth = 1.5
	innerLo    = -9.0
)

// rangeIntegral evaluates tails of the range R of k independent standard
// normals:
//
//	P(R <= w) = k ∫ φ(z) [Φ(z) - Φ(z-w)]^{k-1} dz
//	P(R > w)  = k ∫ φ(z) {Φ(z)^{k-1} - [Φ(z) - Φ(z-w)]^{k-1}} dz
//
// (Hartley 1942 Biometrika 32:334; Copenhaver & Holland 1988 J Stat Comput
// Simul 30:1). The upper form uses k ∫ φ Φ^{k-1} = 1 and writes the bracket
// as Φ^{k-1}·(1 - (1 - b/a)^{k-1}) with a = Φ(z), b = Φ(z-w), evaluated with
// expm1/log1p so that tiny tails keep their relative accuracy. The integrand
// is negligible outside [max(-9, w/2-9), w/2+9] (upper) or [-9, max(9, w/2+9)]
// (lower), which is covered by 16-point Gauss-Legendre panels of width 1.5.
type rangeIntegral struct {
	k     int
	nodes [][]rangeNode // per panel index, lazily filled
}

// rangeNode caches the w-independent parts of the integrand at one node.
type rangeNode struct {
	z, wt   float64 // abscissa and Gauss weight (times half-width)
	a, abar float64 // Φ(z), 1 - Φ(z)
	logLead float64 // log(k φ(z) Φ(z)^{k-1}), upper tail
	logKPhi float64 // log(k φ(z)), lower tail
}

func newRangeIntegral(k int) *rangeIntegral { return &rangeIntegral{k: k} }

func (ri *rangeIntegral) panel(j int) []rangeNode {
	for len(ri.nodes) <= j {
		ri.nodes = append(ri.nodes, nil)
	}
	if ri.nodes[j] != nil {
		return ri.nodes[j]
	}
	r := gaussLegendre()
	lo := innerLo + float64(j)*innerWidth
	h := 0.5 * innerWidth
	c := lo + h
	ns := make([]rangeNode, len(r.x))
	logk := math.Log(float64(ri.k))
	km1 := float64(ri.k - 1)
	for i, x := range r.x {
		z := c + h*x
		a := normCDF(z)
		n := rangeNode{z: z, wt: h * r.w[i], a: a, abar: normCDF(-z)}
		lphi := -0.5*z*z - 0.5*math.Log(2*math.Pi)
		n.logKPhi = logk + lphi
		if a > 0 {
			n.logLead = logk + lphi + km1*math.Log(a)
		} else {
			n.logLead = math.Inf(-1)
		}
		ns[i] = n
	}
	ri.nodes[j] = ns
	return ns
}

// tail returns P(R > w) (upper) or P(R <= w).
func (ri *rangeIntegral) tail(w float64, upper bool) float64 {
	if w <= 0 {
		if upper {
			return 1
		}
		return 0
	}
	if math.IsInf(w, 1) {
		if upper {
			return 0
		}
		return 1
	}
	lo, hi := math.Max(innerLo, 0.5*w-9), 0.5*w+9
	if !upper {
		lo, hi = innerLo, math.Max(9, 0.5*w+9)
	}
	j0 := int(math.Floor((lo - innerLo) / innerWidth))
	j1 := int(math.Ceil((hi - innerLo) / innerWidth))
	km1 := float64(ri.k - 1)
	var sum kahan
	for j := j0; j < j1; j++ {
		var ps float64
		for _, n := range ri.panel(j) {
			var v float64
			if upper {
				if n.a == 0 {
					continue
				}
				b := normCDF(n.z - w)
				v = math.Exp(n.logLead) * -math.Expm1(km1*math.Log1p(-b/n.a))
			} else {
				var d float64
				if n.z-0.5*w > 0 {
					d = normCDF(w-n.z) - n.abar // Φc(z-w) - Φc(z)
				} else {
					d = n.a - normCDF(n.z-w)
				}
				if d <= 0 {
					continue
				}
				v = math.Exp(n.logKPhi + km1*math.Log(d))
			}
			ps += n.wt * v
		}
		sum.add(ps)
	}
	return sum.value()
}

// checkTukeyArgs validates the number of means and the degrees of freedom.
func checkTukeyArgs(k int, df float64) error {
	if k < 2 {
		return fmt.Errorf("studentised range needs at least 2 means, got %d", k)
	}
	if math.IsNaN(df) || df <= 0 {
		return fmt.Errorf("studentised range needs positive degrees of freedom, got %v", df)
	}
	return nil
}

// PTukey returns P(Q <= q), the distribution function of the studentised
// range Q of k means with df degrees of freedom for the error variance
// (df = +Inf gives the range of k standard normals). It is
//
//	P(Q <= q) = ∫ f_ν(s) P(R <= q s) ds,   s = sqrt(χ²_ν/ν),
//
// evaluated with adaptive Gauss-Legendre quadrature on panels in both
// variables, the approach of Copenhaver & Holland (1988) J Stat Comput Simul
// 30:1 with our own panel layout and error control. Small lower tails are
// computed directly, not as 1 - upper. Non-integer df are allowed.
func PTukey(q float64, k int, df float64) (float64, error) {
	if err := checkTukeyArgs(k, df); err != nil {
		return math.NaN(), err
	}
	if math.IsNaN(q) {
		return math.NaN(), errors.New("studentised range quantile is NaN")
	}
	up := tukeyTail(q, k, df, true)
	if up < 0.5 {
		return 1 - up, nil
	}
	return tukeyTail(q, k, df, false), nil
}

// PTukeyUpper returns P(Q > q), the upper tail of the studentised range,
// computed directly (it keeps its relative accuracy far into the tail).
func PTukeyUpper(q float64, k int, df float64) (float64, error) {
	if err := checkTukeyArgs(k, df); err != nil {
		return math.NaN(), err
	}
	if math.IsNaN(q) {
		return math.NaN(), errors.New("studentised range quantile is NaN")
	}
	return tukeyTail(q, k, df, true), nil
}

func tukeyTail(q float64, k int, df float64, upper bool) float64 {
	if q <= 0 {
		if upper {
			return 1
		}
		return 0
	}
	ri := newRangeIntegral(k)
	v := chiMix(func(s float64) float64 { return ri.tail(q*s, upper) }, df, quadAbsTol, quadRelTol)
	return math.Min(1, math.Max(0, v))
}

// QTukey returns the q with P(Q <= q) = p for the studentised range of k
// means with df error degrees of freedom, by root finding on the
// log upper tail (relative accuracy about 1e-12 in q).
func QTukey(p float64, k int, df float64) (float64, error) {
	if err := checkTukeyArgs(k, df); err != nil {
		return math.NaN(), err
	}
	if !(p > 0 && p < 1) {
		return math.NaN(), fmt.Errorf("studentised range probability must be in (0, 1), got %v", p)
	}
	return QTukeyUpper(1-p, k, df)
}

// QTukeyUpper returns the q with P(Q > q) = alpha; use it for small alpha,
// where 1 - alpha would lose digits.
func QTukeyUpper(alpha float64, k int, df float64) (float64, error) {
	if err := checkTukeyArgs(k, df); err != nil {
		return math.NaN(), err
	}
	if !(alpha > 0 && alpha < 1) {
		return math.NaN(), fmt.Errorf("studentised range tail probability must be in (0, 1), got %v", alpha)
	}
	tail := func(q float64) float64 { return tukeyTail(q, k, df, true) }
	q, err := solveTail(tail, alpha, 3)
	if err != nil {
		return math.NaN(), fmt.Errorf("studentised range quantile for k=%d, df=%v: %w", k, df, err)
	}
	return q, nil
}

// solveTail finds x > 0 with tail(x) = alpha for a tail function decreasing
// from 1 at x = 0 to 0 at infinity. It brackets the root by doubling from
// start and then applies the Illinois variant of regula falsi to
// log tail(x) - log alpha, ending with bisection safeguards
// (Dowell & Jarratt 1971 BIT 11:168).
func solveTail(tail func(float64) float64, alpha, start float64) (float64, error) {
	la := math.Log(alpha)
	g := func(x float64) float64 {
		v := tail(x)
		if v <= 0 {
			return -745 - la // log of the smallest positive double
		}
		return math.Log(v) - la
	}
	lo, hi := 0.0, start
	glo := -la // log 1 - log alpha > 0
	ghi := g(hi)
	for i := 0; ghi > 0; i++ {
		if i > 60 {
			return math.NaN(), errors.New("root not bracketed")
		}
		lo, glo = hi, ghi
		hi *= 2
		ghi = g(hi)
	}
	side := 0
	for i := 0; i < 200; i++ {
		if hi-lo <= 1e-13*hi {
			break
		}
		x := hi - ghi*(hi-lo)/(ghi-glo)
		if !(x > lo && x < hi) {
			x = 0.5 * (lo + hi)
		}
		gx := g(x)
		if gx == 0 {
			return x, nil
		}
		if gx > 0 {
			lo, glo = x, gx
			if side == -1 {
				ghi *= 0.5
			}
			side = -1
		} else {
			hi, ghi = x, gx
			if side == 1 {
				glo *= 0.5
			}
			side = 1
		}
	}
	return 0.5 * (lo + hi), nil
}
