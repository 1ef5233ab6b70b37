package lmm

import (
	"errors"
	"fmt"
	"math"

	"gonum.org/v1/gonum/mat"

	"furrow/stats/dist"
)

// satInfo carries what Satterthwaite's approximation needs: the asymptotic
// covariance A of the variance parameters (theta in sorted-factor order,
// then sigma), taken as twice the inverse Hessian of the criterion, and the
// derivatives of Cov(beta) with respect to them.
// satRel is the relative step of the numerical derivatives: large enough
// that rounding in the criterion (whose terms cancel) stays below 1e-7 of
// the curvature, small enough that the Richardson-extrapolated truncation
// error (order h^4) is negligible.
const satRel = 1e-2

type satInfo struct {
	A *mat.SymDense
	J []*mat.SymDense
}

// satterthwaite is the fallback of satterthwaiteAnalytic (and its check in
// the tests). It differentiates the unprofiled criterion D(theta, sigma) and
// Cov(beta)(theta, sigma) = sigma^2 (Lxx Lxx')^{-1}. Derivatives in theta are
// central differences with one Richardson extrapolation; those in sigma are
// analytic. This is the observed-information form used for Satterthwaite
// (1946) df in mixed models (Giesbrecht & Burns 1985, Biometrics 41:477;
// Fai & Cornelius 1996, J Stat Comput Simul 54:363).
func (s *system) satterthwaite(theta []float64, sigma float64, crit Criterion) (*satInfo, error) {
	k := s.nf
	p := s.p
	s2 := sigma * sigma
	type pt struct {
		dev, r2 float64
		cov     *mat.SymDense
	}
	at := func(th []float64) (pt, error) {
		e, err := s.eval(th, nil)
		if err != nil {
			return pt{}, err
		}
		c := covBeta(e, p, s2)
		if c == nil {
			return pt{}, errors.New("singular fixed-effect covariance")
		}
		return pt{dev: s.deviance(e, sigma, crit), r2: e.r2, cov: c}, nil
	}
	c0, err := at(theta)
	if err != nil {
		return nil, err
	}
	H := mat.NewSymDense(k+1, nil)
	dr2 := make([]float64, k)
	J := make([]*mat.SymDense, k+1)
	rel := satRel
	steps := make([]float64, k)
	for i := range steps {
		steps[i] = rel * math.Max(theta[i], 1e-2)
	}
	xx := make([]float64, k)
	eval := func(di, dj int, si, sj float64) (pt, error) {
		copy(xx, theta)
		if di >= 0 {
			xx[di] += si
		}
		if dj >= 0 {
			xx[dj] += sj
		}
		return at(xx)
	}
	for i := 0; i < k; i++ {
		var hii [2]float64
		var gi [2]float64
		var ji [2]*mat.SymDense
		for lev := 0; lev < 2; lev++ {
			h := steps[i] / float64(int(1)<<lev)
			pp, err := eval(i, -1, h, 0)
			if err != nil {
				return nil, err
			}
			mm, err := eval(i, -1, -h, 0)
			if err != nil {
				return nil, err
			}
			hii[lev] = (pp.dev - 2*c0.dev + mm.dev) / (h * h)
			gi[lev] = (pp.r2 - mm.r2) / (2 * h)
			d := mat.NewSymDense(p, nil)
			for a := 0; a < p; a++ {
				for b := 0; b <= a; b++ {
					d.SetSym(a, b, (pp.cov.At(a, b)-mm.cov.At(a, b))/(2*h))
				}
			}
			ji[lev] = d
		}
		H.SetSym(i, i, (4*hii[1]-hii[0])/3)
		dr2[i] = (4*gi[1] - gi[0]) / 3
		jd := mat.NewSymDense(p, nil)
		for a := 0; a < p; a++ {
			for b := 0; b <= a; b++ {
				jd.SetSym(a, b, (4*ji[1].At(a, b)-ji[0].At(a, b))/3)
			}
		}
		J[i] = jd
		for j := 0; j < i; j++ {
			var hij [2]float64
			for lev := 0; lev < 2; lev++ {
				hi := steps[i] / float64(int(1)<<lev)
				hj := steps[j] / float64(int(1)<<lev)
				var f [4]float64
				sg := [4][2]float64{{1, 1}, {1, -1}, {-1, 1}, {-1, -1}}
				for q, sgn := range sg {
					v, err := eval(i, j, sgn[0]*hi, sgn[1]*hj)
					if err != nil {
						return nil, err
					}
					f[q] = v.dev
				}
				hij[lev] = (f[0] - f[1] - f[2] + f[3]) / (4 * hi * hj)
			}
			H.SetSym(i, j, (4*hij[1]-hij[0])/3)
		}
	}
	for i := 0; i < k; i++ {
		H.SetSym(k, i, -2*dr2[i]/(s2*sigma))
	}
	return s.satFinish(H, J, sigma, c0.r2, crit, c0.cov)
}

// satFinish completes the Satterthwaite pieces from the theta block and
// sigma row of the Hessian H (all but its last diagonal entry) and the
// theta derivatives J[:k] of Cov(beta): the analytic sigma-sigma curvature
// and sigma derivative, then A = 2 H^+.
func (s *system) satFinish(H *mat.SymDense, J []*mat.SymDense, sigma, r2 float64, crit Criterion, cov *mat.SymDense) (*satInfo, error) {
	k, p := s.nf, s.p
	s2 := sigma * sigma
	n := float64(s.n)
	if crit == REML {
		n -= float64(p)
	}
	H.SetSym(k, k, -2*n/s2+6*r2/(s2*s2))
	js := mat.NewSymDense(p, nil)
	js.ScaleSym(2/sigma, cov)
	J[k] = js
	A, err := pinvSym(H)
	if err != nil {
		return nil, err
	}
	A.ScaleSym(2, A)
	return &satInfo{A: A, J: J}, nil
}

// symPart returns (M + M')/2 for a square M.
func symPart(M mat.Matrix) *mat.SymDense {
	n, _ := M.Dims()
	S := mat.NewSymDense(n, nil)
	for i := 0; i < n; i++ {
		for j := 0; j <= i; j++ {
			S.SetSym(i, j, (M.At(i, j)+M.At(j, i))/2)
		}
	}
	return S
}

// pinvSym inverts a symmetric matrix through its eigen-decomposition,
// dropping directions with eigenvalues at or below a relative tolerance (a
// flat direction, for example at a boundary fit).
func pinvSym(H *mat.SymDense) (*mat.SymDense, error) {
	var es mat.EigenSym
	if !es.Factorize(H, true) {
		return nil, errors.New("eigen-decomposition of the information matrix did not converge")
	}
	vals := es.Values(nil)
	var V mat.Dense
	es.VectorsTo(&V)
	k := len(vals)
	maxv := 0.0
	for _, v := range vals {
		maxv = math.Max(maxv, math.Abs(v))
	}
	out := mat.NewSymDense(k, nil)
	for e, v := range vals {
		if v <= 1e-10*maxv {
			continue
		}
		for i := 0; i < k; i++ {
			for j := 0; j <= i; j++ {
				out.SetSym(i, j, out.At(i, j)+V.At(i, e)*V.At(j, e)/v)
			}
		}
	}
	return out, nil
}

// df returns the Satterthwaite df of the contrast l'b.
func (si *satInfo) df(l []float64, cov *mat.SymDense) float64 {
	lv := mat.NewVecDense(len(l), l)
	v := mat.Inner(lv, cov, lv)
	g := si.grad(lv)
	den := mat.Inner(g, si.A, g)
	if !(den > 0) {
		return math.Inf(1)
	}
	return 2 * v * v / den
}

func (si *satInfo) grad(lv *mat.VecDense) *mat.VecDense {
	g := mat.NewVecDense(len(si.J), nil)
	for i, Ji := range si.J {
		g.SetVec(i, mat.Inner(lv, Ji, lv))
	}
	return g
}

// Coefficients returns the fixed-effect estimates.
func (r *Result) Coefficients() []float64 { return append([]float64(nil), r.beta...) }

// CoefCov returns the covariance of the fixed effects, sigma^2 (X'V^{-1}X)^{-1}.
func (r *Result) CoefCov() *mat.SymDense {
	c := mat.NewSymDense(r.P, nil)
	c.CopySym(r.cov)
	return c
}

// DF returns the Satterthwaite df of the contrast l'b.
func (r *Result) DF(l []float64) float64 {
	if len(l) != r.P {
		panic(fmt.Sprintf("lmm: contrast has %d entries, model has %d coefficients", len(l), r.P))
	}
	ls, _ := r.sys.cm.contrast(l)
	return r.sat.df(ls, r.covS)
}

// Theta returns the relative standard deviations SD_k/sigma in the caller's order.
func (r *Result) Theta() []float64 {
	out := make([]float64, len(r.theta))
	for k, gi := range r.sys.ord {
		out[gi] = r.theta[k]
	}
	return out
}

// KRView presents the fit with the Kenward-Roger adjusted covariance and
// Kenward-Roger df, with the same method set as Result.
type KRView struct {
	r  *Result
	kr *krInfo
}

// KR returns the Kenward-Roger view of the fit.
func (r *Result) KR() (*KRView, error) {
	kr, err := r.krInfo()
	if err != nil {
		return nil, err
	}
	return &KRView{r: r, kr: kr}, nil
}

// Coefficients returns the fixed-effect estimates.
func (v *KRView) Coefficients() []float64 { return v.r.Coefficients() }

// CoefCov returns the Kenward-Roger adjusted covariance of the fixed effects.
func (v *KRView) CoefCov() *mat.SymDense {
	return v.r.sys.cm.cov(v.kr.phiA)
}

// DF returns the Kenward-Roger df of the contrast l'b.
func (v *KRView) DF(l []float64) float64 {
	if len(l) != v.r.P {
		panic(fmt.Sprintf("lmm: contrast has %d entries, model has %d coefficients", len(l), v.r.P))
	}
	ls, _ := v.r.sys.cm.contrast(l)
	t, err := v.kr.test(mat.NewDense(1, len(ls), ls), v.r.gamma)
	if err != nil {
		return math.NaN()
	}
	return t.DenDF
}

// Contrast returns the estimate, SE, df, t, p and interval of l'b with the
// chosen df method (Kenward-Roger uses the adjusted covariance). All are
// computed on the centred, scaled columns the fit works in, so a contrast
// at a covariate value far from zero keeps its digits.
func (r *Result) Contrast(l []float64, m Method) (Coef, error) {
	if len(l) != r.P {
		return Coef{}, fmt.Errorf("contrast has %d entries, model has %d coefficients", len(l), r.P)
	}
	ls, off := r.sys.cm.contrast(l)
	lv := mat.NewVecDense(r.P, ls)
	c := Coef{Estimate: mat.Dot(lv, mat.NewVecDense(r.P, r.gamma)) + off}
	switch m {
	case KenwardRoger:
		v, err := r.KR()
		if err != nil {
			return Coef{}, err
		}
		c.SE = math.Sqrt(mat.Inner(lv, v.kr.phiA, lv))
		t, err := v.kr.test(mat.NewDense(1, r.P, ls), r.gamma)
		if err != nil {
			return Coef{}, err
		}
		c.DF = t.DenDF
	default:
		c.SE = math.Sqrt(mat.Inner(lv, r.covS, lv))
		c.DF = r.sat.df(ls, r.covS)
	}
	return fillT(c, r.level), nil
}

// TermTest is an F test of one model term.
type TermTest struct {
	// NumDF is the numerator df (rank of the hypothesis).
	NumDF int
	// DenDF is the denominator df of the chosen method.
	DenDF float64
	// F is the test statistic (Kenward-Roger: the scaled statistic).
	F float64
	// P is the upper-tail probability of F on (NumDF, DenDF).
	P float64
}

// TermTests returns one F test per term, terms[i] listing the model-matrix
// columns of term i. typ 3 tests the term's coefficients being zero, which
// is the Type III hypothesis under sum-to-zero coding; typ 1 tests the terms
// sequentially in column order (rows of the triangular factor of the
// unweighted X'X, as in the sequential sums of squares of OLS; taken of the
// centred, scaled columns, which span the same sequence of spaces).
func (r *Result) TermTests(terms [][]int, typ int, m Method) ([]TermTest, error) {
	if typ != 1 && typ != 3 {
		return nil, fmt.Errorf("term tests: type %d not supported (use 1 or 3)", typ)
	}
	p := r.P
	out := make([]TermTest, len(terms))
	for ti, cols := range terms {
		if len(cols) == 0 {
			return nil, fmt.Errorf("term tests: term %d has no columns", ti)
		}
		L := mat.NewDense(len(cols), p, nil)
		for i, c := range cols {
			if c < 0 || c >= p {
				return nil, fmt.Errorf("term tests: term %d column %d outside 0..%d", ti, c, p-1)
			}
			if typ == 3 {
				L.Set(i, c, 1)
			} else {
				for j := c; j < p; j++ {
					L.Set(i, j, r.sys.rx.At(c, j))
				}
			}
		}
		var Ls mat.Matrix = L
		if typ == 3 {
			Ls = r.sys.cm.hypothesis(L)
		}
		t, err := r.ftestScaled(Ls, m)
		if err != nil {
			return nil, fmt.Errorf("term tests: term %d: %w", ti, err)
		}
		out[ti] = t
	}
	return out, nil
}

// FTest tests L b = 0 (rows of L are the hypotheses).
func (r *Result) FTest(L mat.Matrix, m Method) (TermTest, error) {
	_, c := L.Dims()
	if c != r.P {
		return TermTest{}, fmt.Errorf("hypothesis has %d columns, model has %d coefficients", c, r.P)
	}
	return r.ftestScaled(r.sys.cm.hypothesis(L), m)
}

// ftestScaled tests Ls g = 0 on the coefficients g of the centred, scaled
// columns.
func (r *Result) ftestScaled(Ls mat.Matrix, m Method) (TermTest, error) {
	if m == KenwardRoger {
		kr, err := r.krInfo()
		if err != nil {
			return TermTest{}, err
		}
		return kr.test(Ls, r.gamma)
	}
	return r.satF(Ls)
}

// satF is the multi-df Satterthwaite F test of Fai & Cornelius (1996): the
// hypothesis is rotated to the eigenvectors of L C L', each 1-df piece gets
// its own Satterthwaite df nu_m, and E = sum nu_m/(nu_m-2) gives the df
// 2E/(E-q). L is on the centred, scaled columns.
func (r *Result) satF(L mat.Matrix) (TermTest, error) {
	var M mat.Dense
	M.Product(L, r.covS, L.T())
	Ms := symPart(&M)
	var es mat.EigenSym
	if !es.Factorize(Ms, true) {
		return TermTest{}, errors.New("eigen-decomposition of the hypothesis covariance did not converge")
	}
	vals := es.Values(nil)
	var P mat.Dense
	es.VectorsTo(&P)
	maxv := 0.0
	for _, v := range vals {
		maxv = math.Max(maxv, v)
	}
	var lb mat.VecDense
	lb.MulVec(L, mat.NewVecDense(r.P, r.gamma))
	var fsum float64
	var nus []float64
	for e, v := range vals {
		if v <= 1e-9*maxv {
			continue
		}
		pv := P.ColView(e)
		var lr mat.VecDense
		lr.MulVec(L.T(), pv)
		z := mat.Dot(pv, &lb)
		fsum += z * z / v
		nus = append(nus, r.sat.df(lr.RawVector().Data, r.covS))
	}
	k := len(nus)
	if k == 0 {
		return TermTest{}, errors.New("hypothesis has rank zero")
	}
	F := fsum / float64(k)
	df := combineNu(nus)
	return TermTest{NumDF: k, DenDF: df, F: F, P: dist.FUpper(F, float64(k), df)}, nil
}

// combineNu merges the per-direction df of a multi-df test (Fai &
// Cornelius 1996): equal df are returned as they are, any df at or below 2
// makes the moment match impossible and gives 2.
func combineNu(nus []float64) float64 {
	if len(nus) == 1 {
		return nus[0]
	}
	same := true
	for _, v := range nus {
		if math.Abs(v-nus[0]) > 1e-8*math.Abs(nus[0]) {
			same = false
		}
	}
	if same {
		var s float64
		for _, v := range nus {
			s += v
		}
		return s / float64(len(nus))
	}
	var E float64
	for _, v := range nus {
		if v <= 2 {
			return 2
		}
		E += v / (v - 2)
	}
	q := float64(len(nus))
	return 2 * E / (E - q)
}
