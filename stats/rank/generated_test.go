package rank

import (
	"fmt"
	"testing"

	"furrow/internal/testkit"
)

type htRef struct {
	Stat float64 `json:"stat"`
	DF   any     `json:"df"`
	P    float64 `json:"p"`
}

// genRef mirrors testdata/ref.json from testdata/ref.R (R 4.2.2).
type genRef struct {
	Kruskal []struct {
		Groups [][]float64 `json:"groups"`
		Res    htRef       `json:"res"`
	} `json:"kruskal"`
	Friedman []struct {
		Data [][]float64 `json:"data"`
		Res  htRef       `json:"res"`
	} `json:"friedman"`
	SignedRank []struct {
		D       []float64 `json:"d"`
		Alt     string    `json:"alt"`
		Exact   bool      `json:"exact"`
		Correct bool      `json:"correct"`
		Mu      float64   `json:"mu"`
		V       float64   `json:"V"`
		P       float64   `json:"p"`
	} `json:"signed_rank"`
	RankSum []struct {
		X, Y    []float64
		Alt     string  `json:"alt"`
		Exact   bool    `json:"exact"`
		Correct bool    `json:"correct"`
		Mu      float64 `json:"mu"`
		U       float64 `json:"U"`
		P       float64 `json:"p"`
	} `json:"rank_sum"`
	VanElteren struct {
		Strata [][][]float64 `json:"strata"`
		Res    struct {
			T, E, Var, Z float64
			PTwo         float64 `json:"p_two"`
			PGreater     float64 `json:"p_greater"`
			PLess        float64 `json:"p_less"`
		} `json:"res"`
	} `json:"van_elteren"`
	VanElterenK struct {
		Strata [][][]float64 `json:"strata"`
		Res    struct {
			Q, DF, P float64
		} `json:"res"`
	} `json:"van_elteren_k"`
	VanElterenK2 struct {
		Q, DF, P float64
	} `json:"van_elteren_k2_on_two"`
	Welch []struct {
		Groups [][]float64 `json:"groups"`
		Res    struct {
			Stat float64   `json:"stat"`
			DF   []float64 `json:"df"`
			P    float64   `json:"p"`
		} `json:"res"`
	} `json:"welch"`
}

func loadGen(t *testing.T) genRef {
	t.Helper()
	var r genRef
	testkit.DecodeFile(t, "testdata/ref.json", &r)
	return r
}

func strata(s [][][]float64) []Stratum {
	out := make([]Stratum, len(s))
	for i, g := range s {
		out[i] = Stratum{Groups: g}
	}
	return out
}

// TestKruskalGenerated: R 4.2.2 kruskal.test on continuous data and on
// rounded data with ties and a group of size one (testdata/ref.R, 15
// significant digits, as for every reference of this file). Agreement
// measured on linux/amd64 beside each tolerance.
func TestKruskalGenerated(t *testing.T) {
	for i, c := range loadGen(t).Kruskal {
		got, err := KruskalWallis(c.Groups)
		if err != nil {
			t.Fatal(err)
		}
		testkit.CheckClose(t, fmt.Sprintf("case %d H", i), got.H, c.Res.Stat, 1e-13) // agreement 3.8e-15
		testkit.CheckRelClose(t, fmt.Sprintf("case %d p", i), got.P, c.Res.P, 1e-13) // agreement 3.6e-15
		if got.DF != c.Res.DF.(float64) {
			t.Errorf("case %d: df %v, R %v", i, got.DF, c.Res.DF)
		}
	}
}

// TestFriedmanGenerated: R 4.2.2 friedman.test, continuous and tied.
func TestFriedmanGenerated(t *testing.T) {
	for i, c := range loadGen(t).Friedman {
		got, err := Friedman(c.Data)
		if err != nil {
			t.Fatal(err)
		}
		testkit.CheckClose(t, fmt.Sprintf("case %d statistic", i), got.Stat, c.Res.Stat, 5e-14) // agreement 1.8e-15
		testkit.CheckRelClose(t, fmt.Sprintf("case %d p", i), got.P, c.Res.P, 2e-14)            // agreement 5.8e-16
	}
}

// TestSignedRankGenerated: R 4.2.2 wilcox.test(d, mu, alternative, exact,
// correct), exact at n = 10 and 45, normal at n = 60 and with ties. V is a
// sum of (mid)ranks, exact in binary, so it is compared exactly.
func TestSignedRankGenerated(t *testing.T) {
	for i, c := range loadGen(t).SignedRank {
		o := Options{Alternative: altOf(c.Alt), NoContinuity: !c.Correct, Mu: c.Mu, Method: MethodNormal}
		if c.Exact {
			o.Method = MethodExact
		}
		got, err := SignedRank(c.D, o)
		if err != nil {
			t.Fatalf("case %d: %v", i, err)
		}
		what := fmt.Sprintf("case %d (%s exact=%v cc=%v)", i, c.Alt, c.Exact, c.Correct)
		if got.V != c.V {
			t.Errorf("%s: V = %v, R %v", what, got.V, c.V)
		}
		testkit.CheckRelClose(t, what+" p", got.P, c.P, 1e-13) // agreement 2.8e-15
		// MethodAuto must pick the same method R picked.
		o.Method = MethodAuto
		auto, err := SignedRank(c.D, o)
		if err != nil {
			t.Fatal(err)
		}
		if auto.Exact != c.Exact {
			t.Errorf("case %d: auto exact=%v, R exact=%v", i, auto.Exact, c.Exact)
		}
	}
}

// TestRankSumGenerated: R 4.2.2 wilcox.test(x, y, mu, alternative, exact,
// correct); R's W is our U, compared exactly (a count). Exact at 7 vs 9
// and 40 vs 45.
func TestRankSumGenerated(t *testing.T) {
	for i, c := range loadGen(t).RankSum {
		o := Options{Alternative: altOf(c.Alt), NoContinuity: !c.Correct, Mu: c.Mu, Method: MethodNormal}
		if c.Exact {
			o.Method = MethodExact
		}
		got, err := RankSum(c.X, c.Y, o)
		if err != nil {
			t.Fatalf("case %d: %v", i, err)
		}
		what := fmt.Sprintf("case %d (%s exact=%v cc=%v)", i, c.Alt, c.Exact, c.Correct)
		if got.U != c.U {
			t.Errorf("%s: U = %v, R W %v", what, got.U, c.U)
		}
		testkit.CheckRelClose(t, what+" p", got.P, c.P, 1e-13) // agreement 2.7e-15
	}
}

// TestVanElterenGenerated: van Elteren's statistic written out by hand in
// R 4.2.2 (testdata/ref.R) from van Elteren (1960); and the k-sample
// Landis-Heyman-Koch form with van Elteren weights written out by hand in
// the same script, including its k = 2 case, which must equal Z².
func TestVanElterenGenerated(t *testing.T) {
	r := loadGen(t)
	ve := r.VanElteren
	for _, alt := range []struct {
		a Alternative
		p float64
	}{{TwoSided, ve.Res.PTwo}, {Greater, ve.Res.PGreater}, {Less, ve.Res.PLess}} {
		got, err := VanElteren(strata(ve.Strata), Options{Alternative: alt.a})
		if err != nil {
			t.Fatal(err)
		}
		what := fmt.Sprintf("%v", alt.a)
		testkit.CheckClose(t, what+" T", got.T, ve.Res.T, 1e-13)       // agreement 3.8e-15
		testkit.CheckClose(t, what+" E", got.E, ve.Res.E, 1e-15)       // exact
		testkit.CheckClose(t, what+" Var", got.Var, ve.Res.Var, 1e-15) // exact
		testkit.CheckClose(t, what+" Z", got.Z, ve.Res.Z, 5e-14)       // agreement 1.1e-15
		testkit.CheckRelClose(t, what+" p", got.P, alt.p, 5e-14)       // agreement 1.6e-15
	}
	vk, err := VanElterenK(strata(r.VanElterenK.Strata))
	if err != nil {
		t.Fatal(err)
	}
	testkit.CheckClose(t, "k-sample Q", vk.Q, r.VanElterenK.Res.Q, 1e-14)    // agreement 3.7e-16
	testkit.CheckRelClose(t, "k-sample p", vk.P, r.VanElterenK.Res.P, 5e-14) // agreement 2.3e-15
	if vk.DF != 2 {
		t.Errorf("k-sample df %v, want 2", vk.DF)
	}
	vk2, err := VanElterenK(strata(ve.Strata))
	if err != nil {
		t.Fatal(err)
	}
	testkit.CheckClose(t, "k=2 Q", vk2.Q, r.VanElterenK2.Q, 2e-14)             // agreement 9.9e-16
	testkit.CheckClose(t, "k=2 Q against Z²", vk2.Q, ve.Res.Z*ve.Res.Z, 5e-14) // agreement 2.0e-15
	testkit.CheckRelClose(t, "k=2 p", vk2.P, ve.Res.PTwo, 1e-13)               // agreement 3.8e-15
}

// TestWelchGenerated: R 4.2.2 oneway.test(var.equal = FALSE), k = 4 and
// k = 2 (where F = t² of t.test(var.equal = FALSE)).
func TestWelchGenerated(t *testing.T) {
	for i, c := range loadGen(t).Welch {
		got, err := Welch(c.Groups)
		if err != nil {
			t.Fatal(err)
		}
		testkit.CheckClose(t, fmt.Sprintf("case %d F", i), got.F, c.Res.Stat, 2e-14)                 // agreement 1.0e-15
		testkit.CheckClose(t, fmt.Sprintf("case %d denominator df", i), got.DF2, c.Res.DF[1], 1e-13) // agreement 2.7e-15
		testkit.CheckRelClose(t, fmt.Sprintf("case %d p", i), got.P, c.Res.P, 2e-14)                 // agreement 8.5e-16
		if got.DF1 != c.Res.DF[0] {
			t.Errorf("case %d: numerator df %v, R %v", i, got.DF1, c.Res.DF[0])
		}
	}
}
