package engine

import (
	"errors"
	"fmt"
	"math"
	"slices"
	"strings"

	"gonum.org/v1/gonum/mat"
	"gonum.org/v1/gonum/optimize"

	"furrow/checker/record"
	"furrow/plan"
	"furrow/stats/design"
	"furrow/stats/lm"
	"furrow/stats/lmm"
)

// fitMixed fits a linear mixed model (stats/lmm) to a mixed step: the
// fixed part is the step's fixed terms in sum-to-zero coding (as for a
// linear step), each random term is a random intercept for the
// combinations of its columns' levels (several columns in one term nest,
// separate terms cross), the criterion is REML unless the step asks for
// ML, and the denominator df are Satterthwaite's unless the step asks for
// Kenward-Roger.
//
// Fixed-effect columns that are linearly dependent on earlier ones (empty
// cells) are found by the least-squares QR of the fixed part and left out
// of the mixed fit; they are reported as aliased and every estimate that
// would involve them is not estimable, as for a linear step.
func fitMixed(p *plan.Plan, ep *plan.Endpoint, s *plan.Step, ds *dataset) (*fitted, error) {
	if len(s.Random) == 0 {
		return nil, errors.New("a mixed step needs at least one random term")
	}
	dm, err := buildDesign(p, s, ds, s.Fixed)
	if err != nil {
		return nil, err
	}
	groups, err := randomGroupings(ds, s.Random)
	if err != nil {
		return nil, err
	}
	// Column rank of the fixed part, by the least-squares QR.
	ols, err := lm.FitModel(dm, ds.y, nil)
	if err != nil {
		return nil, fmt.Errorf("checking the fixed part of the mixed model: %w", err)
	}
	n, pFull := dm.X.Dims()
	kept := make([]int, 0, pFull)
	pos := make([]int, pFull) // full column -> kept index, -1 when aliased
	for j := 0; j < pFull; j++ {
		pos[j] = -1
		if !slices.Contains(ols.Aliased, j) {
			pos[j] = len(kept)
			kept = append(kept, j)
		}
	}
	X := mat.NewDense(n, len(kept), nil)
	for k, j := range kept {
		for i := 0; i < n; i++ {
			X.Set(i, k, dm.X.At(i, j))
		}
	}
	opt := &lmm.Options{}
	method := "reml"
	if s.Estimation == "ml" {
		opt.Criterion = lmm.ML
		method = "ml"
	}
	res, err := lmm.Fit(ds.y, X, groups, opt)
	if err != nil {
		return nil, fmt.Errorf("fitting the mixed model: %w", err)
	}
	if !converged(res.Status) {
		return nil, fmt.Errorf("fitting the mixed model: the optimiser did not converge (status %v after %d iterations)", res.Status, res.Iterations)
	}
	dfm := lmm.Satterthwaite
	if s.DF == plan.DFKenwardRoger {
		dfm = lmm.KenwardRoger
	}
	// The estimates, their covariance and the contrast df of the chosen
	// method, expanded to the full column set (aliased columns are zero).
	var subCov *mat.SymDense
	var subDF func(l []float64) float64
	if dfm == lmm.KenwardRoger {
		kr, err := res.KR()
		if err != nil {
			return nil, fmt.Errorf("kenward-roger adjustment: %w", err)
		}
		subCov, subDF = kr.CoefCov(), kr.DF
	} else {
		subCov, subDF = res.CoefCov(), res.DF
	}
	sub := func(l []float64) []float64 {
		out := make([]float64, len(kept))
		for k, j := range kept {
			out[k] = l[j]
		}
		return out
	}
	coef := make([]float64, pFull)
	cov := mat.NewSymDense(pFull, nil)
	bk := res.Coefficients()
	for a, ja := range kept {
		coef[ja] = bk[a]
		for b := 0; b <= a; b++ {
			cov.SetSym(ja, kept[b], subCov.At(a, b))
		}
	}
	lf := &linearFit{dm: dm, coef: coef, cov: cov, estimable: ols.Estimable,
		df: func(l []float64) float64 {
			if !ols.Estimable(l) {
				return math.NaN()
			}
			return subDF(sub(l))
		}}

	cmpF := compareFactor(p, s)
	var aliased []string
	for _, j := range ols.Aliased {
		aliased = append(aliased, dm.Names[j])
	}
	f := &fitted{
		summary: record.FitSummary{Method: method, Params: len(kept), Aliased: aliased, ResidualDF: record.NaN,
			Sigma: record.Num(res.Sigma), RSquared: record.NaN, Criterion: record.Num(res.Objective), Converged: true},
		resid:   slices.Clone(res.Resid),
		fit:     slices.Clone(res.Fitted),
		groups:  ds.factors[cmpF],
		compare: cmpF,
		linear:  lf,
	}
	det := &record.StepDetail{}
	for j, name := range dm.Names {
		c := record.Coefficient{Name: name, Estimate: record.NaN, SE: record.NaN, DF: record.NaN, T: record.NaN, P: record.NaN}
		if pos[j] >= 0 {
			e := make([]float64, len(kept))
			e[pos[j]] = 1
			cf, err := res.Contrast(e, dfm)
			if err != nil {
				return nil, fmt.Errorf("coefficient %s: %w", name, err)
			}
			c = record.Coefficient{Name: name, Estimate: record.Num(cf.Estimate), SE: record.Num(cf.SE), DF: record.Num(cf.DF), T: record.Num(cf.T), P: record.Num(cf.P)}
		}
		det.Coefficients = append(det.Coefficients, c)
	}
	typ := s.Anova
	if typ == 0 {
		typ = 3
	}
	det.Anova, err = mixedAnova(res, dm, typ, dfm, pos, ols.Estimable)
	if err != nil {
		return nil, err
	}
	for _, c := range res.Components {
		det.VarianceComponents = append(det.VarianceComponents, record.VarComp{Group: c.Name, Variance: record.Num(c.Variance), SD: record.Num(c.SD),
			Share: record.Num(c.Share), Boundary: c.Boundary})
	}
	if err := meansOf(det, lf, cmpF, responseScale(s), ep.Alpha); err != nil {
		return nil, err
	}
	det.GroupSummaries = groupSummaries(p, cmpF, ds)
	f.detail = det
	return f, nil
}

// converged reports whether an optimiser status is a normal termination.
func converged(st optimize.Status) bool {
	// stats/lmm reports Success only at a verified minimum (it checks the
	// gradient and, at a boundary, the second-order conditions).
	return st == optimize.Success
}

// randomGroupings codes each random term as a grouping factor: the levels
// of a term with several columns are the combinations that occur (so
// block within site is site:block), numbered in sorted order.
func randomGroupings(ds *dataset, terms []plan.Term) ([]lmm.Grouping, error) {
	n := ds.n()
	var out []lmm.Grouping
	for _, t := range terms {
		cols := make([][]string, len(t.Columns))
		for k, c := range t.Columns {
			v, ok := ds.factors[c]
			if !ok {
				return nil, fmt.Errorf("random term %s: %q is not a factor of the analysed data", strings.Join(t.Columns, ":"), c)
			}
			cols[k] = v
		}
		keys := make([]string, n)
		seen := map[string]bool{}
		for i := 0; i < n; i++ {
			parts := make([]string, len(cols))
			for k := range cols {
				parts[k] = cols[k][i]
			}
			keys[i] = strings.Join(parts, "\x00")
			seen[keys[i]] = true
		}
		levels := sortedKeys(seen)
		code := make(map[string]int, len(levels))
		for i, l := range levels {
			code[l] = i
		}
		idx := make([]int, n)
		for i, k := range keys {
			idx[i] = code[k]
		}
		out = append(out, lmm.Grouping{Name: strings.Join(t.Columns, ":"), Index: idx, Levels: len(levels)})
	}
	return out, nil
}

// mixedAnova returns one F test per fixed term with the chosen df method.
// Type 3 tests the term's sum-to-zero coefficients (lmm TermTests); type 1
// tests the terms sequentially in model order; type 2 uses the hypothesis
// of design.TypeIIHypothesis from the fixed part's Gram matrix (the
// marginality of Langsrud 2003) with the mixed model's covariance. Columns
// aliased in the fixed part are left out of every hypothesis; SS and MS are
// not defined for these Wald-type tests and are NaN.
func mixedAnova(res *lmm.Result, dm *design.Matrix, typ int, m lmm.Method, pos []int, estimable func([]float64) bool) ([]record.AnovaRow, error) {
	var labels []string
	var terms [][]int
	var idx []int
	for i, tc := range dm.Terms {
		if len(tc.Cols) == 1 && dm.Intercept && tc.Cols[0] == 0 {
			continue
		}
		var cols []int
		for _, j := range tc.Cols {
			if pos[j] >= 0 {
				cols = append(cols, pos[j])
			}
		}
		if len(cols) == 0 {
			continue // the whole term is aliased
		}
		labels = append(labels, tc.Label)
		terms = append(terms, cols)
		idx = append(idx, i)
	}
	row := func(label string, tt lmm.TermTest) record.AnovaRow {
		return record.AnovaRow{Term: label, Type: typ, DF: record.Num(tt.NumDF), SS: record.NaN, MS: record.NaN, F: record.Num(tt.F), DenDF: record.Num(tt.DenDF), P: record.Num(tt.P)}
	}
	var out []record.AnovaRow
	switch typ {
	case 1, 3:
		tts, err := res.TermTests(terms, typ, m)
		if err != nil {
			return nil, fmt.Errorf("anova type %d of the mixed model: %w", typ, err)
		}
		for k, tt := range tts {
			out = append(out, row(labels[k], tt))
		}
	case 2:
		var gram mat.SymDense
		gram.SymOuterK(1, dm.X.T())
		kept := 0
		for _, v := range pos {
			if v >= 0 {
				kept++
			}
		}
		for k, i := range idx {
			L, err := dm.TypeIIHypothesis(i, &gram)
			if err != nil {
				return nil, fmt.Errorf("type II test of %s: %w", labels[k], err)
			}
			r, c := L.Dims()
			var rows [][]float64
			for a := 0; a < r; a++ {
				l := L.RawRowView(a)
				if !estimable(l) {
					continue
				}
				s := make([]float64, kept)
				for j := 0; j < c; j++ {
					if pos[j] >= 0 {
						s[pos[j]] = l[j]
					}
				}
				rows = append(rows, s)
			}
			if len(rows) == 0 {
				return nil, fmt.Errorf("type II test of %s: no estimable part (the term is aliased)", labels[k])
			}
			Ls := mat.NewDense(len(rows), kept, nil)
			for a, s := range rows {
				Ls.SetRow(a, s)
			}
			tt, err := res.FTest(Ls, m)
			if err != nil {
				return nil, fmt.Errorf("type II test of %s: %w", labels[k], err)
			}
			out = append(out, row(labels[k], tt))
		}
	default:
		return nil, fmt.Errorf("anova type %d is not defined", typ)
	}
	return out, nil
}
