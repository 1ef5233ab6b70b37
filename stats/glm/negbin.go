package glm

import (
	"errors"
	"math"

	"gonum.org/v1/gonum/mathext"

	"furrow/stats/internal/fsum"
)

// ErrThetaInfinite is returned (wrapped) by a negative binomial fit whose
// likelihood keeps increasing in θ up to ThetaMax: the counts show no
// over-dispersion beyond the Poisson, the limit θ → ∞, and a Poisson
// model is the one to fit.
var ErrThetaInfinite = errors.New("theta tends to infinity (no over-dispersion beyond the Poisson)")

// ThetaMax is the largest θ a negative binomial fit estimates; at θ = 1e8
// the variance exceeds the Poisson variance by μ²/1e8, and the
// log-likelihood differs from the Poisson limit by less than about μ/θ per
// observation.
const ThetaMax = 1e8

// shortSum is the count below which ψ(θ+y) - ψ(θ) and ψ'(θ) - ψ'(θ+y) are
// summed term by term (exact up to rounding, no cancellation) rather than
// taken as differences of the functions.
const shortSum = 64

// lgammaRatio returns log Γ(θ+y) - log Γ(θ) for a count y >= 0.
func lgammaRatio(theta, y float64) float64 {
	if y < shortSum {
		var s fsum.Sum
		for j := 0.0; j < y; j++ {
			s.Add(math.Log(theta + j))
		}
		return s.Value()
	}
	return lgamma1(theta+y) - lgamma1(theta)
}

// digammaDiff returns ψ(θ+y) - ψ(θ) = Σ_{j<y} 1/(θ+j) and
// trigammaDiff ψ'(θ) - ψ'(θ+y) = Σ_{j<y} 1/(θ+j)² (Abramowitz & Stegun
// 1964, 6.3.6 and 6.4.6, the recurrences).
func digammaDiff(theta, y float64) (dg, tg float64) {
	if y < shortSum {
		for j := 0.0; j < y; j++ {
			r := 1 / (theta + j)
			dg += r
			tg += r * r
		}
		return dg, tg
	}
	return mathext.Digamma(theta+y) - mathext.Digamma(theta), trigamma(theta) - trigamma(theta+y)
}

// trigamma returns ψ'(x) for x > 0: the recurrence ψ'(x) = ψ'(x+1) + 1/x²
// up to x >= 10, then the asymptotic series 1/x + 1/(2x²) + Σ B_2k/x^(2k+1)
// (Abramowitz & Stegun 1964, 6.4.6 and 6.4.12), whose first omitted term
// at x = 10 is below 1e-16 relative.
func trigamma(x float64) float64 {
	var s float64
	for x < 10 {
		s += 1 / (x * x)
		x++
	}
	z := 1 / (x * x)
	// B2 = 1/6, B4 = -1/30, B6 = 1/42, B8 = -1/30, B10 = 5/66.
	series := 1/x + z/2 + z/x*(1.0/6+z*(-1.0/30+z*(1.0/42+z*(-1.0/30+z*5.0/66))))
	return s + series
}

// thetaLogLik returns the negative binomial log-likelihood at θ for fixed
// means, Σ w_i log P(Y = y_i), with its first and second derivatives in θ:
//
//	ℓ(θ)   = Σ w [log Γ(θ+y) - log Γ(θ) - log y! + θ log(θ/(θ+μ)) + y log(μ/(θ+μ))]
//	ℓ'(θ)  = Σ w [ψ(θ+y) - ψ(θ) + log(θ/(θ+μ)) + (μ - y)/(θ+μ)]
//	ℓ''(θ) = Σ w [ψ'(θ+y) - ψ'(θ) + (μ² + θy)/(θ(θ+μ)²)]
//
// (Lawless 1987, Can J Stat 15:209, sec. 2; the forms here are the
// algebra simplified so that nothing cancels at moderate θ).
func thetaLogLik(theta float64, y, mu, w []float64) (ll, d1, d2 float64) {
	var sl, s1, s2 fsum.Sum
	m := model{fam: NegBinomial, theta: theta}
	for i, yi := range y {
		wi := 1.0
		if w != nil {
			wi = w[i]
			if wi == 0 {
				continue
			}
		}
		mi := mu[i]
		sl.Add(wi * m.logDensity(yi, 0, mi, 0))
		dg, tg := digammaDiff(theta, yi)
		tm := theta + mi
		s1.Add(wi * (dg - math.Log1p(mi/theta) + (mi-yi)/tm))
		s2.Add(wi * (-tg + (mi*mi+theta*yi)/(theta*tm*tm)))
	}
	return sl.Value(), s1.Value(), s2.Value()
}

// thetaML maximises ℓ(θ) for fixed means by Newton's method on log θ with
// step halving (each accepted step increases ℓ), starting from start. It
// returns θ and the observed information -ℓ”(θ), or ErrThetaInfinite.
func thetaML(start float64, y, mu, w []float64) (theta, info float64, err error) {
	tau := math.Log(start)
	ll, d1, d2 := thetaLogLik(start, y, mu, w)
	for it := 0; it < 200; it++ {
		th := math.Exp(tau)
		g := th * d1                // dℓ/dτ
		h := th*th*d2 + th*d1       // d²ℓ/dτ²
		step := math.Copysign(1, g) // ascent step when ℓ is not concave here
		if h < 0 {
			step = -g / h
		}
		if math.Abs(step) > 3 {
			step = math.Copysign(3, step)
		}
		if math.Abs(step) <= 1e-12 {
			break
		}
		accepted := false
		for k := 0; k < 60; k++ {
			nt := tau + step
			nll, nd1, nd2 := thetaLogLik(math.Exp(nt), y, mu, w)
			if nll >= ll-1e-13*math.Abs(ll) && !math.IsNaN(nll) {
				tau, ll, d1, d2 = nt, nll, nd1, nd2
				accepted = true
				break
			}
			step /= 2
		}
		if !accepted || math.Abs(step) <= 1e-12 {
			break
		}
		if tau > math.Log(ThetaMax) {
			return 0, 0, ErrThetaInfinite
		}
	}
	theta = math.Exp(tau)
	if d1 > 0 && theta >= ThetaMax/10 {
		return 0, 0, ErrThetaInfinite
	}
	return theta, -d2, nil
}

// thetaStart is a moment start for θ given means: 1/θ = Σ w[(y-μ)² - μ] / Σ w μ²
// (from Var Y = μ + μ²/θ), or 1 when the moments show no over-dispersion
// or are degenerate.
func thetaStart(y, mu, w []float64) float64 {
	var num, den fsum.Sum
	for i, yi := range y {
		wi := 1.0
		if w != nil {
			wi = w[i]
		}
		d := yi - mu[i]
		num.Add(wi * (d*d - mu[i]))
		den.Add(wi * mu[i] * mu[i])
	}
	inv := num.Value() / den.Value()
	if !(inv > 1e-6) || math.IsInf(inv, 0) {
		return 1
	}
	return 1 / inv
}
