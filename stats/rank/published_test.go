package rank

import (
	"fmt"
	"testing"

	"furrow/internal/testkit"
)

// TestCase09Oracle checks the heavily tied ordinal data of the shared
// oracle case 9 against R 4.2.2 (kruskal.test, wilcox.test paired with
// exact = FALSE and correct = TRUE/FALSE, friedman.test; 17 significant
// digits). Agreement measured on linux/amd64 beside each tolerance.
func TestCase09Oracle(t *testing.T) {
	type ht struct {
		Stat float64 `json:"statistic"`
		P    float64 `json:"p_value"`
	}
	var ref struct {
		KWScores struct {
			Test          ht      `json:"test"`
			HUncorrected  float64 `json:"H_uncorrected"`
			TieCorrection float64 `json:"tie_correction"`
		} `json:"kw_scores"`
		KWBinary struct {
			Test          ht      `json:"test"`
			HUncorrected  float64 `json:"H_uncorrected"`
			TieCorrection float64 `json:"tie_correction"`
		} `json:"kw_binary"`
		Wilcoxon struct {
			NZero int `json:"n_zero_diffs"`
			CC    ht  `json:"approx_correct"`
			NC    ht  `json:"approx_nocorrect"`
		} `json:"wilcoxon_paired_ties"`
		Friedman ht `json:"friedman_ties"`
	}
	decodeJSON(t, testkit.ReadShared(t, "oracle/ref/case09_rank_tests_ties.json"), &ref)

	for _, c := range []struct {
		file     string
		want     ht
		hu, corr float64
	}{
		{"oracle/data/case09_kw_scores.csv", ref.KWScores.Test, ref.KWScores.HUncorrected, ref.KWScores.TieCorrection},
		{"oracle/data/case09_kw_binary.csv", ref.KWBinary.Test, ref.KWBinary.HUncorrected, ref.KWBinary.TieCorrection},
	} {
		got, err := KruskalWallis(groupBy(t, readCSV(t, c.file), 0, 1))
		if err != nil {
			t.Fatal(err)
		}
		testkit.CheckClose(t, c.file+" H", got.H, c.want.Stat, 5e-14)                     // agreement 2.0e-15
		testkit.CheckRelClose(t, c.file+" p", got.P, c.want.P, 1e-13)                     // 4.4e-15
		testkit.CheckClose(t, c.file+" H uncorrected", got.HUncorrected, c.hu, 5e-14)     // 2.3e-15
		testkit.CheckClose(t, c.file+" tie correction", got.TieCorrection, c.corr, 1e-15) // exact
	}

	rows := readCSV(t, "oracle/data/case09_wilcoxon_paired_ties.csv")
	var before, after []float64
	for _, r := range rows {
		before = append(before, parseF(t, r[0]))
		after = append(after, parseF(t, r[1]))
	}
	for _, c := range []struct {
		noCC bool
		want ht
	}{{false, ref.Wilcoxon.CC}, {true, ref.Wilcoxon.NC}} {
		got, err := SignedRankPaired(after, before, Options{NoContinuity: c.noCC})
		if err != nil {
			t.Fatal(err)
		}
		if got.Exact || got.Zeros != ref.Wilcoxon.NZero || got.V != c.want.Stat {
			t.Errorf("signed rank (no cc %v): %+v, R %+v", c.noCC, got, c.want)
		}
		testkit.CheckRelClose(t, fmt.Sprintf("signed rank (no cc %v) p", c.noCC), got.P, c.want.P, 2e-14) // agreement 5.2e-16
	}

	frows := readCSV(t, "oracle/data/case09_friedman_ties.csv")
	tab := groupBy(t, frows, 0, 2) // blocks in order, treatments in file order
	got, err := Friedman(tab)
	if err != nil {
		t.Fatal(err)
	}
	testkit.CheckClose(t, "friedman statistic", got.Stat, ref.Friedman.Stat, 1e-15) // exact
	testkit.CheckRelClose(t, "friedman p", got.P, ref.Friedman.P, 5e-14)            // agreement 1.5e-15
}

// TestWorkedExamples checks the textbook examples in the shared
// worked-examples folder. Published values are checked to half a unit of
// their last printed place, the most their digits support. The precise
// values are R 4.2.2 (kruskal.test, friedman.test, wilcox.test) on the
// same files, run for this test and written with 17 digits (values.json
// has most of them to 7 digits, and two off in the 10th). Agreement with
// R measured on linux/amd64 beside each tolerance; rank sums and counts
// are exact in binary and compared exactly.
func TestWorkedExamples(t *testing.T) {
	// Hollander & Wolfe (1973) p. 116: H = 0.771 (published, low
	// confidence per values.json).
	kw, err := KruskalWallis(groupBy(t, readCSV(t, "worked-examples/kruskal_wallis_hollander_wolfe_1973_p116.csv"), 0, 1))
	if err != nil {
		t.Fatal(err)
	}
	testkit.CheckWithin(t, "H&W p116 H (published)", kw.H, 0.771, 0, 5e-4)
	testkit.CheckClose(t, "H&W p116 H", kw.H, 0.77142857142857224, 2e-14)    // agreement 6.7e-16
	testkit.CheckRelClose(t, "H&W p116 p", kw.P, 0.67996477357889362, 1e-14) // agreement 3.3e-16
	if kw.DF != 2 {
		t.Errorf("H&W p116: df %v, want 2", kw.DF)
	}
	// Conover (1999) p. 291, corn yields: rank sums 196.5, 153, 207, 38.5;
	// H 25.46 uncorrected (published T as recalled in values.json). R's
	// uncorrected H is 12/(N(N+1)) sum R_i^2/n_i - 3(N+1) evaluated in R
	// (values.json's 25.4643727521097 is 3e-9 off it); the corrected H and
	// p are kruskal.test (values.json's 25.6288358714858 is 4.5e-9 off).
	kw, err = KruskalWallis(groupBy(t, readCSV(t, "worked-examples/kruskal_wallis_conover_1999_p291_corn.csv"), 0, 1))
	if err != nil {
		t.Fatal(err)
	}
	for i, w := range []float64{196.5, 153, 207, 38.5} {
		if kw.RankSums[i] != w {
			t.Errorf("Conover rank sum %d = %g, want %g", i+1, kw.RankSums[i], w)
		}
	}
	testkit.CheckWithin(t, "Conover p291 H uncorrected (published)", kw.HUncorrected, 25.46, 0, 5e-3)
	testkit.CheckClose(t, "Conover p291 H uncorrected", kw.HUncorrected, 25.464372749099653, 1e-14) // agreement 4.2e-16
	testkit.CheckClose(t, "Conover p291 H", kw.H, 25.628835866962486, 2e-14)                        // agreement 6.9e-16
	testkit.CheckRelClose(t, "Conover p291 p", kw.P, 1.140572777028796e-05, 2e-13)                  // agreement 8.9e-15

	friedman := func(file string) FriedmanResult {
		t.Helper()
		rows := readCSV(t, file)
		tab := groupBy(t, rows, 0, 2)
		r, err := Friedman(tab)
		if err != nil {
			t.Fatal(err)
		}
		return r
	}
	// Hollander & Wolfe (1973) p. 140, rounding first base: rank sums 53,
	// 47, 32.
	fr := friedman("worked-examples/friedman_hollander_wolfe_1973_p140_rounding_first_base.csv")
	testkit.CheckClose(t, "H&W p140 statistic", fr.Stat, 11.142857142857142, 1e-15) // exact
	testkit.CheckRelClose(t, "H&W p140 p", fr.P, 0.003805040775511363, 5e-15)       // agreement 2.3e-16
	for i, w := range []float64{53, 47, 32} {
		if fr.RankSums[i] != w {
			t.Errorf("H&W p140 rank sum %d = %g, want %g", i+1, fr.RankSums[i], w)
		}
	}
	// Zar, example 12.6: chi2_F = 10.68 (published; R gives the same to
	// all 17 digits).
	fr = friedman("worked-examples/friedman_zar_example_12_6.csv")
	testkit.CheckClose(t, "Zar 12.6 statistic", fr.Stat, 10.68, 1e-15)       // exact
	testkit.CheckRelClose(t, "Zar 12.6 p", fr.P, 0.01358827295821765, 2e-14) // agreement 6.4e-16
	// Demsar (2006): tie-corrected statistic.
	fr = friedman("worked-examples/friedman_demsar_2006_ties.csv")
	testkit.CheckClose(t, "Demsar 2006 statistic", fr.Stat, 10.228346456692913, 1e-15) // exact
	testkit.CheckRelClose(t, "Demsar 2006 p", fr.P, 0.016721580328441409, 5e-15)       // agreement 2.1e-16

	// Hollander & Wolfe (1973) p. 29: T+ = 5 for y - x (published), V = 40
	// for x - y, exact one-sided p 10/512 = 0.01953125 (table 0.020) and
	// two-sided 0.0390625 (dyadic, exact in binary and in R's output), and
	// the normal approximation without continuity correction.
	rows := readCSV(t, "worked-examples/wilcoxon_signed_rank_hollander_wolfe_1973_p29.csv")
	var x, y []float64
	for _, r := range rows {
		x = append(x, parseF(t, r[1]))
		y = append(y, parseF(t, r[2]))
	}
	sr, err := SignedRankPaired(y, x, Options{Alternative: Less})
	if err != nil {
		t.Fatal(err)
	}
	if sr.V != 5 || !sr.Exact || sr.P != 0.01953125 {
		t.Errorf("H&W p29 T+: %+v, want V 5, exact p 0.01953125", sr)
	}
	testkit.CheckWithin(t, "H&W p29 p (table)", sr.P, 0.020, 0, 5e-4)
	sr, err = SignedRankPaired(x, y, Options{})
	if err != nil {
		t.Fatal(err)
	}
	if sr.V != 40 || sr.P != 0.0390625 {
		t.Errorf("H&W p29 two-sided: %+v, want V 40, p 0.0390625", sr)
	}
	sr, err = SignedRankPaired(x, y, Options{Alternative: Greater, Method: MethodNormal, NoContinuity: true})
	if err != nil {
		t.Fatal(err)
	}
	testkit.CheckRelClose(t, "H&W p29 normal p", sr.P, 0.019075855086707578, 5e-15) // agreement 1.8e-16

	// Hollander & Wolfe (1973) p. 69: rank sum of y = 30 (published),
	// U of x = 35, exact one-sided p and the normal approximation without
	// continuity correction.
	g := groupBy(t, readCSV(t, "worked-examples/wilcoxon_rank_sum_hollander_wolfe_1973_p69.csv"), 0, 1)
	rs, err := RankSum(g[0], g[1], Options{Alternative: Greater})
	if err != nil {
		t.Fatal(err)
	}
	ry, err := RankSum(g[1], g[0], Options{})
	if err != nil {
		t.Fatal(err)
	}
	if rs.U != 35 || ry.W != 30 || !rs.Exact {
		t.Errorf("H&W p69: %+v (y: %+v)", rs, ry)
	}
	testkit.CheckRelClose(t, "H&W p69 exact p", rs.P, 0.1272061272061272, 1e-15) // exact
	rs, err = RankSum(g[0], g[1], Options{Alternative: Greater, Method: MethodNormal, NoContinuity: true})
	if err != nil {
		t.Fatal(err)
	}
	testkit.CheckRelClose(t, "H&W p69 normal p", rs.P, 0.1103356809599234, 1e-14) // agreement 3.8e-16
}
