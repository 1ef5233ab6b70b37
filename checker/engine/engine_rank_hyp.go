package engine

// Hypotheses on rank and Welch steps.
//
// A rank or Welch step has no model contrasts, so its comparisons are
// separate two-sample tests on the analysed values of the two levels:
//
//	step                       comparison of level against comparator
//	welch                      Welch (1947, Biometrika 34:28) two-sample t test,
//	                           Welch-Satterthwaite df, t interval
//	kruskal-wallis, rank-sum,  Wilcoxon-Mann-Whitney rank-sum test
//	  one-sample signed-rank   (levels of the hypothesis factor)
//	van-elteren, friedman      van Elteren's (1960) stratified two-sample test
//	                           within the step's within strata or blocks
//	paired signed-rank         Wilcoxon signed-rank test of the paired differences
//
// The declared sides are kept (greater: the level tends to be larger).
// The estimate of a rank comparison is the Hodges & Lehmann (1963, Ann
// Math Stat 34:598) estimate matching its test (stats/rank HLShift,
// HLStratified, HLLocation) with the distribution-free interval from
// inverting that test (Moses 1953; Bauer 1972, JASA 67:687) at 1 - alpha
// on the declared sides; no standard error (NaN); on a log scale the
// ratio and its interval are the exponentials. Multiplicity adjustments: bonferroni, holm, hochberg
// and benjamini-hochberg are applied as declared (stats/multcomp); dunnett
// and tukey rest on the joint distribution of a model's contrasts, which
// separate two-sample tests do not have, so they are replaced by holm
// (valid under any dependence), recorded in AdjustUsed and the Note.
// Equivalence and non-inferiority need an interval: on a Welch step they
// are two one-sided tests (Schuirmann 1987) with the Welch df; on a rank
// step the two-sided 1 - 2 alpha Hodges-Lehmann interval is compared with
// the margins (the rank-test form of two one-sided tests; Hothorn &
// Bleiholder 2006 on intervals for such decisions) and the one-sided
// p-values are the rank test of the shift at each margin. Term hypotheses
// are not assessable on either (no model terms).

import (
	"fmt"
	"math"
	"slices"
	"strings"

	"furrow/checker/method"
	"furrow/checker/record"
	"furrow/plan"
	"furrow/stats/dist"
	"furrow/stats/rank"
)

// rankHypothesis answers one declared hypothesis on a rank or Welch step.
func rankHypothesis(p *plan.Plan, s *plan.Step, f *fitted, h *plan.Hypothesis, epAlpha float64) record.HypothesisResult {
	hr, alpha, sides, adj, factor := newHypothesisResult(p, s, h, epAlpha)
	pairing := method.Default.PairingOf(s)
	notAssessable := func(note string) record.HypothesisResult {
		hr.Assessable, hr.AdjustUsed, hr.Note = false, "", note
		return hr
	}
	switch {
	case h.Kind == plan.HypTerm:
		return notAssessable(fmt.Sprintf("step %s (%s) fits no model terms to test", s.ID, s.Model))
	}
	if s.Compare != "" && factor != s.Compare {
		return notAssessable(fmt.Sprintf("step %s compares the levels of %s, not of %s", s.ID, s.Compare, factor))
	}
	g, ok := f.ds.factors[factor]
	if !ok {
		return notAssessable(fmt.Sprintf("%s is not a factor of the data analysed by step %s", factor, s.ID))
	}
	levels := levelsFor(p, factor, g)
	pairs, note := hypothesisPairs(p, h, factor, levels)
	var notes []string
	if note != "" {
		notes = append(notes, note)
	}
	used := adj
	if adj == plan.AdjustDunnett || adj == plan.AdjustTukey {
		// lint refuses such a plan; the run never substitutes another adjustment.
		return notAssessable(fmt.Sprintf("step %s (%s) compares pairs by separate two-sample tests and cannot apply the declared %s adjustment", s.ID, s.Model, adj))
	}
	hr.AdjustUsed = used
	if pairing != method.WelchTwoSample {
		notes = append(notes, rankIntervalNote(s, pairing, h, used, alpha))
	}
	cmp := pairComparer(s, pairing, f, factor)
	counts := levelCounts(f.ds, factor)
	ps := make([]float64, 0, len(pairs))
	for _, pr := range pairs {
		c := cmp(pr[0], pr[1], sides, h, alpha)
		c.N, c.NAgainst = counts[pr[0]], counts[pr[1]]
		hr.Comparisons = append(hr.Comparisons, c)
		ps = append(ps, float64(c.P))
	}
	adjP, err := adjustP(ps, used)
	if err != nil {
		notes = append(notes, "the adjustment could not be computed: "+err.Error())
	}
	for i := range hr.Comparisons {
		hr.Comparisons[i].PAdjusted = record.Num(adjP[i])
		hr.Comparisons[i].Reject = !math.IsNaN(adjP[i]) && adjP[i] < alpha
	}
	for i, n := range notes {
		if i > 0 {
			hr.Note += "; "
		}
		hr.Note += n
	}
	return hr
}

// rankIntervalNote says how a rank step's estimates and intervals are
// obtained, so the record states that they are distribution-free and,
// under a multiplicity adjustment, per comparison.
func rankIntervalNote(s *plan.Step, pairing method.Pairing, h *plan.Hypothesis, adj string, alpha float64) string {
	var est string
	switch pairing {
	case method.SignedRankPaired:
		est = "the Hodges-Lehmann median of the Walsh averages of the paired differences with the interval from inverting the signed-rank test (Tukey; Bauer 1972), exact where the exact null distribution applies, else normal with continuity correction"
	case method.StratifiedShift:
		est = fmt.Sprintf("the Hodges-Lehmann shift common to the %s strata with the interval from inverting van Elteren's test (normal, no continuity correction)", s.Within)
	default:
		est = "the Hodges-Lehmann shift (median of the pairwise differences) with the Moses interval from inverting the rank-sum test (Bauer 1972), exact where the exact null distribution applies, else normal with continuity correction"
	}
	n := "estimates are " + est + "; the intervals are distribution-free"
	switch {
	case h.Kind == plan.HypEquivalence || h.Kind == plan.HypNonInferiority:
		n += fmt.Sprintf("; the %s is judged by the two-sided %s interval against the margins", h.Kind, fmtLevel(1-2*alpha))
	case adj != plan.AdjustNone:
		n += "; the intervals are per comparison, not simultaneous"
	}
	return n
}

// fmtLevel formats a confidence level as a percentage.
func fmtLevel(l float64) string {
	return strings.TrimSuffix(strings.TrimRight(fmt.Sprintf("%.2f", 100*l), "0"), ".") + "%"
}

// hypothesisPairs lists the (level, comparator) pairs of a hypothesis, as
// the model-based hypotheses do: versus-control against the factor's
// control, pairwise in level order (later level first), equivalence and
// non-inferiority the declared test and comparator.
func hypothesisPairs(p *plan.Plan, h *plan.Hypothesis, factor string, levels []string) ([][2]string, string) {
	var pairs [][2]string
	note := ""
	// The family is the declared one: a declared level left without data
	// (every unit excluded) stays in it as a comparison that cannot be made,
	// instead of disappearing from the record.
	if c := PlanColumn(p, factor); c != nil && len(c.Levels) > 0 {
		if missing := missingLevels(c.Levels, levels); len(missing) > 0 {
			levels = c.Levels
			note = fmt.Sprintf("%s %s has no analysed data; its comparisons are not assessable", factor, strings.Join(missing, ", "))
		}
	}
	switch h.Kind {
	case plan.HypVersusControl:
		ctrl := ""
		if c := PlanColumn(p, factor); c != nil {
			ctrl = c.Control
		}
		if ctrl == "" {
			note = joinNotes(note, fmt.Sprintf("%s declares no control level", factor))
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
	return pairs, note
}

// missingLevels returns the declared levels that are not in present, in
// declared order.
func missingLevels(declared, present []string) []string {
	var out []string
	for _, l := range declared {
		if !slices.Contains(present, l) {
			out = append(out, l)
		}
	}
	return out
}

// joinNotes joins two note sentences with "; ", skipping empty ones.
func joinNotes(a, b string) string {
	switch {
	case a == "":
		return b
	case b == "":
		return a
	}
	return a + "; " + b
}

// emptyComparison is a comparison with every number NaN.
func emptyComparison(level, against string) record.Comparison {
	return record.Comparison{Label: level + " - " + against, Level: level, Against: against, Estimate: record.NaN, SE: record.NaN, DF: record.NaN,
		Statistic: record.NaN, P: record.NaN, PAdjusted: record.NaN, Lower: record.NaN, Upper: record.NaN, Ratio: record.NaN, RatioLower: record.NaN, RatioUpper: record.NaN}
}

type pairFunc func(level, against, sides string, h *plan.Hypothesis, alpha float64) record.Comparison

// pairComparer returns the two-sample comparison a step's hypotheses use
// (see the table at the top of this file), by the step's pairing.
func pairComparer(s *plan.Step, pairing method.Pairing, f *fitted, factor string) pairFunc {
	ds := f.ds
	g := ds.factors[factor]
	values := func(level string) []float64 {
		var out []float64
		for i, v := range g {
			if v == level {
				out = append(out, ds.y[i])
			}
		}
		return out
	}
	tr := s.Transform
	ratio := func(c *record.Comparison) {
		if IsLogScale(tr) {
			k := logBase(tr)
			c.Ratio = record.Num(math.Exp(k * float64(c.Estimate)))
			c.RatioLower, c.RatioUpper = record.Num(math.Exp(k*float64(c.Lower))), record.Num(math.Exp(k*float64(c.Upper)))
		}
	}
	switch pairing {
	case method.WelchTwoSample:
		return func(level, against, sides string, h *plan.Hypothesis, alpha float64) record.Comparison {
			c := emptyComparison(level, against)
			est, se, df, ok := welchTwoSample(values(level), values(against))
			if !ok {
				return c
			}
			t := est / se
			c.Estimate, c.SE, c.DF, c.Statistic = record.Num(est), record.Num(se), record.Num(df), record.Num(t)
			var tq float64
			switch h.Kind {
			case plan.HypEquivalence, plan.HypNonInferiority:
				// Schuirmann (1987): two one-sided tests at alpha, 1-2 alpha interval.
				tq = dist.TUpperQuantile(alpha, df)
				c.Equivalence = tost(h, tr, est, se, df, alpha)
				c.P, c.Statistic = decidingTest(h, c.Equivalence)
				c.Lower, c.Upper = record.Num(est-tq*se), record.Num(est+tq*se)
			default:
				c.P = record.Num(pSided(t, df, sides))
				switch sides {
				case "less":
					tq = dist.TUpperQuantile(alpha, df)
					c.Lower, c.Upper = record.Num(math.Inf(-1)), record.Num(est+tq*se)
				case "greater":
					tq = dist.TUpperQuantile(alpha, df)
					c.Lower, c.Upper = record.Num(est-tq*se), record.Num(math.Inf(1))
				default:
					tq = dist.TUpperQuantile(alpha/2, df)
					c.Lower, c.Upper = record.Num(est-tq*se), record.Num(est+tq*se)
				}
			}
			ratio(&c)
			return c
		}
	case method.SignedRankPaired:
		return func(level, against, sides string, h *plan.Hypothesis, alpha float64) record.Comparison {
			c := emptyComparison(level, against)
			b := ds.factors[s.Within]
			x, y := pairedValues(ds.y, g, b, level, against)
			if len(x) == 0 {
				return c
			}
			d := make([]float64, len(x))
			for i := range d {
				d[i] = x[i] - y[i]
			}
			rp := rankPair{
				test: func(mu float64, a rank.Alternative) (float64, float64, error) {
					r, err := rank.SignedRank(d, rank.Options{Alternative: a, Mu: mu})
					if err != nil {
						return 0, 0, err
					}
					z := r.Z
					if r.Exact {
						n := float64(r.N)
						z = (r.V - n*(n+1)/4) / math.Sqrt(n*(n+1)*(2*n+1)/24)
					}
					return r.P, z, nil
				},
				interval: func(lv float64, a rank.Alternative) (rank.ShiftInterval, error) {
					return rank.HLLocation(d, lv, rank.Options{Alternative: a})
				},
			}
			return rankComparison(c, rp, h, tr, sides, alpha)
		}
	case method.StratifiedShift:
		return func(level, against, sides string, h *plan.Hypothesis, alpha float64) record.Comparison {
			c := emptyComparison(level, against)
			x, y := values(level), values(against)
			if len(x) == 0 || len(y) == 0 {
				return c
			}
			var sub []int
			for i, v := range g {
				if v == level || v == against {
					sub = append(sub, i)
				}
			}
			yy, gg, st := make([]float64, len(sub)), make([]string, len(sub)), make([]string, len(sub))
			for k, i := range sub {
				yy[k], gg[k], st[k] = ds.y[i], g[i], ds.factors[s.Within][i]
			}
			strata := strataOfLevels(yy, gg, []string{level, against}, st)
			rp := rankPair{
				test: func(mu float64, a rank.Alternative) (float64, float64, error) {
					r, err := rank.VanElteren(shiftFirst(strata, mu), rank.Options{Alternative: a})
					return r.P, r.Z, err
				},
				interval: func(lv float64, a rank.Alternative) (rank.ShiftInterval, error) {
					return rank.HLStratified(strata, lv, rank.Options{Alternative: a})
				},
			}
			return rankComparison(c, rp, h, tr, sides, alpha)
		}
	}
	return func(level, against, sides string, h *plan.Hypothesis, alpha float64) record.Comparison {
		c := emptyComparison(level, against)
		x, y := values(level), values(against)
		if len(x) == 0 || len(y) == 0 {
			return c
		}
		rp := rankPair{
			test: func(mu float64, a rank.Alternative) (float64, float64, error) {
				r, err := rank.RankSum(x, y, rank.Options{Alternative: a, Mu: mu})
				if err != nil {
					return 0, 0, err
				}
				z := r.Z
				if r.Exact {
					m, n := float64(r.M), float64(r.N)
					z = (r.U - m*n/2) / math.Sqrt(m*n*(m+n+1)/12)
				}
				return r.P, z, nil
			},
			interval: func(lv float64, a rank.Alternative) (rank.ShiftInterval, error) {
				return rank.HLShift(x, y, lv, rank.Options{Alternative: a})
			},
		}
		return rankComparison(c, rp, h, tr, sides, alpha)
	}
}

// rankPair is one rank comparison: its test of a null shift mu (p-value
// and normal score) and its Hodges-Lehmann estimate with the interval
// from inverting that test.
type rankPair struct {
	test     func(mu float64, alt rank.Alternative) (p, z float64, err error)
	interval func(level float64, alt rank.Alternative) (rank.ShiftInterval, error)
}

// rankComparison fills a rank comparison. Superiority hypotheses: the test
// of a zero shift with the declared sides and the Hodges-Lehmann interval
// at 1 - alpha on the same sides. Equivalence and non-inferiority: the
// two-sided 1 - 2 alpha interval (Moses 1953; Bauer 1972) compared with the
// margins, which is the rank-test form of two one-sided tests; the
// one-sided p-values against each margin are the same rank test of the
// shifted null (x - margin), so p < alpha exactly when the interval
// excludes the margin, up to ties at a breakpoint.
func rankComparison(c record.Comparison, rp rankPair, h *plan.Hypothesis, tr plan.Transform, sides string, alpha float64) record.Comparison {
	alt := rank.TwoSided
	switch sides {
	case "greater":
		alt = rank.Greater
	case "less":
		alt = rank.Less
	}
	p, z, err := rp.test(0, alt)
	if err != nil {
		return c
	}
	c.P, c.Statistic = record.Num(p), record.Num(z)
	eqv := h.Kind == plan.HypEquivalence || h.Kind == plan.HypNonInferiority
	lv, ialt := 1-alpha, alt
	if eqv {
		lv, ialt = 1-2*alpha, rank.TwoSided
	}
	iv, err := rp.interval(lv, ialt)
	if err != nil {
		return c
	}
	c.Estimate, c.Lower, c.Upper = record.Num(iv.Estimate), record.Num(iv.Lower), record.Num(iv.Upper)
	if eqv {
		lo, hi := equivalenceMargins(h, tr)
		e := &record.EquivalenceResult{Lower: record.Num(lo), Upper: record.Num(hi), PLower: record.NaN, PUpper: record.NaN, TLower: record.NaN, TUpper: record.NaN}
		if !math.IsInf(lo, 0) && !math.IsNaN(lo) {
			if pl, zl, err := rp.test(lo, rank.Greater); err == nil { // H0: shift <= lo
				e.PLower, e.TLower = record.Num(pl), record.Num(zl)
			}
		}
		if !math.IsInf(hi, 0) && !math.IsNaN(hi) {
			if pu, zu, err := rp.test(hi, rank.Less); err == nil { // H0: shift >= hi
				e.PUpper, e.TUpper = record.Num(pu), record.Num(zu)
			}
		}
		okLo := !math.IsInf(lo, 0) && iv.Lower > lo
		okHi := !math.IsInf(hi, 0) && iv.Upper < hi
		switch {
		case h.Kind == plan.HypEquivalence && okLo && okHi:
			e.Verdict = "equivalent"
		case h.Kind == plan.HypNonInferiority && ((h.Better == "lower" && okHi) || (h.Better != "lower" && okLo)):
			e.Verdict = "non-inferior"
		default:
			e.Verdict = "not shown"
		}
		c.Equivalence = e
		c.P, c.Statistic = decidingTest(h, e)
	}
	if IsLogScale(tr) {
		k := logBase(tr)
		c.Ratio = record.Num(math.Exp(k * float64(c.Estimate)))
		c.RatioLower, c.RatioUpper = record.Num(math.Exp(k*float64(c.Lower))), record.Num(math.Exp(k*float64(c.Upper)))
	}
	return c
}

// equivalenceMargins returns the margins of an equivalence or
// non-inferiority hypothesis on the analysis scale, as tost does: a ratio
// margin becomes its logarithm in the transform's base, an absent ratio
// side is unbounded, and a difference-scale non-inferiority margin bounds
// only the side that "better" makes the inferior one.
func equivalenceMargins(h *plan.Hypothesis, tr plan.Transform) (lo, hi float64) {
	lo, hi = math.Inf(-1), math.Inf(1)
	m := h.Margin
	if m == nil {
		return lo, hi
	}
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
	return lo, hi
}

// shiftFirst returns the strata with mu subtracted from treatment 0 (the
// null shift of the stratified test); the input is not modified.
func shiftFirst(strata []rank.Stratum, mu float64) []rank.Stratum {
	if mu == 0 {
		return strata
	}
	out := make([]rank.Stratum, len(strata))
	for i, st := range strata {
		g0 := make([]float64, len(st.Groups[0]))
		for j, v := range st.Groups[0] {
			g0[j] = v - mu
		}
		out[i] = rank.Stratum{Groups: [][]float64{g0, st.Groups[1]}}
	}
	return out
}

// strataOfLevels groups values by stratum (in order of first appearance;
// the van Elteren statistic does not depend on the order) and level.
func strataOfLevels(y []float64, g, levels, st []string) []rank.Stratum {
	si := map[string]int{}
	var out []rank.Stratum
	for i := range y {
		k, ok := si[st[i]]
		if !ok {
			k = len(out)
			si[st[i]] = k
			out = append(out, rank.Stratum{Groups: make([][]float64, len(levels))})
		}
		for j, l := range levels {
			if g[i] == l {
				out[k].Groups[j] = append(out[k].Groups[j], y[i])
			}
		}
	}
	return out
}

// pairedValues returns, for every block with exactly one value at each of
// the two levels, the value at level and the value at against.
func pairedValues(y []float64, g, b []string, level, against string) (x, z []float64) {
	type cell struct {
		a, c   float64
		na, nc int
	}
	cells := map[string]*cell{}
	var order []string
	for i := range y {
		if g[i] != level && g[i] != against {
			continue
		}
		c := cells[b[i]]
		if c == nil {
			c = &cell{}
			cells[b[i]] = c
			order = append(order, b[i])
		}
		if g[i] == level {
			c.a, c.na = y[i], c.na+1
		} else {
			c.c, c.nc = y[i], c.nc+1
		}
	}
	for _, k := range order {
		if c := cells[k]; c.na == 1 && c.nc == 1 {
			x, z = append(x, c.a), append(z, c.c)
		}
	}
	return x, z
}

// welchTwoSample returns the difference of means x - y, its standard
// error sqrt(s²x/nx + s²y/ny) and the Welch (1947, Biometrika 34:28) /
// Satterthwaite (1946, Biometrics Bull 2:110) degrees of freedom
//
//	df = (vx + vy)² / (vx²/(nx-1) + vy²/(ny-1)),  v = s²/n.
//
// ok is false when a sample has fewer than two values or both variances
// are zero.
func welchTwoSample(x, y []float64) (est, se, df float64, ok bool) {
	if len(x) < 2 || len(y) < 2 {
		return 0, 0, 0, false
	}
	nx, ny := float64(len(x)), float64(len(y))
	sx, sy := sd(x), sd(y)
	vx, vy := sx*sx/nx, sy*sy/ny
	if vx+vy <= 0 || math.IsNaN(vx+vy) {
		return 0, 0, 0, false
	}
	est = mean(x) - mean(y)
	se = math.Sqrt(vx + vy)
	df = (vx + vy) * (vx + vy) / (vx*vx/(nx-1) + vy*vy/(ny-1))
	return est, se, df, true
}
