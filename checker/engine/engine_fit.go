package engine

import (
	"errors"
	"fmt"
	"math"
	"slices"

	"gonum.org/v1/gonum/mat"

	"furrow/checker/method"
	"furrow/checker/record"
	"furrow/plan"
	"furrow/stats/design"
	"furrow/stats/dist"
	"furrow/stats/lm"
)

// linearFit is the part of a linear or mixed fit that hypotheses need:
// estimates, their covariance and the df of a contrast (the infer.Model
// contract), with the design for marginal-mean grids.
type linearFit struct {
	dm        *design.Matrix
	coef      []float64
	cov       *mat.SymDense
	df        func(l []float64) float64
	estimable func(l []float64) bool
}

// modelFitters returns the fit of each model kind of the registry.
func modelFitters() map[string]fitFunc {
	return map[string]fitFunc{
		method.Linear.Name: fitLinear,
		method.Mixed.Name:  fitMixed,

		// Count models (engine_glm.go).
		method.Poisson.Name: fitPoisson,

		// Rank and Welch steps (engine_rank.go).
		method.Welch.Name:         fitWelch,
		method.KruskalWallis.Name: fitKruskal,
		method.Friedman.Name:      fitFriedman,
		method.SignedRank.Name:    fitSignedRank,
		method.RankSum.Name:       fitRankSum,
		method.VanElteren.Name:    fitVanElteren,
	}
}

// compareFactor is the factor whose levels a step compares: the step's
// compare, else the plan's treatment column.
func compareFactor(p *plan.Plan, s *plan.Step) string {
	if s.Compare != "" {
		return s.Compare
	}
	if c := ColumnByRole(p, plan.RoleTreatment); c != nil {
		return c.Name
	}
	return ""
}

// buildDesign makes the model matrix of a step's fixed part.
func buildDesign(p *plan.Plan, s *plan.Step, ds *dataset, terms []plan.Term) (*design.Matrix, error) {
	used := map[string]bool{}
	var spec design.Spec
	spec.Intercept = true
	spec.Coding = design.SumToZero
	for _, t := range terms {
		spec.Terms = append(spec.Terms, design.Term{Vars: t.Columns})
		for _, c := range t.Columns {
			used[c] = true
		}
	}
	covs := slices.Clone(s.Covariates)
	if ds.baseline != "" {
		covs = append(covs, ds.baseline)
	}
	for _, c := range covs {
		spec.Terms = append(spec.Terms, design.Term{Vars: []string{c}})
		used[c] = true
	}
	var facs []design.Factor
	var numsV []design.Numeric
	for _, name := range sortedKeys(used) {
		if vals, ok := ds.factors[name]; ok {
			levels := levelsOf(p, name, vals)
			code := map[string]int{}
			for i, l := range levels {
				code[l] = i
			}
			codes := make([]int, len(vals))
			for i, v := range vals {
				codes[i] = code[v]
			}
			facs = append(facs, design.Factor{Name: name, Levels: levels, Codes: codes})
			continue
		}
		if vals, ok := ds.nums[name]; ok {
			numsV = append(numsV, design.Numeric{Name: name, Values: vals})
			continue
		}
		return nil, fmt.Errorf("model term %q is not a column of the analysed data", name)
	}
	fr, err := design.NewFrame(facs, numsV)
	if err != nil {
		return nil, fmt.Errorf("building the model: %w", err)
	}
	dm, err := design.Build(fr, spec)
	if err != nil {
		return nil, fmt.Errorf("building the model: %w", err)
	}
	return dm, nil
}

func sortedKeys[V any](m map[string]V) []string {
	out := make([]string, 0, len(m))
	for k := range m {
		out = append(out, k)
	}
	slices.Sort(out)
	return out
}

// fitLinear fits a fixed-effects linear model by QR (stats/lm).
func fitLinear(p *plan.Plan, ep *plan.Endpoint, s *plan.Step, ds *dataset) (*fitted, error) {
	dm, err := buildDesign(p, s, ds, s.Fixed)
	if err != nil {
		return nil, err
	}
	res, err := lm.FitModel(dm, ds.y, nil)
	if err != nil {
		return nil, fmt.Errorf("fitting the linear model: %w", err)
	}
	cmpF := compareFactor(p, s)
	f := &fitted{
		summary: record.FitSummary{Method: "ols", Params: res.Rank, Aliased: res.AliasedNames(), ResidualDF: record.Num(res.DFResid),
			Sigma: record.Num(res.Sigma), RSquared: record.Num(res.R2), Criterion: record.NaN, Converged: true},
		resid:   slices.Clone(res.Resid),
		fit:     slices.Clone(res.Fitted),
		groups:  ds.factors[cmpF],
		compare: cmpF,
		linear: &linearFit{dm: dm, coef: res.Coefficients(), cov: res.CoefCov(), df: res.DF,
			estimable: res.Estimable},
	}
	// An exact fit (no residual df, or residuals that are all rounding
	// error, as with a response constant within every cell) leaves the
	// tests and intervals undefined: a fit error, so the plan's on-fail
	// step is taken instead of reporting infinite t values.
	if res.DFResid <= 0 {
		return nil, fmt.Errorf("the linear model has as many parameters as observations (no residual degrees of freedom); tests are not defined")
	}
	if perfectFit(f) {
		return nil, fmt.Errorf("the linear model fits the data exactly (no residual variation, e.g. a response constant within every cell); tests and intervals are not defined")
	}
	det := &record.StepDetail{}
	for j, name := range res.Names {
		det.Coefficients = append(det.Coefficients, record.Coefficient{Name: name, Estimate: record.Num(res.Estimate[j]), SE: record.Num(res.StdErr[j]),
			DF: record.Num(res.DFResid), T: record.Num(res.TValue[j]), P: record.Num(res.PValue[j])})
	}
	typ := s.Anova
	if typ == 0 {
		typ = 3
	}
	sigma2 := res.Sigma * res.Sigma
	rows, err := waldAnova(f.linear, typ, dm, func(int, []float64) float64 { return float64(res.DFResid) }, sigma2, ds.y)
	if err != nil {
		return nil, err
	}
	rows = append(rows, record.AnovaRow{Term: "residuals", Type: typ, DF: record.Num(res.DFResid), SS: record.Num(res.RSS), MS: record.Num(sigma2),
		F: record.NaN, DenDF: record.NaN, P: record.NaN})
	det.Anova = rows
	if err := meansOf(det, f.linear, cmpF, responseScale(s), ep.Alpha); err != nil {
		return nil, err
	}
	det.GroupSummaries = groupSummaries(p, cmpF, ds)
	f.detail = det
	return f, nil
}

// waldAnova returns one F-test row per fixed term. Type 3: L selects the
// term's sum-to-zero coefficients (Searle 1987); type 2: Langsrud's (2003)
// hypothesis from the Gram matrix; type 1: sequential sums of squares from
// nested least-squares fits. For a least-squares fit the Wald F equals the
// classical F and SS = F * q * sigma2. denDF gives the denominator df of a
// term (residual df for OLS).
func waldAnova(lf *linearFit, typ int, dm *design.Matrix, denDF func(term int, l []float64) float64, sigma2 float64, y []float64) ([]record.AnovaRow, error) {
	var out []record.AnovaRow
	start := 0
	if dm.Intercept {
		start = 1
	}
	if typ == 1 {
		return sequentialAnova(dm, y, start)
	}
	var gram mat.SymDense
	if typ == 2 {
		gram.SymOuterK(1, dm.X.T())
	}
	for i, tc := range dm.Terms {
		if i < start && tc.Label == "(intercept)" {
			continue
		}
		if len(tc.Cols) == 1 && dm.Intercept && tc.Cols[0] == 0 {
			continue
		}
		var L *mat.Dense
		var err error
		if typ == 2 {
			L, err = dm.TypeIIHypothesis(i, &gram)
			if err != nil {
				return nil, fmt.Errorf("type II test of %s: %w", tc.Label, err)
			}
		} else {
			L = dm.TypeIIIHypothesis(i)
		}
		F, q, err := waldF(lf, L)
		if err != nil {
			return nil, fmt.Errorf("test of %s: %w", tc.Label, err)
		}
		ddf := denDF(i, L.RawRowView(0))
		out = append(out, record.AnovaRow{Term: tc.Label, Type: typ, DF: record.Num(q), SS: record.Num(F * float64(q) * sigma2), MS: record.Num(F * sigma2),
			F: record.Num(F), DenDF: record.Num(ddf), P: record.Num(dist.FUpper(F, float64(q), ddf))})
	}
	return out, nil
}

// waldF computes F = (Lb)'(L V L')^-1 (Lb) / q for the estimable rows of L.
func waldF(lf *linearFit, L *mat.Dense) (float64, int, error) {
	r, c := L.Dims()
	var rows []int
	for i := 0; i < r; i++ {
		if lf.estimable(L.RawRowView(i)) {
			rows = append(rows, i)
		}
	}
	if len(rows) == 0 {
		return 0, 0, errors.New("no estimable part (the term is aliased)")
	}
	Le := mat.NewDense(len(rows), c, nil)
	for k, i := range rows {
		Le.SetRow(k, L.RawRowView(i))
	}
	b := mat.NewVecDense(len(lf.coef), slices.Clone(lf.coef))
	var lb mat.VecDense
	lb.MulVec(Le, b)
	var lv, lvl mat.Dense
	lv.Mul(Le, lf.cov)
	lvl.Mul(&lv, Le.T())
	// Solve by SVD pseudo-inverse to tolerate dependent rows.
	var svd mat.SVD
	if !svd.Factorize(&lvl, mat.SVDThin) {
		return 0, 0, errors.New("singular hypothesis covariance")
	}
	vals := svd.Values(nil)
	var u mat.Dense
	svd.UTo(&u)
	tol := vals[0] * 1e-10 * float64(len(vals))
	q := 0
	F := 0.0
	for k, s := range vals {
		if s <= tol {
			continue
		}
		q++
		proj := mat.Dot(u.ColView(k), &lb)
		F += proj * proj / s
	}
	if q == 0 {
		return 0, 0, errors.New("hypothesis has no testable part")
	}
	return F / float64(q), q, nil
}

// sequentialAnova computes type I sums of squares as the drop in RSS when
// each term is added in model order (nested QR fits).
func sequentialAnova(dm *design.Matrix, y []float64, start int) ([]record.AnovaRow, error) {
	n, _ := dm.X.Dims()
	var cols []int
	if dm.Intercept {
		cols = append(cols, 0)
	}
	fitRSS := func(cols []int) (float64, int, error) {
		x := mat.NewDense(n, len(cols), nil)
		for k, j := range cols {
			for i := 0; i < n; i++ {
				x.Set(i, k, dm.X.At(i, j))
			}
		}
		r, err := lm.Fit(x, y, nil)
		if err != nil {
			return 0, 0, err
		}
		return r.RSS, r.Rank, nil
	}
	prevRSS, prevRank := 0.0, 0
	if len(cols) > 0 {
		var err error
		if prevRSS, prevRank, err = fitRSS(cols); err != nil {
			return nil, err
		}
	} else {
		for _, v := range y {
			prevRSS += v * v
		}
	}
	type step struct {
		label string
		ss    float64
		df    int
	}
	var steps []step
	for _, tc := range dm.Terms {
		if len(tc.Cols) == 1 && dm.Intercept && tc.Cols[0] == 0 {
			continue
		}
		cols = append(cols, tc.Cols...)
		rss, rank, err := fitRSS(cols)
		if err != nil {
			return nil, err
		}
		steps = append(steps, step{tc.Label, prevRSS - rss, rank - prevRank})
		prevRSS, prevRank = rss, rank
	}
	dfRes := n - prevRank
	ms := prevRSS / float64(dfRes)
	var out []record.AnovaRow
	for _, s := range steps {
		F := (s.ss / float64(s.df)) / ms
		out = append(out, record.AnovaRow{Term: s.label, Type: 1, DF: record.Num(s.df), SS: record.Num(s.ss), MS: record.Num(s.ss / float64(s.df)),
			F: record.Num(F), DenDF: record.Num(dfRes), P: record.Num(dist.FUpper(F, float64(s.df), float64(dfRes)))})
	}
	return out, nil
}

// responseScale is the transform used to back-transform means: a change
// on a log scale is a log ratio, back-transformed to a ratio (no offset);
// a change on another non-identity scale has no response-scale form.
func responseScale(s *plan.Step) plan.Transform {
	if s.Outcome.Derive != plan.DeriveChange {
		return s.Transform
	}
	if IsLogScale(s.Transform) {
		k := plan.TransformLog
		if s.Transform.Kind == plan.TransformLog10 {
			k = plan.TransformLog10
		}
		return plan.Transform{Kind: k}
	}
	if s.Transform.Kind == plan.TransformNone || s.Transform.Kind == "" {
		return s.Transform
	}
	return plan.Transform{Kind: "no-back-transform"}
}

// marginalMeans computes estimated marginal means of factor with CIs and
// their back-transforms.
// meansOf fills the marginal means of factor into det with intervals at
// 1 - alpha, recording the level, the factors averaged over and the
// covariate values the means are taken at.
func meansOf(det *record.StepDetail, lf *linearFit, factor string, tr plan.Transform, alpha float64) error {
	if alpha <= 0 || alpha >= 1 {
		alpha = plan.DefaultAlpha
	}
	mm, err := marginalMeans(lf, factor, tr, alpha)
	if err != nil {
		return err
	}
	det.MarginalMeans, det.MeansLevel = mm, record.Num(1-alpha)
	det.MeansOver, det.MeansAt = []string{}, []record.CovariateSetting{}
	if len(mm) == 0 {
		return nil
	}
	for _, name := range lf.dm.FactorNames() {
		if name != factor {
			det.MeansOver = append(det.MeansOver, name)
		}
	}
	names, values := lf.dm.CovariateMeans()
	for i, name := range names {
		det.MeansAt = append(det.MeansAt, record.CovariateSetting{Name: name, Value: record.Num(values[i])})
	}
	return nil
}

func marginalMeans(lf *linearFit, factor string, tr plan.Transform, alpha float64) ([]record.MarginalMean, error) {
	if factor == "" || lf.dm.TermIndex(factor) < 0 {
		return nil, nil
	}
	L, labels, err := lf.dm.MeansGrid([]string{factor})
	if err != nil {
		return nil, fmt.Errorf("marginal means of %s: %w", factor, err)
	}
	var out []record.MarginalMean
	r, _ := L.Dims()
	for i := 0; i < r; i++ {
		l := L.RawRowView(i)
		est, se := contrast(lf, l)
		df := lf.df(l)
		tq := dist.TUpperQuantile(alpha/2, df)
		mm := record.MarginalMean{Factor: factor, Level: levelFromLabel(labels[i], factor), Estimate: record.Num(est), SE: record.Num(se), DF: record.Num(df),
			Lower: record.Num(est - tq*se), Upper: record.Num(est + tq*se)}
		if !lf.estimable(l) {
			mm.Estimate, mm.SE, mm.Lower, mm.Upper = record.NaN, record.NaN, record.NaN, record.NaN
		}
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
		out = append(out, mm)
	}
	return out, nil
}

func levelFromLabel(label, factor string) string {
	p := factor + "["
	if len(label) > len(p) && label[:len(p)] == p && label[len(label)-1] == ']' {
		return label[len(p) : len(label)-1]
	}
	return label
}

// contrast returns l'b and its standard error sqrt(l'Vl).
func contrast(lf *linearFit, l []float64) (float64, float64) {
	est := 0.0
	for j, v := range l {
		est += v * lf.coef[j]
	}
	lv := mat.NewVecDense(len(l), slices.Clone(l))
	v := mat.Inner(lv, lf.cov, lv)
	if v < 0 {
		v = 0
	}
	return est, math.Sqrt(v)
}

// groupSummaries describes the analysed values per level of factor.
func groupSummaries(p *plan.Plan, factor string, ds *dataset) []record.GroupSummary {
	vals, ok := ds.factors[factor]
	if !ok {
		return nil
	}
	var out []record.GroupSummary
	for _, lv := range levelsOf(p, factor, vals) {
		var xs []float64
		for i, v := range vals {
			if v == lv {
				xs = append(xs, ds.y[i])
			}
		}
		out = append(out, record.GroupSummary{Level: lv, N: len(xs), Mean: record.Num(mean(xs)), Median: record.Num(median(xs)), SD: record.Num(sd(xs))})
	}
	return out
}

func mean(xs []float64) float64 {
	if len(xs) == 0 {
		return math.NaN()
	}
	s := 0.0
	for _, x := range xs {
		s += x
	}
	m := s / float64(len(xs))
	c := 0.0 // second pass correction
	for _, x := range xs {
		c += x - m
	}
	return m + c/float64(len(xs))
}

func sd(xs []float64) float64 {
	if len(xs) < 2 {
		return math.NaN()
	}
	m := mean(xs)
	s := 0.0
	for _, x := range xs {
		s += (x - m) * (x - m)
	}
	return math.Sqrt(s / float64(len(xs)-1))
}

func median(xs []float64) float64 {
	if len(xs) == 0 {
		return math.NaN()
	}
	s := slices.Clone(xs)
	slices.Sort(s)
	n := len(s)
	if n%2 == 1 {
		return s[n/2]
	}
	return (s[n/2-1] + s[n/2]) / 2
}
