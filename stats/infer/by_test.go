package infer

import (
	"fmt"
	"math"
	"strings"
	"testing"

	"gonum.org/v1/gonum/mat"

	"furrow/stats/multcomp"

	"furrow/internal/testkit"
)

// emmeans(fit, ~ nitrogen | irrigation) and ~ irrigation | nitrogen on the
// unbalanced nitrogen trial: the conditional means average over blocks
// with equal weights and hold soil nitrate at its mean.
func TestConditionalMeansAgainstEmmeans(t *testing.T) {
	r := loadContrastRef(t)
	m, dm := nitrogenFit(t, r, Transform{Kind: TransformNone})
	var worst agreement
	for _, c := range []struct{ factor, by, key, byCol string }{
		{"nitrogen", "irrigation", "means_n_by_i", "irrigation"},
		{"irrigation", "nitrogen", "means_i_by_n", "nitrogen"},
	} {
		want := r.table(t, c.key)
		got, err := MeansBy(m, groupsOf(t, dm, c.factor, c.by), Options{})
		if err != nil {
			t.Fatal(err)
		}
		byCol := want.Irrigation
		if c.byCol == "nitrogen" {
			byCol = want.Nitrogen
		}
		checkBy(t, c.key, c.by, got, byCol)
		checkEstimates(t, c.key, flatten(got), want, &worst)
	}
	for _, c := range []struct{ factor, key string }{{"nitrogen", "means_n"}, {"irrigation", "means_i"}} {
		L, labels, err := dm.MeansGrid([]string{c.factor})
		if err != nil {
			t.Fatal(err)
		}
		got, err := MarginalMeans(m, L, labels, Options{})
		if err != nil {
			t.Fatal(err)
		}
		checkEstimates(t, c.key, got, r.table(t, c.key), &worst)
	}
	t.Logf("worst relative disagreement: estimates %.2g, p %.2g", worst.est, worst.p)
}

// Simple effects of nitrogen within each irrigation regime, and of
// irrigation within each rate: contrast(emm, "pairwise") and
// contrast(emm, "trt.vs.ctrl", ref = 1), unadjusted; Tukey and Holm per
// by level; Bonferroni and Holm across all levels (summary(by = NULL)).
func TestSimpleEffectsAgainstEmmeans(t *testing.T) {
	r := loadContrastRef(t)
	m, dm := nitrogenFit(t, r, Transform{Kind: TransformNone})
	var worst agreement
	nbi := groupsOf(t, dm, "nitrogen", "irrigation")
	pw, err := PairwiseBy(m, nbi, Options{})
	if err != nil {
		t.Fatal(err)
	}
	want := r.table(t, "pairs_n_by_i")
	checkBy(t, "pairs_n_by_i", "irrigation", pw, want.Irrigation)
	for i, e := range flatten(pw) {
		// emmeans writes numeric-looking levels with the factor name.
		if w := strings.ReplaceAll(want.Contrast[i], "nitrogen", ""); e.Label != w {
			t.Fatalf("pair %d is %q, emmeans %q", i+1, e.Label, want.Contrast[i])
		}
	}
	checkEstimates(t, "pairs_n_by_i", flatten(pw), want, &worst)

	ibn, err := PairwiseBy(m, groupsOf(t, dm, "irrigation", "nitrogen"), Options{})
	if err != nil {
		t.Fatal(err)
	}
	checkEstimates(t, "pairs_i_by_n", flatten(ibn), r.table(t, "pairs_i_by_n"), &worst)

	vc, err := VersusControlBy(m, nbi, "0", Options{})
	if err != nil {
		t.Fatal(err)
	}
	checkEstimates(t, "ctrl_n_by_i", flatten(vc), r.table(t, "ctrl_n_by_i"), &worst)

	// Adjusted p-values and simultaneous limits. Tukey's p comes from the
	// studentised range: R's ptukey carries about 1e-11 absolute, so p is
	// compared within 5e-10 absolute or 1e-7 relative, and qtukey's
	// limits at 1e-7 relative (the precisions TestFamiliesChickwts sets
	// for TukeyHSD; measured here beside them).
	for _, c := range []struct {
		key    string
		fam    []GroupEstimates
		method multcomp.Method
		scope  Scope
		// limits: compare the simultaneous limits; with holm emmeans
		// gives Bonferroni limits where Adjusted repeats the unadjusted
		// ones (no interval matches Holm's step-down test).
		limits bool
	}{
		{"pairs_n_by_i_tukey", pw, MethodTukey, PerGroup, true},
		{"pairs_n_by_i_holm", pw, multcomp.Holm, PerGroup, false},
		{"pairs_n_by_i_bonferroni_across", pw, multcomp.Bonferroni, AcrossGroups, true},
		{"pairs_n_by_i_holm_across", pw, multcomp.Holm, AcrossGroups, false},
		{"ctrl_n_by_i_bonferroni", vc, multcomp.Bonferroni, PerGroup, true},
	} {
		want := r.table(t, c.key)
		adj, err := AdjustBy(m, c.fam, c.method, c.scope)
		if err != nil {
			t.Fatal(err)
		}
		if len(adj) != len(c.fam) {
			t.Fatalf("%s: %d adjusted groups for %d", c.key, len(adj), len(c.fam))
		}
		k := 0
		var wp, wl float64
		for _, a := range adj {
			for j, e := range a.Estimates {
				name := fmt.Sprintf("%s %s (row %d)", c.key, e.Label, k+1)
				if c.method == MethodTukey {
					testkit.CheckWithin(t, name+" adjusted p (emmeans)", a.PAdjusted[j], want.P[k], 1e-7, 5e-10)
				} else {
					testkit.CheckRelClose(t, name+" adjusted p (emmeans)", a.PAdjusted[j], want.P[k], tolP)
				}
				wp = math.Max(wp, math.Min(testkit.RelErr(a.PAdjusted[j], want.P[k]), math.Abs(a.PAdjusted[j]-want.P[k])))
				if c.limits {
					tol := tolEstimate
					if c.method == MethodTukey {
						tol = 1e-7
					}
					testkit.CheckRelClose(t, name+" lower (emmeans)", a.Lower[j], want.Lower[k], tol)
					testkit.CheckRelClose(t, name+" upper (emmeans)", a.Upper[j], want.Upper[k], tol)
					wl = math.Max(wl, math.Max(testkit.RelErr(a.Lower[j], want.Lower[k]), testkit.RelErr(a.Upper[j], want.Upper[k])))
				}
				k++
			}
		}
		if k != len(want.P) {
			t.Errorf("%s: %d rows, emmeans %d", c.key, k, len(want.P))
		}
		t.Logf("%s: worst p disagreement %.2g (smaller of relative and absolute), limits %.2g relative", c.key, wp, wl)
	}
	t.Logf("worst relative disagreement: estimates %.2g, p %.2g", worst.est, worst.p)
}

// On lm(log(yield) ~ ...): conditional means back-transformed to
// geometric means (type = "response") and rate-versus-zero comparisons
// within each regime as ratios.
func TestConditionalLogAgainstEmmeans(t *testing.T) {
	r := loadContrastRef(t)
	tr := Transform{Kind: TransformLog}
	m, dm := nitrogenFit(t, r, tr)
	var worst agreement
	nbi := groupsOf(t, dm, "nitrogen", "irrigation")
	means, err := MeansBy(m, nbi, Options{})
	if err != nil {
		t.Fatal(err)
	}
	checkEstimates(t, "log_means_n_by_i", flatten(means), r.table(t, "log_means_n_by_i"), &worst)
	back, err := BackTransformMeans(tr, flatten(means))
	if err != nil {
		t.Fatal(err)
	}
	want := r.table(t, "log_means_n_by_i_response")
	var wr float64
	for i, b := range back {
		for _, c := range []struct {
			q         string
			got, want float64
		}{{"response", b.Response, want.Response[i]}, {"lower", b.Lower, want.Lower[i]}, {"upper", b.Upper, want.Upper[i]}} {
			testkit.CheckRelClose(t, fmt.Sprintf("log_means_n_by_i_response row %d %s (emmeans)", i+1, c.q), c.got, c.want, tolEstimate)
			wr = math.Max(wr, testkit.RelErr(c.got, c.want))
		}
	}
	vc, err := VersusControlBy(m, nbi, "0", Options{})
	if err != nil {
		t.Fatal(err)
	}
	ratios, err := BackTransformDifferences(tr, flatten(vc))
	if err != nil {
		t.Fatal(err)
	}
	want = r.table(t, "log_ctrl_n_by_i_response")
	for i, b := range ratios {
		for _, c := range []struct {
			q         string
			got, want float64
		}{{"ratio", b.Ratio, want.Ratio[i]}, {"lower", b.Lower, want.Lower[i]}, {"upper", b.Upper, want.Upper[i]}} {
			testkit.CheckRelClose(t, fmt.Sprintf("log_ctrl_n_by_i_response %s %s (emmeans)", b.Label, c.q), c.got, c.want, tolEstimate)
			wr = math.Max(wr, testkit.RelErr(c.got, c.want))
		}
		testkit.CheckRelClose(t, b.Label+" p (emmeans)", flatten(vc)[i].P, want.P[i], tolP)
	}
	t.Logf("worst relative disagreement: estimates %.2g, p %.2g, response scale %.2g", worst.est, worst.p, wr)
}

// The conditional means of nitrogen averaged with equal weights over the
// irrigation regimes are the marginal nitrogen means.
func TestConditionalMeansAverage(t *testing.T) {
	r := loadContrastRef(t)
	m, dm := nitrogenFit(t, r, Transform{Kind: TransformNone})
	groups := groupsOf(t, dm, "nitrogen", "irrigation")
	by, err := MeansBy(m, groups, Options{})
	if err != nil {
		t.Fatal(err)
	}
	L, labels, err := dm.MeansGrid([]string{"nitrogen"})
	if err != nil {
		t.Fatal(err)
	}
	marg, err := MarginalMeans(m, L, labels, Options{})
	if err != nil {
		t.Fatal(err)
	}
	for i := range marg {
		var avg float64
		for _, g := range by {
			avg += g.Estimates[i].Estimate / float64(len(by))
		}
		testkit.CheckRelClose(t, marg[i].Label+" average of conditional means", avg, marg[i].Estimate, 1e-14)
	}
}

// Per-group and across-group adjustments equal Adjust on each group and on
// the whole family. The model has independent cell means (β the means, V
// diagonal), two groups of three, so the comparisons with the control
// have a product-form correlation within a group and Dunnett's
// quadrature applies.
func TestAdjustByMatchesAdjust(t *testing.T) {
	beta := []float64{10, 12, 15, 11, 11.5, 16}
	cov := mat.NewSymDense(6, nil)
	for i, v := range []float64{1, 2, 1.5, 0.8, 1.2, 3} {
		cov.SetSym(i, i, v)
	}
	m := &ols{beta: beta, cov: cov, df: 20}
	var groups []Group
	for g, by := range []string{"b[b1]", "b[b2]"} {
		L := mat.NewDense(3, 6, nil)
		for i := 0; i < 3; i++ {
			L.Set(i, 3*g+i, 1)
		}
		groups = append(groups, Group{By: by, L: L, Labels: []string{"ctrl", "a", "b"}})
	}
	vc, err := VersusControlBy(m, groups, "ctrl", Options{})
	if err != nil {
		t.Fatal(err)
	}
	per, err := AdjustBy(m, vc, MethodDunnett, PerGroup)
	if err != nil {
		t.Fatal(err)
	}
	for i, g := range vc {
		a, err := Adjust(m, g.Estimates, MethodDunnett, 0)
		if err != nil {
			t.Fatal(err)
		}
		testkit.CheckSlice(t, g.By+" dunnett p per group", per[i].PAdjusted, a.PAdjusted, 0)
		testkit.CheckSlice(t, g.By+" dunnett lower limits per group", per[i].Lower, a.Lower, 0)
		testkit.CheckClose(t, g.By+" dunnett critical per group", per[i].Critical, a.Critical, 0)
	}
	for _, method := range []multcomp.Method{multcomp.Holm, multcomp.Bonferroni} {
		across, err := AdjustBy(m, vc, method, AcrossGroups)
		if err != nil {
			t.Fatal(err)
		}
		whole, err := Adjust(m, flatten(vc), method, 0)
		if err != nil {
			t.Fatal(err)
		}
		var ps, lo, up []float64
		for i, a := range across {
			if len(a.Estimates) != len(vc[i].Estimates) || a.Method != method {
				t.Fatalf("%s across groups: group %d has %d estimates, method %s", method, i, len(a.Estimates), a.Method)
			}
			ps = append(ps, a.PAdjusted...)
			lo = append(lo, a.Lower...)
			up = append(up, a.Upper...)
		}
		testkit.CheckSlice(t, string(method)+" p across groups", ps, whole.PAdjusted, 0)
		testkit.CheckSlice(t, string(method)+" lower limits across groups", lo, whole.Lower, 0)
		testkit.CheckSlice(t, string(method)+" upper limits across groups", up, whole.Upper, 0)
	}
	// Tukey within each group needs the group's number of means.
	pw, err := PairwiseBy(m, groups, Options{})
	if err != nil {
		t.Fatal(err)
	}
	tk, err := AdjustBy(m, pw, MethodTukey, PerGroup)
	if err != nil {
		t.Fatal(err)
	}
	a, err := Adjust(m, pw[1].Estimates, MethodTukey, 3)
	if err != nil {
		t.Fatal(err)
	}
	testkit.CheckSlice(t, "tukey p in the second group", tk[1].PAdjusted, a.PAdjusted, 0)
}

func TestByErrors(t *testing.T) {
	m := &ols{beta: []float64{1, 2, 3, 4}, cov: identitySym(4), df: 8}
	L := mat.NewDense(4, 4, nil)
	for i := 0; i < 4; i++ {
		L.Set(i, i, 1)
	}
	levels := []string{"control", "refA", "refB", "new"}
	groups := []Group{{By: "b[1]", L: L, Labels: levels}}
	if _, err := VersusControlBy(m, groups, "placebo", Options{}); err == nil {
		t.Error("unknown control by group: want an error")
	} else if !strings.Contains(err.Error(), "b[1]") {
		t.Errorf("error %q does not name the group", err)
	}
	if _, err := MeansBy(m, nil, Options{}); err == nil {
		t.Error("no groups: want an error")
	}
	if _, err := PairwiseBy(m, []Group{{By: "b[1]", Labels: levels}}, Options{}); err == nil {
		t.Error("a group without a grid: want an error")
	}
	fam, err := PairwiseBy(m, groups, Options{})
	if err != nil {
		t.Fatal(err)
	}
	if fam[0].Means != 4 {
		t.Errorf("group of %d means, want 4", fam[0].Means)
	}
	if _, err := AdjustBy(m, fam, MethodTukey, AcrossGroups); err == nil {
		t.Error("tukey across groups: want an error")
	}
	if _, err := AdjustBy(m, fam, multcomp.Holm, Scope(7)); err == nil {
		t.Error("unknown scope: want an error")
	}
	if _, err := AdjustBy(m, nil, multcomp.Holm, PerGroup); err == nil {
		t.Error("no groups to adjust: want an error")
	}
}
