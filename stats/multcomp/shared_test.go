package multcomp

import (
	"encoding/csv"
	"encoding/json"
	"math"
	"os"
	"strconv"
	"testing"

	"gonum.org/v1/gonum/mat"

	"furrow/internal/testkit"
)

// Oracle case 5 (R 4.2.2, multcomp 1.4.22; shared/reference/oracle):
// PlantGrowth, three groups of 10, residual df 27 (17 digits). R's
// ptukey is accurate to about 1e-7 in general (TestPTukeyAgainstR), but
// here TukeyHSD's p agree to 1.4e-13 absolute and its limits (qtukey,
// documented eps 1e-4) to 7.6e-12, measured on linux/amd64: tolerances
// 5e-12 and 2e-10. Dunnett p and critical value against the deterministic
// R quadrature agree to 2.0e-14 relative: 5e-13. multcomp's confint
// critical value (qmvt, randomised) is 2.3335384, off by 1.3e-4 (5e-5
// relative) from the quadrature's 2.3334115; it is checked only to 2e-4,
// the precision that reference carries.
func TestPlantGrowthOracle(t *testing.T) {
	b, err := os.ReadFile(testkit.SharedPath(t, "oracle/ref/case05_plantgrowth.json"))
	if err != nil {
		t.Fatal(err)
	}
	var r struct {
		GroupMeans map[string]float64 `json:"group_means"`
		Anova      []struct {
			MeanSq float64 `json:"Mean Sq"`
			Df     float64
		}
		Tukey []struct {
			Diff, Lwr, Upr float64
			PAdj           float64 `json:"p_adj"`
		} `json:"tukey_hsd"`
		DunnettQuad []struct {
			T   float64 `json:"t"`
			P   float64 `json:"p_single_step"`
			Rho float64 `json:"rho"`
		} `json:"dunnett_quadrature"`
		CritConfint float64 `json:"dunnett_critical_value_95"`
		CritQuad    float64 `json:"dunnett_critical_value_95_quadrature"`
	}
	if err := json.Unmarshal(b, &r); err != nil {
		t.Fatal(err)
	}
	mse, df := r.Anova[1].MeanSq, r.Anova[1].Df
	se := math.Sqrt(mse * 2 / 10)
	m := []float64{r.GroupMeans["ctrl"], r.GroupMeans["trt1"], r.GroupMeans["trt2"]}
	est := []float64{m[1] - m[0], m[2] - m[0], m[2] - m[1]}
	f, err := Tukey(est, []float64{se, se, se}, 3, df, 0.95)
	if err != nil {
		t.Fatal(err)
	}
	for i, c := range f.Comparisons {
		w := r.Tukey[i]
		if !testkit.Within(c.PAdjusted, w.PAdj, 0, 5e-12) {
			t.Errorf("tukey %d: p %.15g, TukeyHSD %.15g", i, c.PAdjusted, w.PAdj)
		}
		if !testkit.Within(c.Lower, w.Lwr, 0, 2e-10) || !testkit.Within(c.Upper, w.Upr, 0, 2e-10) {
			t.Errorf("tukey %d: (%.15g, %.15g), TukeyHSD (%.15g, %.15g)", i, c.Lower, c.Upper, w.Lwr, w.Upr)
		}
	}
	rho := r.DunnettQuad[0].Rho
	corr := mat.NewSymDense(2, []float64{1, rho, rho, 1})
	for _, q := range r.DunnettQuad {
		p, err := MaxTUpper(math.Abs(q.T), corr, df, TwoSided)
		if err != nil {
			t.Fatal(err)
		}
		if !testkit.Within(p, q.P, 5e-13, 0) {
			t.Errorf("dunnett p for t=%v: %.15g, quadrature %.15g", q.T, p, q.P)
		}
	}
	c, err := DunnettCritical(0.05, corr, df, TwoSided)
	if err != nil {
		t.Fatal(err)
	}
	if !testkit.Within(c, r.CritQuad, 5e-13, 0) {
		t.Errorf("dunnett critical %.15g, quadrature %.15g", c, r.CritQuad)
	}
	if !testkit.Within(c, r.CritConfint, 0, 2e-4) {
		t.Errorf("dunnett critical %.15g, multcomp confint %.15g", c, r.CritConfint)
	}
}

// NIST/SEMATECH e-Handbook 7.4.7.1 (prc471): four groups of 5, Tukey 95%
// intervals printed to 2 decimals, checked to half a unit of the last
// place (0.005, plus 1e-9 for rounding at the edge); worst gap 2.6e-3.
func TestNISTTukeyPrc471(t *testing.T) {
	f, err := os.Open(testkit.SharedPath(t, "nist-ehandbook/tukey_prc471_4groups.csv"))
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	recs, err := csv.NewReader(f).ReadAll()
	if err != nil {
		t.Fatal(err)
	}
	sum := map[string]float64{}
	ss := map[string]float64{}
	n := map[string]float64{}
	for _, rec := range recs[1:] {
		y, err := strconv.ParseFloat(rec[1], 64)
		if err != nil {
			t.Fatal(err)
		}
		sum[rec[0]] += y
		ss[rec[0]] += y * y
		n[rec[0]]++
	}
	mean := map[string]float64{}
	var sse, dfe float64
	for g := range sum {
		mean[g] = sum[g] / n[g]
		sse += ss[g] - n[g]*mean[g]*mean[g]
		dfe += n[g] - 1
	}
	mse := sse / dfe
	want := map[[2]string][2]float64{
		{"2", "1"}: {0.29, 4.47}, {"3", "1"}: {1.13, 5.31}, {"1", "4"}: {-2.25, 1.93},
		{"2", "3"}: {-2.93, 1.25}, {"2", "4"}: {0.13, 4.31}, {"3", "4"}: {0.97, 5.15},
	}
	for pair, ci := range want {
		a, b := pair[0], pair[1]
		se := math.Sqrt(mse * (1/n[a] + 1/n[b]))
		fam, err := Tukey([]float64{mean[a] - mean[b]}, []float64{se}, 4, dfe, 0.95)
		if err != nil {
			t.Fatal(err)
		}
		c := fam.Comparisons[0]
		testkit.CheckWithin(t, a+"-"+b+" lower", c.Lower, ci[0], 0, 0.005+1e-9)
		testkit.CheckWithin(t, a+"-"+b+" upper", c.Upper, ci[1], 0, 0.005+1e-9)
	}
}

// Product-form detection: unequal group sizes give λ_i = sqrt(n_i/(n_i+n_0)).
func TestProductFactors(t *testing.T) {
	n0, n := 8.0, []float64{5, 9, 12, 20}
	lam := make([]float64, len(n))
	for i := range n {
		lam[i] = math.Sqrt(n[i] / (n[i] + n0))
	}
	c := mat.NewSymDense(len(n), nil)
	for i := range n {
		for j := i; j < len(n); j++ {
			v := lam[i] * lam[j]
			if i == j {
				v = 1
			}
			c.SetSym(i, j, v)
		}
	}
	got, ok := ProductFactors(c)
	if !ok {
		t.Fatal("product form not recognised")
	}
	for i := range lam {
		// Measured 1.4e-16 relative on linux/amd64.
		if !testkit.Within(got[i], lam[i], 5e-15, 0) {
			t.Errorf("λ_%d = %.15g, want %.15g", i, got[i], lam[i])
		}
	}
	c.SetSym(0, 1, c.At(0, 1)+0.05)
	if _, ok := ProductFactors(c); ok {
		t.Error("perturbed correlation accepted as product form")
	}
	// Other structures go to the quasi-Monte Carlo fallback.
	p, err := MaxTUpper(2, c, 10, TwoSided)
	q, err2 := MaxTUpperQMC(2, c, 10, TwoSided)
	if err != nil || err2 != nil || p != q.P {
		t.Errorf("non-product correlation: MaxTUpper %v (%v), MaxTUpperQMC %v (%v)", p, err, q.P, err2)
	}
}

// BenchmarkDunnett10 times Dunnett for 10 comparisons with a common
// control (unequal group sizes): 10 adjusted p-values and the critical value.
func BenchmarkDunnett10(b *testing.B) {
	n0 := 6.0
	m := 10
	lam := make([]float64, m)
	for i := range lam {
		lam[i] = math.Sqrt(float64(4+i) / (float64(4+i) + n0))
	}
	c := mat.NewSymDense(m, nil)
	est := make([]float64, m)
	se := make([]float64, m)
	for i := 0; i < m; i++ {
		est[i], se[i] = 0.3*float64(i)-1, 1
		for j := i; j < m; j++ {
			v := lam[i] * lam[j]
			if i == j {
				v = 1
			}
			c.SetSym(i, j, v)
		}
	}
	for i := 0; i < b.N; i++ {
		if _, err := Dunnett(est, se, c, 40, TwoSided, 0.95); err != nil {
			b.Fatal(err)
		}
	}
}
