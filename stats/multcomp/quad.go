package multcomp

import (
	"math"
	"sync"

	"furrow/stats/internal/fsum"
)

// glOrder is the number of Gauss-Legendre nodes used on every panel.
const glOrder = 16

// glRule holds Gauss-Legendre nodes and weights on [-1, 1].
type glRule struct {
	x, w []float64
}

// gaussLegendre returns the glOrder-point rule, computed once. The nodes are
// the zeros of the Legendre polynomial P_n, found by Newton's method from the
// starting values cos(π(i - 1/4)/(n + 1/2)); P_n and its derivative come from
// the three-term recurrence, and the weights are 2/((1 - x²) P_n'(x)²)
// (Davis & Rabinowitz 1984, Methods of Numerical Integration, 2nd ed., §2.7).
var gaussLegendre = sync.OnceValue(func() glRule {
	n := glOrder
	r := glRule{x: make([]float64, n), w: make([]float64, n)}
	for i := 0; i < (n+1)/2; i++ {
		x := math.Cos(math.Pi * (float64(i) + 0.75) / (float64(n) + 0.5))
		var dp float64
		for iter := 0; iter < 100; iter++ {
			p0, p1 := 1.0, x
			for j := 2; j <= n; j++ {
				p0, p1 = p1, ((2*float64(j)-1)*x*p1-(float64(j)-1)*p0)/float64(j)
			}
			dp = float64(n) * (x*p1 - p0) / (x*x - 1)
			dx := p1 / dp
			x -= dx
			if math.Abs(dx) < 1e-16 {
				break
			}
		}
		// Recompute the derivative at the converged node.
		p0, p1 := 1.0, x
		for j := 2; j <= n; j++ {
			p0, p1 = p1, ((2*float64(j)-1)*x*p1-(float64(j)-1)*p0)/float64(j)
		}
		dp = float64(n) * (x*p1 - p0) / (x*x - 1)
		w := 2 / ((1 - x*x) * dp * dp)
		r.x[i], r.w[i] = -x, w
		r.x[n-1-i], r.w[n-1-i] = x, w
	}
	return r
})

// glPanel integrates f over [a, b] with one Gauss-Legendre panel.
func glPanel(f func(float64) float64, a, b float64) float64 {
	r := gaussLegendre()
	h := 0.5 * (b - a)
	c := 0.5 * (a + b)
	var s float64
	for i, x := range r.x {
		s += r.w[i] * f(c+h*x)
	}
	return h * s
}

// negligible is the fraction of its tolerance share below which a panel is
// accepted without refinement.
const negligible = 1e-2

// maxDepth bounds the bisection of one panel.
const maxDepth = 40

// refine integrates f over [a, b] given the one-panel value whole, bisecting
// until the two halves agree with the whole to within tol (the classical
// recursive adaptive scheme; the returned sum of halves is the more accurate
// value).
func refine(f func(float64) float64, a, b, whole, tol float64, depth int) float64 {
	m := 0.5 * (a + b)
	l := glPanel(f, a, m)
	r := glPanel(f, m, b)
	if depth <= 0 || math.Abs(l+r-whole) <= tol || m <= a || m >= b {
		return l + r
	}
	return refine(f, a, m, l, 0.5*tol, depth-1) + refine(f, m, b, r, 0.5*tol, depth-1)
}

// integrate returns the integral of f over the panels given by the sorted
// breakpoints, to within max(abstol, reltol·|integral|). It first sums one
// Gauss-Legendre panel per interval to estimate the integral and then refines
// each interval with its share of the tolerance. Intervals of zero width are
// skipped.
func integrate(f func(float64) float64, breaks []float64, abstol, reltol float64) float64 {
	n := len(breaks) - 1
	if n < 1 {
		return 0
	}
	whole := make([]float64, n)
	var est float64
	for i := 0; i < n; i++ {
		if breaks[i+1] > breaks[i] {
			whole[i] = glPanel(f, breaks[i], breaks[i+1])
			est += math.Abs(whole[i])
		}
	}
	tol := math.Max(abstol, reltol*est) / float64(n)
	var sum fsum.Sum
	for i := 0; i < n; i++ {
		switch {
		case !(breaks[i+1] > breaks[i]):
		case math.Abs(whole[i]) <= negligible*tol:
			// A panel whose whole value is far below its share of the
			// tolerance cannot change the result; the panels are laid out
			// by the callers so that no narrow peak hides inside one.
			sum.Add(whole[i])
		default:
			sum.Add(refine(f, breaks[i], breaks[i+1], whole[i], tol, maxDepth))
		}
	}
	return sum.Value()
}

// normCDF returns Φ(x), accurate in relative terms in the lower tail.
func normCDF(x float64) float64 { return 0.5 * math.Erfc(-x/math.Sqrt2) }

// normPDF returns φ(x).
func normPDF(x float64) float64 { return math.Exp(-0.5*x*x) / math.Sqrt(2*math.Pi) }

// stirlingDelta returns δ(h) = log Γ(h) - (h-1/2) log h + h - log(2π)/2 for
// h >= 20 from the asymptotic series 1/(12h) - 1/(360h³) + 1/(1260h⁵) -
// 1/(1680h⁷) (Abramowitz & Stegun 1964, 6.1.40); the next term is below
// 1e-14 at h = 20.
func stirlingDelta(h float64) float64 {
	h2 := 1 / (h * h)
	return (1.0/12 - h2*(1.0/360-h2*(1.0/1260-h2/1680))) / h
}

// log1pMinus returns log(1+d) - d without cancellation for small |d|.
func log1pMinus(d float64) float64 {
	if math.Abs(d) > 0.1 {
		return math.Log1p(d) - d
	}
	// -d²/2 + d³/3 - d⁴/4 + ...
	var sum float64
	p := d * d
	for n := 2; n < 40; n++ {
		t := p / float64(n)
		if n%2 == 0 {
			sum -= t
		} else {
			sum += t
		}
		if math.Abs(t) < 1e-17*math.Abs(sum) {
			break
		}
		p *= d
	}
	return sum
}

func lgamma(x float64) float64 {
	v, _ := math.Lgamma(x)
	return v
}
