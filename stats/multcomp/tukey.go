package multcomp

import (
	"errors"
	"fmt"
	"math"
	"sync"

	"furrow/stats/dist"
	"furrow/stats/internal/fsum"
)

// innerLo is the left end of the fixed z grid of the range integral; the
// grid does not move with w, so Φ(z) and φ(z) at its nodes are computed
// once per integrator.
const innerLo = -9.0

// innerWidth is the panel width for the upper form; the lower form, whose
// integrand narrows like 1/√k, uses 5/√k when smaller. Both were chosen by
// comparison with panels a sixth as wide for k up to 100 (agreement of
// log P to 3e-13 or better).
const innerWidth = 1.5

// panelWidth returns the z panel width for k means and the given form.
func panelWidth(k int, upper bool) float64 {
	if upper {
		return math.Min(innerWidth, 15/math.Sqrt(float64(k)))
	}
	return math.Min(innerWidth, 5/math.Sqrt(float64(k)))
}

// rangeIntegral evaluates tails of the range R of k independent standard
// normals:
//
//	P(R <= w) = k ∫ φ(z) [Φ(z) - Φ(z-w)]^{k-1} dz
//	P(R > w)  = k ∫ φ(z) {Φ(z)^{k-1} - [Φ(z) - Φ(z-w)]^{k-1}} dz
//
// (Hartley 1942 Biometrika 32:334; Copenhaver & Holland 1988 J Stat Comput
// Simul 30:1). The upper form uses k ∫ φ Φ^{k-1} = 1 and writes the bracket
// as Φ^{k-1}·(1 - (1 - b/a)^{k-1}) with a = Φ(z), b = Φ(z-w), evaluated with
// expm1/log1p so that tiny tails keep their relative accuracy. The
// integrand is below 1e-17 of the tail outside the window set in logTail
// (upper) or [-9, 9] (lower), which is covered by 16-point Gauss-Legendre
// panels of width panelWidth;
// both forms are summed in log space, so tails below the smallest double
// are still returned as accurate logarithms.
type rangeIntegral struct {
	k      int
	nodes  [2][][]rangeNode // per form and panel index, lazily filled
	widths [2]float64
	buf    []float64 // log integrand values, reused
}

// rangeNode caches the w-independent parts of the integrand at one node.
type rangeNode struct {
	z, logWt float64 // abscissa and log Gauss weight (times half-width)
	wlead    float64 // weight times k φ(z) Φ(z)^{k-1}
	wkphi    float64 // weight times k φ(z)
	a, abar  float64 // Φ(z), 1 - Φ(z)
	logA     float64 // log Φ(z)
	logLead  float64 // log(k φ(z) Φ(z)^{k-1}), upper tail
	logKPhi  float64 // log(k φ(z)), lower tail
}

func newRangeIntegral(k int) *rangeIntegral {
	return &rangeIntegral{k: k, widths: [2]float64{panelWidth(k, false), panelWidth(k, true)}}
}

func (ri *rangeIntegral) panel(form, j int) []rangeNode {
	for len(ri.nodes[form]) <= j {
		ri.nodes[form] = append(ri.nodes[form], nil)
	}
	if ri.nodes[form][j] != nil {
		return ri.nodes[form][j]
	}
	r := gaussLegendre()
	width := ri.widths[form]
	lo := innerLo + float64(j)*width
	h := 0.5 * width
	c := lo + h
	ns := make([]rangeNode, len(r.x))
	logk := math.Log(float64(ri.k))
	km1 := float64(ri.k - 1)
	for i, x := range r.x {
		z := c + h*x
		n := rangeNode{z: z, logWt: math.Log(h * r.w[i]), a: normCDF(z), abar: normCDF(-z)}
		n.logA = dist.LogNormalUpper(-z)
		lphi := -0.5*z*z - 0.5*math.Log(2*math.Pi)
		n.logKPhi = logk + lphi
		n.logLead = logk + lphi + km1*n.logA
		n.wlead = math.Exp(n.logLead + n.logWt)
		n.wkphi = math.Exp(n.logKPhi + n.logWt)
		ns[i] = n
	}
	ri.nodes[form][j] = ns
	return ns
}

// logTail returns log P(R > w) (upper) or log P(R <= w).
func (ri *rangeIntegral) logTail(w float64, upper bool) float64 {
	if w <= 0 {
		if upper {
			return 0
		}
		return math.Inf(-1)
	}
	if math.IsInf(w, 1) {
		if upper {
			return math.Inf(-1)
		}
		return 0
	}
	lo, hi := innerLo, 9.0
	if upper {
		// Below z the integrand is at most k φ Φ^{k-1}, whose mass is
		// Φ(z)^k; it must stay below 1e-17 of the tail, which is at least
		// the pair tail 2Φ̄(w/√2). Above, the Gaussian bump around w/2
		// (sd 1/√2) and, for small w, the mass k Φ̄(z) set the limit.
		v := (math.Log(1e-17) + logPairUpper(w)) / float64(ri.k)
		zk := -38.0
		if v > -700 {
			zk = dist.NormalQuantile(math.Exp(v))
		}
		lo = math.Max(innerLo, math.Max(0.5*w-7.5, zk))
		hi = math.Max(0.5*w+7.5, 8.5)
	}
	form := 0
	if upper {
		form = 1
	}
	width := ri.widths[form]
	j0 := int(math.Floor((lo - innerLo) / width))
	j1 := int(math.Ceil((hi - innerLo) / width))
	km1 := float64(ri.k - 1)
	if (upper && w < 30) || (!upper && km1*math.Log(w) > -500) {
		// Fast path: no value the sum depends on underflows.
		var sum fsum.Sum
		for j := j0; j < j1; j++ {
			var ps float64
			for _, n := range ri.panel(form, j) {
				if upper {
					r := normCDF(n.z-w) / n.a
					switch {
					case r < 1e-10:
						ps += n.wlead * km1 * r * (1 - 0.5*(km1-1)*r)
					case r > 0.25:
						// 1 - (1-r)^{k-1} >= 0.25: no cancellation.
						ps += n.wlead * (1 - ipow(1-r, ri.k-1))
					default:
						ps += n.wlead * -math.Expm1(km1*math.Log1p(-r))
					}
				} else {
					var d float64
					if n.z-0.5*w > 0 {
						d = normCDF(w-n.z) - n.abar
					} else {
						d = n.a - normCDF(n.z-w)
					}
					if d > 0 {
						ps += n.wkphi * math.Pow(d, km1)
					}
				}
			}
			sum.Add(ps)
		}
		return math.Log(sum.Value())
	}
	ri.buf = ri.buf[:0]
	top := math.Inf(-1)
	for j := j0; j < j1; j++ {
		for _, n := range ri.panel(form, j) {
			var lv float64
			if upper {
				// log of Φ(z)^{k-1} - (Φ(z) - Φ(z-w))^{k-1} = Φ^{k-1}(1 - (1-r)^{k-1}),
				// r = Φ(z-w)/Φ(z).
				lr := dist.LogNormalUpper(w-n.z) - n.logA
				r := math.Exp(lr)
				var lb float64
				if r < 1e-10 {
					lb = math.Log(km1) + lr + math.Log1p(-0.5*(km1-1)*r)
				} else {
					lb = math.Log(-math.Expm1(km1 * math.Log1p(-r)))
				}
				lv = n.logLead + lb
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
				lv = n.logKPhi + km1*math.Log(d)
			}
			lv += n.logWt
			ri.buf = append(ri.buf, lv)
			top = math.Max(top, lv)
		}
	}
	if math.IsInf(top, -1) {
		return top
	}
	var sum fsum.Sum
	for _, lv := range ri.buf {
		sum.Add(math.Exp(lv - top))
	}
	return top + math.Log(sum.Value())
}

// tukeyDist evaluates the studentised range distribution of k means with
// df error degrees of freedom. P(Q > q) = ∫ f_ν(s) P(R > q s) ds (and the
// same for P(Q <= q)); the inner tails log P(R > w) and log P(R <= w) are
// held in piecewise Chebyshev tables over w, built lazily from the direct
// integral, so that all evaluations for one (k, df), the many points of the
// outer integral, the comparisons of a Tukey family and the iterations of
// a quantile search, share the expensive inner integrals.
type tukeyDist struct {
	k      int
	df     float64
	ri     *rangeIntegral
	up, lo *logTable
	lk2    float64 // log(k(k-1)/2)
}

func newTukeyDist(k int, df float64) *tukeyDist {
	rt := rangeTablesFor(k)
	return &tukeyDist{k: k, df: df, ri: newRangeIntegral(k), up: rt[0], lo: rt[1],
		lk2: math.Log(float64(k) * float64(k-1) / 2)}
}

// rangeTables holds, per k, the tables of log P(R > w) and log P(R <= w).
// They do not depend on df, so they are kept for the life of the process
// (for up to rangeCacheMax values of k) and shared by all callers; each
// piece is a fixed function of k and its interval, so results do not
// depend on the order of calls.
var rangeTables = struct {
	sync.Mutex
	m map[int]*[2]*logTable
}{m: map[int]*[2]*logTable{}}

const rangeCacheMax = 64

func rangeTablesFor(k int) *[2]*logTable {
	rangeTables.Lock()
	defer rangeTables.Unlock()
	if t, ok := rangeTables.m[k]; ok {
		return t
	}
	// Each table has its own inner integrator: the tables are built under
	// their own locks and the integrator reuses buffers.
	riU, riL := newRangeIntegral(k), newRangeIntegral(k)
	km1 := float64(k - 1)
	t := &[2]*logTable{
		newLogTable(func(w float64) float64 { return riU.logTail(w, true) }, quadShape(0.25)),
		newLogTable(func(w float64) float64 { return riL.logTail(w, false) },
			func(w float64) float64 { return km1 * math.Log(w) }),
	}
	if len(rangeTables.m) < rangeCacheMax {
		rangeTables.m[k] = t
	}
	return t
}

// logPairUpper returns log P(|X1 - X2| > w) = log 2Φ̄(w/√2).
func logPairUpper(w float64) float64 { return math.Ln2 + dist.LogNormalUpper(w/math.Sqrt2) }

// logUpper returns log P(Q > q).
func (td *tukeyDist) logUpper(q float64) float64 {
	if q <= 0 {
		return 0
	}
	if math.IsInf(td.df, 1) {
		return td.ri.logTail(q, true)
	}
	sp := mixSpec{
		logT: td.up.log,
		// One pair exceeding w is necessary for the range to exceed it, and
		// the union over the k(k-1)/2 pairs bounds it from above.
		lo: logPairUpper,
		hi: func(w float64) float64 { return math.Min(0, td.lk2+logPairUpper(w)) },
	}
	return math.Min(0, logMix(sp, q, td.df))
}

// logLower returns log P(Q <= q).
func (td *tukeyDist) logLower(q float64) float64 {
	if q <= 0 {
		return math.Inf(-1)
	}
	if math.IsInf(td.df, 1) {
		return td.ri.logTail(q, false)
	}
	kf := float64(td.k)
	sp := mixSpec{
		logT: td.lo.log,
		// All k values in [-w/2, w/2] gives a range below w; any one pair
		// within w is necessary.
		lo: func(w float64) float64 { return kf * logErf(w/(2*math.Sqrt2)) },
		hi: func(w float64) float64 { return logErf(w / 2) },
	}
	return math.Min(0, logMix(sp, q, td.df))
}

// ipow returns x^n for n >= 0 by repeated squaring.
func ipow(x float64, n int) float64 {
	p := 1.0
	for n > 0 {
		if n&1 == 1 {
			p *= x
		}
		x *= x
		n >>= 1
	}
	return p
}

// logErf returns log erf(x) for x > 0.
func logErf(x float64) float64 {
	if x > 0.5 {
		return math.Log1p(-math.Erfc(x))
	}
	return math.Log(math.Erf(x))
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
// evaluated with Gauss-Legendre quadrature in both variables, the approach
// of Copenhaver & Holland (1988) J Stat Comput Simul 30:1, with our own
// layout: the inner range tails come from Chebyshev tables (tukeyDist)
// and the outer integral is located at its peak (logMix). Small lower tails are
// computed directly, not as 1 - upper. Non-integer df are allowed.
func PTukey(q float64, k int, df float64) (float64, error) {
	if err := checkTukeyArgs(k, df); err != nil {
		return math.NaN(), err
	}
	if math.IsNaN(q) {
		return math.NaN(), errors.New("studentised range quantile is NaN")
	}
	td := newTukeyDist(k, df)
	up := math.Exp(td.logUpper(q))
	if up < 0.5 {
		return 1 - up, nil
	}
	return math.Exp(td.logLower(q)), nil
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
	return math.Exp(newTukeyDist(k, df).logUpper(q)), nil
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
	q, err := newTukeyDist(k, df).quantile(alpha)
	if err != nil {
		return math.NaN(), fmt.Errorf("studentised range quantile for k=%d, df=%v: %w", k, df, err)
	}
	return q, nil
}

// quantile returns the q with P(Q > q) = alpha.
//
// The root is bracketed by the single-pair quantile √2·t_{α/2} (the range
// exceeds any one pair's difference) and the Bonferroni quantile
// √2·t_{α/k(k-1)} (union over the pairs).
func (td *tukeyDist) quantile(alpha float64) (float64, error) {
	np := float64(td.k) * float64(td.k-1) / 2
	lo := math.Sqrt2 * dist.TUpperQuantile(alpha/2, td.df)
	hi := math.Sqrt2 * dist.TUpperQuantile(alpha/(2*np), td.df)
	return solveLogTailIn(td.logUpper, alpha, lo, hi)
}

// solveLogTail finds x > 0 with tail(x) = alpha for a tail function
// decreasing from 1 at x = 0 to 0 at infinity, given as logTail(x) = log
// tail(x). It brackets the root by doubling from start and then applies the
// Illinois variant of regula falsi to log tail(x) - log alpha, ending with
// bisection safeguards (Dowell & Jarratt 1971 BIT 11:168).
func solveLogTail(logTail func(float64) float64, alpha, start float64) (float64, error) {
	return solveLogTailIn(logTail, alpha, 0, start)
}

// solveLogTailIn is solveLogTail with a bracket guess [lo, hi]; lo is used
// when tail(lo) >= alpha (else 0), and hi is doubled until tail(hi) <=
// alpha.
func solveLogTailIn(logTail func(float64) float64, alpha, lo0, start float64) (float64, error) {
	la := math.Log(alpha)
	g := func(x float64) float64 {
		v := logTail(x)
		if math.IsNaN(v) {
			return -745 - la
		}
		return math.Max(v, -1e300) - la
	}
	lo, hi := 0.0, start
	glo := -la // log 1 - log alpha > 0
	if lo0 > 0 && lo0 < start && !math.IsNaN(lo0) {
		if gl := g(lo0); gl >= 0 {
			lo, glo = lo0, gl
		}
	}
	if !(hi > lo) || math.IsNaN(hi) {
		hi = math.Max(2*lo, 2)
	}
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
