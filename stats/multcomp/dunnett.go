package multcomp

import (
	"errors"
	"fmt"
	"math"

	"gonum.org/v1/gonum/mat"

	"furrow/stats/dist"
	"furrow/stats/internal/fsum"
)

// productTol is the largest deviation |ρ_ij - λ_i λ_j| accepted for the
// one-factor (product) correlation structure.
const productTol = 1e-10

// ProductFactors returns λ with corr_ij = λ_i λ_j for all i != j, the
// one-factor structure of many-to-one comparisons of independent means
// (λ_i = sqrt(n_i/(n_i + n_0)) for group sizes n_i and control size n_0),
// and whether corr has that structure to within 1e-10. Each |λ_i| must
// be below 1.
func ProductFactors(corr mat.Symmetric) ([]float64, bool) {
	m := corr.SymmetricDim()
	lam := make([]float64, m)
	if m == 1 {
		return lam, true
	}
	if m == 2 {
		r := corr.At(0, 1)
		lam[0] = math.Sqrt(math.Abs(r))
		lam[1] = math.Copysign(lam[0], r)
		return lam, lam[0] < 1
	}
	// λ_i² = ρ_ij ρ_ik / ρ_jk with the pair (j, k) of largest |ρ_jk|.
	sq := make([]float64, m)
	for i := 0; i < m; i++ {
		best, bj, bk := 0.0, -1, -1
		for j := 0; j < m; j++ {
			for k := j + 1; k < m; k++ {
				if j == i || k == i {
					continue
				}
				if v := math.Abs(corr.At(j, k)); v > best {
					best, bj, bk = v, j, k
				}
			}
		}
		if bj >= 0 {
			sq[i] = corr.At(i, bj) * corr.At(i, bk) / corr.At(bj, bk)
		}
	}
	a := 0
	for i := range sq {
		if sq[i] > sq[a] {
			a = i
		}
	}
	if sq[a] > 0 {
		lam[a] = math.Sqrt(sq[a])
		for i := range lam {
			if i != a {
				lam[i] = corr.At(a, i) / lam[a]
			}
		}
	}
	for i := 0; i < m; i++ {
		if !(math.Abs(lam[i]) < 1) {
			return lam, false
		}
		for j := i + 1; j < m; j++ {
			if math.Abs(corr.At(i, j)-lam[i]*lam[j]) > productTol {
				return lam, false
			}
		}
	}
	return lam, true
}

// maxNormal evaluates tails of the largest of X_i, or of |X_i|, for a
// normal vector with unit variances and correlations λ_i λ_j. Writing
// X_i = λ_i Z + sqrt(1-λ_i²) Y_i with independent standard normals Z, Y_i
// (Dunnett 1955 JASA 50:1096; Genz & Bretz 2009, Computation of
// Multivariate Normal and t Probabilities, §2.2.1), conditional on Z = z
// the X_i are independent, so
//
//	P(max |X_i| > x) = ∫ φ(z) [1 - Π_i (1 - e_i(x, z))] dz
//
// with e_i the conditional exceedance probability of component i; the
// bracket is evaluated as -expm1(Σ log1p(-e_i)) so that a small tail keeps
// its relative accuracy, and in log space beyond x = 30. Equal λ_i are
// grouped. The z integral uses fixed 16-point Gauss-Legendre panels on
// |z| <= sqrt(x² + 80): outside it φ alone bounds the integrand below
// 1e-17 of the tail. The panel width is dunW times the narrowest scale of
// the integrand, min(1, σ_i/|λ_i|) with σ_i = sqrt(1-λ_i²).
type maxNormal struct {
	lam, sig, mult []float64
	width, negW    float64
	q              float64
	buf            []float64
}

func newMaxNormal(lam []float64) *maxNormal {
	mn := &maxNormal{width: dunW}
	for _, l := range lam {
		found := false
		for g, gl := range mn.lam {
			if gl == l {
				mn.mult[g]++
				found = true
				break
			}
		}
		if !found {
			mn.lam = append(mn.lam, l)
			mn.mult = append(mn.mult, 1)
			s := math.Sqrt((1 - l) * (1 + l))
			mn.sig = append(mn.sig, s)
			if al := math.Abs(l); al > s {
				mn.width = math.Min(mn.width, dunW*s/al)
			}
		}
	}
	// The lower form's integrand Π Φ(·) φ(z) narrows as components are
	// added: its log curvature is up to 1 + Σ λ_i²/σ_i².
	curv := 1.0
	for g, l := range mn.lam {
		curv += mn.mult[g] * l * l / (mn.sig[g] * mn.sig[g])
	}
	mn.negW = math.Min(mn.width, dunNegW/math.Sqrt(curv))
	// P(max X_i <= x) falls like exp(-q x²/2) with q = 1ᵀR⁻¹1, which for
	// R = D + λλᵀ is Σ 1/σ_i² - (Σ λ_i/σ_i²)²/(1 + Σ λ_i²/σ_i²); the lower
	// form's z range grows with it.
	var a, b float64
	for g, l := range mn.lam {
		a += mn.mult[g] / (mn.sig[g] * mn.sig[g])
		b += mn.mult[g] * l / (mn.sig[g] * mn.sig[g])
	}
	mn.q = math.Max(1, a-b*b/curv)
	return mn
}

// logUpper returns log P(max X_i > x) (one-sided) or log P(max |X_i| > x)
// for x >= 0.
func (mn *maxNormal) logUpper(x float64, two bool) float64 {
	if x <= 0 && two {
		return 0
	}
	zmax := math.Sqrt(x*x + 80 + 2*math.Log1p(math.Abs(x)))
	n := int(math.Ceil(2 * zmax / mn.width))
	h := zmax / float64(n)
	r := gaussLegendre()
	fast := x < 30
	nx := -x
	mn.buf = mn.buf[:0]
	top := math.Inf(-1)
	var sum fsum.Sum
	for p := 0; p < n; p++ {
		c := -zmax + h*(2*float64(p)+1)
		var ps float64
		for i, t := range r.x {
			z := c + h*t
			lw := math.Log(h*r.w[i]) - 0.5*z*z - 0.5*math.Log(2*math.Pi)
			if fast {
				var lin float64
				for g, l := range mn.lam {
					lz := l * z
					is := 1 / mn.sig[g]
					e := normCDF((lz - x) * is)
					if two {
						if lo := (nx - lz) * is; lo > -38.5 {
							e += normCDF(lo)
						}
					}
					if e < 1e-9 {
						lin -= mn.mult[g] * e * (1 + 0.5*e)
					} else {
						lin += mn.mult[g] * math.Log1p(-e)
					}
				}
				ps += math.Exp(lw) * -math.Expm1(lin)
				continue
			}
			// Deep tail: 1 - Π(1 - e_i) = Σ e_i to within the e_i.
			le := math.Inf(-1)
			for g, l := range mn.lam {
				lz := l * z
				v := dist.LogNormalUpper((x - lz) / mn.sig[g])
				if two {
					v = logAddExp(v, dist.LogNormalUpper((x+lz)/mn.sig[g]))
				}
				le = logAddExp(le, math.Log(mn.mult[g])+v)
			}
			lv := lw + le
			mn.buf = append(mn.buf, lv)
			top = math.Max(top, lv)
		}
		sum.Add(ps)
	}
	if fast {
		return math.Log(sum.Value())
	}
	return logSumExp(mn.buf, top)
}

// logLowerNeg returns log P(max X_i <= x) for x < 0, in log space.
func (mn *maxNormal) logLowerNeg(x float64) float64 {
	zmax := math.Sqrt(mn.q*x*x + 80 + 2*math.Log1p(math.Abs(x)))
	n := int(math.Ceil(2 * zmax / mn.negW))
	h := zmax / float64(n)
	r := gaussLegendre()
	mn.buf = mn.buf[:0]
	top := math.Inf(-1)
	for p := 0; p < n; p++ {
		c := -zmax + h*(2*float64(p)+1)
		for i, t := range r.x {
			z := c + h*t
			lv := math.Log(h*r.w[i]) - 0.5*z*z - 0.5*math.Log(2*math.Pi)
			for g, l := range mn.lam {
				lv += mn.mult[g] * dist.LogNormalUpper((l*z-x)/mn.sig[g])
			}
			mn.buf = append(mn.buf, lv)
			top = math.Max(top, lv)
		}
	}
	return logSumExp(mn.buf, top)
}

// logAddExp returns log(e^a + e^b).
func logAddExp(a, b float64) float64 {
	if a < b {
		a, b = b, a
	}
	if math.IsInf(b, -1) {
		return a
	}
	return a + math.Log1p(math.Exp(b-a))
}

// logSumExp returns log Σ e^{v_i} given top = max v_i.
func logSumExp(v []float64, top float64) float64 {
	if math.IsInf(top, -1) {
		return top
	}
	var s fsum.Sum
	for _, x := range v {
		s.Add(math.Exp(x - top))
	}
	return top + math.Log(s.Value())
}

// maxT evaluates P(max T_i >= c) (or of |T_i|) for T_i = X_i/S, X as in
// maxNormal and S² = χ²_ν/ν independent, by mixing the normal tails over
// S (logMix). The normal tails are held in Chebyshev tables built on first
// use, so all the p-values of a family and the iterations for its critical
// value share the inner integrals.
type maxT struct {
	mn       *maxNormal
	df       float64
	two      bool
	m        float64
	up, negT *logTable
}

func newMaxT(lam []float64, df float64, two bool) *maxT {
	mn := newMaxNormal(lam)
	t := &maxT{mn: mn, df: df, two: two, m: float64(len(lam))}
	t.up = newLogTable(func(x float64) float64 { return mn.logUpper(x, two) }, quadShape(0.5))
	t.negT = newLogTable(mn.logLowerNeg, quadShape(0.5))
	return t
}

// logSingle returns log P(|X| > x) or log P(X > x) for one component.
func (t *maxT) logSingle(x float64) float64 {
	v := dist.LogNormalUpper(x)
	if t.two {
		v += math.Ln2
	}
	return v
}

// upper returns P(max T_i >= c) (one-sided) or P(max |T_i| >= c).
func (t *maxT) upper(c float64) float64 {
	return math.Exp(t.logUpper(c))
}

// logUpper returns the log of upper(c).
func (t *maxT) logUpper(c float64) float64 {
	if c <= 0 && t.two {
		return 0
	}
	if c < 0 {
		// One-sided with c < 0: 1 - P(max T_i < c), the latter small.
		var l float64
		if math.IsInf(t.df, 1) {
			l = t.mn.logLowerNeg(c)
		} else {
			sp := mixSpec{
				logT: t.negT.log,
				// Independent components give the lower bound for
				// positive correlations (Slepian 1962 Bell Syst Tech J
				// 41:463); any one component bounds it from above.
				lo: func(x float64) float64 { return t.m * dist.LogNormalUpper(-x) },
				hi: func(x float64) float64 { return dist.LogNormalUpper(-x) },
			}
			l = logMix(sp, c, t.df)
		}
		return math.Log1p(-math.Exp(l))
	}
	if c == 0 {
		return math.Log1p(-math.Exp(t.mn.logLowerNeg(0)))
	}
	if math.IsInf(t.df, 1) {
		return math.Min(0, t.mn.logUpper(c, t.two))
	}
	lm := math.Log(t.m)
	sp := mixSpec{
		logT: t.up.log,
		// The most extreme of the components exceeds c at least as often
		// as any one, and at most m times as often (union bound).
		lo: t.logSingle,
		hi: func(x float64) float64 { return math.Min(0, lm+t.logSingle(x)) },
	}
	return math.Min(0, logMix(sp, c, t.df))
}

// maxTUpperProduct returns the probability that the largest of T_i = X_i/S
// exceeds c, where X is multivariate normal with unit variances and
// correlations λ_i λ_j, and S² = χ²_ν/ν independent of X:
//
//	two-sided:  P(max |T_i| >= c)
//	one-sided:  P(max T_i >= c)
func maxTUpperProduct(c float64, lam []float64, df float64, twoSided bool) float64 {
	return newMaxT(lam, df, twoSided).upper(c)
}

// checkCorr validates a correlation matrix of the test statistics.
func checkCorr(corr mat.Symmetric) error {
	m := corr.SymmetricDim()
	if m == 0 {
		return errors.New("no comparisons")
	}
	for i := 0; i < m; i++ {
		if !(math.Abs(corr.At(i, i)-1) <= 1e-8) { // NaN fails too
			return fmt.Errorf("correlation matrix has %v on its diagonal at %d", corr.At(i, i), i)
		}
		for j := 0; j < i; j++ {
			if r := corr.At(i, j); math.IsNaN(r) || math.Abs(r) > 1 {
				return fmt.Errorf("correlation %v at (%d, %d) is outside [-1, 1]", r, i, j)
			}
		}
	}
	return nil
}

// MaxTUpper returns the probability that the most extreme of the
// multivariate-t statistics T_i (unit scale, correlation corr, df degrees
// of freedom; +Inf for normal) reaches c: P(max |T_i| >= c) for TwoSided,
// P(max T_i >= c) for Greater and P(min T_i <= -c) for Less (equal to the
// Greater value by symmetry). corr must have the one-factor structure of
// ProductFactors for the deterministic quadrature; other structures are
// computed by MaxTUpperQMC, whose result also gives the error estimate.
func MaxTUpper(c float64, corr mat.Symmetric, df float64, side Side) (float64, error) {
	if err := checkCorr(corr); err != nil {
		return math.NaN(), err
	}
	if math.IsNaN(df) || df <= 0 {
		return math.NaN(), fmt.Errorf("multivariate t needs positive degrees of freedom, got %v", df)
	}
	if math.IsNaN(c) {
		return math.NaN(), errors.New("multivariate t bound is NaN")
	}
	lam, ok := ProductFactors(corr)
	if !ok {
		r, err := MaxTUpperQMC(c, corr, df, side)
		if err != nil {
			return math.NaN(), err
		}
		return r.P, nil
	}
	return maxTUpperProduct(c, lam, df, side == TwoSided), nil
}

// quantile returns the c with P(max T >= c) = alpha.
//
// The root lies between the single-comparison quantile and the Bonferroni
// quantile, which bracket the search.
func (t *maxT) quantile(alpha float64) (float64, error) {
	a1, am := alpha, alpha/t.m
	if t.two {
		a1, am = alpha/2, am/2
	}
	return solveLogTailIn(t.logUpper, alpha, dist.TUpperQuantile(a1, t.df), dist.TUpperQuantile(am, t.df))
}

// DunnettCritical returns the c with MaxTUpper(c) = alpha, the multiplier
// of the simultaneous (1 - alpha) intervals, by root finding on the
// quadrature.
func DunnettCritical(alpha float64, corr mat.Symmetric, df float64, side Side) (float64, error) {
	if !(alpha > 0 && alpha < 1) {
		return math.NaN(), fmt.Errorf("dunnett critical value needs alpha in (0, 1), got %v", alpha)
	}
	if _, err := MaxTUpper(1, corr, df, side); err != nil {
		return math.NaN(), err
	}
	var c float64
	var err error
	if lam, ok := ProductFactors(corr); ok {
		c, err = newMaxT(lam, df, side == TwoSided).quantile(alpha)
	} else {
		var tl tailer
		tl, err = newTailer(corr, df, side)
		if err == nil {
			c, err = tl.quantile(alpha)
		}
	}
	if err != nil {
		return math.NaN(), fmt.Errorf("dunnett critical value: %w", err)
	}
	return c, nil
}

// Dunnett returns single-step adjusted p-values and simultaneous
// confidence intervals for m comparisons with a common control (Dunnett
// 1955 JASA 50:1096): est and se are the estimated differences and their
// standard errors, corr the correlation matrix of the estimates (for
// independent group means with variances v_i and control variance v_0 it
// is v_0/sqrt((v_i+v_0)(v_j+v_0)), which has the product form), df the error
// degrees of freedom and level the simultaneous confidence level.
func Dunnett(est, se []float64, corr mat.Symmetric, df float64, side Side, level float64) (*Family, error) {
	m := len(est)
	if len(se) != m || corr.SymmetricDim() != m {
		return nil, fmt.Errorf("dunnett: %d estimates, %d standard errors and a %d×%d correlation matrix", m, len(se), corr.SymmetricDim(), corr.SymmetricDim())
	}
	if !(level > 0 && level < 1) {
		return nil, fmt.Errorf("dunnett: confidence level must be in (0, 1), got %v", level)
	}
	for i := range se {
		if !(se[i] > 0) || math.IsInf(se[i], 0) || math.IsNaN(est[i]) {
			return nil, fmt.Errorf("dunnett: comparison %d has estimate %v and standard error %v", i, est[i], se[i])
		}
	}
	if side != TwoSided && side != Greater && side != Less {
		return nil, fmt.Errorf("dunnett: unknown alternative %v", side)
	}
	if err := checkCorr(corr); err != nil {
		return nil, fmt.Errorf("dunnett: %w", err)
	}
	if math.IsNaN(df) || df <= 0 {
		return nil, fmt.Errorf("dunnett: multivariate t needs positive degrees of freedom, got %v", df)
	}
	mt, err := newTailer(corr, df, side)
	if err != nil {
		return nil, fmt.Errorf("dunnett: %w", err)
	}
	crit, err := mt.quantile(1 - level)
	if err != nil {
		return nil, fmt.Errorf("dunnett: dunnett critical value: %w", err)
	}
	f := &Family{Method: "dunnett", Side: side, Level: level, DF: df, Critical: crit, Algorithm: AlgQuadrature}
	if q, ok := mt.(*qmcTailer); ok {
		f.Algorithm = AlgQMC
		r := q.q.upper(crit)
		f.AbsError = r.AbsError
		f.QMC = &r
	}
	for i := range est {
		t := est[i] / se[i]
		c := Comparison{Estimate: est[i], SE: se[i], T: t}
		switch side {
		case TwoSided:
			c.PAdjusted = f.track(mt, math.Abs(t))
			c.Lower, c.Upper = est[i]-crit*se[i], est[i]+crit*se[i]
		case Greater:
			c.PAdjusted = f.track(mt, t)
			c.Lower, c.Upper = est[i]-crit*se[i], math.Inf(1)
		case Less:
			c.PAdjusted = f.track(mt, -t)
			c.Lower, c.Upper = math.Inf(-1), est[i]+crit*se[i]
		default:
			return nil, fmt.Errorf("dunnett: unknown alternative %v", side)
		}
		f.Comparisons = append(f.Comparisons, c)
	}
	return f, nil
}

// dunW and dunNegW scale the panel widths of the upper and lower forms;
// compared with panels five times narrower they agree to 1e-12 in the log
// tail for factors from 0.3 to 0.99 and up to 15 comparisons.
const dunW, dunNegW = 2.5, 1.5

// tailer is a family's tail function: the product-form quadrature or the
// quasi-Monte Carlo fallback.
type tailer interface {
	upper(c float64) float64
	quantile(alpha float64) (float64, error)
}

// newTailer returns the quadrature when corr has the one-factor form and
// the quasi-Monte Carlo rule otherwise.
func newTailer(corr mat.Symmetric, df float64, side Side) (tailer, error) {
	if lam, ok := ProductFactors(corr); ok {
		return newMaxT(lam, df, side == TwoSided), nil
	}
	// The variables are ordered for a bound near the 95% critical value.
	m := float64(corr.SymmetricDim())
	c0 := dist.TUpperQuantile(0.025/m, df)
	q, err := newMVTQMC(corr, c0, df, side == TwoSided)
	if err != nil {
		return nil, err
	}
	return &qmcTailer{q: q}, nil
}

// qmcTailer adapts mvtQMC, remembering the largest error estimate.
type qmcTailer struct {
	q      *mvtQMC
	maxErr float64
}

func (t *qmcTailer) upper(c float64) float64 {
	r := t.q.upper(c)
	t.maxErr = math.Max(t.maxErr, r.AbsError)
	return r.P
}

func (t *qmcTailer) quantile(alpha float64) (float64, error) {
	a1, am := alpha/2, alpha/(2*float64(t.q.m))
	if !t.q.two {
		a1, am = alpha, alpha/float64(t.q.m)
	}
	lt := func(c float64) float64 { return math.Log(t.upper(c)) }
	return solveLogTailIn(lt, alpha, dist.TUpperQuantile(a1, t.q.df), dist.TUpperQuantile(am, t.q.df))
}

// track returns the family's p-value at c and records the error estimate.
func (f *Family) track(t tailer, c float64) float64 {
	p := t.upper(c)
	if q, ok := t.(*qmcTailer); ok {
		f.AbsError = math.Max(f.AbsError, q.maxErr)
	}
	return p
}
