package assume

import (
	"fmt"
	"math"

	"furrow/stats/internal/fsum"
)

// MomentsResult holds sample skewness and excess kurtosis.
type MomentsResult struct {
	// G1 is the moment skewness m3/m2^{3/2}; G2 the moment excess kurtosis
	// m4/m2² - 3 (m_r the central moments with divisor n).
	G1, G2 float64
	// Skewness is the adjusted skewness G1·√(n(n-1))/(n-2) and Kurtosis the
	// adjusted excess kurtosis ((n+1)G2 + 6)(n-1)/((n-2)(n-3)), the forms
	// whose standard errors SESkew and SEKurt are stated below.
	Skewness, Kurtosis float64
	// SESkew = √(6n(n-1)/((n-2)(n+1)(n+3))) and
	// SEKurt = 2·SESkew·√((n²-1)/((n-3)(n+5))), the exact standard errors
	// under normality.
	SESkew, SEKurt float64
	// N is the number of observations.
	N int
}

// Moments returns the sample skewness and excess kurtosis of x with their
// standard errors under normality. The adjusted estimators and the standard
// errors are those compared by Joanes & Gill (1998, The Statistician
// 47:183), types G1 and G2; the variances of the moment ratios under
// normality are Fisher's (1930, Proc R Soc A 130:16). x needs at least 4
// finite values, not all equal; it is not modified.
func Moments(x []float64) (MomentsResult, error) {
	n := len(x)
	if n < 4 {
		return MomentsResult{}, fmt.Errorf("moments: %w: %d, need at least 4", ErrTooFew, n)
	}
	if err := checkFinite(x); err != nil {
		return MomentsResult{}, fmt.Errorf("moments: %w", err)
	}
	mean := fsum.Mean(x)
	d := make([]float64, n)
	for i, v := range x {
		d[i] = v - mean
	}
	// Remove the rounding left in the mean (second pass).
	corr := fsum.Mean(d)
	var m2, m3, m4 []float64
	for i := range d {
		e := d[i] - corr
		e2 := e * e
		m2 = append(m2, e2)
		m3 = append(m3, e2*e)
		m4 = append(m4, e2*e2)
	}
	nf := float64(n)
	s2 := fsum.Of(m2) / nf
	s3 := fsum.Of(m3) / nf
	s4 := fsum.Of(m4) / nf
	if !(s2 > 0) || math.Sqrt(s2) <= 1e-14*math.Abs(mean) {
		return MomentsResult{}, fmt.Errorf("moments: %w", ErrConstant)
	}
	g1 := s3 / math.Pow(s2, 1.5)
	g2 := s4/(s2*s2) - 3
	r := MomentsResult{G1: g1, G2: g2, N: n}
	r.Skewness = g1 * math.Sqrt(nf*(nf-1)) / (nf - 2)
	r.Kurtosis = ((nf+1)*g2 + 6) * (nf - 1) / ((nf - 2) * (nf - 3))
	r.SESkew = math.Sqrt(6 * nf * (nf - 1) / ((nf - 2) * (nf + 1) * (nf + 3)))
	r.SEKurt = 2 * r.SESkew * math.Sqrt((nf*nf-1)/((nf-3)*(nf+5)))
	return r, nil
}
