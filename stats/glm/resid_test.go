package glm

import (
	"fmt"
	"math"
	"math/rand/v2"
	"testing"

	"furrow/stats/design"
)

func compareZero(t *testing.T, r *Result, want rZero) {
	t.Helper()
	z, err := r.ZeroInflation()
	if err != nil {
		t.Fatal(err)
	}
	check(t, "zero", "observed zeros", z.Observed, want.Observed, true)
	check(t, "zero", "expected zeros", z.Expected, want.Expected, true)
	check(t, "zero", "zero score", z.Score, want.Score, true)
	check(t, "zero", "zero p", z.P, want.P, true)
	check(t, "zero", "zero z", z.Z, want.Z, true)
	check(t, "zero", "zero one-sided p", z.POneSided, want.POneSided, true)
}

func compareDisp(t *testing.T, r *Result, want rDisp) {
	t.Helper()
	d := r.DispersionTest()
	if d.DF != want.DF {
		t.Errorf("dispersion df %d, want %d", d.DF, want.DF)
	}
	check(t, "disp", "Pearson", d.Pearson, want.Pearson, true)
	check(t, "disp", "ratio", d.Ratio, want.Ratio, true)
	check(t, "disp", "over-dispersion p", d.P, want.P, true)
}

func compareBounds(t *testing.T, r *Result, want rBounds) {
	t.Helper()
	for i := range want.A {
		y := r.prob.y[i]
		a, sa := r.cdf(i, y-1)
		b, sb := r.cdf(i, y)
		at := fmt.Sprintf("[%d]", i)
		check(t, "bounds", "F(y-1)"+at, a, want.A[i], true)
		check(t, "bounds", "F(y)"+at, b, want.B[i], true)
		check(t, "bounds", "P(Y>=y)"+at, sa, want.SA[i], true)
		check(t, "bounds", "P(Y>y)"+at, sb, want.SB[i], true)
	}
}

// TestRefDiagnostics: the bounds of the quantile residuals (R's ppois,
// pbinom, pnbinom at y - 1 and y, both tails), the Pearson dispersion
// statistic and its χ² p-value, and the zero-inflation score statistic
// (van den Broek 1995, computed by its formula in ref.R).
func TestRefDiagnostics(t *testing.T) {
	ref := loadRef(t)
	t.Run("counts", func(t *testing.T) {
		d := ref.Counts.Data
		m := build(t, []design.Factor{factor("trt", "T", d["trt"]), factor("block", "B", d["block"])}, nil, "block", "trt")
		f := mustFit(t, m, d["y"], Poisson, &Options{Offset: logs(d["area"])})
		compareBounds(t, f, ref.Counts.Bounds)
		compareDisp(t, f, ref.Counts.Dispersion)
		compareZero(t, f, ref.Counts.Zero)
	})
	t.Run("germ", func(t *testing.T) {
		d := ref.Germ.Data
		m := build(t, []design.Factor{factor("trt", "S", d["trt"]), factor("block", "B", d["block"])}, nil, "block", "trt")
		f := mustFit(t, m, d["y"], Binomial, &Options{Trials: d["n"]})
		compareBounds(t, f, ref.Germ.Bounds)
		compareDisp(t, f, ref.Germ.Dispersion)
		compareZero(t, f, ref.Germ.Zero)
	})
	t.Run("traps", func(t *testing.T) {
		d := ref.Traps.Data
		m := build(t, []design.Factor{factor("trt", "T", d["trt"]), factor("block", "B", d["block"])}, nil, "block", "trt")
		off := logs(d["nights"])
		nb := mustFit(t, m, d["y"], NegBinomial, &Options{Offset: off})
		fp := mustFit(t, m, d["y"], Poisson, &Options{Offset: off})
		compareBounds(t, nb, ref.Traps.Bounds)
		compareDisp(t, fp, ref.Traps.DispersionPoisson)
		compareZero(t, fp, ref.Traps.ZeroPoisson)
		compareZero(t, nb, ref.Traps.ZeroNegbin)
	})
	t.Run("zip", func(t *testing.T) {
		d := ref.Zip.Data
		m := build(t, []design.Factor{factor("trt", "T", d["trt"])}, nil, "trt")
		f := mustFit(t, m, d["y"], Poisson, nil)
		compareZero(t, f, ref.Zip.Zero) // a fifth of the plots emptied: p about 1e-17
		compareDisp(t, f, ref.Zip.Dispersion)
	})
	t.Run("insects", func(t *testing.T) {
		d := ref.Insects.Data
		m := build(t, []design.Factor{factor("spray", "S", d["spray"])}, nil, "spray")
		f := mustFit(t, m, d["count"], Poisson, nil)
		compareDisp(t, f, ref.Insects.Dispersion)
		compareZero(t, f, ref.Insects.Zero)
	})
}

// TestQuantileResiduals: the same seed gives the same residuals, another
// seed others; each uniform lies between the cdf at y - 1 and at y; and
// for data drawn from the fitted family they look standard normal.
func TestQuantileResiduals(t *testing.T) {
	rng := rand.New(rand.NewPCG(13, 14))
	m := blockedReps(t, 10, 5, 40) // 2000 plots
	y, size := simCounts(rng, m, 10)
	fits := map[string]*Result{}
	var err error
	if fits["poisson"], err = FitModel(m, y, Poisson, &Options{Offset: logs(size)}); err != nil {
		t.Fatal(err)
	}
	n := make([]float64, len(y))
	s := make([]float64, len(y))
	for i := range y {
		n[i] = 10
		s[i] = 0
		for k := 0; k < 10; k++ {
			if rng.Float64() < 0.3+0.04*float64(i%10) {
				s[i]++
			}
		}
	}
	if fits["binomial"], err = FitModel(m, s, Binomial, &Options{Trials: n}); err != nil {
		t.Fatal(err)
	}
	nb := overdispersed(rng, len(y), 10, 4)
	if fits["negbin"], err = FitModel(m, nb, NegBinomial, nil); err != nil {
		t.Fatal(err)
	}
	for name, f := range fits {
		a, _ := f.QuantileResiduals(42)
		b, _ := f.QuantileResiduals(42)
		c, _ := f.QuantileResiduals(43)
		same, differ := true, 0
		var sum, ss float64
		for i := range a {
			same = same && a[i] == b[i]
			if a[i] != c[i] {
				differ++
			}
			sum += a[i]
			ss += a[i] * a[i]
			// Φ(r) lies in [F(y - 1), F(y)].
			lo, _ := f.cdf(i, f.prob.y[i]-1)
			hi, _ := f.cdf(i, f.prob.y[i])
			if u := normalCDF(a[i]); u < lo*(1-1e-9) || u > hi*(1+1e-9) {
				t.Fatalf("%s: Φ(r[%d]) = %g outside [%g, %g]", name, i, u, lo, hi)
			}
		}
		if !same || differ < len(a)*9/10 {
			t.Errorf("%s: same seed same residuals %v; another seed changed %d of %d", name, same, differ, len(a))
		}
		k := float64(len(a))
		mean, v := sum/k, ss/k-sum*sum/(k*k)
		// Standard normal: the mean has SE 1/sqrt(2000) = 0.022, the
		// variance SE sqrt(2/2000) = 0.032; 4 SE bounds (the fit takes
		// about 13 df of it, a shrinkage of under 1%).
		if math.Abs(mean) > 0.09 || math.Abs(v-1) > 0.13 {
			t.Errorf("%s: quantile residuals mean %.3f variance %.3f, want about 0 and 1", name, mean, v)
		}
	}
	q, _ := FitModel(m, y, Poisson, &Options{Offset: logs(size), Dispersion: PearsonDispersion})
	if _, err := q.QuantileResiduals(1); err == nil {
		t.Error("quasi fit: no error")
	}
}

func normalCDF(z float64) float64 { return 0.5 * math.Erfc(-z/math.Sqrt2) }

// TestZeroInflationSize: on Poisson data (4 treatments x 15 plots) the
// score test rejects at 5% in about 5% of the data sets; on data with a
// fifth of the plots emptied it rejects nearly always.
func TestZeroInflationSize(t *testing.T) {
	rng := rand.New(rand.NewPCG(15, 16))
	m := oneway(t, 4, 15)
	reject, power := 0, 0
	const reps = 400
	for r := 0; r < reps; r++ {
		y := make([]float64, 60)
		z := make([]float64, 60)
		for i := range y {
			y[i] = poisson(rng, math.Exp(1.2+0.2*float64(i%4)))
			z[i] = y[i]
			if rng.Float64() < 0.2 {
				z[i] = 0
			}
		}
		for k, v := range [][]float64{y, z} {
			f, err := FitModel(m, v, Poisson, nil)
			if err != nil {
				var se *SeparationError
				if k == 1 && asSep(err, &se) {
					continue
				}
				t.Fatal(err)
			}
			zt, err := f.ZeroInflation()
			if err != nil {
				t.Fatal(err)
			}
			if zt.P < 0.05 {
				if k == 0 {
					reject++
				} else {
					power++
				}
			}
		}
	}
	// Binomial(400, 0.05): mean 20, SD 4.4; the score test is known to run
	// somewhat liberal or conservative in small samples, so the band is
	// wide (2% to 10%).
	if reject < 8 || reject > 40 {
		t.Errorf("size: %d of %d rejections at 5%%", reject, reps)
	}
	if power < reps*8/10 {
		t.Errorf("power: %d of %d rejections with 20%% extra zeros", power, reps)
	}
	t.Logf("size %d/%d, power %d/%d", reject, reps, power, reps)
}
