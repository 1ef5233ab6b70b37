package multcomp

import (
	"encoding/json"
	"math"
	"os"
	"path/filepath"
	"testing"

	"gonum.org/v1/gonum/mat"
)

// refQMC is testdata/ref_qmc.json, produced by testdata/ref_qmc.R (R 4.2.2,
// mvtnorm 1.1.3): each p_upper is 1 - pmvt(..., algorithm =
// GenzBretz(maxpts = 1e8, abseps = 1e-7, releps = 0)) and Error is the
// error estimate pmvt returned for that case (the script stops unless it
// is below 1e-7); the critical values are qmvt with GenzBretz(maxpts = 5e6,
// abseps = 1e-7, releps = 0).
type refQMC struct {
	CorrA [][]float64 `json:"corr_A"`
	CorrB [][]float64 `json:"corr_B"`
	Cases []struct {
		C, DF    float64
		TwoSided bool    `json:"two_sided"`
		PUpper   float64 `json:"p_upper"`
		Error    float64
		Case     string
	}
	CritA float64 `json:"crit_A_two_df20"`
	CritB float64 `json:"crit_B_greater_df20"`
}

func loadRefQMC(t *testing.T) *refQMC {
	t.Helper()
	b, err := os.ReadFile(filepath.Join("testdata", "ref_qmc.json"))
	if err != nil {
		t.Fatal(err)
	}
	var r refQMC
	if err := json.Unmarshal(b, &r); err != nil {
		t.Fatal(err)
	}
	return &r
}

func symFrom(rows [][]float64) *mat.SymDense {
	m := len(rows)
	s := mat.NewSymDense(m, nil)
	for i := 0; i < m; i++ {
		for j := i; j < m; j++ {
			s.SetSym(i, j, rows[i][j])
		}
	}
	return s
}

// Quasi-Monte Carlo against mvtnorm 1.1.3 pmvt (R 4.2.2, GenzBretz(maxpts
// = 1e8, abseps = 1e-7, releps = 0), see refQMC): per case the difference
// must be within the sum of the two stated errors, furrow's AbsError (3
// standard errors over the shifts) plus the error pmvt reported for that
// case. Case B (5×5, mixed signs) is not of the one-factor form; case A
// (3×3, from an unbalanced two-way model) happens to be, so there the
// deterministic quadrature is also checked against pmvt, to 3 times pmvt's
// error: pmvt's estimate is not a bound (at df = 20, greater, c = 1.2 its
// value is 5.6e-8 from the quadrature, and from pmvt at abseps 5e-10,
// against an estimate of 5.3e-8).
func TestQMCAgainstMvtnorm(t *testing.T) {
	r := loadRefQMC(t)
	corr := map[string]*mat.SymDense{"A": symFrom(r.CorrA), "B": symFrom(r.CorrB)}
	if _, ok := ProductFactors(corr["B"]); ok {
		t.Fatal("case B unexpectedly of product form")
	}
	for _, c := range r.Cases {
		if c.Case == "A" && c.DF != 20 {
			// quadrature only, to keep the test short
			p, err := MaxTUpper(c.C, corr["A"], c.DF, Greater)
			if c.TwoSided {
				p, err = MaxTUpper(c.C, corr["A"], c.DF, TwoSided)
			}
			if err != nil || math.Abs(p-c.PUpper) > 3*c.Error+1e-12 {
				t.Errorf("case A df=%v c=%v: quadrature %.10g (%v), pmvt %.10g ± %.2g", c.DF, c.C, p, err, c.PUpper, c.Error)
			}
			continue
		}
		side := Greater
		if c.TwoSided {
			side = TwoSided
		}
		got, err := MaxTUpperQMC(c.C, corr[c.Case], c.DF, side)
		if err != nil {
			t.Fatal(err)
		}
		if got.AbsError > 2*QMCTolerance || got.AbsError <= 0 {
			t.Errorf("case %s c=%v: error estimate %.3g", c.Case, c.C, got.AbsError)
		}
		if math.Abs(got.P-c.PUpper) > got.AbsError+c.Error {
			t.Errorf("case %s df=%v %v c=%v: qmc %.8g ± %.2g, pmvt %.8g ± %.2g", c.Case, c.DF, side, c.C, got.P, got.AbsError, c.PUpper, c.Error)
		}
		p, err := MaxTUpper(c.C, corr[c.Case], c.DF, side)
		if err != nil {
			t.Fatal(err)
		}
		if c.Case == "A" && math.Abs(p-c.PUpper) > 3*c.Error+1e-12 {
			t.Errorf("case A df=%v %v c=%v: quadrature %.10g, pmvt %.10g ± %.2g", c.DF, side, c.C, p, c.PUpper, c.Error)
		}
		if c.Case == "B" && p != got.P {
			t.Errorf("case B: MaxTUpper %v differs from MaxTUpperQMC %v", p, got.P)
		}
	}
	// Critical values against qmvt, whose root search stops at about 1e-4
	// (see TestPlantGrowthOracle): 5e-4 absolute.
	cA, err := DunnettCritical(0.05, corr["A"], 20, TwoSided)
	if err != nil {
		t.Fatal(err)
	}
	if math.Abs(cA-r.CritA) > 5e-4 {
		t.Errorf("case A critical %.6g, qmvt %.6g", cA, r.CritA)
	}
	est := []float64{1, 2, 0.5, -1, 3}
	se := []float64{1, 1, 1, 1, 1}
	f, err := Dunnett(est, se, corr["B"], 20, Greater, 0.95)
	if err != nil {
		t.Fatal(err)
	}
	if f.Algorithm != AlgQMC || f.QMC == nil || f.QMC.Seed != QMCSeed || f.AbsError <= 0 {
		t.Errorf("case B family: algorithm %q, error %v, rule %+v", f.Algorithm, f.AbsError, f.QMC)
	}
	if math.Abs(f.Critical-r.CritB) > 5e-4 {
		t.Errorf("case B critical %.6g, qmvt %.6g", f.Critical, r.CritB)
	}
}

// On a one-factor correlation the fallback must agree with the
// deterministic quadrature (itself checked against R) within its error
// estimate.
func TestQMCAgainstQuadrature(t *testing.T) {
	lam := []float64{0.6, 0.75, 0.5, 0.8, 0.7, 0.65}
	c := mat.NewSymDense(len(lam), nil)
	for i := range lam {
		for j := i; j < len(lam); j++ {
			v := lam[i] * lam[j]
			if i == j {
				v = 1
			}
			c.SetSym(i, j, v)
		}
	}
	for _, df := range []float64{5, math.Inf(1)} {
		for _, side := range []Side{TwoSided, Greater} {
			for _, x := range []float64{1, 2.5, -0.5} {
				if side == TwoSided && x < 0 || df == 5 && x == 1 {
					continue
				}
				q, err := MaxTUpperQMC(x, c, df, side)
				if err != nil {
					t.Fatal(err)
				}
				p := maxTUpperProduct(x, lam, df, side == TwoSided)
				if math.Abs(q.P-p) > q.AbsError {
					t.Errorf("df=%v %v c=%v: qmc %.8g ± %.2g, quadrature %.10g", df, side, x, q.P, q.AbsError, p)
				}
			}
		}
	}
}

func TestQMCErrors(t *testing.T) {
	bad := mat.NewSymDense(3, []float64{1, 0.9, -0.9, 0.9, 1, 0.9, -0.9, 0.9, 1})
	if _, err := MaxTUpperQMC(2, bad, 10, TwoSided); err == nil {
		t.Error("indefinite correlation accepted")
	}
	if _, err := Dunnett([]float64{1, 1, 1}, []float64{1, 1, 1}, bad, 10, TwoSided, 0.95); err == nil {
		t.Error("dunnett on an indefinite correlation accepted")
	}
}

// A NaN on the diagonal (a correlation formed from a NaN variance) must be
// rejected by both evaluation paths, not integrated.
func TestNaNCorrelationRejected(t *testing.T) {
	c := mat.NewSymDense(2, []float64{math.NaN(), 0, 0, 1})
	if _, err := MaxTUpper(2, c, 10, TwoSided); err == nil {
		t.Error("MaxTUpper accepted a NaN diagonal")
	}
	if _, err := MaxTUpperQMC(2, c, 10, TwoSided); err == nil {
		t.Error("MaxTUpperQMC accepted a NaN diagonal")
	}
	if _, err := DunnettCritical(0.05, c, 10, TwoSided); err == nil {
		t.Error("DunnettCritical accepted a NaN diagonal")
	}
}
