package assume

import (
	"strings"
	"testing"

	"furrow/internal/testkit"
)

// TestPlantGrowthOracle checks the residual normality tests and the
// variance tests on R's PlantGrowth data against the shared oracle case 5
// (R 4.2.2: shapiro.test, nortest 1.0.4 ad.test, car 3.1.1 leveneTest,
// bartlett.test). Tolerance 1e-12 relative except where noted.
func TestPlantGrowthOracle(t *testing.T) {
	_, rows := readCSV(t, "oracle/data/case05_plantgrowth.csv")
	var ref struct {
		Residuals []float64 `json:"residuals"`
		LevMed    fRef      `json:"levene_median"`
		LevMean   fRef      `json:"levene_mean"`
		Bartlett  struct {
			Stat  float64            `json:"statistic"`
			Param map[string]float64 `json:"parameter"`
			P     float64            `json:"p_value"`
		} `json:"bartlett"`
		SW struct {
			Stat float64 `json:"statistic"`
			P    float64 `json:"p_value"`
		} `json:"shapiro_residuals"`
		AD struct {
			Stat float64 `json:"statistic"`
			P    float64 `json:"p_value"`
		} `json:"anderson_darling_residuals"`
	}
	decodeJSON(t, testkit.ReadShared(t, "oracle/ref/case05_plantgrowth.json"), &ref)
	// fRef uses keys F/df1/df2/p; the oracle writes p_value.
	var raw struct {
		LevMed struct {
			P float64 `json:"p_value"`
		} `json:"levene_median"`
		LevMean struct {
			P float64 `json:"p_value"`
		} `json:"levene_mean"`
	}
	decodeJSON(t, testkit.ReadShared(t, "oracle/ref/case05_plantgrowth.json"), &raw)
	ref.LevMed.P, ref.LevMean.P = raw.LevMed.P, raw.LevMean.P

	idx := map[string]int{}
	var groups [][]float64
	for _, r := range rows {
		g, ok := idx[r[1]]
		if !ok {
			g = len(groups)
			idx[r[1]] = g
			groups = append(groups, nil)
		}
		groups[g] = append(groups[g], parseF(t, r[0]))
	}
	sw, err := ShapiroWilk(ref.Residuals)
	if err != nil {
		t.Fatal(err)
	}
	if !testkit.Close(sw.W, ref.SW.Stat, 1e-12) || !testkit.RelClose(sw.P, ref.SW.P, 1e-9) {
		t.Errorf("shapiro: %+v, R W=%g p=%g", sw, ref.SW.Stat, ref.SW.P)
	}
	ad, err := AndersonDarling(ref.Residuals)
	if err != nil {
		t.Fatal(err)
	}
	if !testkit.Close(ad.A2, ref.AD.Stat, 1e-12) || !testkit.RelClose(ad.P, ref.AD.P, 1e-10) {
		t.Errorf("anderson-darling: %+v, nortest A=%g p=%g", ad, ref.AD.Stat, ref.AD.P)
	}
	lm, err := Levene(groups)
	if err != nil {
		t.Fatal(err)
	}
	if !testkit.Close(lm.F, ref.LevMean.F, 1e-12) || !testkit.RelClose(lm.P, ref.LevMean.P, 1e-12) {
		t.Errorf("levene: %+v, car %+v", lm, ref.LevMean)
	}
	bf, err := BrownForsythe(groups)
	if err != nil {
		t.Fatal(err)
	}
	if !testkit.Close(bf.F, ref.LevMed.F, 1e-12) || !testkit.RelClose(bf.P, ref.LevMed.P, 1e-12) {
		t.Errorf("brown-forsythe: %+v, car %+v", bf, ref.LevMed)
	}
	bt, err := Bartlett(groups)
	if err != nil {
		t.Fatal(err)
	}
	if !testkit.Close(bt.Stat, ref.Bartlett.Stat, 1e-12) || bt.DF != ref.Bartlett.Param["df"] || !testkit.RelClose(bt.P, ref.Bartlett.P, 1e-12) {
		t.Errorf("bartlett: %+v, R %+v", bt, ref.Bartlett)
	}
}

// TestGearNIST checks Levene/Brown-Forsythe and Bartlett on the NIST
// e-Handbook GEAR data (10 batches of 10): published W = 1.705910 (section
// 1.3.5.10, median-centred) and T = 20.7858 (section 1.3.5.7) at the
// printed precision, and the double-precision values from R 4.2.2 (car
// leveneTest, bartlett.test) recorded in the shared values.json at 1e-12.
func TestGearNIST(t *testing.T) {
	b := testkit.ReadShared(t, "nist-ehandbook/GEAR.DAT")
	lines := strings.Split(string(b), "\n")
	groups := make([][]float64, 10)
	for _, ln := range lines[25:] {
		f := strings.Fields(ln)
		if len(f) != 2 {
			continue
		}
		y, g := parseF(t, f[0]), parseF(t, f[1])
		groups[int(g)-1] = append(groups[int(g)-1], y)
	}
	for i, g := range groups {
		if len(g) != 10 {
			t.Fatalf("batch %d has %d values", i+1, len(g))
		}
	}
	bf, err := BrownForsythe(groups)
	if err != nil {
		t.Fatal(err)
	}
	if !testkit.Close(bf.F, 1.705910, 5e-6) || !testkit.Close(bf.F, 1.70591769300089, 1e-12) || !testkit.RelClose(bf.P, 0.0990829755522054, 1e-11) || bf.DF1 != 9 || bf.DF2 != 90 {
		t.Errorf("brown-forsythe: %+v", bf)
	}
	lv, err := Levene(groups)
	if err != nil {
		t.Fatal(err)
	}
	if !testkit.Close(lv.F, 2.15945985647285, 1e-12) || !testkit.RelClose(lv.P, 0.0322368265597832, 1e-11) {
		t.Errorf("levene: %+v", lv)
	}
	bt, err := Bartlett(groups)
	if err != nil {
		t.Fatal(err)
	}
	if !testkit.Close(bt.Stat, 20.7858, 5e-5) || !testkit.Close(bt.Stat, 20.7858734280649, 1e-12) || !testkit.RelClose(bt.P, 0.0136358632780575, 1e-11) || bt.DF != 9 {
		t.Errorf("bartlett: %+v", bt)
	}
}
