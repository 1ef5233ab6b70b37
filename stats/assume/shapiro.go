package assume

import (
	"errors"
	"fmt"
	"math"
	"sort"

	"furrow/stats/dist"
	"furrow/stats/internal/fsum"
)

// ShapiroWilkResult is the outcome of a Shapiro-Wilk test of normality.
type ShapiroWilkResult struct {
	// W is the Shapiro-Wilk statistic, in (0, 1]; small values indicate
	// departure from normality.
	W float64
	// Z is the normalising transform of W (standard normal under the null)
	// for n >= 4; NaN for n = 3, where P is exact.
	Z float64
	// P is the upper-tail p-value of Z (for n = 3 the exact p-value).
	P float64
	// N is the number of observations used.
	N int
}

// Sample-size limits of Royston's approximation.
const (
	ShapiroWilkMinN = 3
	ShapiroWilkMaxN = 5000
)

// ErrConstant is returned when the data have zero spread, so a test
// statistic is undefined.
var ErrConstant = errors.New("data are constant")

// ErrTooFew is returned when there are too few observations for a test.
var ErrTooFew = errors.New("too few observations")

// ShapiroWilk tests x for normality by the Shapiro & Wilk (1965,
// Biometrika 52:591) W statistic with Royston's approximations: the
// coefficients a and the normalising transformations of W for
// 4 <= n <= 11 and 12 <= n <= 5000 (Royston 1992, Stat Comput 2:117;
// Royston 1995, Appl Stat 44:547, algorithm AS R94), and the exact
// distribution for n = 3,
//
//	P = (6/π) (asin √W − asin √(3/4)).
//
// x must hold 3 to 5000 finite values that are not all equal. x is not
// modified.
func ShapiroWilk(x []float64) (ShapiroWilkResult, error) {
	n := len(x)
	if n < ShapiroWilkMinN || n > ShapiroWilkMaxN {
		return ShapiroWilkResult{}, fmt.Errorf("shapiro-wilk: sample size %d outside %d..%d", n, ShapiroWilkMinN, ShapiroWilkMaxN)
	}
	if err := checkFinite(x); err != nil {
		return ShapiroWilkResult{}, fmt.Errorf("shapiro-wilk: %w", err)
	}
	xs := append([]float64(nil), x...)
	sort.Float64s(xs)
	if xs[n-1]-xs[0] <= 1e-12*math.Max(math.Abs(xs[0]), math.Abs(xs[n-1])) {
		return ShapiroWilkResult{}, fmt.Errorf("shapiro-wilk: %w", ErrConstant)
	}
	a := shapiroCoefficients(n)

	// Centre and scale x and a to unit vectors u, v; then W = (u·v)² and
	// 1 - W = (1 - u·v)(1 + u·v) with 1 - u·v = |u - v|²/2, which keeps
	// 1 - W accurate when W is near 1 (log(1 - W) drives the p-value).
	mean := fsum.Mean(xs)
	v := make([]float64, n)
	for i, xi := range xs {
		v[i] = xi - mean
	}
	// Second pass removes the rounding left in the mean.
	var corr float64
	for _, vi := range v {
		corr += vi
	}
	corr /= float64(n)
	for i := range v {
		v[i] -= corr
	}
	nv := norm2(v)
	na := norm2(a)
	var d2 float64
	for i := range v {
		d := a[i]/na - v[i]/nv
		d2 += d * d
	}
	oneMinusW := (d2 / 2) * (2 - d2/2)
	if oneMinusW < 0 {
		oneMinusW = 0
	}
	w := 1 - oneMinusW

	res := ShapiroWilkResult{W: w, N: n, Z: math.NaN()}
	if n == 3 {
		// Exact null distribution for n = 3 (Shapiro & Wilk 1965, sec. 3.2).
		ww := math.Max(w, 0.75)
		p := 6 / math.Pi * (math.Asin(math.Sqrt(ww)) - math.Asin(math.Sqrt(0.75)))
		res.P = math.Min(1, math.Max(0, p))
		return res, nil
	}
	y := math.Log(oneMinusW)
	nf := float64(n)
	var m, s float64
	if n <= 11 {
		// Royston (1992) small-sample transform: w = -log(γ - log(1-W)).
		gamma := -2.273 + 0.459*nf
		if y >= gamma {
			// The transform is undefined beyond its range; this happens
			// only for extreme departures (p far below 1e-10).
			res.Z = math.Inf(1)
			res.P = 0
			return res, nil
		}
		y = -math.Log(gamma - y)
		m = poly(nf, 0.5440, -0.39978, 0.025054, -6.714e-4)
		s = math.Exp(poly(nf, 1.3822, -0.77857, 0.062767, -0.0020322))
	} else {
		// Royston (1992) large-sample transform: log(1-W) is normal.
		ln := math.Log(nf)
		m = poly(ln, -1.5861, -0.31082, -0.083751, 0.0038915)
		s = math.Exp(poly(ln, -0.4803, -0.082676, 0.0030302))
	}
	res.Z = (y - m) / s
	res.P = dist.NormalUpper(res.Z)
	return res, nil
}

// shapiroCoefficients returns Royston's (1992) approximation of the
// Shapiro-Wilk coefficients for sample size n, antisymmetric, for the
// ascending order statistics. With m_i = Φ⁻¹((i - 3/8)/(n + 1/4)) and
// u = 1/√n, the largest coefficients are polynomials in u added to
// c_i = m_i/|m|; the rest are m_i/√φ so that Σ a² = 1.
func shapiroCoefficients(n int) []float64 {
	a := make([]float64, n)
	if n == 3 {
		a[0], a[2] = -math.Sqrt(0.5), math.Sqrt(0.5)
		return a
	}
	m := make([]float64, n)
	nf := float64(n)
	for i := 0; i < n/2; i++ {
		// Upper half by symmetry keeps the vector exactly antisymmetric.
		q := (float64(i+1) - 0.375) / (nf + 0.25)
		m[i] = dist.NormalQuantile(q)
		m[n-1-i] = -m[i]
	}
	var mm float64
	for _, mi := range m {
		mm += mi * mi
	}
	rm := math.Sqrt(mm)
	u := 1 / math.Sqrt(nf)
	an := m[n-1]/rm + poly(u, 0, 0.221157, -0.147981, -2.071190, 4.434685, -2.706056)
	var phi float64
	k := 1 // number of coefficients at each end from the polynomials
	if n > 5 {
		k = 2
		an1 := m[n-2]/rm + poly(u, 0, 0.042981, -0.293762, -1.752461, 5.682633, -3.582633)
		phi = (mm - 2*m[n-1]*m[n-1] - 2*m[n-2]*m[n-2]) / (1 - 2*an*an - 2*an1*an1)
		a[n-2], a[1] = an1, -an1
	} else {
		phi = (mm - 2*m[n-1]*m[n-1]) / (1 - 2*an*an)
	}
	a[n-1], a[0] = an, -an
	sp := math.Sqrt(phi)
	for i := k; i < n-k; i++ {
		a[i] = m[i] / sp
	}
	return a
}

// poly evaluates c[0] + c[1] x + c[2] x² + ... by Horner's rule.
func poly(x float64, c ...float64) float64 {
	var r float64
	for i := len(c) - 1; i >= 0; i-- {
		r = r*x + c[i]
	}
	return r
}
