package glm

import (
	"math/rand/v2"
	"testing"

	"gonum.org/v1/gonum/mat"

	"furrow/internal/testkit"
	"furrow/stats/design"
)

func compareLRT(t *testing.T, got *Test, want rLRT, stat float64) {
	t.Helper()
	if got.DF != want.DF {
		t.Errorf("LR df %d, want %d", got.DF, want.DF)
	}
	check(t, "lr", "LR statistic", got.Stat, stat, true)
	check(t, "lr_p", "LR p", got.P, want.P, true)
}

// TestRefLRT: likelihood-ratio tests of the treatment effect against R's
// anova (deviance differences; F for quasi fits) and MASS's anova.negbin.
func TestRefLRT(t *testing.T) {
	ref := loadRef(t)
	t.Run("counts", func(t *testing.T) {
		d := ref.Counts.Data
		m := build(t, []design.Factor{factor("trt", "T", d["trt"]), factor("block", "B", d["block"])}, nil, "block", "trt")
		m0 := build(t, []design.Factor{factor("block", "B", d["block"])}, nil, "block")
		off := logs(d["area"])
		fp := mustFit(t, m, d["y"], Poisson, &Options{Offset: off})
		fp0 := mustFit(t, m0, d["y"], Poisson, &Options{Offset: off})
		lr, err := LRTest(fp0, fp)
		if err != nil {
			t.Fatal(err)
		}
		compareLRT(t, lr, ref.Counts.LRTPoisson, ref.Counts.LRTPoisson.Deviance) // anova(fp0, fp, test = "Chisq")
		fq := mustFit(t, m, d["y"], Poisson, &Options{Offset: off, Dispersion: PearsonDispersion})
		fq0 := mustFit(t, m0, d["y"], Poisson, &Options{Offset: off, Dispersion: PearsonDispersion})
		lq, err := LRTest(fq0, fq)
		if err != nil {
			t.Fatal(err)
		}
		if !lq.F || lq.DF2 != fq.DFResid {
			t.Errorf("quasi LR test: F %v on df2 %d, want an F test on %d", lq.F, lq.DF2, fq.DFResid)
		}
		compareLRT(t, lq, ref.Counts.LRTQuasi, *ref.Counts.LRTQuasi.F) // anova(fq0, fq, test = "F")
	})
	t.Run("germ", func(t *testing.T) {
		d := ref.Germ.Data
		m := build(t, []design.Factor{factor("trt", "S", d["trt"]), factor("block", "B", d["block"])}, nil, "block", "trt")
		m0 := build(t, []design.Factor{factor("block", "B", d["block"])}, nil, "block")
		f := mustFit(t, m, d["y"], Binomial, &Options{Trials: d["n"]})
		f0 := mustFit(t, m0, d["y"], Binomial, &Options{Trials: d["n"]})
		lr, err := LRTest(f0, f)
		if err != nil {
			t.Fatal(err)
		}
		compareLRT(t, lr, ref.Germ.LRTLogit, ref.Germ.LRTLogit.Deviance) // anova(gl0, gl, test = "Chisq")
		fq := mustFit(t, m, d["y"], Binomial, &Options{Trials: d["n"], Dispersion: PearsonDispersion})
		fq0 := mustFit(t, m0, d["y"], Binomial, &Options{Trials: d["n"], Dispersion: PearsonDispersion})
		lq, err := LRTest(fq0, fq)
		if err != nil {
			t.Fatal(err)
		}
		compareLRT(t, lq, ref.Germ.LRTQuasi, *ref.Germ.LRTQuasi.F) // anova(gq0, gq, test = "F")
	})
	t.Run("traps", func(t *testing.T) {
		d := ref.Traps.Data
		m := build(t, []design.Factor{factor("trt", "T", d["trt"]), factor("block", "B", d["block"])}, nil, "block", "trt")
		m0 := build(t, []design.Factor{factor("block", "B", d["block"])}, nil, "block")
		off := logs(d["nights"])
		nb := mustFit(t, m, d["y"], NegBinomial, &Options{Offset: off})
		nb0 := mustFit(t, m0, d["y"], NegBinomial, &Options{Offset: off})
		lr, err := LRTest(nb0, nb)
		if err != nil {
			t.Fatal(err)
		}
		compareLRT(t, lr, ref.Traps.LRTNegbin, ref.Traps.LRTNegbin.Stat) // 2 (logLik nb - logLik nb0), refined fits
		// MASS's own anova.negbin on its unrefined glm.nb fits.
		check(t, "lr", "LR statistic (anova.negbin)", lr.Stat, ref.Traps.LRTNegbinRaw.Stat, true)
	})
	t.Run("insects", func(t *testing.T) {
		d := ref.Insects.Data
		m := build(t, []design.Factor{factor("spray", "S", d["spray"])}, nil, "spray")
		fp := mustFit(t, m, d["count"], Poisson, nil)
		f0 := mustFit(t, oneway(t, 1, len(d["count"])), d["count"], Poisson, nil)
		lr, err := LRTest(f0, fp)
		if err != nil {
			t.Fatal(err)
		}
		compareLRT(t, lr, ref.Insects.LRTPoisson, ref.Insects.LRTPoisson.Deviance) // anova(glm(count ~ 1), fit)
	})
}

// TestRefWald: Wald tests of two treatment contrasts against
// car::linearHypothesis (test = "Chisq" for Poisson, "F" for quasi-Poisson).
func TestRefWald(t *testing.T) {
	ref := loadRef(t).Counts
	d := ref.Data
	m := build(t, []design.Factor{factor("trt", "T", d["trt"]), factor("block", "B", d["block"])}, nil, "block", "trt")
	off := logs(d["area"])
	l := mat.NewDense(len(ref.L), len(ref.L[0]), nil)
	for i, r := range ref.L {
		l.SetRow(i, r)
	}
	for _, c := range []struct {
		fit  *Result
		want rWald
	}{
		{mustFit(t, m, d["y"], Poisson, &Options{Offset: off}), ref.WaldPoisson},
		{mustFit(t, m, d["y"], Poisson, &Options{Offset: off, Dispersion: PearsonDispersion}), ref.WaldQuasi},
	} {
		w, err := c.fit.Wald(l)
		if err != nil {
			t.Fatal(err)
		}
		if w.DF != c.want.DF || w.F != c.fit.Quasi || c.fit.Quasi && w.DF2 != c.fit.DFResid {
			t.Errorf("wald df %d, %d, F %v; want %d, %d, %v", w.DF, w.DF2, w.F, c.want.DF, c.fit.DFResid, c.fit.Quasi)
		}
		check(t, "wald", "Wald statistic", w.Stat, c.want.Stat, true)
		check(t, "lr_p", "Wald p", w.P, c.want.P, true)
	}
}

// TestWaldOneCoefficient: the Wald statistic of b_j = 0 is z_j² (t_j² as
// an F for a quasi fit), with the same p-value as the table (property).
func TestWaldOneCoefficient(t *testing.T) {
	rng := rand.New(rand.NewPCG(9, 10))
	m := blocked(t, 4, 4)
	y, _ := simCounts(rng, m, 4)
	_, p := m.X.Dims()
	for _, d := range []Dispersion{FixedDispersion, PearsonDispersion} {
		r, err := FitModel(m, y, Poisson, &Options{Dispersion: d})
		if err != nil {
			t.Fatal(err)
		}
		for j := 0; j < p; j++ {
			l := mat.NewDense(1, p, nil)
			l.Set(0, j, 1)
			w, err := r.Wald(l)
			if err != nil {
				t.Fatal(err)
			}
			testkit.CheckClose(t, "Wald = z²", w.Stat, r.Stat[j]*r.Stat[j], 1e-12)
			testkit.CheckRelClose(t, "Wald p = table p", w.P, r.PValue[j], 1e-9)
		}
	}
	// Dependent rows are refused.
	l := mat.NewDense(2, p, nil)
	l.Set(0, 1, 1)
	l.Set(1, 1, 2)
	r, _ := FitModel(m, y, Poisson, nil)
	if _, err := r.Wald(l); err == nil {
		t.Error("dependent rows: no error")
	}
}

// TestLRTestMisuse: models that cannot be compared are refused.
func TestLRTestMisuse(t *testing.T) {
	rng := rand.New(rand.NewPCG(11, 12))
	m := blocked(t, 4, 4)
	m0 := oneway(t, 1, 16)
	y, _ := simCounts(rng, m, 4)
	big, _ := FitModel(m, y, Poisson, nil)
	small, _ := FitModel(m0, y, Poisson, nil)
	q, _ := FitModel(m, y, Poisson, &Options{Dispersion: PearsonDispersion})
	y2 := append([]float64(nil), y...)
	y2[0]++
	other, _ := FitModel(m0, y2, Poisson, nil)
	if _, err := LRTest(big, small); err == nil {
		t.Error("bigger model first: no error")
	}
	if _, err := LRTest(small, q); err == nil {
		t.Error("quasi against Poisson: no error")
	}
	if _, err := LRTest(other, big); err == nil {
		t.Error("different data: no error")
	}
	lr, err := LRTest(small, big)
	if err != nil || lr.DF != big.Rank-small.Rank {
		t.Errorf("LR test: %v, %+v", err, lr)
	}
}
