package multcomp

import (
	"errors"
	"fmt"
	"math"

	"gonum.org/v1/gonum/mat"
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

// maxTUpperProduct returns the probability that the largest of T_i = X_i/S
// exceeds c, where X is multivariate normal with unit variances and
// correlations λ_i λ_j, and S² = χ²_ν/ν independent of X:
//
//	two-sided:  P(max |T_i| >= c)
//	one-sided:  P(max T_i >= c)
//
// Writing X_i = λ_i Z + sqrt(1-λ_i²) Y_i with independent standard normals
// Z, Y_i (Dunnett 1955 JASA 50:1096; Genz & Bretz 2009, Computation of
// Multivariate Normal and t Probabilities, §2.2.1), conditional on S = s and
// Z = z the X_i are independent, so
//
//	P = ∫ f_ν(s) ∫ φ(z) [1 - Π_i (1 - e_i(s, z))] dz ds
//
// with e_i the conditional exceedance probability of component i. The
// bracket is evaluated as -expm1(Σ log(1 - e_i)), so a small P keeps its
// relative accuracy. Both integrals use adaptive Gauss-Legendre panels.
func maxTUpperProduct(c float64, lam []float64, df float64, twoSided bool) float64 {
	if twoSided && c <= 0 {
		return 1
	}
	sig := make([]float64, len(lam))
	lmax := 0.0
	for i, l := range lam {
		sig[i] = math.Sqrt((1 - l) * (1 + l))
		lmax = math.Max(lmax, math.Abs(l))
	}
	inner := func(s float64) float64 {
		cs := c * s
		h := func(z float64) float64 {
			var logIn float64
			for i, l := range lam {
				lz := l * z
				var e, pin float64
				if twoSided {
					lo := (-cs - lz) / sig[i]
					up := (cs - lz) / sig[i]
					e = normCDF(lo) + normCDF(-up)
					if e < 0.5 {
						logIn += math.Log1p(-e)
						continue
					}
					switch {
					case lo > 0:
						pin = normCDF(-lo) - normCDF(-up)
					case up < 0:
						pin = normCDF(up) - normCDF(lo)
					default:
						pin = 1 - e
					}
				} else {
					up := (cs - lz) / sig[i]
					e = normCDF(-up)
					if e < 0.5 {
						logIn += math.Log1p(-e)
						continue
					}
					pin = normCDF(up)
				}
				if pin <= 0 {
					return normPDF(z)
				}
				logIn += math.Log(pin)
			}
			return normPDF(z) * -math.Expm1(logIn)
		}
		w := lmax * math.Abs(cs)
		return integrate(h, span(-w-9, w+9, 1.5), quadAbsTol*1e-3, quadRelTol)
	}
	v := chiMix(inner, df, quadAbsTol, quadRelTol)
	return math.Min(1, math.Max(0, v))
}

// checkCorr validates a correlation matrix of the test statistics.
func checkCorr(corr mat.Symmetric) error {
	m := corr.SymmetricDim()
	if m == 0 {
		return errors.New("no comparisons")
	}
	for i := 0; i < m; i++ {
		if math.Abs(corr.At(i, i)-1) > 1e-8 {
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
// ProductFactors; other structures return an error.
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
		return math.NaN(), errors.New("correlation matrix is not of the one-factor form ρ_ij = λ_i λ_j; no deterministic quadrature for it")
	}
	return maxTUpperProduct(c, lam, df, side == TwoSided), nil
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
	lam, _ := ProductFactors(corr)
	two := side == TwoSided
	c, err := solveLogTail(func(c float64) float64 { return math.Log(maxTUpperProduct(c, lam, df, two)) }, alpha, 2)
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
	crit, err := DunnettCritical(1-level, corr, df, side)
	if err != nil {
		return nil, fmt.Errorf("dunnett: %w", err)
	}
	lam, _ := ProductFactors(corr)
	f := &Family{Method: "dunnett", Side: side, Level: level, DF: df, Critical: crit}
	for i := range est {
		t := est[i] / se[i]
		c := Comparison{Estimate: est[i], SE: se[i], T: t}
		switch side {
		case TwoSided:
			c.PAdjusted = maxTUpperProduct(math.Abs(t), lam, df, true)
			c.Lower, c.Upper = est[i]-crit*se[i], est[i]+crit*se[i]
		case Greater:
			c.PAdjusted = maxTUpperProduct(t, lam, df, false)
			c.Lower, c.Upper = est[i]-crit*se[i], math.Inf(1)
		case Less:
			c.PAdjusted = maxTUpperProduct(-t, lam, df, false)
			c.Lower, c.Upper = math.Inf(-1), est[i]+crit*se[i]
		default:
			return nil, fmt.Errorf("dunnett: unknown alternative %v", side)
		}
		f.Comparisons = append(f.Comparisons, c)
	}
	return f, nil
}
