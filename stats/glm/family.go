package glm

import (
	"fmt"
	"math"

	"furrow/stats/dist"
)

// Family is the distribution of the response.
type Family int

const (
	// Poisson counts: variance μ.
	Poisson Family = iota + 1
	// Binomial successes out of Options.Trials (1 each when nil): the mean
	// μ is the probability of success, the variance of a proportion
	// μ(1 - μ)/trials.
	Binomial
	// NegBinomial counts: variance μ + μ²/θ, θ estimated by maximum
	// likelihood unless Options.Theta fixes it.
	NegBinomial
)

// String returns "poisson", "binomial" or "negative binomial".
func (f Family) String() string {
	switch f {
	case Poisson:
		return "poisson"
	case Binomial:
		return "binomial"
	case NegBinomial:
		return "negative binomial"
	}
	return fmt.Sprintf("Family(%d)", int(f))
}

// Link is the link function g with g(μ) = η, the linear predictor.
type Link int

const (
	// DefaultLink is the family's usual link: Log for Poisson and
	// NegBinomial, Logit for Binomial.
	DefaultLink Link = iota
	// Log: η = log μ (counts).
	Log
	// Logit: η = log(μ/(1 - μ)) (binomial).
	Logit
	// Probit: η = Φ⁻¹(μ) (binomial).
	Probit
	// CLogLog, the complementary log-log: η = log(-log(1 - μ)) (binomial).
	CLogLog
)

// String returns the link's name as R spells it.
func (l Link) String() string {
	switch l {
	case DefaultLink:
		return "default"
	case Log:
		return "log"
	case Logit:
		return "logit"
	case Probit:
		return "probit"
	case CLogLog:
		return "cloglog"
	}
	return fmt.Sprintf("Link(%d)", int(l))
}

// resolveLink returns the link used for family f, or an error when the
// pair is not supported.
func resolveLink(f Family, l Link) (Link, error) {
	switch f {
	case Poisson, NegBinomial:
		if l == DefaultLink || l == Log {
			return Log, nil
		}
	case Binomial:
		switch l {
		case DefaultLink:
			return Logit, nil
		case Logit, Probit, CLogLog:
			return l, nil
		}
	default:
		panic(fmt.Sprintf("glm: unknown family %d", int(f)))
	}
	return 0, fmt.Errorf("the %v family takes no %v link", f, l)
}

// inverse returns μ = g⁻¹(η), 1 - μ (for the binomial links, computed
// without cancellation; NaN for Log) and dμ/dη.
func (l Link) inverse(eta float64) (mu, mu1m, dmu float64) {
	switch l {
	case Log:
		mu = math.Exp(eta)
		return mu, math.NaN(), mu
	case Logit:
		if eta >= 0 {
			e := math.Exp(-eta)
			mu, mu1m = 1/(1+e), e/(1+e)
		} else {
			e := math.Exp(eta)
			mu, mu1m = e/(1+e), 1/(1+e)
		}
		return mu, mu1m, mu * mu1m
	case Probit:
		return dist.NormalLower(eta), dist.NormalUpper(eta), math.Exp(-eta*eta/2) / math.Sqrt(2*math.Pi)
	case CLogLog:
		t := math.Exp(eta)
		return -math.Expm1(-t), math.Exp(-t), math.Exp(eta - t)
	}
	panic("glm: unknown link")
}

// apply returns g(μ) for a μ strictly inside the link's range.
func (l Link) apply(mu float64) float64 {
	switch l {
	case Log:
		return math.Log(mu)
	case Logit:
		return math.Log(mu / (1 - mu))
	case Probit:
		return dist.NormalQuantile(mu)
	case CLogLog:
		return math.Log(-math.Log1p(-mu))
	}
	panic("glm: unknown link")
}

// model is a family with its link and, for the negative binomial, θ.
type model struct {
	fam   Family
	link  Link
	theta float64
}

// variance returns V(μ) per unit of prior weight: μ (Poisson), μ(1 - μ)
// (binomial, on the proportion scale) or μ + μ²/θ.
func (m model) variance(mu, mu1m float64) float64 {
	switch m.fam {
	case Poisson:
		return mu
	case Binomial:
		return mu * mu1m
	default:
		return mu + mu*mu/m.theta
	}
}

// xlogy returns x log(x/y), 0 when x = 0.
func xlogy(x, y float64) float64 {
	if x == 0 {
		return 0
	}
	return x * math.Log(x/y)
}

// unitDeviance returns the deviance contribution of one observation with
// prior weight 1: y is the count (binomial: successes out of n trials),
// mu the mean (binomial: the probability).
//
//	Poisson   2 [y log(y/μ) - (y - μ)]
//	binomial  2 [y log(y/(nμ)) + (n - y) log((n - y)/(n(1 - μ)))]
//	neg. bin. 2 [y log(y/μ) - (y + θ) log((y + θ)/(μ + θ))]
//
// (McCullagh & Nelder 1989, sec. 2.3 and table 2.1).
func (m model) unitDeviance(y, n, mu, mu1m float64) float64 {
	switch m.fam {
	case Poisson:
		return 2 * (xlogy(y, mu) - (y - mu))
	case Binomial:
		return 2 * (xlogy(y, n*mu) + xlogy(n-y, n*mu1m))
	default:
		t := m.theta
		return 2 * (xlogy(y, mu) - (y+t)*math.Log1p((y-mu)/(mu+t)))
	}
}

// lgamma1 is log Γ(x) for x > 0.
func lgamma1(x float64) float64 {
	v, _ := math.Lgamma(x)
	return v
}

// logDensity returns log P(Y = y) for the count y (binomial: successes of n).
func (m model) logDensity(y, n, mu, mu1m float64) float64 {
	switch m.fam {
	case Poisson:
		if y == 0 {
			return -mu
		}
		return y*math.Log(mu) - mu - lgamma1(y+1)
	case Binomial:
		ll := lgamma1(n+1) - lgamma1(y+1) - lgamma1(n-y+1)
		if y > 0 {
			ll += y * math.Log(mu)
		}
		if n > y {
			ll += (n - y) * math.Log(mu1m)
		}
		return ll
	default:
		t := m.theta
		ll := -t * math.Log1p(mu/t)
		if y > 0 {
			ll += lgammaRatio(t, y) - lgamma1(y+1) + y*(math.Log(mu)-math.Log(t+mu))
		}
		return ll
	}
}

// logP0 returns log P(Y = 0).
func (m model) logP0(n, mu, mu1m float64) float64 {
	switch m.fam {
	case Poisson:
		return -mu
	case Binomial:
		return n * math.Log(mu1m)
	default:
		return -m.theta * math.Log1p(mu/m.theta)
	}
}
