package lmm

import (
	"fmt"
	"math"
	"math/rand/v2"
	"testing"

	"gonum.org/v1/gonum/mat"

	"furrow/internal/testkit"
)

// fdGrad is a central-difference gradient with two Richardson
// extrapolations (error of order h^6), the independent check of the
// analytic gradient.
func fdGrad(f func([]float64) float64, x []float64) []float64 {
	g := make([]float64, len(x))
	xx := make([]float64, len(x))
	for i := range x {
		h := 1e-2 * math.Max(math.Abs(x[i]), 0.1)
		var d [3]float64
		for lev := range d {
			copy(xx, x)
			xx[i] = x[i] + h
			fp := f(xx)
			xx[i] = x[i] - h
			fm := f(xx)
			d[lev] = (fp - fm) / (2 * h)
			h /= 2
		}
		r1 := [2]float64{(4*d[1] - d[0]) / 3, (4*d[2] - d[1]) / 3}
		g[i] = (16*r1[1] - r1[0]) / 15
	}
	return g
}

type gradCase struct {
	name string
	y    []float64
	X    *mat.Dense
	g    []Grouping
	w    []float64
}

func gradCases(t *testing.T) []gradCase {
	var cs []gradCase
	for _, c := range loadRef(t) {
		y, X, g := c.model()
		cs = append(cs, gradCase{c.Label, y, X, g, c.Weights})
	}
	y, X, g, _ := crossedTrial(6, 9, 2)
	cs = append(cs, gradCase{"crossed 6x9x2", y, X, g, nil})
	// Unbalanced crossed trial with a covariate and weights.
	keep := []int{}
	for i := range y {
		if i%5 != 3 && i%7 != 0 {
			keep = append(keep, i)
		}
	}
	n := len(keep)
	ys := make([]float64, n)
	ws := make([]float64, n)
	Xs := mat.NewDense(n, 2, nil)
	gs := make([]Grouping, len(g))
	for k := range g {
		gs[k] = Grouping{Name: g[k].Name, Index: make([]int, n), Levels: g[k].Levels}
	}
	for r, i := range keep {
		ys[r] = y[i]
		ws[r] = 0.5 + float64(i%4)
		Xs.Set(r, 0, 1)
		Xs.Set(r, 1, float64(i%3))
		for k := range g {
			gs[k].Index[r] = g[k].Index[i]
		}
	}
	cs = append(cs, gradCase{"crossed unbalanced weighted", ys, Xs, gs, ws})
	// Boundary: genotype means of the response made exactly equal, so the
	// genotype variance is estimated as zero.
	yb, Xb, gb, _ := crossedTrial(8, 12, 2)
	gm := make([]float64, 12)
	cnt := make([]float64, 12)
	for i, v := range yb {
		gm[gb[1].Index[i]] += v
		cnt[gb[1].Index[i]]++
	}
	yb2 := make([]float64, len(yb))
	for i, v := range yb {
		a := gb[1].Index[i]
		yb2[i] = v - gm[a]/cnt[a]
	}
	cs = append(cs, gradCase{"crossed boundary genotype", yb2, Xb, gb, nil})
	yr, Xr, gr, _ := repeatedMeasures(400)
	cs = append(cs, gradCase{"repeated measures (buckets)", yr, Xr, gr, nil})
	return cs
}

// TestAnalyticGradient: the analytic gradient of the profiled REML and ML
// criteria, and of the unprofiled criterion at fixed sigma, equals an
// extrapolated central difference of the criterion itself (sixth-order
// scheme; independent of the selected inversion), at several theta.
func TestAnalyticGradient(t *testing.T) {
	for _, c := range gradCases(t) {
		sys, err := newSystem(c.y, c.X, c.g, c.w)
		if err != nil {
			t.Fatal(err)
		}
		k := sys.nf
		wk := sys.newWork()
		sw := sys.newSel()
		for _, base := range []float64{0.3, 1, 2.5} {
			th := make([]float64, k)
			for i := range th {
				th[i] = base * (1 + 0.3*float64(i))
			}
			for _, crit := range []Criterion{REML, ML} {
				for _, s2 := range []float64{0, 1.7} {
					f := func(x []float64) float64 {
						e, err := sys.eval(x, nil)
						if err != nil {
							t.Fatal(err)
						}
						if s2 > 0 {
							return sys.deviance(e, math.Sqrt(s2), crit)
						}
						return sys.profiled(e, crit)
					}
					want := fdGrad(f, th)
					pr, err := sys.gradParts(th, wk, sw, false)
					if err != nil {
						t.Fatal(err)
					}
					got := make([]float64, k)
					sys.profGrad(th, pr, crit, s2, got)
					for i := range got {
						testkit.CheckWithin(t, fmt.Sprintf("%s %v s2=%v theta=%v d/dtheta_%d", c.name, crit, s2, th, i), got[i], want[i], 1e-7, 1e-7)
					}
				}
			}
		}
	}
}

// TestCovDerivative: the analytic derivative of (X'V^{-1}X)^{-1} in theta,
// (2/theta_k) sum_a Sigma_aX Sigma_aX', equals an extrapolated central
// difference of the covariance.
func TestCovDerivative(t *testing.T) {
	for _, c := range gradCases(t) {
		sys, err := newSystem(c.y, c.X, c.g, c.w)
		if err != nil {
			t.Fatal(err)
		}
		k, p := sys.nf, sys.p
		th := make([]float64, k)
		for i := range th {
			th[i] = 0.8 + 0.4*float64(i)
		}
		pr, err := sys.gradParts(th, sys.newWork(), sys.newSel(), true)
		if err != nil {
			t.Fatal(err)
		}
		for i := 0; i < k; i++ {
			for a := 0; a < p; a++ {
				for b := 0; b <= a; b++ {
					f := func(x []float64) float64 {
						e, err := sys.eval(x, nil)
						if err != nil {
							t.Fatal(err)
						}
						return covBeta(e, p, 1).At(a, b)
					}
					want := fdGrad(f, th)[i]
					got := 2 / th[i] * pr.sux[i].At(a, b)
					testkit.CheckWithin(t, fmt.Sprintf("%s dCov[%d,%d]/dtheta_%d", c.name, a, b, i), got, want, 1e-6, 1e-9*math.Abs(covBeta(pr.e, p, 1).At(a, a)))
				}
			}
		}
	}
}

// TestAnalyticOptimum: the quasi-Newton search on the analytic gradient
// reaches the optimum of the difference-based Newton search (REML and ML),
// with a criterion no worse, on every gradient case.
func TestAnalyticOptimum(t *testing.T) {
	for _, c := range gradCases(t) {
		for _, crit := range []Criterion{REML, ML} {
			sys, err := newSystem(c.y, c.X, c.g, c.w)
			if err != nil {
				t.Fatal(err)
			}
			obj := func(th []float64) float64 {
				e, err := sys.eval(th, nil)
				if err != nil {
					return math.Inf(1)
				}
				return sys.profiled(e, crit)
			}
			ta, st, _, _, err := sys.minimizeAnalytic(crit, nil, 500)
			if err != nil || st.String() != "Success" {
				t.Fatalf("%s %v: analytic search: status %v, %v", c.name, crit, st, err)
			}
			tn, _, _, _, err := minimize(obj, sys.startTheta(), 500)
			if err != nil {
				t.Fatal(err)
			}
			fa, fn := obj(ta), obj(tn)
			if fa > fn+1e-9*math.Abs(fn) {
				t.Errorf("%s %v: analytic optimum %.12g worse than %.12g", c.name, crit, fa, fn)
			}
			for i := range ta {
				testkit.CheckWithin(t, fmt.Sprintf("%s %v theta_%d", c.name, crit, i), ta[i], tn[i], 1e-6, 1e-8)
			}
		}
	}
}

// TestAnalyticSatterthwaite: Satterthwaite df from the analytic
// derivatives equal those from extrapolated differences of the criterion
// and of Cov(beta) (the earlier, independent route), per coefficient and
// for a multi-df test of all non-intercept columns.
func TestAnalyticSatterthwaite(t *testing.T) {
	for _, c := range gradCases(t) {
		for _, crit := range []Criterion{REML, ML} {
			fit, err := Fit(c.y, c.X, c.g, &Options{Criterion: crit, Weights: c.w})
			if err != nil {
				t.Fatal(err)
			}
			num, err := fit.sys.satterthwaite(fit.theta, fit.Sigma, crit)
			if err != nil {
				t.Fatal(err)
			}
			for j := 0; j < fit.P; j++ {
				l := make([]float64, fit.P)
				l[j] = 1
				testkit.CheckWithin(t, fmt.Sprintf("%s %v df of coefficient %d", c.name, crit, j), fit.sat.df(l, fit.covS), num.df(l, fit.covS), 1e-6, 0)
			}
			if fit.P < 2 {
				continue
			}
			L := mat.NewDense(fit.P-1, fit.P, nil)
			for i := 0; i < fit.P-1; i++ {
				L.Set(i, i+1, 1)
			}
			an, err := fit.FTest(L, Satterthwaite)
			if err != nil {
				t.Fatal(err)
			}
			keep := fit.sat
			fit.sat = num
			nu, err := fit.FTest(L, Satterthwaite)
			fit.sat = keep
			if err != nil {
				t.Fatal(err)
			}
			testkit.CheckWithin(t, fmt.Sprintf("%s %v multi-df F df", c.name, crit), an.DenDF, nu.DenDF, 1e-6, 0)
		}
	}
}

// TestAnalyticOptimumRandomDesigns: on seeded random designs (two or three
// crossed or nested factors, missing cells, some true variances zero) the
// analytic search converges and agrees with the difference-based search.
func TestAnalyticOptimumRandomDesigns(t *testing.T) {
	rng := rand.New(rand.NewPCG(11, 12))
	checked, maxEv := 0, 0
	defer func() { t.Logf("%d designs checked, at most %d evaluations", checked, maxEv) }()
	for rep := 0; rep < 30; rep++ {
		na, nb := 3+rng.IntN(6), 3+rng.IntN(8)
		nested := rng.IntN(3) == 0
		sds := []float64{rng.Float64() * 2, rng.Float64() * 2, rng.Float64()}
		for i := range sds {
			if rng.IntN(4) == 0 {
				sds[i] = 0
			}
		}
		ua := make([]float64, na)
		ub := make([]float64, na*nb)
		uab := make([]float64, na*nb)
		for i := range ua {
			ua[i] = sds[0] * rng.NormFloat64()
		}
		for i := range ub {
			ub[i] = sds[1] * rng.NormFloat64()
			uab[i] = sds[2] * rng.NormFloat64()
		}
		var y []float64
		var ia, ib, iab []int
		var xs []float64
		for a := 0; a < na; a++ {
			for b := 0; b < nb; b++ {
				if rng.IntN(5) == 0 {
					continue // missing cell
				}
				bl := b
				if nested {
					bl = a*nb + b
				}
				for r := 0; r < 1+rng.IntN(3); r++ {
					x := rng.NormFloat64()
					xs = append(xs, x)
					ia, ib, iab = append(ia, a), append(ib, bl), append(iab, a*nb+b)
					y = append(y, 3+0.5*x+ua[a]+ub[bl%len(ub)]+uab[a*nb+b]+rng.NormFloat64())
				}
			}
		}
		n := len(y)
		X := mat.NewDense(n, 2, nil)
		for i := 0; i < n; i++ {
			X.Set(i, 0, 1)
			X.Set(i, 1, xs[i])
		}
		nbl := nb
		if nested {
			nbl = na * nb
		}
		g := []Grouping{{Name: "a", Index: ia, Levels: na}, {Name: "b", Index: ib, Levels: nbl}}
		if !nested && rng.IntN(2) == 0 {
			g = append(g, Grouping{Name: "a:b", Index: iab, Levels: na * nb})
		}
		sys, err := newSystem(y, X, g, nil)
		if err != nil {
			t.Fatal(err)
		}
		if err := sys.checkGroupings(g); err != nil {
			continue
		}
		obj := func(th []float64) float64 {
			e, err := sys.eval(th, nil)
			if err != nil {
				return math.Inf(1)
			}
			return sys.profiled(e, REML)
		}
		ta, st, _, ev, err := sys.minimizeAnalytic(REML, nil, 500)
		if err != nil || st.String() != "Success" {
			t.Errorf("design %d: analytic search: status %v after %d evaluations, %v", rep, st, ev, err)
			continue
		}
		checked++
		maxEv = max(maxEv, ev)
		tn, _, _, _, err := minimize(obj, sys.startTheta(), 500)
		if err != nil {
			t.Fatal(err)
		}
		fa, fn := obj(ta), obj(tn)
		if fa > fn+1e-9*math.Abs(fn) {
			t.Errorf("design %d: analytic optimum %.12g worse than %.12g", rep, fa, fn)
		}
		for i := range ta {
			testkit.CheckWithin(t, fmt.Sprintf("design %d theta_%d", rep, i), ta[i], tn[i], 1e-5, 1e-6)
		}
	}
}

// TestGradientSmallTheta: near a boundary the gradient in theta_k is
// theta_k times the second derivative at zero, so g_k/theta_k at 1e-9 must
// equal its value at 1e-5 (they differ by O(1e-10) relative). This catches
// cancellation in the trace terms, which the difference check above cannot
// resolve at such small theta.
func TestGradientSmallTheta(t *testing.T) {
	for _, c := range gradCases(t) {
		sys, err := newSystem(c.y, c.X, c.g, c.w)
		if err != nil {
			t.Fatal(err)
		}
		for _, crit := range []Criterion{REML, ML} {
			ge := sys.newGradEvaluator(crit)
			for k := 0; k < sys.nf; k++ {
				var ratio [2]float64
				for i, v := range []float64{1e-9, 1e-5} {
					x := make([]float64, sys.nf)
					for j := range x {
						x[j] = 0.7 + 0.1*float64(j)
					}
					x[k] = v
					g := make([]float64, sys.nf)
					if _, _, err := ge.at(x, g, 0, false); err != nil {
						t.Fatal(err)
					}
					ratio[i] = g[k] / v
				}
				testkit.CheckWithin(t, fmt.Sprintf("%s %v g_%d/theta_%d near zero", c.name, crit, k, k), ratio[0], ratio[1], 1e-6, 1e-9)
			}
		}
	}
}
