package engine

import (
	"errors"
	"fmt"
	"math"
	"slices"
	"strings"

	"gonum.org/v1/gonum/mat"

	"furrow/checker/method"
	"furrow/checker/record"
	"furrow/plan"
	"furrow/stats/dist"
	"furrow/stats/multcomp"
)

// newHypothesisResult starts the result of hypothesis h on step s with the
// declared (or default) alpha and sides and the adjustment and estimator
// the step answers it with (plan.AnswerOn: the hypothesis's, or the step's
// declared answer), and returns them with the compared factor (h.Factor,
// else the plan's treatment column).
func newHypothesisResult(p *plan.Plan, s *plan.Step, h *plan.Hypothesis, epAlpha float64) (hr record.HypothesisResult, alpha float64, sides, adj, factor string) {
	alpha = h.Alpha
	if alpha == 0 {
		alpha = epAlpha
	}
	sides = h.Sides
	if sides == "" {
		sides = "two-sided"
	}
	a := plan.AnswerOn(s, h)
	declared := h.Adjust
	if declared == "" {
		declared = plan.AdjustNone
	}
	adj = a.Adjust
	if adj == "" {
		adj = plan.AdjustNone
	}
	hr = record.HypothesisResult{ID: h.ID, Pos: posText(h.Pos), Kind: h.Kind, Step: s.ID, Sides: sides, Alpha: record.Num(alpha),
		Adjust: declared, AdjustUsed: adj, Estimator: a.Estimate, Assessable: true, Comparisons: []record.Comparison{}}
	if a.Pos.Line > 0 {
		hr.Answer = posText(a.Pos)
	}
	hr.Level, hr.Intervals = record.NaN, ""
	switch h.Kind {
	case plan.HypEquivalence, plan.HypNonInferiority:
		hr.Level, hr.Intervals = record.Num(1-2*alpha), "per-comparison"
	case plan.HypVersusControl, plan.HypPairwise:
		hr.Level, hr.Intervals = record.Num(1-alpha), "per-comparison"
		if (adj == plan.AdjustDunnett || adj == plan.AdjustTukey) && method.Default.PairingOf(s) == method.Contrasts {
			hr.Intervals = "simultaneous"
		}
	}
	if m := h.Margin; m != nil {
		hr.Margin = &record.MarginSpec{Scale: m.Scale, Lower: record.NaN, Upper: record.NaN}
		if m.HasLower {
			hr.Margin.Lower = record.Num(m.Lower)
		}
		if m.HasUpper {
			hr.Margin.Upper = record.Num(m.Upper)
		}
	}
	factor = h.Factor
	if factor == "" {
		if c := ColumnByRole(p, plan.RoleTreatment); c != nil {
			factor = c.Name
		}
	}
	return hr, alpha, sides, adj, factor
}

// hypothesis answers one declared hypothesis on the reported step.
func hypothesis(p *plan.Plan, ep *plan.Endpoint, s *plan.Step, f *fitted, h *plan.Hypothesis, epAlpha float64) record.HypothesisResult {
	if a := plan.AnswerOn(s, h); a.Omit != "" {
		hr, _, _, _, _ := newHypothesisResult(p, s, h, epAlpha)
		hr.Assessable, hr.AdjustUsed, hr.Estimator = false, "", ""
		hr.Level, hr.Intervals = record.NaN, ""
		hr.Note = fmt.Sprintf("not answered on step %s, as the plan declares: %s", s.ID, a.Omit)
		return hr
	}
	if f.rankLike {
		// Rank and Welch steps: pairwise two-sample tests (engine_rank_hyp.go).
		return rankHypothesis(p, s, f, h, epAlpha)
	}
	hr, alpha, sides, adj, factor := newHypothesisResult(p, s, h, epAlpha)
	if f.linear == nil {
		hr.Assessable = false
		hr.AdjustUsed = ""
		hr.Note = fmt.Sprintf("step %s (%s) gives no model-based estimates; this hypothesis is not assessable on it", s.ID, s.Model)
		return hr
	}
	lf := f.linear
	if h.Kind == plan.HypTerm {
		typ := s.Anova
		if typ == 0 {
			typ = 3
		}
		label := (&planTerm{h.Term}).label()
		for _, row := range f.detail.Anova {
			if sameTerm(row.Term, h.Term) {
				r := row
				hr.TermTest = &r
				return hr
			}
		}
		hr.Assessable = false
		hr.Note = fmt.Sprintf("the model of step %s has no term %s (anova type %d)", s.ID, label, typ)
		return hr
	}
	var L *mat.Dense
	var labels []string
	var err error
	if lf.dm.TermIndex(factor) >= 0 {
		L, labels, err = lf.dm.MeansGrid([]string{factor})
	}
	if err != nil || len(labels) == 0 {
		hr.Assessable = false
		hr.Note = fmt.Sprintf("no marginal means of %s on step %s", factor, s.ID)
		return hr
	}
	row := map[string][]float64{}
	for i, lab := range labels {
		row[levelFromLabel(lab, factor)] = L.RawRowView(i)
	}
	var levels []string
	for _, lab := range labels {
		levels = append(levels, levelFromLabel(lab, factor))
	}
	// The same comparisons as on a rank step; a missing control shows up
	// below as a comparison whose level has no marginal mean.
	pairs, pairNote := hypothesisPairs(p, h, factor, levels)
	tr := analysisScale(s) // a count step compares on its log link (engine_glm.go)
	var ps []float64
	counts := levelCounts(f.ds, factor)
	ls := make([][]float64, 0, len(pairs)) // contrast vector per comparison (nil when a level is missing)
	for _, pr := range pairs {
		a, okA := row[pr[0]]
		b, okB := row[pr[1]]
		c := record.Comparison{Label: pr[0] + " - " + pr[1], Level: pr[0], Against: pr[1], Estimate: record.NaN, SE: record.NaN, DF: record.NaN,
			Statistic: record.NaN, P: record.NaN, PAdjusted: record.NaN, Lower: record.NaN, Upper: record.NaN, Ratio: record.NaN, RatioLower: record.NaN, RatioUpper: record.NaN}
		c.N, c.NAgainst = counts[pr[0]], counts[pr[1]]
		if !okA || !okB {
			hr.Comparisons = append(hr.Comparisons, c)
			ps = append(ps, math.NaN())
			ls = append(ls, nil)
			continue
		}
		l := make([]float64, len(a))
		for j := range l {
			l[j] = a[j] - b[j]
		}
		est, se := contrast(lf, l)
		df := lf.df(l)
		t := est / se
		c.Estimate, c.SE, c.DF, c.Statistic = record.Num(est), record.Num(se), record.Num(df), record.Num(t)
		var tq float64
		switch h.Kind {
		case plan.HypEquivalence, plan.HypNonInferiority:
			// Schuirmann (1987): two one-sided tests at alpha, 1-2alpha interval.
			tq = dist.TUpperQuantile(alpha, df)
			c.Equivalence = tost(h, tr, est, se, df, alpha)
			c.P, c.Statistic = decidingTest(h, c.Equivalence)
		default:
			tq = dist.TUpperQuantile(alpha/2, df)
			c.P = record.Num(pSided(t, df, sides))
			if sides != "two-sided" {
				tq = dist.TUpperQuantile(alpha, df)
			}
		}
		c.Lower, c.Upper = record.Num(est-tq*se), record.Num(est+tq*se)
		if sides == "less" && h.Kind != plan.HypEquivalence && h.Kind != plan.HypNonInferiority {
			c.Lower = record.Num(math.Inf(-1))
		}
		if sides == "greater" && h.Kind != plan.HypEquivalence && h.Kind != plan.HypNonInferiority {
			c.Upper = record.Num(math.Inf(1))
		}
		if IsLogScale(tr) {
			k := logBase(tr)
			c.Ratio, c.RatioLower, c.RatioUpper = record.Num(math.Exp(k*est)), record.Num(math.Exp(k*float64(c.Lower))), record.Num(math.Exp(k*float64(c.Upper)))
		}
		hr.Comparisons = append(hr.Comparisons, c)
		ps = append(ps, float64(c.P))
		ls = append(ls, l)
	}
	switch adj {
	case plan.AdjustTukey, plan.AdjustDunnett:
		simultaneous(&hr, lf, ls, adj, sides, len(levels), alpha, tr)
	default:
		adjP, err := adjustP(ps, adj)
		if err != nil {
			hr.Note = fmt.Sprintf("the %s adjustment could not be computed: %v", adj, err)
		}
		for i := range hr.Comparisons {
			hr.Comparisons[i].PAdjusted = record.Num(adjP[i])
		}
	}
	for i := range hr.Comparisons {
		pa := float64(hr.Comparisons[i].PAdjusted)
		hr.Comparisons[i].Reject = !math.IsNaN(pa) && pa < alpha
	}
	hr.Note = joinNotes(pairNote, hr.Note)
	return hr
}

type planTerm struct{ cols []string }

func (t *planTerm) label() string {
	s := ""
	for i, c := range t.cols {
		if i > 0 {
			s += ":"
		}
		s += c
	}
	return s
}

func sameTerm(label string, cols []string) bool {
	a := slices.Clone(cols)
	slices.Sort(a)
	var b []string
	start := 0
	for i := 0; i <= len(label); i++ {
		if i == len(label) || label[i] == ':' {
			b = append(b, label[start:i])
			start = i + 1
		}
	}
	slices.Sort(b)
	return slices.Equal(a, b)
}

// pSided returns the p-value of a t statistic for the given alternative.
func pSided(t, df float64, sides string) float64 {
	switch sides {
	case "less":
		return dist.TLower(t, df)
	case "greater":
		return dist.TUpper(t, df)
	}
	return dist.TTwoSided(t, df)
}

// tost computes the two one-sided tests of Schuirmann (1987) J
// Pharmacokinet Biopharm 15:657 against the margins, on the analysis scale.
func tost(h *plan.Hypothesis, tr plan.Transform, est, se, df, alpha float64) *record.EquivalenceResult {
	lo, hi := equivalenceMargins(h, tr)
	e := &record.EquivalenceResult{Lower: record.Num(lo), Upper: record.Num(hi), PLower: record.NaN, PUpper: record.NaN, TLower: record.NaN, TUpper: record.NaN}
	if !math.IsInf(lo, 0) {
		e.TLower = record.Num((est - lo) / se)
		e.PLower = record.Num(dist.TUpper(float64(e.TLower), df)) // H0: diff <= lo
	}
	if !math.IsInf(hi, 0) {
		e.TUpper = record.Num((est - hi) / se)
		e.PUpper = record.Num(dist.TLower(float64(e.TUpper), df)) // H0: diff >= hi
	}
	okLo := math.IsInf(lo, 0) || float64(e.PLower) < alpha
	okHi := math.IsInf(hi, 0) || float64(e.PUpper) < alpha
	switch {
	case h.Kind == plan.HypEquivalence && okLo && okHi && !math.IsInf(lo, 0) && !math.IsInf(hi, 0):
		e.Verdict = "equivalent"
	case h.Kind == plan.HypNonInferiority && ((h.Better == "lower" && !math.IsInf(hi, 0) && okHi) || (h.Better != "lower" && !math.IsInf(lo, 0) && okLo)):
		e.Verdict = "non-inferior"
	default:
		e.Verdict = "not shown"
	}
	return e
}

// decidingTest returns the p-value and statistic of the one-sided test
// that decides an equivalence or non-inferiority hypothesis: the test
// against the margin on the inferior side for non-inferiority, the one
// with the larger p-value for equivalence. The comparison reports this
// pair, so that its statistic and p belong to the same test.
func decidingTest(h *plan.Hypothesis, e *record.EquivalenceResult) (p, stat record.Num) {
	switch {
	case h.Kind == plan.HypNonInferiority && h.Better == "lower":
		return e.PUpper, e.TUpper
	case h.Kind == plan.HypNonInferiority:
		return e.PLower, e.TLower
	case math.IsNaN(float64(e.PLower)) || float64(e.PUpper) > float64(e.PLower):
		return e.PUpper, e.TUpper
	}
	return e.PLower, e.TLower
}

// levelCounts counts the analysed values of each level of factor.
func levelCounts(ds *dataset, factor string) map[string]int {
	n := map[string]int{}
	for _, v := range ds.factors[factor] {
		n[v]++
	}
	return n
}

// adjustP applies a step-wise p-value adjustment through stats/multcomp
// (Bonferroni; Holm 1979; Hochberg 1988; Benjamini & Hochberg 1995) over
// the comparisons that have a p-value; NaN entries are left out of the
// family and stay NaN. "none" returns the raw p-values.
func adjustP(ps []float64, method string) ([]float64, error) {
	out := make([]float64, len(ps))
	var idx []int
	var vals []float64
	for i, p := range ps {
		out[i] = math.NaN()
		if !math.IsNaN(p) {
			idx = append(idx, i)
			vals = append(vals, p)
		}
	}
	if len(vals) == 0 {
		return out, nil
	}
	if method == plan.AdjustNone || method == "" {
		copy(out, ps)
		return out, nil
	}
	if method == plan.AdjustShaffer {
		// Shaffer (1986) needs the whole family of pairs of k levels, in
		// stats/multcomp's AllPairs order, which the pairs are in.
		k := 2
		for k*(k-1)/2 < len(ps) {
			k++
		}
		if len(vals) != len(ps) || k*(k-1)/2 != len(ps) {
			return out, fmt.Errorf("shaffer needs every pairwise comparison of the levels, and %d of %d could be made", len(vals), len(ps))
		}
		r, err := multcomp.ShafferS2(vals, k)
		if err != nil {
			return out, err
		}
		copy(out, r.Adjusted)
		return out, nil
	}
	adj, err := multcomp.Adjust(vals, adjustMethod(method))
	if err != nil {
		return out, err
	}
	for k, i := range idx {
		out[i] = adj[k]
	}
	return out, nil
}

// adjustMethod maps a plan adjustment name to the stats/multcomp method.
func adjustMethod(name string) multcomp.Method {
	switch name {
	case plan.AdjustBonferroni:
		return multcomp.Bonferroni
	case plan.AdjustHolm:
		return multcomp.Holm
	case plan.AdjustHochberg:
		return multcomp.Hochberg
	case plan.AdjustBH:
		return multcomp.BH
	case plan.AdjustSidak:
		return multcomp.Sidak
	case plan.AdjustHolmSidak:
		return multcomp.HolmSidak
	}
	return multcomp.Method(name)
}

// simultaneous fills the adjusted p-values and replaces the intervals by
// simultaneous ones for a Tukey (all pairs) or Dunnett (many-to-one)
// family, computed through stats/multcomp:
//
//   - Tukey (1953), Tukey-Kramer for unequal standard errors (Kramer 1956
//     Biometrics 12:307): the studentised range of the k means of the
//     factor, always two-sided.
//   - Dunnett (1955) JASA 50:1096: the multivariate t with the correlation
//     of the contrasts from the model covariance, one- or two-sided, by
//     deterministic quadrature when that correlation is of the one-factor
//     form rho_ij = l_i l_j, else by randomised quasi-Monte Carlo with a
//     fixed seed (Genz & Bretz 2002), whose seed and error the Note records.
//
// Both need one error df. A linear step has one residual df; a mixed step
// gives each contrast its own Satterthwaite or Kenward-Roger df, and the
// family uses the smallest of them (conservative), which the Note states.
// Each comparison keeps its own df and unadjusted p-value.
func simultaneous(hr *record.HypothesisResult, lf *linearFit, ls [][]float64, adj, sides string, k int, alpha float64, tr plan.Transform) {
	var idx []int
	for i, l := range ls {
		c := hr.Comparisons[i]
		if l != nil && !math.IsNaN(float64(c.Estimate)) && float64(c.SE) > 0 && !math.IsNaN(float64(c.DF)) {
			idx = append(idx, i)
		}
	}
	fail := func(err error) {
		hr.Note = fmt.Sprintf("the %s adjustment could not be computed: %v", adj, err)
		for i := range hr.Comparisons {
			hr.Comparisons[i].PAdjusted = record.NaN
		}
	}
	if len(idx) == 0 {
		fail(errors.New("no estimable comparison"))
		return
	}
	est := make([]float64, len(idx))
	se := make([]float64, len(idx))
	df := math.Inf(1)
	dfMax := 0.0
	for a, i := range idx {
		c := hr.Comparisons[i]
		est[a], se[a] = float64(c.Estimate), float64(c.SE)
		df = math.Min(df, float64(c.DF))
		dfMax = math.Max(dfMax, float64(c.DF))
	}
	var notes []string
	if dfMax-df > 1e-6*math.Max(1, df) {
		notes = append(notes, fmt.Sprintf("the comparisons have df from %.4g to %.4g; the %s family uses the smallest, %.4g", df, dfMax, adj, df))
	}
	var fam *multcomp.Family
	var err error
	if adj == plan.AdjustTukey {
		if sides != "two-sided" {
			notes = append(notes, "the tukey family is two-sided; adjusted p-values and intervals are two-sided")
		}
		fam, err = multcomp.Tukey(est, se, k, df, 1-alpha)
	} else {
		corr := contrastCorr(lf, ls, idx)
		side := multcomp.TwoSided
		switch sides {
		case "greater":
			side = multcomp.Greater
		case "less":
			side = multcomp.Less
		}
		fam, err = multcomp.Dunnett(est, se, corr, df, side, 1-alpha)
	}
	if err != nil {
		fail(err)
		return
	}
	if fam.QMC != nil {
		notes = append(notes, fmt.Sprintf("the comparisons' correlation is not of the one-factor form, so the %s probabilities are computed by randomised quasi-Monte Carlo (Genz & Bretz 2002; seed %d, %d points x %d shifts), absolute error about %.1g",
			adj, fam.QMC.Seed, fam.QMC.Points, fam.QMC.Shifts, fam.AbsError))
	}
	for i := range hr.Comparisons {
		hr.Comparisons[i].PAdjusted = record.NaN
	}
	for a, i := range idx {
		fc := fam.Comparisons[a]
		c := &hr.Comparisons[i]
		c.PAdjusted = record.Num(fc.PAdjusted)
		c.Lower, c.Upper = record.Num(fc.Lower), record.Num(fc.Upper)
		if IsLogScale(tr) {
			b := logBase(tr)
			c.RatioLower, c.RatioUpper = record.Num(math.Exp(b*fc.Lower)), record.Num(math.Exp(b*fc.Upper))
		}
	}
	notes = append(notes, fmt.Sprintf("intervals are simultaneous at %g%% (critical value %.6g on the t scale)", 100*(1-alpha), fam.Critical))
	hr.Note = strings.Join(notes, "; ")
}

// contrastCorr is the correlation matrix of the contrasts ls[idx] under
// the model covariance.
func contrastCorr(lf *linearFit, ls [][]float64, idx []int) *mat.SymDense {
	m := len(idx)
	cv := make([]*mat.VecDense, m)
	for a, i := range idx {
		var v mat.VecDense
		v.MulVec(lf.cov, mat.NewVecDense(len(ls[i]), slices.Clone(ls[i])))
		cv[a] = &v
	}
	cov := mat.NewSymDense(m, nil)
	for a := 0; a < m; a++ {
		la := mat.NewVecDense(len(ls[idx[a]]), slices.Clone(ls[idx[a]]))
		for b := 0; b <= a; b++ {
			cov.SetSym(a, b, mat.Dot(la, cv[b]))
		}
	}
	corr := mat.NewSymDense(m, nil)
	for a := 0; a < m; a++ {
		corr.SetSym(a, a, 1)
		for b := 0; b < a; b++ {
			corr.SetSym(a, b, cov.At(a, b)/math.Sqrt(cov.At(a, a)*cov.At(b, b)))
		}
	}
	return corr
}
