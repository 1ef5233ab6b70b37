package checker

import (
	"fmt"
	"math"
	"slices"

	"furrow/plan"
	"furrow/stats/dist"
	"furrow/stats/multcomp"
)

// hypothesis answers one declared hypothesis on the reported step.
func hypothesis(p *plan.Plan, ep *plan.Endpoint, s *plan.Step, f *fitted, h *plan.Hypothesis, epAlpha float64) HypothesisResult {
	if f.rankLike {
		// Rank and Welch steps: pairwise two-sample tests (engine_rank_hyp.go).
		return rankHypothesis(p, s, f, h, epAlpha)
	}
	alpha := h.Alpha
	if alpha == 0 {
		alpha = epAlpha
	}
	sides := h.Sides
	if sides == "" {
		sides = "two-sided"
	}
	adj := h.Adjust
	if adj == "" {
		adj = plan.AdjustNone
	}
	hr := HypothesisResult{ID: h.ID, Pos: posText(h.Pos), Kind: h.Kind, Step: s.ID, Sides: sides, Alpha: Num(alpha),
		Adjust: adj, AdjustUsed: adj, Assessable: true, Comparisons: []Comparison{}}
	factor := h.Factor
	if factor == "" {
		if c := columnByRole(p, plan.RoleTreatment); c != nil {
			factor = c.Name
		}
	}
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
	mms := f.detail.MarginalMeans
	L, labels, err := lf.dm.MeansGrid([]string{factor})
	if err != nil || len(mms) == 0 {
		hr.Assessable = false
		hr.Note = fmt.Sprintf("no marginal means of %s on step %s", factor, s.ID)
		return hr
	}
	row := map[string][]float64{}
	for i, lab := range labels {
		row[levelFromLabel(lab, factor)] = L.RawRowView(i)
	}
	var levels []string
	for _, m := range mms {
		levels = append(levels, m.Level)
	}
	var pairs [][2]string
	switch h.Kind {
	case plan.HypVersusControl:
		ctrl := ""
		if c := planColumn(p, factor); c != nil {
			ctrl = c.Control
		}
		lv := h.Levels
		if len(lv) == 0 {
			for _, l := range levels {
				if l != ctrl {
					lv = append(lv, l)
				}
			}
		}
		for _, l := range lv {
			pairs = append(pairs, [2]string{l, ctrl})
		}
	case plan.HypPairwise:
		if len(h.Pairs) > 0 {
			for _, pr := range h.Pairs {
				if len(pr) == 2 {
					pairs = append(pairs, [2]string{pr[0], pr[1]})
				}
			}
		} else {
			for i := 0; i < len(levels); i++ {
				for j := i + 1; j < len(levels); j++ {
					pairs = append(pairs, [2]string{levels[j], levels[i]})
				}
			}
		}
	case plan.HypEquivalence, plan.HypNonInferiority:
		pairs = append(pairs, [2]string{h.Test, h.Against})
	}
	tr := s.Transform
	var ps []float64
	for _, pr := range pairs {
		a, okA := row[pr[0]]
		b, okB := row[pr[1]]
		c := Comparison{Label: pr[0] + " - " + pr[1], Level: pr[0], Against: pr[1], Estimate: NaN, SE: NaN, DF: NaN,
			Statistic: NaN, P: NaN, PAdjusted: NaN, Lower: NaN, Upper: NaN, Ratio: NaN, RatioLower: NaN, RatioUpper: NaN}
		if !okA || !okB {
			hr.Comparisons = append(hr.Comparisons, c)
			ps = append(ps, math.NaN())
			continue
		}
		l := make([]float64, len(a))
		for j := range l {
			l[j] = a[j] - b[j]
		}
		est, se := contrast(lf, l)
		df := lf.df(l)
		t := est / se
		c.Estimate, c.SE, c.DF, c.Statistic = Num(est), Num(se), Num(df), Num(t)
		var tq float64
		switch h.Kind {
		case plan.HypEquivalence, plan.HypNonInferiority:
			// Schuirmann (1987): two one-sided tests at alpha, 1-2alpha interval.
			tq = dist.TUpperQuantile(alpha, df)
			c.Equivalence = tost(h, tr, est, se, df, alpha)
			c.P = c.Equivalence.PLower
			if c.Equivalence.PUpper > c.P || math.IsNaN(float64(c.P)) {
				c.P = c.Equivalence.PUpper
			}
			if h.Kind == plan.HypNonInferiority {
				if h.Better == "lower" {
					c.P = c.Equivalence.PUpper
				} else {
					c.P = c.Equivalence.PLower
				}
			}
		default:
			tq = dist.TUpperQuantile(alpha/2, df)
			c.P = Num(pSided(t, df, sides))
			if sides != "two-sided" {
				tq = dist.TUpperQuantile(alpha, df)
			}
		}
		c.Lower, c.Upper = Num(est-tq*se), Num(est+tq*se)
		if sides == "less" && h.Kind != plan.HypEquivalence && h.Kind != plan.HypNonInferiority {
			c.Lower = Num(math.Inf(-1))
		}
		if sides == "greater" && h.Kind != plan.HypEquivalence && h.Kind != plan.HypNonInferiority {
			c.Upper = Num(math.Inf(1))
		}
		if isLogScale(tr) {
			k := logBase(tr)
			c.Ratio, c.RatioLower, c.RatioUpper = Num(math.Exp(k*est)), Num(math.Exp(k*float64(c.Lower))), Num(math.Exp(k*float64(c.Upper)))
		}
		hr.Comparisons = append(hr.Comparisons, c)
		ps = append(ps, float64(c.P))
	}
	var adjP []float64
	switch adj {
	case plan.AdjustTukey:
		adjP = make([]float64, len(ps))
		for i, c := range hr.Comparisons {
			// Tukey (1953) via the studentised range of the k compared means
			// (Copenhaver & Holland 1988, stats/multcomp).
			q := math.Abs(float64(c.Statistic)) * math.Sqrt2
			v, err := multcomp.PTukeyUpper(q, len(levels), float64(c.DF))
			if err != nil {
				v = math.NaN()
			}
			adjP[i] = v
		}
		if sides != "two-sided" {
			hr.Note = "tukey adjustment is two-sided; the p-values are two-sided"
		}
	case plan.AdjustDunnett:
		adjP = make([]float64, len(ps))
		for i := range adjP {
			adjP[i] = math.NaN()
		}
		hr.Note = "the dunnett adjustment is not available in this build; adjusted p-values are not given"
	default:
		adjP = adjustP(ps, adj)
	}
	for i := range hr.Comparisons {
		hr.Comparisons[i].PAdjusted = Num(adjP[i])
		hr.Comparisons[i].Reject = !math.IsNaN(adjP[i]) && adjP[i] < alpha
	}
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
func tost(h *plan.Hypothesis, tr plan.Transform, est, se, df, alpha float64) *EquivalenceResult {
	lo, hi := math.Inf(-1), math.Inf(1)
	if m := h.Margin; m != nil {
		conv := func(v float64) float64 {
			if m.Scale == "ratio" {
				if v <= 0 {
					return math.NaN()
				}
				return math.Log(v) / logBase(tr)
			}
			return v
		}
		if m.Lower != 0 || m.Scale != "ratio" {
			lo = conv(m.Lower)
		}
		if m.Upper != 0 || m.Scale != "ratio" {
			hi = conv(m.Upper)
		}
		if m.Scale != "ratio" && h.Kind == plan.HypNonInferiority {
			if h.Better == "lower" {
				lo = math.Inf(-1)
			} else {
				hi = math.Inf(1)
			}
		}
	}
	e := &EquivalenceResult{Lower: Num(lo), Upper: Num(hi), PLower: NaN, PUpper: NaN}
	if !math.IsInf(lo, 0) {
		e.PLower = Num(dist.TUpper((est-lo)/se, df)) // H0: diff <= lo
	}
	if !math.IsInf(hi, 0) {
		e.PUpper = Num(dist.TLower((est-hi)/se, df)) // H0: diff >= hi
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

// adjustP applies a step-wise p-value adjustment; NaN entries are ignored
// and stay NaN. Bonferroni; Holm (1979) Scand J Stat 6:65; Hochberg (1988)
// Biometrika 75:800; Benjamini & Hochberg (1995) JRSS B 57:289.
func adjustP(ps []float64, method string) []float64 {
	out := make([]float64, len(ps))
	var idx []int
	for i, p := range ps {
		out[i] = math.NaN()
		if !math.IsNaN(p) {
			idx = append(idx, i)
		}
	}
	m := float64(len(idx))
	slices.SortStableFunc(idx, func(a, b int) int {
		switch {
		case ps[a] < ps[b]:
			return -1
		case ps[a] > ps[b]:
			return 1
		}
		return 0
	})
	switch method {
	case plan.AdjustBonferroni:
		for _, i := range idx {
			out[i] = math.Min(1, ps[i]*m)
		}
	case plan.AdjustHolm:
		run := 0.0
		for k, i := range idx {
			run = math.Max(run, math.Min(1, (m-float64(k))*ps[i]))
			out[i] = run
		}
	case plan.AdjustHochberg, plan.AdjustBH:
		run := 1.0
		for k := len(idx) - 1; k >= 0; k-- {
			i := idx[k]
			var v float64
			if method == plan.AdjustHochberg {
				v = (m - float64(k)) * ps[i]
			} else {
				v = m / float64(k+1) * ps[i]
			}
			run = math.Min(run, math.Min(1, v))
			out[i] = run
		}
	default:
		for _, i := range idx {
			out[i] = ps[i]
		}
	}
	return out
}
