package multcomp

import (
	"math"
	"sync"
	"testing"

	"gonum.org/v1/gonum/mat"

	"furrow/internal/testkit"
)

// Dunnett on chickwts (control casein) against the deterministic
// quadrature in testdata/ref.R (R 4.2.2 integrate, rel.tol 1e-12/1e-11):
// the reference p is 1 minus an integral, so it is accurate in absolute
// terms only; the agreement measured on linux/amd64 is 2.6e-14 absolute
// for p from 1e-8 to 0.9995 (two-sided), tolerance 5e-13 absolute, and
// 2.4e-15 one-sided, tolerance 1e-13; critical values 3.0e-14 (two-sided) and 6.2e-14
// (one-sided) relative, tolerance 1e-12 and 2e-12. Against multcomp
// 1.4.22 glht (randomised Genz-Bretz, abseps 1e-9 asked for): its own
// error estimate on rerunning is 1.1e-6 ("completion with error >
// abseps"), the precision the reference carries, so 1e-6 absolute
// (measured gap 2.8e-7).
func TestDunnettChickwts(t *testing.T) {
	r := loadRef(t).DunnettChickwts
	m := len(r.Estimate)
	corr := mat.NewSymDense(m, nil)
	for i := 0; i < m; i++ {
		for j := i; j < m; j++ {
			corr.SetSym(i, j, r.Corr[i][j])
		}
	}
	f, err := Dunnett(r.Estimate, r.SE, corr, r.DF, TwoSided, 0.95)
	if err != nil {
		t.Fatal(err)
	}
	if f.Algorithm != AlgQuadrature || f.AbsError != 0 {
		t.Errorf("algorithm %q, error %v", f.Algorithm, f.AbsError)
	}
	if !testkit.Within(f.Critical, r.CriticalQuadrature, 1e-12, 0) {
		t.Errorf("critical %.15g, R quadrature %.15g", f.Critical, r.CriticalQuadrature)
	}
	for i, c := range f.Comparisons {
		if !testkit.Within(c.PAdjusted, r.PQuad[i], 0, 5e-13) {
			t.Errorf("%s: p %.15g, R quadrature %.15g", r.Comparison[i], c.PAdjusted, r.PQuad[i])
		}
		if !testkit.Within(c.PAdjusted, r.PGlht[i], 0, 1e-6) {
			t.Errorf("%s: p %.15g, glht %.15g", r.Comparison[i], c.PAdjusted, r.PGlht[i])
		}
	}
	g, err := Dunnett(r.Estimate, r.SE, corr, r.DF, Greater, 0.95)
	if err != nil {
		t.Fatal(err)
	}
	if !testkit.Within(g.Critical, r.CriticalQuadratureGreat, 2e-12, 0) {
		t.Errorf("one-sided critical %.15g, R quadrature %.15g", g.Critical, r.CriticalQuadratureGreat)
	}
	for i, c := range g.Comparisons {
		if !testkit.Within(c.PAdjusted, r.PQuadGreater[i], 0, 1e-13) {
			t.Errorf("%s: one-sided p %.15g, R quadrature %.15g", r.Comparison[i], c.PAdjusted, r.PQuadGreater[i])
		}
	}
}

// The Chebyshev tables must reproduce the direct integrals they are built
// from: an internal consistency check of the interpolation (the external
// checks are the reference tests), to 5e-12 absolute in the logarithm,
// that is, 5e-12 relative in the tail probability (worst measured on
// linux/amd64: 1.3e-13 range tables, 1.1e-13 upper max-t tables, 1.8e-13
// lower max-t tables).
func TestTablesMatchDirect(t *testing.T) {
	for _, k := range []int{3, 8, 30} {
		rt := rangeTablesFor(k)
		ri := newRangeIntegral(k)
		for w := 0.017; w < 60; w *= 1.13 {
			for f, up := range []bool{true, false} {
				if !up && w > 12 {
					continue
				}
				got, want := rt[f].log(w), ri.logTail(w, up)
				if !testkit.Within(got, want, 0, 5e-12) {
					t.Errorf("k=%d w=%v upper=%v: table %.15g, direct %.15g", k, w, up, got, want)
				}
			}
		}
	}
	for _, lam := range [][]float64{{0.7, 0.7, 0.7}, {0.3, 0.9, 0.6, 0.5}, {0.8, -0.5}} {
		for _, two := range []bool{true, false} {
			mt := newMaxT(lam, 10, two)
			for x := 0.013; x < 40; x *= 1.13 {
				got, want := mt.up.log(x), mt.mn.logUpper(x, two)
				if !testkit.Within(got, want, 0, 5e-12) {
					t.Errorf("λ=%v two=%v x=%v: table %.15g, direct %.15g", lam, two, x, got, want)
				}
				if !two && x < 10 {
					got, want := mt.negT.log(-x), mt.mn.logLowerNeg(-x)
					if !testkit.Within(got, want, 0, 5e-12) {
						t.Errorf("λ=%v x=%v: lower table %.15g, direct %.15g", lam, -x, got, want)
					}
				}
			}
		}
	}
}

// Shared range tables: concurrent callers get the same values as a
// sequential call (run with -race to check the locking).
func TestTukeyConcurrent(t *testing.T) {
	qs := []float64{0.8, 2.5, 4.1, 6.3, 9}
	want := make([]float64, len(qs))
	for i, q := range qs {
		var err error
		if want[i], err = PTukeyUpper(q, 11, 17); err != nil {
			t.Fatal(err)
		}
	}
	var wg sync.WaitGroup
	got := make([][]float64, 4)
	for g := range got {
		wg.Add(1)
		go func(g int) {
			defer wg.Done()
			got[g] = make([]float64, len(qs))
			for i, q := range qs {
				var err error
				if got[g][i], err = PTukeyUpper(q, 11, 17); err != nil {
					t.Error(err)
				}
			}
		}(g)
	}
	wg.Wait()
	for g := range got {
		for i := range qs {
			if got[g][i] != want[i] {
				t.Errorf("goroutine %d q=%v: %v, sequential %v", g, qs[i], got[g][i], want[i])
			}
		}
	}
}

// resetRangeTables empties the process-wide range tables so that a
// benchmark measures a first call.
func resetRangeTables() {
	rangeTables.Lock()
	rangeTables.m = map[int]*[2]*logTable{}
	rangeTables.Unlock()
}

// tukey8 is a Tukey family of all 28 pairs of 8 means, 3 replicates each.
func tukey8(b *testing.B) {
	means := []float64{5.1, 5.6, 4.9, 6.2, 5.8, 5.3, 6.6, 5.0}
	se := math.Sqrt(0.4 * 2 / 3)
	var est, ses []float64
	for i := range means {
		for j := i + 1; j < len(means); j++ {
			est = append(est, means[i]-means[j])
			ses = append(ses, se)
		}
	}
	if _, err := Tukey(est, ses, 8, 16, 0.95); err != nil {
		b.Fatal(err)
	}
}

// BenchmarkTukey8 times a Tukey family for 8 groups (28 pairs, the
// critical value and 28 adjusted p-values) with the range tables for k = 8
// already built, as in every call after the first one of a process.
func BenchmarkTukey8(b *testing.B) {
	tukey8(b)
	b.ResetTimer()
	for i := 0; i < b.N; i++ {
		tukey8(b)
	}
}

// BenchmarkTukey8Cold is BenchmarkTukey8 with the tables rebuilt each time.
func BenchmarkTukey8Cold(b *testing.B) {
	for i := 0; i < b.N; i++ {
		resetRangeTables()
		tukey8(b)
	}
}

// BenchmarkPTukeyUpperCold is one upper tail with empty range tables.
func BenchmarkPTukeyUpperCold(b *testing.B) {
	for i := 0; i < b.N; i++ {
		resetRangeTables()
		if _, err := PTukeyUpper(3.5, 5, 20); err != nil {
			b.Fatal(err)
		}
	}
}

// BenchmarkQTukeyCold is one quantile with empty range tables.
func BenchmarkQTukeyCold(b *testing.B) {
	for i := 0; i < b.N; i++ {
		resetRangeTables()
		if _, err := QTukey(0.95, 5, 20); err != nil {
			b.Fatal(err)
		}
	}
}

// BenchmarkDunnettQMC times the quasi-Monte Carlo fallback: a Dunnett
// family on a 5×5 correlation not of the one-factor form.
func BenchmarkDunnettQMC(b *testing.B) {
	c := mat.NewSymDense(5, []float64{
		1, 0.5, 0.25, 0.1, -0.2,
		0.5, 1, 0.5, 0.25, 0.1,
		0.25, 0.5, 1, 0.5, 0.25,
		0.1, 0.25, 0.5, 1, 0.5,
		-0.2, 0.1, 0.25, 0.5, 1})
	est := []float64{1, 2, 0.5, -1, 3}
	se := []float64{1, 1, 1, 1, 1}
	for i := 0; i < b.N; i++ {
		if _, err := Dunnett(est, se, c, 20, TwoSided, 0.95); err != nil {
			b.Fatal(err)
		}
	}
}
