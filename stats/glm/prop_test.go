package glm

import (
	"math"
	"math/rand/v2"
	"testing"

	"gonum.org/v1/gonum/mat"

	"furrow/internal/testkit"
	"furrow/stats/design"
)

// simCounts draws Poisson counts for block + trt with plot sizes t: the
// mean of plot i is t_i exp(0.5 + 0.2 (block mod 5) - 0.3 trt).
func simCounts(rng *rand.Rand, m *design.Matrix, nt int) (y, t []float64) {
	n, _ := m.X.Dims()
	y, t = make([]float64, n), make([]float64, n)
	for i := range y {
		t[i] = 1 + 2*rng.Float64()
		mu := t[i] * math.Exp(0.5+0.2*float64((i/nt)%5)-0.3*float64(i%nt))
		y[i] = poisson(rng, mu)
	}
	return y, t
}

// poisson draws a Poisson count by inversion of the cdf (fine for small means).
func poisson(rng *rand.Rand, mu float64) float64 {
	u := rng.Float64()
	p := math.Exp(-mu)
	k, c := 0.0, p
	for u > c && k < 1000 {
		k++
		p *= mu / k
		c += p
	}
	return k
}

// overdispersed draws negative binomial counts (θ = k, a whole number)
// as gamma-mixed Poisson counts with mean exp(1.5 - 0.1 (i mod nt)) for
// plot i.
func overdispersed(rng *rand.Rand, n, nt, k int) []float64 {
	y := make([]float64, n)
	for i := range y {
		g := 0.0
		for j := 0; j < k; j++ {
			g -= math.Log(rng.Float64())
		}
		y[i] = poisson(rng, g/float64(k)*math.Exp(1.5-0.1*float64(i%nt)))
	}
	return y
}

// TestScoreEquations: at the solution the score X' W (z - η) =
// Σ x_i w_i (y_i - μ_i) (dη/dμ)_i vanishes (McCullagh & Nelder 1989, eq.
// 2.13), for every family and link, with offsets and weights.
func TestScoreEquations(t *testing.T) {
	rng := rand.New(rand.NewPCG(1, 2))
	m := blocked(t, 5, 4)
	y, size := simCounts(rng, m, 5)
	n := make([]float64, len(y))
	s := make([]float64, len(y))
	w := make([]float64, len(y))
	nb := overdispersed(rng, len(y), 5, 1)
	for i := range y {
		n[i] = 20 + float64(rng.IntN(20))
		s[i] = math.Min(n[i]-1, y[i]+float64(rng.IntN(8)))
		w[i] = 0.5 + rng.Float64()
	}
	cases := []struct {
		name string
		fam  Family
		y    []float64
		opt  *Options
	}{
		{"poisson offset weights", Poisson, y, &Options{Offset: logs(size), Weights: w}},
		{"negbin offset", NegBinomial, nb, &Options{Offset: logs(size)}},
		{"negbin fixed theta", NegBinomial, y, &Options{Theta: 3, Weights: w}},
		{"binomial logit", Binomial, s, &Options{Trials: n, Weights: w}},
		{"binomial probit", Binomial, s, &Options{Trials: n, Link: Probit}},
		{"binomial cloglog", Binomial, s, &Options{Trials: n, Link: CLogLog}},
	}
	for _, c := range cases {
		r, err := FitModel(m, c.y, c.fam, c.opt)
		if err != nil {
			t.Fatalf("%s: %v", c.name, err)
		}
		nr, p := m.X.Dims()
		for j := 0; j < p; j++ {
			var sc, scale float64
			for i := 0; i < nr; i++ {
				v := m.X.At(i, j) * r.Weights[i] * r.WorkingResid[i]
				sc += v
				scale += math.Abs(v)
			}
			// The iterations stop when their steps stop shrinking, at
			// about 1e-12 of the size of the terms (measured 5e-13).
			if math.Abs(sc) > 1e-11*scale {
				t.Errorf("%s: score of %s = %.3g (terms of size %.3g)", c.name, r.Names[j], sc, scale)
			}
		}
		// The leverages sum to the rank (trace of the hat matrix).
		var h float64
		for _, v := range r.Leverage {
			h += v
		}
		testkit.CheckClose(t, c.name+" trace of the hat matrix", h, float64(r.Rank), 1e-12)
	}
}

// TestOffsetIsRate: a Poisson model of counts y with offset log t is the
// model of the rates y/t with prior weights t (the score equations
// Σ x (y - t λ) and Σ x t (y/t - λ) are the same, and so are the
// deviances); the rates are not whole numbers, so that is a quasi fit,
// whose unscaled covariance must equal the Poisson one.
func TestOffsetIsRate(t *testing.T) {
	rng := rand.New(rand.NewPCG(3, 4))
	m := blocked(t, 4, 5)
	y, size := simCounts(rng, m, 4)
	counts, err := FitModel(m, y, Poisson, &Options{Offset: logs(size)})
	if err != nil {
		t.Fatal(err)
	}
	rate := make([]float64, len(y))
	for i := range y {
		rate[i] = y[i] / size[i]
	}
	rates, err := FitModel(m, rate, Poisson, &Options{Weights: size, Dispersion: PearsonDispersion})
	if err != nil {
		t.Fatal(err)
	}
	for j := range counts.Estimate {
		testkit.CheckClose(t, "coefficient "+counts.Names[j], rates.Estimate[j], counts.Estimate[j], 1e-12)
		testkit.CheckClose(t, "unscaled SE "+counts.Names[j], rates.StdErr[j]/math.Sqrt(rates.Phi), counts.StdErr[j], 1e-12)
	}
	testkit.CheckClose(t, "deviance", rates.Deviance, counts.Deviance, 1e-12)
	testkit.CheckClose(t, "null deviance", rates.NullDeviance, counts.NullDeviance, 1e-12)
	testkit.CheckClose(t, "Pearson X2", rates.Pearson, counts.Pearson, 1e-12)
	for i := range y {
		testkit.CheckClose(t, "rate times size", rates.Fitted[i]*size[i], counts.Fitted[i], 1e-12)
	}
}

// TestBernoulli: a binomial fit of y successes out of n equals the fit of
// the n Bernoulli trials one by one (y ones, n - y zeros): the same
// estimates and covariance, and log-likelihoods that differ by
// Σ log C(n, y), the binomial coefficients the grouped form carries.
func TestBernoulli(t *testing.T) {
	rng := rand.New(rand.NewPCG(5, 6))
	m := blocked(t, 3, 4)
	nr, p := m.X.Dims()
	var succ, trials, bern []float64
	var rows []float64
	var lchoose float64
	for i := 0; i < nr; i++ {
		n := float64(3 + rng.IntN(6))
		y := float64(rng.IntN(int(n) + 1))
		succ = append(succ, y)
		trials = append(trials, n)
		a, _ := math.Lgamma(n + 1)
		b, _ := math.Lgamma(y + 1)
		c, _ := math.Lgamma(n - y + 1)
		lchoose += a - b - c
		for k := 0.0; k < n; k++ {
			v := 0.0
			if k < y {
				v = 1
			}
			bern = append(bern, v)
			rows = append(rows, m.X.RawRowView(i)...)
		}
	}
	x := mat.NewDense(len(bern), p, rows)
	for _, link := range []Link{Logit, Probit, CLogLog} {
		g, err := FitModel(m, succ, Binomial, &Options{Trials: trials, Link: link})
		if err != nil {
			t.Fatal(err)
		}
		b, err := Fit(x, bern, Binomial, &Options{Link: link})
		if err != nil {
			t.Fatal(err)
		}
		for j := 0; j < p; j++ {
			testkit.CheckClose(t, link.String()+" estimate", b.Estimate[j], g.Estimate[j], 1e-10)
			testkit.CheckClose(t, link.String()+" SE", b.StdErr[j], g.StdErr[j], 1e-10)
		}
		testkit.CheckClose(t, link.String()+" log-likelihood", b.LogLik+lchoose, g.LogLik, 1e-10)
		if b.DFResid != len(bern)-p || g.DFResid != nr-p {
			t.Errorf("df %d and %d", b.DFResid, g.DFResid)
		}
	}
}

// TestAliasedNamed: a duplicated column is aliased, named, NaN in the
// table, and leaves the rest of the fit as without it.
func TestAliasedNamed(t *testing.T) {
	rng := rand.New(rand.NewPCG(7, 8))
	m := blocked(t, 3, 4)
	y, _ := simCounts(rng, m, 3)
	nr, p := m.X.Dims()
	x := mat.NewDense(nr, p+1, nil)
	for i := 0; i < nr; i++ {
		for j := 0; j < p; j++ {
			x.Set(i, j, m.X.At(i, j))
		}
		x.Set(i, p, m.X.At(i, 1)+m.X.At(i, 3)) // block[B2] + trt[T2]
	}
	full, err := FitModel(m, y, Poisson, nil)
	if err != nil {
		t.Fatal(err)
	}
	al, err := Fit(x, y, Poisson, nil)
	if err != nil {
		t.Fatal(err)
	}
	if got := al.AliasedNames(); len(got) != 1 || got[0] != "x7" || al.Rank != p {
		t.Fatalf("aliased %v rank %d, want [x7] and %d", got, al.Rank, p)
	}
	if !math.IsNaN(al.Estimate[p]) || !math.IsNaN(al.StdErr[p]) {
		t.Errorf("aliased coefficient: %g (SE %g), want NaN", al.Estimate[p], al.StdErr[p])
	}
	for j := 0; j < p; j++ {
		testkit.CheckClose(t, "estimate", al.Estimate[j], full.Estimate[j], 1e-12)
		testkit.CheckClose(t, "SE", al.StdErr[j], full.StdErr[j], 1e-12)
	}
	testkit.CheckClose(t, "deviance", al.Deviance, full.Deviance, 1e-12)
	// A Wald test touching the aliased column is refused.
	l := mat.NewDense(1, p+1, nil)
	l.Set(0, p, 1)
	if _, err := al.Wald(l); err == nil {
		t.Error("Wald test on an aliased coefficient: no error")
	}
}
