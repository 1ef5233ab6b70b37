package rank

import (
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
// rounded data with ties and a group of size one. Tolerance 1e-12.
func TestKruskalGenerated(t *testing.T) {
	for i, c := range loadGen(t).Kruskal {
		got, err := KruskalWallis(c.Groups)
		if err != nil {
			t.Fatal(err)
		}
		if !testkit.Close(got.H, c.Res.Stat, 1e-12) || !testkit.RelClose(got.P, c.Res.P, 1e-12) || got.DF != c.Res.DF.(float64) {
			t.Errorf("case %d: H=%.16g p=%.16g, R H=%.16g p=%.16g", i, got.H, got.P, c.Res.Stat, c.Res.P)
		}
	}
}

// TestFriedmanGenerated: R 4.2.2 friedman.test, continuous and tied.
// Tolerance 1e-12.
func TestFriedmanGenerated(t *testing.T) {
	for i, c := range loadGen(t).Friedman {
		got, err := Friedman(c.Data)
		if err != nil {
			t.Fatal(err)
		}
		if !testkit.Close(got.Stat, c.Res.Stat, 1e-12) || !testkit.RelClose(got.P, c.Res.P, 1e-12) {
			t.Errorf("case %d: S=%.16g p=%.16g, R S=%.16g p=%.16g", i, got.Stat, got.P, c.Res.Stat, c.Res.P)
		}
	}
}

// TestSignedRankGenerated: R 4.2.2 wilcox.test(d, mu, alternative, exact,
// correct), exact at n = 10 and 45, normal at n = 60 and with ties.
// Tolerance 1e-12 relative on p (exact p are dyadic rationals).
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
		if !testkit.Close(got.V, c.V, 1e-12) || !testkit.RelClose(got.P, c.P, 1e-12) {
			t.Errorf("case %d (%s exact=%v cc=%v): V=%g p=%.16g, R V=%g p=%.16g", i, c.Alt, c.Exact, c.Correct, got.V, got.P, c.V, c.P)
		}
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
// correct); R's W is our U. Exact at 7 vs 9 and 40 vs 45. Tolerance 1e-12
// relative on p, 1e-10 for the 40 vs 45 exact case (sums of ~1800 terms).
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
		tol := 1e-12
		if len(c.X) > 20 && c.Exact {
			tol = 1e-10
		}
		if !testkit.Close(got.U, c.U, 1e-12) || !testkit.RelClose(got.P, c.P, tol) {
			t.Errorf("case %d (%s exact=%v cc=%v): U=%g p=%.16g, R W=%g p=%.16g", i, c.Alt, c.Exact, c.Correct, got.U, got.P, c.U, c.P)
		}
	}
}

// TestVanElterenGenerated: van Elteren's statistic written out by hand in
// R 4.2.2 (testdata/ref.R) from van Elteren (1960); and the k-sample
// Landis-Heyman-Koch form with van Elteren weights written out by hand in
// the same script, including its k = 2 case, which must equal Z².
// Tolerance 1e-12.
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
		if !testkit.Close(got.T, ve.Res.T, 1e-12) || !testkit.Close(got.E, ve.Res.E, 1e-12) || !testkit.Close(got.Var, ve.Res.Var, 1e-12) ||
			!testkit.Close(got.Z, ve.Res.Z, 1e-12) || !testkit.RelClose(got.P, alt.p, 1e-12) {
			t.Errorf("%v: got %+v, R %+v", alt.a, got, ve.Res)
		}
	}
	vk, err := VanElterenK(strata(r.VanElterenK.Strata))
	if err != nil {
		t.Fatal(err)
	}
	if !testkit.Close(vk.Q, r.VanElterenK.Res.Q, 1e-12) || vk.DF != 2 || !testkit.RelClose(vk.P, r.VanElterenK.Res.P, 1e-12) {
		t.Errorf("k-sample: got %+v, R %+v", vk, r.VanElterenK.Res)
	}
	vk2, err := VanElterenK(strata(ve.Strata))
	if err != nil {
		t.Fatal(err)
	}
	if !testkit.Close(vk2.Q, r.VanElterenK2.Q, 1e-12) || !testkit.Close(vk2.Q, ve.Res.Z*ve.Res.Z, 1e-12) || !testkit.RelClose(vk2.P, ve.Res.PTwo, 1e-12) {
		t.Errorf("k=2: Q=%.16g, R %.16g, Z²=%.16g", vk2.Q, r.VanElterenK2.Q, ve.Res.Z*ve.Res.Z)
	}
}

// TestWelchGenerated: R 4.2.2 oneway.test(var.equal = FALSE), k = 4 and
// k = 2 (where F = t² of t.test(var.equal = FALSE)). Tolerance 1e-12.
func TestWelchGenerated(t *testing.T) {
	for i, c := range loadGen(t).Welch {
		got, err := Welch(c.Groups)
		if err != nil {
			t.Fatal(err)
		}
		if !testkit.Close(got.F, c.Res.Stat, 1e-12) || got.DF1 != c.Res.DF[0] || !testkit.Close(got.DF2, c.Res.DF[1], 1e-12) || !testkit.RelClose(got.P, c.Res.P, 1e-11) {
			t.Errorf("case %d: %+v, R %+v", i, got, c.Res)
		}
	}
}
