package infer

import (
	"math"
	"strings"
	"testing"

	"gonum.org/v1/gonum/mat"

	"furrow/internal/testkit"
)

// Named contrasts: irrigation regimes within each nitrogen rate (full
// against rainfed, deficit against the mean of the others), and in the
// products trial (log scale) the new products against the control and
// against the mean of the two references, as ratios, overall and within
// sites, plus the mean of the references (not a comparison).
func TestDeclaredContrastsAgainstEmmeans(t *testing.T) {
	r := loadContrastRef(t)
	m, dm := nitrogenFit(t, r, Transform{Kind: TransformNone})
	var worst agreement
	declI := []LevelContrast{
		{Name: "full_vs_rainfed", Levels: []string{"rainfed", "full"}, Coef: []float64{-1, 1}, Comparison: true},
		{Name: "deficit_vs_others", Levels: []string{"rainfed", "deficit", "full"}, Coef: []float64{-0.5, 1, -0.5}, Comparison: true},
	}
	got, err := LevelContrastsBy(m, groupsOf(t, dm, "irrigation", "nitrogen"), declI, Options{})
	if err != nil {
		t.Fatal(err)
	}
	want := r.table(t, "decl_i_by_n")
	checkBy(t, "decl_i_by_n", "nitrogen", got, want.Nitrogen)
	checkEstimates(t, "decl_i_by_n", flatten(got), want, &worst)

	pm, pdm := productsFit(t, r)
	declP := productContrasts()
	L, _, err := pdm.MeansGrid([]string{"product"})
	if err != nil {
		t.Fatal(err)
	}
	levels := r.ProductsData.ProductLevels
	pe, err := LevelContrasts(pm, L, levels, declP, Options{})
	if err != nil {
		t.Fatal(err)
	}
	want = r.table(t, "decl_p")
	for i, e := range pe {
		if e.Label != want.Contrast[i] {
			t.Errorf("contrast %d named %q, emmeans %q", i+1, e.Label, want.Contrast[i])
		}
	}
	checkEstimates(t, "decl_p", pe, want, &worst)
	ratios, err := BackTransformDifferences(Transform{Kind: TransformLog}, pe)
	if err != nil {
		t.Fatal(err)
	}
	want = r.table(t, "decl_p_response")
	var wr float64
	for i, b := range ratios {
		for _, c := range []struct {
			q         string
			got, want float64
		}{{"ratio", b.Ratio, want.Ratio[i]}, {"lower", b.Lower, want.Lower[i]}, {"upper", b.Upper, want.Upper[i]}} {
			testkit.CheckRelClose(t, b.Label+" "+c.q+" (emmeans type = response)", c.got, c.want, tolEstimate)
			wr = math.Max(wr, testkit.RelErr(c.got, c.want))
		}
	}
	mean, err := LevelContrasts(pm, L, levels, []LevelContrast{{Name: "refs_mean", Levels: []string{"refA", "refB"}, Coef: []float64{0.5, 0.5}}}, Options{})
	if err != nil {
		t.Fatal(err)
	}
	checkEstimates(t, "refs_mean_p", mean, r.table(t, "refs_mean_p"), &worst)
	bySite, err := LevelContrastsBy(pm, groupsOf(t, pdm, "product", "site"), declP, Options{})
	if err != nil {
		t.Fatal(err)
	}
	want = r.table(t, "decl_p_by_site")
	checkBy(t, "decl_p_by_site", "site", bySite, want.Site)
	checkEstimates(t, "decl_p_by_site", flatten(bySite), want, &worst)
	t.Logf("worst relative disagreement: estimates %.2g, p %.2g, ratios %.2g", worst.est, worst.p, wr)
}

func productContrasts() []LevelContrast {
	return []LevelContrast{
		{Name: "newX_vs_control", Levels: []string{"control", "newX"}, Coef: []float64{-1, 1}, Comparison: true},
		{Name: "newY_vs_control", Levels: []string{"control", "newY"}, Coef: []float64{-1, 1}, Comparison: true},
		{Name: "newX_vs_refs", Levels: []string{"refA", "refB", "newX"}, Coef: []float64{-0.5, -0.5, 1}, Comparison: true},
		{Name: "newY_vs_refs", Levels: []string{"refA", "refB", "newY"}, Coef: []float64{-0.5, -0.5, 1}, Comparison: true},
	}
}

// Interaction contrasts on the irrigation x nitrogen cell means:
// contrast(emm, interaction = c("pairwise", "pairwise")) on the yield
// scale, and on the log scale reported as ratios of ratios
// (type = "response").
func TestInteractionContrastsAgainstEmmeans(t *testing.T) {
	r := loadContrastRef(t)
	nit := r.NitrogenData.NitrogenLevels
	var worst agreement
	var wr float64
	checkInteraction(t, r, "int_pairwise", Transform{Kind: TransformNone}, PairwiseContrasts(nit), &worst, &wr)
	checkInteraction(t, r, "log_int_pairwise", Transform{Kind: TransformLog}, PairwiseContrasts(nit), &worst, &wr)
	t.Logf("worst relative disagreement: estimates %.2g, p %.2g, ratios of ratios %.2g", worst.est, worst.p, wr)
}

// checkInteraction compares the interaction contrasts of irrigation
// pairs by the contrasts other over nitrogen with the emmeans table key
// (and, on a log scale, their ratios with key_response). emmeans varies
// the first factor's contrast fastest, InteractionContrasts the slowest.
func checkInteraction(t *testing.T, r *contrastRef, key string, tr Transform, other []LevelContrast, worst *agreement, wr *float64) {
	t.Helper()
	irr, nit := r.NitrogenData.IrrigationLevels, r.NitrogenData.NitrogenLevels
	m, dm := nitrogenFit(t, r, tr)
	L, _, err := dm.MeansGrid([]string{"irrigation", "nitrogen"})
	if err != nil {
		t.Fatal(err)
	}
	first := PairwiseContrasts(irr)
	got, err := InteractionContrasts(m, L, []InteractionFactor{{Levels: irr, Contrasts: first}, {Levels: nit, Contrasts: other}}, Options{})
	if err != nil {
		t.Fatal(err)
	}
	want := r.table(t, key)
	second := want.NitrogenPairwise
	if second == nil {
		second = want.NitrogenRobson
	}
	reordered := make([]Estimate, len(got))
	for a := range first {
		for b := range other {
			e := got[a*len(other)+b]
			k := b*len(first) + a
			label := "(" + want.IrrigationPairwise[k] + "):" + second[k]
			if strings.Contains(second[k], " ") {
				label = "(" + want.IrrigationPairwise[k] + "):(" + second[k] + ")"
			}
			if e.Label != label {
				t.Fatalf("%s: contrast %q, emmeans row %d is %q", key, e.Label, k+1, label)
			}
			reordered[k] = e
		}
	}
	checkEstimates(t, key, reordered, want, worst)
	if !tr.IsLog() {
		return
	}
	ratios, err := BackTransformDifferences(tr, reordered)
	if err != nil {
		t.Fatal(err)
	}
	want = r.table(t, key+"_response")
	for i, b := range ratios {
		for _, q := range []struct {
			q         string
			got, want float64
		}{{"ratio of ratios", b.Ratio, want.Ratio[i]}, {"lower", b.Lower, want.Lower[i]}, {"upper", b.Upper, want.Upper[i]}} {
			testkit.CheckRelClose(t, b.Label+" "+q.q+" (emmeans type = response)", q.got, q.want, tolEstimate)
			*wr = math.Max(*wr, testkit.RelErr(q.got, q.want))
		}
	}
}

// Equivalence and non-inferiority of declared contrasts by TOST against
// emmeans' test(..., delta, side): for equivalence emmeans reports
// t = (|d| - δ)/SE with its left tail, which is the larger of the two
// one-sided p-values; for non-inferiority (side ">") t = (d + δ)/SE,
// right-tailed; for non-superiority (side "<") t = (d - δ)/SE,
// left-tailed. The TOST interval is confint(level = 0.90). Products trial
// on the log scale with ratio margins 0.8 to 1.25; nitrogen trial on the
// yield scale with margins of ±5.
func TestEquivalenceOfDeclaredContrasts(t *testing.T) {
	r := loadContrastRef(t)
	pm, pdm := productsFit(t, r)
	L, _, err := pdm.MeansGrid([]string{"product"})
	if err != nil {
		t.Fatal(err)
	}
	pe, err := LevelContrasts(pm, L, r.ProductsData.ProductLevels, productContrasts(), Options{})
	if err != nil {
		t.Fatal(err)
	}
	m, dm := nitrogenFit(t, r, Transform{Kind: TransformNone})
	Li, _, err := dm.MeansGrid([]string{"irrigation"})
	if err != nil {
		t.Fatal(err)
	}
	ie, err := LevelContrasts(m, Li, r.NitrogenData.IrrigationLevels, []LevelContrast{
		{Name: "full_vs_rainfed", Levels: []string{"rainfed", "full"}, Coef: []float64{-1, 1}, Comparison: true},
		{Name: "deficit_vs_others", Levels: []string{"rainfed", "deficit", "full"}, Coef: []float64{-0.5, 1, -0.5}, Comparison: true},
	}, Options{})
	if err != nil {
		t.Fatal(err)
	}
	var w float64
	chk := func(what string, got, want float64) {
		t.Helper()
		testkit.CheckRelClose(t, what, got, want, tolP)
		w = math.Max(w, testkit.RelErr(got, want))
	}
	logT := Transform{Kind: TransformLog}
	ratioMargin := Margin{Scale: MarginRatio, Lower: 0.8, Upper: 1.25}
	eq, ni, ci := r.table(t, "decl_p_equivalence"), r.table(t, "decl_p_noninferiority"), r.table(t, "decl_p_ci90")
	if !testkit.RelClose(eq.Delta, math.Log(1.25), 1e-15) {
		t.Fatalf("emmeans margin %v, want log(1.25)", eq.Delta)
	}
	for i, d := range pe {
		e, err := TOST(d, logT, ratioMargin, 0.05)
		if err != nil {
			t.Fatal(err)
		}
		tt := e.TUpper
		if d.Estimate < 0 {
			tt = -e.TLower
		}
		chk(d.Label+" equivalence t (emmeans)", tt, eq.T[i])
		chk(d.Label+" equivalence p (emmeans)", e.P, eq.P[i])
		chk(d.Label+" TOST lower limit (emmeans confint 90%)", e.CILower, ci.Lower[i])
		chk(d.Label+" TOST upper limit (emmeans confint 90%)", e.CIUpper, ci.Upper[i])
		n, err := NonInferiorityTest(d, logT, ratioMargin, HigherIsBetter, 0.05)
		if err != nil {
			t.Fatal(err)
		}
		chk(d.Label+" non-inferiority t (emmeans)", n.T, ni.T[i])
		chk(d.Label+" non-inferiority p (emmeans)", n.P, ni.P[i])
	}
	eq, ns := r.table(t, "decl_i_equivalence"), r.table(t, "decl_i_nonsuperiority")
	diffMargin := Margin{Scale: MarginDifference, Lower: -eq.Delta, Upper: eq.Delta}
	for i, d := range ie {
		e, err := TOST(d, Transform{Kind: TransformNone}, diffMargin, 0.05)
		if err != nil {
			t.Fatal(err)
		}
		tt := e.TUpper
		if d.Estimate < 0 {
			tt = -e.TLower
		}
		chk(d.Label+" equivalence t (emmeans)", tt, eq.T[i])
		chk(d.Label+" equivalence p (emmeans)", e.P, eq.P[i])
		n, err := NonInferiorityTest(d, Transform{Kind: TransformNone}, diffMargin, LowerIsBetter, 0.05)
		if err != nil {
			t.Fatal(err)
		}
		chk(d.Label+" non-superiority t (emmeans)", n.T, ns.T[i])
		chk(d.Label+" non-superiority p (emmeans)", n.P, ns.P[i])
	}
	t.Logf("worst relative disagreement %.2g", w)
}

func TestDeclaredContrastErrors(t *testing.T) {
	levels := []string{"control", "refA", "refB", "new"}
	for _, c := range []LevelContrast{
		{Levels: []string{"new", "control"}, Coef: []float64{1, -1}}, // no name
		{Name: "empty"}, // no coefficients
		{Name: "short", Levels: []string{"new", "control"}, Coef: []float64{1}},                                      // lengths differ
		{Name: "unknown", Levels: []string{"new", "placebo"}, Coef: []float64{1, -1}},                                // unknown level
		{Name: "twice", Levels: []string{"new", "new"}, Coef: []float64{1, -1}},                                      // level twice
		{Name: "nan", Levels: []string{"new", "control"}, Coef: []float64{math.NaN(), -1}},                           // not finite
		{Name: "zero", Levels: []string{"new", "control"}, Coef: []float64{0, 0}},                                    // all zero
		{Name: "sum", Levels: []string{"new", "refA", "refB"}, Coef: []float64{1, -0.333, -0.333}, Comparison: true}, // sum 0.334
	} {
		if _, err := c.Weights(levels); err == nil {
			t.Errorf("contrast %+v: want an error", c)
		} else if c.Name == "unknown" && !strings.Contains(err.Error(), `"placebo"`) {
			t.Errorf("unknown level: error %q does not name it", err)
		}
	}
	// Decimal coefficients that sum to zero up to rounding are a comparison.
	w, err := LevelContrast{Name: "tenths", Levels: []string{"refA", "refB", "new"}, Coef: []float64{0.1, 0.2, -0.3}, Comparison: true}.Weights(levels)
	if err != nil || w[0] != 0 || w[3] != -0.3 {
		t.Errorf("tenths: %v, %v", w, err)
	}
	if _, err := (LevelContrast{Name: "mean", Levels: []string{"refA", "refB"}, Coef: []float64{0.5, 0.5}}).Weights(levels); err != nil {
		t.Errorf("a non-comparison need not sum to zero: %v", err)
	}

	m := &ols{beta: []float64{1, 2, 3, 5}, cov: identitySym(4), df: 8}
	L := mat.NewDense(4, 4, nil)
	for i := 0; i < 4; i++ {
		L.Set(i, i, 1)
	}
	if _, err := LevelContrasts(m, L, levels[:3], nil, Options{}); err == nil {
		t.Error("three labels for four rows: want an error")
	}
	if _, err := LevelContrasts(m, L, []string{"a", "b", "a", "c"}, nil, Options{}); err == nil {
		t.Error("a row label twice: want an error")
	}
	if _, err := ControlContrasts(levels, "placebo"); err == nil {
		t.Error("unknown control: want an error")
	}

	// 2 x 2 cell grid.
	ab := []InteractionFactor{
		{Levels: []string{"a1", "a2"}, Contrasts: PairwiseContrasts([]string{"a1", "a2"})},
		{Levels: []string{"b1", "b2"}, Contrasts: PairwiseContrasts([]string{"b1", "b2"})},
	}
	got, err := InteractionContrasts(m, L, ab, Options{})
	if err != nil {
		t.Fatal(err)
	}
	// (μ11 - μ12) - (μ21 - μ22) = (1 - 2) - (3 - 5) = 1 by hand, SE
	// sqrt(4) = 2 with V = I.
	if len(got) != 1 || got[0].Label != "(a1 - a2):(b1 - b2)" || got[0].Estimate != 1 || got[0].SE != 2 {
		t.Errorf("2x2 interaction %+v", got)
	}
	if _, err := InteractionContrasts(m, L, ab[:1], Options{}); err == nil {
		t.Error("one factor: want an error")
	}
	notSum := []InteractionFactor{ab[0], {Levels: []string{"b1", "b2"}, Contrasts: []LevelContrast{{Name: "b1", Levels: []string{"b1"}, Coef: []float64{1}}}}}
	if _, err := InteractionContrasts(m, L, notSum, Options{}); err == nil {
		t.Error("a contrast not summing to zero in an interaction: want an error")
	}
	three := []InteractionFactor{ab[0], {Levels: []string{"b1", "b2", "b3"}, Contrasts: PairwiseContrasts([]string{"b1", "b2", "b3"})}}
	if _, err := InteractionContrasts(m, L, three, Options{}); err == nil {
		t.Error("6 cells for 4 rows: want an error")
	}
}
