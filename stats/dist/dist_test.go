package dist

import (
	"fmt"
	"math"
	"testing"

	"gonum.org/v1/gonum/stat/distuv"

	"furrow/internal/testkit"
)

type refFile struct {
	Generator string `json:"generator"`
	Tails     []struct {
		Fn   string    `json:"fn"`
		Args []float64 `json:"args"`
		P    float64   `json:"p"`
		LogP float64   `json:"logp"`
	} `json:"tails"`
	Quantiles []struct {
		Fn   string    `json:"fn"`
		Args []float64 `json:"args"`
		X    float64   `json:"x"`
	} `json:"quantiles"`
}

func loadRef(t *testing.T) refFile {
	t.Helper()
	var r refFile
	testkit.DecodeFile(t, "testdata/ref.json", &r)
	return r
}

// tailTol is the tolerance of one family of tails against R: relative on
// p, abs-or-rel (testkit.Close) on log p.
type tailTol struct{ p, logp float64 }

// tailTols are set from the agreement measured against R 4.2.2 (pnorm,
// pt, pf, pchisq with lower.tail = FALSE, log.p = TRUE; testdata/ref.R,
// which prints 15 significant digits) on linux/amd64, worst over the rows
// of each family, at about 30 times that agreement.
var tailTols = map[string]tailTol{
	"norm":  {2e-12, 5e-14}, // agreement p 9.8e-14, log p 1.6e-15
	"t":     {2e-12, 2e-13}, // agreement p 8.8e-14, log p 9.3e-15
	"f":     {5e-12, 2e-12}, // agreement p 1.9e-13, log p 7.9e-14
	"chisq": {5e-12, 2e-13}, // agreement p 1.1e-13, log p 6.6e-15
	// ν >= 1e4, |t| >= 2: the continued fraction in log space; agreement
	// p 1.2e-11, log p 1.9e-12 (Cephes alone: 1.9e-10).
	"t big df": {5e-10, 5e-11},
	// ν >= 1e4, |t| < 2: Cephes incbet near the centre is accurate to
	// about 2e-10 only (checked against mpmath at 40 digits:
	// P(T > 0.5; ν = 1e6) = 0.30853759373618569, which R matches);
	// agreement p 1.9e-10, log p 1.4e-10.
	"t big df centre": {5e-9, 5e-9},
}

// TestTailsAgainstR checks every upper tail and its log against R 4.2.2
// (testdata/ref.R) with the tolerances of tailTols; p is compared where
// R's p is above 1e-300, log p everywhere.
func TestTailsAgainstR(t *testing.T) {
	r := loadRef(t)
	for _, c := range r.Tails {
		var p, lp float64
		switch c.Fn {
		case "norm":
			p, lp = NormalUpper(c.Args[0]), LogNormalUpper(c.Args[0])
		case "t":
			p, lp = TUpper(c.Args[0], c.Args[1]), LogTUpper(c.Args[0], c.Args[1])
		case "f":
			p, lp = FUpper(c.Args[0], c.Args[1], c.Args[2]), LogFUpper(c.Args[0], c.Args[1], c.Args[2])
		case "chisq":
			p, lp = ChiSqUpper(c.Args[0], c.Args[1]), LogChiSqUpper(c.Args[0], c.Args[1])
		default:
			t.Fatalf("unknown function %q", c.Fn)
		}
		family := c.Fn
		if c.Fn == "t" && c.Args[1] >= 1e4 {
			family = "t big df"
			if math.Abs(c.Args[0]) < 2 {
				family = "t big df centre"
			}
		}
		tol := tailTols[family]
		if c.P > 1e-300 {
			testkit.CheckRelClose(t, fmt.Sprintf("%s%v p", c.Fn, c.Args), p, c.P, tol.p)
		}
		testkit.CheckClose(t, fmt.Sprintf("%s%v log p", c.Fn, c.Args), lp, c.LogP, tol.logp)
	}
}

// quantileTols are the abs-or-rel (testkit.Close) tolerances of the
// upper-tail quantiles against R 4.2.2 (qnorm/qt/qf/qchisq with
// lower.tail = FALSE; testdata/ref.R), at about 30 times the agreement
// measured on linux/amd64.
var quantileTols = map[string]float64{
	"norm_upper":  5e-14, // agreement 1.9e-15
	"t_upper":     1e-12, // agreement 4.0e-14 (p = 1e-300, ν = 1)
	"f_upper":     5e-13, // agreement 1.7e-14
	"chisq_upper": 2e-13, // agreement 8.8e-15
	// ν >= 1e4 and p >= 1e-3: inverts the central t tail, which is
	// accurate to about 2e-10 there (see tailTols); agreement 4.8e-11.
	"t_upper big df centre": 1e-9,
}

// TestQuantilesAgainstR checks upper-tail quantiles against R 4.2.2 with
// the tolerances of quantileTols.
func TestQuantilesAgainstR(t *testing.T) {
	r := loadRef(t)
	for _, c := range r.Quantiles {
		var x float64
		a := c.Args
		switch c.Fn {
		case "norm_upper":
			x = NormalUpperQuantile(a[0])
		case "t_upper":
			x = TUpperQuantile(a[0], a[1])
		case "f_upper":
			x = FUpperQuantile(a[0], a[1], a[2])
		case "chisq_upper":
			x = ChiSqUpperQuantile(a[0], a[1])
		default:
			t.Fatalf("unknown function %q", c.Fn)
		}
		want := c.X
		if c.Fn == "t_upper" && a[0] == 1e-300 && a[1] == 2.5 {
			// R 4.2.2 qt(1e-300, 2.5, lower.tail = FALSE) = 8.76551834651658e+119
			// is off by 9e-6 relative: R's own
			// pt(8.765437882279911e+119, 2.5, lower.tail = FALSE, log.p = TRUE)
			// returns log(1e-300) to 16 digits, so that value is the target.
			want = 8.765437882279911e+119
		}
		if c.Fn == "t_upper" && a[0] == 1e-300 && a[1] == 7.3 {
			// Likewise R 4.2.2 qt(1e-300, 7.3, lower.tail = FALSE) =
			// 2.58059059122765e+41 is off by 5.8e-12 relative: R's
			// pt(., 7.3, lower.tail = FALSE, log.p = TRUE) gives log(1e-300)
			// + 4.2e-11 there and log(1e-300) - 1.2e-13 at
			// 2.5805905912426962e+41 (run for this test), the target.
			want = 2.5805905912426962e+41
		}
		family := c.Fn
		if c.Fn == "t_upper" && a[1] >= 1e4 && a[0] >= 1e-3 {
			family = "t_upper big df centre"
		}
		testkit.CheckClose(t, fmt.Sprintf("%s%v", c.Fn, a), x, want, quantileTols[family])
	}
}

// TestRoundTrip checks that quantile and tail invert each other over a grid
// (a property test, no external value). Tolerances at about 30 times the
// worst round-trip error measured on linux/amd64: t 2.2e-15 (log p,
// abs-or-rel), χ² 3.0e-13, F 1.6e-11, normal 3.4e-14 (p, relative).
func TestRoundTrip(t *testing.T) {
	for _, q := range []float64{1e-250, 1e-30, 1e-8, 0.01, 0.2, 0.5, 0.77, 0.999} {
		for _, df := range []float64{0.7, 1, 3.3, 12, 250} {
			if tq := TUpperQuantile(q, df); math.IsInf(tq, 1) {
				// The quantile exceeds the float64 range (ν < 1, tiny q).
			} else if got := LogTUpper(tq, df); !testkit.Close(got, math.Log(q), 5e-14) {
				t.Errorf("t: q=%g df=%g: round trip %g", q, df, got)
			}
			if got := ChiSqUpper(ChiSqUpperQuantile(q, df), df); !testkit.RelClose(got, q, 1e-11) {
				t.Errorf("chisq: q=%g df=%g: round trip %g", q, df, got)
			}
			if got := FUpper(FUpperQuantile(q, df, 2*df+1), df, 2*df+1); !testkit.RelClose(got, q, 5e-10) {
				t.Errorf("f: q=%g df=%g: round trip %g", q, df, got)
			}
		}
		if got := NormalUpper(NormalUpperQuantile(q)); !testkit.RelClose(got, q, 1e-12) {
			t.Errorf("norm: q=%g: round trip %g", q, got)
		}
	}
}

// TestTwoSided checks the two-sided forms against R and a published table
// value: t(0.975, 10) = 2.228139 (Fisher & Yates 1963 table III, 2.228;
// more digits from R 4.2.2 qt(0.975, 10)). Agreement measured on
// linux/amd64 in the comments; the tolerances are a few ulps where the
// agreement is at rounding level.
func TestTwoSided(t *testing.T) {
	// Agreement 3.5e-17 (TTwoSided), 2.0e-16 (TQuantile, relative), 3.5e-17
	// (NormalTwoSided), 2.4e-16 (TTwoSided(-3, 3), relative), 2.2e-16
	// (symmetry).
	if got := TTwoSided(2.228138851986274, 10); !testkit.Close(got, 0.05, 1e-15) {
		t.Errorf("TTwoSided = %g, want 0.05", got)
	}
	if got := TQuantile(0.975, 10); !testkit.Close(got, 2.228138851986274, 5e-15) {
		t.Errorf("TQuantile = %.16g", got)
	}
	if got := NormalTwoSided(1.959963984540054); !testkit.Close(got, 0.05, 1e-15) {
		t.Errorf("NormalTwoSided = %g, want 0.05", got)
	}
	// R 4.2.2 2*pt(3, 3, lower.tail = FALSE), 17 digits.
	if got := TTwoSided(-3, 3); !testkit.RelClose(got, 0.057668885622437313, 5e-15) {
		t.Errorf("TTwoSided(-3, 3) = %.17g, want 0.057668885622437313", got)
	}
	if got := TQuantile(0.3, 4.5); !testkit.Close(got, -TQuantile(0.7, 4.5), 1e-14) {
		t.Errorf("TQuantile symmetry: %g", got)
	}
}

// TestDistuvShortfall documents why Normal and F tails are not taken from
// distuv: at z = 10 distuv's 1-erf loses the tail entirely, while R gives
// 7.6198530241605269e-24 (R 4.2.2 pnorm(10, lower.tail = FALSE), 17
// digits; the value formerly written here, 7.61985302416047e-24, was off
// in the 14th digit). The distuv check only logs: it documents the
// shortfall and asks for a revisit when distuv improves.
func TestDistuvShortfall(t *testing.T) {
	const want = 7.6198530241605269e-24 // R 4.2.2 sprintf("%.17g", pnorm(10, lower.tail = FALSE))
	if got := distuv.UnitNormal.Survival(10); testkit.RelClose(got, want, 1e-3) {
		t.Logf("distuv Normal.Survival has become accurate (%g); revisit", got)
	}
	if got := NormalUpper(10); !testkit.RelClose(got, want, 1e-13) { // agreement 8.7e-15
		t.Errorf("NormalUpper(10) = %g, want %g", got, want)
	}
}

// TestFInfiniteDF1 checks the small upper tail of F(∞, ν2) = ν2/χ²_{ν2}.
// For ν2 = 4, P(χ²_4 <= x) = 1 - e^{-h}(1 + h) with h = x/2 (the Poisson
// relation of the gamma distribution, derived by hand), summed here as the
// series e^{-h} Σ_{k>=2} h^k/k! so the reference itself does not cancel.
func TestFInfiniteDF1(t *testing.T) {
	for _, f := range []float64{3, 1e3, 1e6} {
		h := 0.5 * 4 / f
		sum, term := 0.0, h
		for k := 2; k < 40; k++ {
			term *= h / float64(k)
			sum += term
		}
		want := math.Exp(-h) * sum
		// Agreement 2.6e-15.
		if got := FUpper(f, math.Inf(1), 4); !testkit.RelClose(got, want, 1e-13) {
			t.Errorf("FUpper(%g, Inf, 4) = %.16g, want %.16g", f, got, want)
		}
	}
}

// TestInvalid checks that invalid arguments give NaN, not a panic.
func TestInvalid(t *testing.T) {
	for name, v := range map[string]float64{
		"t df 0":        TUpper(1, 0),
		"t nan":         TUpper(math.NaN(), 3),
		"f df -1":       FUpper(1, -1, 3),
		"chisq df 0":    ChiSqUpper(1, 0),
		"tq p 2":        TQuantile(2, 3),
		"normq p -1":    NormalQuantile(-1),
		"fq p nan":      FUpperQuantile(math.NaN(), 1, 2),
		"chisqq df nan": ChiSqQuantile(0.5, math.NaN()),
	} {
		if !math.IsNaN(v) {
			t.Errorf("%s: got %g, want NaN", name, v)
		}
	}
	// R 4.2.2 pnorm(1.96, lower.tail = FALSE) (testdata/ref.json, 15
	// digits); agreement 1.4e-15.
	if got := TUpper(1.96, math.Inf(1)); !testkit.RelClose(got, 0.0249978951482204, 5e-14) {
		t.Errorf("t with infinite df = %.17g, want 0.0249978951482204", got)
	}
}

func BenchmarkTUpper(b *testing.B) {
	for i := 0; i < b.N; i++ {
		TUpper(3.7, 13.4)
	}
}
