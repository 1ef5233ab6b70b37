package engine

// Rank and Welch steps.
//
// A rank or Welch step fits no linear model. Its fitter runs the step's
// test from stats/rank on the derived outcome and fills fitted with the
// global test, per-level summaries and, for the checks and figures, a
// residual per analysed observation:
//
//   - welch: the deviation from the mean of the observation's level of
//     the compared factor (the residuals of the cell-means model whose
//     means Welch's test compares; the fitted values are the level means);
//   - kruskal-wallis and rank-sum: the deviation from the median of the
//     observation's level;
//   - van-elteren: the deviation from the median of the observation's
//     level within its stratum;
//   - friedman and paired signed-rank: one sweep of Tukey's (1977,
//     Exploratory Data Analysis, ch. 11) median polish: the value minus its
//     block median, minus the median of those within its level;
//   - one-sample signed-rank: the difference minus the median difference.
//
// Checks declared on the step run on these deviations exactly as they run
// on a model's residuals (normality tests on all of them, variance tests
// grouped by the check's by columns). Rank steps set residOnly: there is
// no model, the deviations only centre the analysed values.

import (
	"errors"
	"fmt"
	"math"
	"slices"

	"furrow/checker/method"
	"furrow/checker/record"
	"furrow/plan"
	"furrow/stats/dist"
	"furrow/stats/rank"
)

// rankFactor returns the level of factor name per observation, or an
// error naming the step field that declared it.
func rankFactor(ds *dataset, name, field string) ([]string, error) {
	if name == "" {
		return nil, fmt.Errorf("the step names no %s factor", field)
	}
	v, ok := ds.factors[name]
	if !ok {
		return nil, fmt.Errorf("%s column %q is not a factor of the analysed data", field, name)
	}
	return v, nil
}

// levelsFor returns the levels of a factor present in values: declared
// order for declared levels, sorted for columns without declared levels
// (units).
func levelsFor(p *plan.Plan, name string, values []string) []string {
	if c := PlanColumn(p, name); c != nil && len(c.Levels) > 0 {
		return levelsOf(p, name, values)
	}
	return sortedLevels(values)
}

// splitBy returns the analysed values per level, in the order of levels.
func splitBy(y []float64, by []string, levels []string) [][]float64 {
	idx := make(map[string]int, len(levels))
	for i, l := range levels {
		idx[l] = i
	}
	out := make([][]float64, len(levels))
	for i, v := range by {
		if g, ok := idx[v]; ok {
			out[g] = append(out[g], y[i])
		}
	}
	return out
}

// centreBy returns y minus the centre (mean or median) of its cell, the
// cell being the joint level of the given factors, and the centres.
func centreBy(y []float64, centre func([]float64) float64, keys ...[]string) (resid, fit []float64) {
	cell := make([]string, len(y))
	for i := range y {
		k := ""
		for _, col := range keys {
			k += col[i] + "\x00"
		}
		cell[i] = k
	}
	members := map[string][]float64{}
	for i, k := range cell {
		members[k] = append(members[k], y[i])
	}
	c := make(map[string]float64, len(members))
	for k, v := range members {
		c[k] = centre(v)
	}
	resid, fit = make([]float64, len(y)), make([]float64, len(y))
	for i, k := range cell {
		fit[i] = c[k]
		resid[i] = y[i] - fit[i]
	}
	return resid, fit
}

// medianSweep is one sweep of median polish (Tukey 1977): the value minus
// its block median, then minus the median of those within its level.
func medianSweep(y []float64, block, level []string) (resid, fit []float64) {
	r1, _ := centreBy(y, median, block)
	resid, _ = centreBy(r1, median, level)
	fit = make([]float64, len(y))
	for i := range y {
		fit[i] = y[i] - resid[i]
	}
	return resid, fit
}

// ranks reports whether a step is a rank test (its checks see deviations
// of no fitted model, so they are tested on the analysed values).
func ranks(s *plan.Step) bool {
	r, _ := method.Default.Model(s.Model)
	return r.Ranks
}

// rankFitted assembles the parts every rank and Welch step shares.
func rankFitted(p *plan.Plan, s *plan.Step, ds *dataset, methodText string, test record.GlobalTest, resid, fit []float64) *fitted {
	cmpF := compareFactor(p, s)
	f := &fitted{
		summary: record.FitSummary{Method: methodText, Aliased: []string{}, ResidualDF: record.NaN, Sigma: record.NaN, RSquared: record.NaN,
			Criterion: record.NaN, Converged: true},
		resid:     resid,
		fit:       fit,
		groups:    ds.factors[cmpF],
		compare:   cmpF,
		rankLike:  true,
		residOnly: ranks(s),
	}
	t := test
	f.detail = &record.StepDetail{Test: &t, GroupSummaries: groupSummaries(p, cmpF, ds), MeansLevel: record.NaN, MeansOver: []string{}, MeansAt: []record.CovariateSetting{}}
	return f
}

// fitKruskal runs the Kruskal & Wallis (1952, JASA 47:583) test of the
// analysed values between the levels of compare.
func fitKruskal(p *plan.Plan, _ *plan.Endpoint, s *plan.Step, ds *dataset) (*fitted, error) {
	g, err := rankFactor(ds, s.Compare, "compare")
	if err != nil {
		return nil, err
	}
	levels := levelsFor(p, s.Compare, g)
	r, err := rank.KruskalWallis(splitBy(ds.y, g, levels))
	if err != nil {
		return nil, fmt.Errorf("kruskal-wallis test of %s: %w", s.Compare, err)
	}
	resid, fit := centreBy(ds.y, median, g)
	return rankFitted(p, s, ds, "kruskal-wallis", record.GlobalTest{Method: "kruskal-wallis, tie-corrected, chi-squared",
		Statistic: record.Num(r.H), DF: []record.Num{record.Num(r.DF)}, P: record.Num(r.P)}, resid, fit), nil
}

// fitWelch runs Welch's (1951, Biometrika 38:330) one-way analysis of
// variance of the analysed values between the levels of compare. Its
// marginal means are the level means with t intervals on n-1 df.
func fitWelch(p *plan.Plan, _ *plan.Endpoint, s *plan.Step, ds *dataset) (*fitted, error) {
	g, err := rankFactor(ds, s.Compare, "compare")
	if err != nil {
		return nil, err
	}
	levels := levelsFor(p, s.Compare, g)
	groups := splitBy(ds.y, g, levels)
	r, err := rank.Welch(groups)
	if err != nil {
		return nil, fmt.Errorf("welch test of %s: %w", s.Compare, err)
	}
	resid, fit := centreBy(ds.y, mean, g)
	f := rankFitted(p, s, ds, "welch", record.GlobalTest{Method: "welch one-way anova, F",
		Statistic: record.Num(r.F), DF: []record.Num{record.Num(r.DF1), record.Num(r.DF2)}, P: record.Num(r.P)}, resid, fit)
	tr := responseScale(s)
	for i, l := range levels {
		xs := groups[i]
		m, se, df := mean(xs), sd(xs)/math.Sqrt(float64(len(xs))), float64(len(xs)-1)
		tq := dist.TUpperQuantile(0.025, df)
		mm := record.MarginalMean{Factor: s.Compare, Level: l, Estimate: record.Num(m), SE: record.Num(se), DF: record.Num(df),
			Lower: record.Num(m - tq*se), Upper: record.Num(m + tq*se)}
		bt := func(v record.Num) record.Num {
			x, ok := backTransform(tr, float64(v))
			if !ok {
				return record.NaN
			}
			return record.Num(x)
		}
		mm.Response, mm.ResponseLower, mm.ResponseUpper = bt(mm.Estimate), bt(mm.Lower), bt(mm.Upper)
		if tr.Kind == plan.TransformReciprocal {
			mm.ResponseLower, mm.ResponseUpper = mm.ResponseUpper, mm.ResponseLower
		}
		f.detail.MarginalMeans = append(f.detail.MarginalMeans, mm)
	}
	return f, nil
}

// fitRankSum runs the Wilcoxon (1945) / Mann & Whitney (1947, Ann Math
// Stat 18:50) rank-sum test between the two levels of compare; the
// statistic is the U of the first level.
func fitRankSum(p *plan.Plan, _ *plan.Endpoint, s *plan.Step, ds *dataset) (*fitted, error) {
	g, err := rankFactor(ds, s.Compare, "compare")
	if err != nil {
		return nil, err
	}
	levels := levelsFor(p, s.Compare, g)
	if len(levels) != 2 {
		return nil, fmt.Errorf("rank-sum compares two levels of %s, but the analysed data have %d", s.Compare, len(levels))
	}
	groups := splitBy(ds.y, g, levels)
	r, err := rank.RankSum(groups[0], groups[1], rank.Options{})
	if err != nil {
		return nil, fmt.Errorf("rank-sum test of %s: %w", s.Compare, err)
	}
	how := "normal approximation with continuity correction"
	if r.Exact {
		how = "exact"
	}
	resid, fit := centreBy(ds.y, median, g)
	return rankFitted(p, s, ds, "rank-sum", record.GlobalTest{Method: fmt.Sprintf("wilcoxon-mann-whitney rank-sum, U of %s, %s", levels[0], how),
		Statistic: record.Num(r.U), DF: []record.Num{}, P: record.Num(r.P)}, resid, fit), nil
}

// fitVanElteren runs van Elteren's (1960, Bull Int Stat Inst 37:351)
// stratified rank test of compare within the strata of within: the
// two-sample Z for two levels, the k-sample mean-score statistic of
// Landis, Heyman & Koch (1978, Int Stat Rev 46:237) for more.
func fitVanElteren(p *plan.Plan, _ *plan.Endpoint, s *plan.Step, ds *dataset) (*fitted, error) {
	g, err := rankFactor(ds, s.Compare, "compare")
	if err != nil {
		return nil, err
	}
	st, err := rankFactor(ds, s.Within, "within")
	if err != nil {
		return nil, err
	}
	levels := levelsFor(p, s.Compare, g)
	strata := strataOf(p, ds.y, g, levels, st, s.Within)
	resid, fit := centreBy(ds.y, median, st, g)
	if len(levels) == 2 {
		r, err := rank.VanElteren(strata, rank.Options{})
		if err != nil {
			return nil, fmt.Errorf("van elteren test of %s within %s: %w", s.Compare, s.Within, err)
		}
		return rankFitted(p, s, ds, "van-elteren", record.GlobalTest{
			Method:    fmt.Sprintf("van elteren stratified rank-sum, two levels, z of %s, %d strata", levels[0], r.Strata),
			Statistic: record.Num(r.Z), DF: []record.Num{}, P: record.Num(r.P)}, resid, fit), nil
	}
	r, err := rank.VanElterenK(strata)
	if err != nil {
		return nil, fmt.Errorf("van elteren test of %s within %s: %w", s.Compare, s.Within, err)
	}
	return rankFitted(p, s, ds, "van-elteren", record.GlobalTest{
		Method:    fmt.Sprintf("van elteren stratified mean-score, %d levels, chi-squared, %d strata", len(levels), r.Strata),
		Statistic: record.Num(r.Q), DF: []record.Num{record.Num(r.DF)}, P: record.Num(r.P)}, resid, fit), nil
}

// strataOf groups the values by stratum (in the stratum column's level
// order) and, within each, by level of the compared factor.
func strataOf(p *plan.Plan, y []float64, g, levels, st []string, within string) []rank.Stratum {
	sl := levelsFor(p, within, st)
	si := make(map[string]int, len(sl))
	for i, l := range sl {
		si[l] = i
	}
	li := make(map[string]int, len(levels))
	for i, l := range levels {
		li[l] = i
	}
	out := make([]rank.Stratum, len(sl))
	for i := range out {
		out[i].Groups = make([][]float64, len(levels))
	}
	for i := range y {
		j, ok := li[g[i]]
		if !ok {
			continue
		}
		out[si[st[i]]].Groups[j] = append(out[si[st[i]]].Groups[j], y[i])
	}
	return out
}

// blockTable arranges the values as blocks x levels with one value per
// cell, for the Friedman and paired signed-rank tests. Blocks that lack a
// level are left out and returned in left; a cell with two values is an
// error.
func blockTable(p *plan.Plan, y []float64, g, levels, b []string, within, compare string) (table [][]float64, blocks, left []string, err error) {
	bl := levelsFor(p, within, b)
	bi := make(map[string]int, len(bl))
	for i, l := range bl {
		bi[l] = i
	}
	li := make(map[string]int, len(levels))
	for i, l := range levels {
		li[l] = i
	}
	cells := make([][]float64, len(bl))
	seen := make([][]bool, len(bl))
	for i := range cells {
		cells[i] = make([]float64, len(levels))
		seen[i] = make([]bool, len(levels))
	}
	for i := range y {
		j, ok := li[g[i]]
		if !ok {
			continue
		}
		k := bi[b[i]]
		if seen[k][j] {
			return nil, nil, nil, fmt.Errorf("%s %q has more than one value at %s %q; the test needs one value per %s and level (derive unit-mean first)",
				within, b[i], compare, g[i], within)
		}
		seen[k][j] = true
		cells[k][j] = y[i]
	}
	for k := range cells {
		if slices.Contains(seen[k], false) {
			left = append(left, bl[k])
			continue
		}
		table = append(table, cells[k])
		blocks = append(blocks, bl[k])
	}
	return table, blocks, left, nil
}

// leftOut returns the observations whose block is in left (the blocks a
// blocked rank test left out).
func leftOut(b, left []string) []int {
	var out []int
	for i, v := range b {
		if slices.Contains(left, v) {
			out = append(out, i)
		}
	}
	return out
}

// fitFriedman runs Friedman's (1937, JASA 32:675) test of compare within
// the blocks named by within.
func fitFriedman(p *plan.Plan, _ *plan.Endpoint, s *plan.Step, ds *dataset) (*fitted, error) {
	g, err := rankFactor(ds, s.Compare, "compare")
	if err != nil {
		return nil, err
	}
	b, err := rankFactor(ds, s.Within, "within")
	if err != nil {
		return nil, err
	}
	levels := levelsFor(p, s.Compare, g)
	table, blocks, left, err := blockTable(p, ds.y, g, levels, b, s.Within, s.Compare)
	if err != nil {
		return nil, fmt.Errorf("friedman test: %w", err)
	}
	r, err := rank.Friedman(table)
	if err != nil {
		return nil, fmt.Errorf("friedman test of %s within %s: %w", s.Compare, s.Within, err)
	}
	resid, fit := medianSweep(ds.y, b, g)
	f := rankFitted(p, s, ds, "friedman", record.GlobalTest{Method: fmt.Sprintf("friedman, tie-corrected, chi-squared, %s", blocksText(len(blocks), len(left), s.Within)),
		Statistic: record.Num(r.Stat), DF: []record.Num{record.Num(r.DF)}, P: record.Num(r.P)}, resid, fit)
	f.dropped, f.droppedReason, f.droppedColumn = leftOut(b, left), record.UnusedIncompleteBlock, s.Within
	return f, nil
}

func blocksText(used, incomplete int, within string) string {
	if incomplete == 0 {
		return fmt.Sprintf("%d complete %s levels", used, within)
	}
	return fmt.Sprintf("%d complete %s levels, %d incomplete left out", used, within, incomplete)
}

// signedRankData returns the differences a signed-rank step tests: the
// per-unit outcome itself (H0: median 0), its difference from the baseline
// (derive: baseline), or, with compare and within, the value at the first
// level of compare minus the value at the second within each level of
// within (paired).
func signedRankData(p *plan.Plan, s *plan.Step, ds *dataset) (d []float64, what string, left []string, err error) {
	if s.Compare == "" {
		if ds.baseline != "" {
			base := ds.nums[ds.baseline]
			d = make([]float64, len(ds.y))
			for i := range d {
				d[i] = ds.y[i] - base[i]
			}
			return d, "outcome minus baseline, H0 median 0", nil, nil
		}
		return slices.Clone(ds.y), "one sample, H0 median 0", nil, nil
	}
	g, err := rankFactor(ds, s.Compare, "compare")
	if err != nil {
		return nil, "", nil, err
	}
	b, err := rankFactor(ds, s.Within, "within")
	if err != nil {
		return nil, "", nil, err
	}
	levels := levelsFor(p, s.Compare, g)
	if len(levels) != 2 {
		return nil, "", nil, fmt.Errorf("the paired signed-rank test compares two levels of %s, but the analysed data have %d", s.Compare, len(levels))
	}
	table, blocks, left, err := blockTable(p, ds.y, g, levels, b, s.Within, s.Compare)
	if err != nil {
		return nil, "", nil, err
	}
	for _, row := range table {
		d = append(d, row[0]-row[1])
	}
	return d, fmt.Sprintf("paired, %s minus %s within %s, %s", levels[0], levels[1], s.Within, blocksText(len(blocks), len(left), s.Within)), left, nil
}

// fitSignedRank runs Wilcoxon's (1945, Biometrics Bull 1:80) signed-rank
// test (see signedRankData for what is tested).
func fitSignedRank(p *plan.Plan, _ *plan.Endpoint, s *plan.Step, ds *dataset) (*fitted, error) {
	d, what, left, err := signedRankData(p, s, ds)
	if err != nil {
		return nil, fmt.Errorf("signed-rank test: %w", err)
	}
	if len(d) == 0 {
		return nil, errors.New("signed-rank test: no complete pairs")
	}
	r, err := rank.SignedRank(d, rank.Options{})
	if err != nil {
		return nil, fmt.Errorf("signed-rank test: %w", err)
	}
	how := "normal approximation with continuity correction"
	if r.Exact {
		how = "exact"
	}
	var resid, fit []float64
	if s.Compare == "" {
		resid, fit = centreBy(d, median, make([]string, len(d)))
	} else {
		resid, fit = medianSweep(ds.y, ds.factors[s.Within], ds.factors[s.Compare])
	}
	f := rankFitted(p, s, ds, "signed-rank", record.GlobalTest{Method: fmt.Sprintf("wilcoxon signed-rank, V, %s, %s", what, how),
		Statistic: record.Num(r.V), DF: []record.Num{}, P: record.Num(r.P)}, resid, fit)
	if len(left) > 0 {
		f.dropped, f.droppedReason, f.droppedColumn = leftOut(ds.factors[s.Within], left), record.UnusedIncompleteBlock, s.Within
	}
	return f, nil
}
