package glm

import (
	"errors"
	"math"
	"math/rand/v2"

	"gonum.org/v1/gonum/mathext"

	"furrow/stats/dist"
	"furrow/stats/internal/fsum"
)

// cdf returns P(Y <= y) and P(Y > y) under the fitted distribution of
// observation i, each computed directly (never as 1 minus the other):
//
//	Poisson(μ)        P(Y <= y) = Q(y+1, μ)            P(Y > y) = P(y+1, μ)
//	binomial(n, μ)    P(Y <= y) = I_{1-μ}(n-y, y+1)    P(Y > y) = I_μ(y+1, n-y)
//	neg. bin.(θ, μ)   P(Y <= y) = I_{θ/(θ+μ)}(θ, y+1)  P(Y > y) = I_{μ/(θ+μ)}(y+1, θ)
//
// with P and Q the regularised incomplete gamma functions and I the
// regularised incomplete beta function (Abramowitz & Stegun 1964, 26.4.21,
// 26.5.24, 26.5.26; gonum mathext).
func (r *Result) cdf(i int, y float64) (lower, upper float64) {
	if y < 0 {
		return 0, 1
	}
	mu := r.Fitted[i]
	switch r.Family {
	case Poisson:
		return mathext.GammaIncRegComp(y+1, mu), mathext.GammaIncReg(y+1, mu)
	case Binomial:
		n := r.prob.trials(i)
		if y >= n {
			return 1, 0
		}
		_, mu1m, _ := r.Link.inverse(r.Eta[i]) // 1 - μ without cancellation
		return mathext.RegIncBeta(n-y, y+1, mu1m), mathext.RegIncBeta(y+1, n-y, mu)
	default:
		t := r.Theta
		return mathext.RegIncBeta(t, y+1, t/(t+mu)), mathext.RegIncBeta(y+1, t, mu/(t+mu))
	}
}

// QuantileResiduals returns the randomised quantile residuals of Dunn &
// Smyth (1996, J Comput Graph Stat 5:236): for observation i with count
// y_i, u_i is uniform on (F(y_i - 1), F(y_i)] under the fitted
// distribution F, and the residual is Φ⁻¹(u_i). Under the model they are
// independent standard normal (up to the estimation of the parameters),
// whatever the family, so their QQ plot and normality tests mean what
// they mean for a linear model.
//
// The uniforms come from math/rand/v2's PCG seeded with (seed, 0), one
// draw per row in row order, so the same seed gives the same residuals.
// Upper-half residuals are computed from the upper tail,
// -Φ⁻¹(P(Y >= y) - v P(Y = y)), so they keep their accuracy far out. Rows
// with prior weight 0 get NaN (their draw is still made). A quasi fit has
// no distribution, and is an error.
func (r *Result) QuantileResiduals(seed uint64) ([]float64, error) {
	if r.Quasi {
		return nil, errors.New("quantile residuals: a quasi fit has no distribution")
	}
	rng := rand.New(rand.NewPCG(seed, 0))
	out := make([]float64, len(r.Fitted))
	for i := range out {
		v := rng.Float64()
		for v == 0 {
			v = rng.Float64()
		}
		if r.prob.pw[i] == 0 {
			out[i] = math.NaN()
			continue
		}
		y := r.prob.y[i]
		a, sa := r.cdf(i, y-1)
		b, sb := r.cdf(i, y)
		if a+b <= 1 {
			out[i] = dist.NormalQuantile(a + v*(b-a))
		} else {
			out[i] = dist.NormalUpperQuantile(sb + (1-v)*(sa-sb))
		}
	}
	return out, nil
}

// DispersionStat is the Pearson dispersion statistic of a fit.
type DispersionStat struct {
	// Pearson is X², DF the residual degrees of freedom and Ratio X²/DF,
	// near 1 when the family's variance holds.
	Pearson float64
	DF      int
	Ratio   float64
	// P is P(χ²_DF > X²), small under over-dispersion (McCullagh & Nelder
	// 1989, sec. 4.5: X² is approximately χ² on DF under the model when
	// the means are not small).
	P float64
}

// DispersionTest returns X²/DF with the χ² p-value of over-dispersion.
func (r *Result) DispersionTest() DispersionStat {
	df := float64(r.DFResid)
	return DispersionStat{Pearson: r.Pearson, DF: r.DFResid, Ratio: r.Pearson / df, P: dist.ChiSqUpper(r.Pearson, df)}
}

// ZeroTest compares the observed zeros with those the fit expects.
type ZeroTest struct {
	// Observed is the (prior-weighted) number of zero counts, Expected
	// the sum of the fitted P(Y_i = 0).
	Observed, Expected float64
	// Score is the score statistic for zero inflation on 1 degree of
	// freedom, P its χ² p-value; Z = ±√Score (positive for excess zeros)
	// and POneSided = P(N(0,1) > Z), the test against excess zeros only.
	Score, P, Z, POneSided float64
}

// ZeroInflation tests for more zeros than the fit expects by the score
// test of van den Broek (1995, Biometrics 51:738) against the
// zero-inflated model P(Y = 0) = ω + (1 - ω) p0, at ω = 0:
//
//	U = Σ w_i (1{y_i = 0} - p0_i)/p0_i
//	V = Σ w_i (1 - p0_i)/p0_i - a' (X'WX)⁻¹ a,   a = Σ w_i x_i μ_i (dμ/dη)_i / V(μ_i)
//	Score = U²/V
//
// (μ, V on the count scale: for the binomial a = Σ w_i x_i n_i (dμ/dη)_i/(1 - μ_i)).
// The second term of V accounts for the estimated coefficients; for the
// Poisson with an intercept it is Σ μ_i, van den Broek's form. The
// binomial and negative binomial versions are derived here in the same way
// (U is the same; the covariances of U with the scores of b come from
// E[1{Y=0}(Y - μ)] = -p0 μ); for the negative binomial with θ estimated, V
// also loses c²/i_θ with c = Σ w_i ∂log p0_i/∂θ = Σ w_i [log(θ/(θ+μ_i)) +
// μ_i/(θ+μ_i)] and i_θ the observed information of θ (b and θ are
// orthogonal). A quasi fit has no P(Y = 0) and is an error.
func (r *Result) ZeroInflation() (*ZeroTest, error) {
	if r.Quasi {
		return nil, errors.New("zero-inflation test: a quasi fit has no distribution")
	}
	p := r.prob
	m := r.m
	a := make([]float64, r.P)
	var obs, expd, u, v, c fsum.Sum
	for i := range p.y {
		if p.pw[i] == 0 {
			continue
		}
		w := 1.0
		if p.w != nil {
			w = p.w[i]
		}
		mu := r.Fitted[i]
		_, mu1m, dmu := r.Link.inverse(r.Eta[i])
		n := p.trials(i)
		lp0 := m.logP0(n, mu, mu1m)
		p0 := math.Exp(lp0)
		odds := math.Expm1(-lp0) // (1 - p0)/p0 without cancellation
		expd.Add(w * p0)
		zero := 0.0
		if p.y[i] == 0 {
			zero = 1
			obs.Add(w)
		}
		u.Add(w * (zero - p0) / p0)
		v.Add(w * odds)
		var f float64
		switch r.Family {
		case Binomial:
			f = n * dmu / mu1m
		default:
			f = mu * dmu / m.variance(mu, mu1m)
		}
		row := p.x.RawRowView(i)
		for j := range a {
			a[j] += w * f * row[j]
		}
		if r.Family == NegBinomial {
			t := m.theta
			c.Add(w * (-math.Log1p(mu/t) + mu/(t+mu)))
		}
	}
	cov := r.wls.UnscaledCov()
	var quad float64
	for i := 0; i < r.P; i++ {
		for j := 0; j < r.P; j++ {
			quad += a[i] * cov.At(i, j) * a[j]
		}
	}
	vv := v.Value() - quad
	if r.Family == NegBinomial && !math.IsNaN(r.ThetaSE) {
		vv -= c.Value() * c.Value() * r.ThetaSE * r.ThetaSE
	}
	zt := &ZeroTest{Observed: obs.Value(), Expected: expd.Value()}
	if !(vv > 0) {
		return nil, errors.New("zero-inflation test: the variance of the score is not positive (the fit leaves no room for extra zeros)")
	}
	uu := u.Value()
	zt.Score = uu * uu / vv
	zt.P = dist.ChiSqUpper(zt.Score, 1)
	zt.Z = uu / math.Sqrt(vv)
	zt.POneSided = dist.NormalUpper(zt.Z)
	return zt, nil
}
