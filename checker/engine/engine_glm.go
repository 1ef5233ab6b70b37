package engine

import (
	"fmt"
	"math"
	"slices"

	"gonum.org/v1/gonum/mat"

	"furrow/checker/method"
	"furrow/checker/record"
	"furrow/plan"
	"furrow/stats/dist"
	"furrow/stats/glm"
)

// fitPoisson fits a Poisson log-linear model by IRLS (stats/glm). Terms
// are tested by likelihood ratio against the fit without the term's
// columns (Type III with sum-to-zero coding); means are rates and
// comparisons rate ratios, through the log back-transform of the means.
func fitPoisson(p *plan.Plan, ep *plan.Endpoint, s *plan.Step, ds *dataset) (*fitted, error) {
	for i, v := range ds.y {
		if v < 0 || v != math.Trunc(v) || math.IsInf(v, 0) {
			return nil, fmt.Errorf("the Poisson model needs non-negative whole counts; observation %d is %g", i+1, v)
		}
	}
	dm, err := buildDesign(p, s, ds, s.Fixed)
	if err != nil {
		return nil, err
	}
	res, err := glm.FitModel(dm, ds.y, glm.Poisson, nil)
	if err != nil {
		return nil, fmt.Errorf("fitting the Poisson model: %w", err)
	}
	for j, e := range res.Estimate {
		if math.IsNaN(e) || math.IsInf(e, 0) || math.IsInf(res.StdErr[j], 0) {
			return nil, fmt.Errorf("the Poisson model's coefficient %s is not finite (a level with all zero counts separates the data)", res.Names[j])
		}
	}
	if res.DFResid <= 0 {
		return nil, fmt.Errorf("the Poisson model has as many parameters as observations (no residual degrees of freedom); tests are not defined")
	}
	cmpF := compareFactor(p, s)
	f := &fitted{
		summary: record.FitSummary{Method: "irls-poisson", Params: res.Rank, Aliased: res.AliasedNames(), ResidualDF: record.Num(res.DFResid),
			Sigma: record.Num(math.Sqrt(res.Pearson / float64(res.DFResid))), RSquared: record.NaN, Criterion: record.Num(res.Deviance), Converged: true},
		resid:   slices.Clone(res.PearsonResid),
		fit:     slices.Clone(res.Fitted),
		groups:  ds.factors[cmpF],
		compare: cmpF,
		linear: &linearFit{dm: dm, coef: res.Coefficients(), cov: res.CoefCov(), df: res.DF,
			estimable: res.Estimable},
	}
	det := &record.StepDetail{}
	for j, name := range res.Names {
		det.Coefficients = append(det.Coefficients, record.Coefficient{Name: name, Estimate: record.Num(res.Estimate[j]), SE: record.Num(res.StdErr[j]),
			DF: record.NaN, T: record.Num(res.Stat[j]), P: record.Num(res.PValue[j])})
	}
	n, pc := dm.X.Dims()
	for _, tc := range dm.Terms {
		if tc.Label == "(intercept)" || (dm.Intercept && len(tc.Cols) == 1 && tc.Cols[0] == 0) {
			continue
		}
		drop := map[int]bool{}
		for _, c := range tc.Cols {
			drop[c] = true
		}
		var keep []int
		for j := 0; j < pc; j++ {
			if !drop[j] {
				keep = append(keep, j)
			}
		}
		x := mat.NewDense(n, len(keep), nil)
		for k, j := range keep {
			for i := 0; i < n; i++ {
				x.Set(i, k, dm.X.At(i, j))
			}
		}
		small, err := glm.Fit(x, ds.y, glm.Poisson, nil)
		if err != nil {
			return nil, fmt.Errorf("fitting the Poisson model without %s: %w", tc.Label, err)
		}
		lr := small.Deviance - res.Deviance
		df := res.Rank - small.Rank
		if df <= 0 {
			continue
		}
		// The likelihood-ratio chi-squared is recorded in the F column
		// divided by its df (a chi-squared over df on infinite
		// denominator df); SS holds the deviance drop itself.
		det.Anova = append(det.Anova, record.AnovaRow{Term: tc.Label, Type: 3, DF: record.Num(float64(df)), SS: record.Num(lr), MS: record.Num(lr / float64(df)),
			F: record.Num(lr / float64(df)), DenDF: record.NaN, P: record.Num(dist.ChiSqUpper(lr, float64(df)))})
	}
	det.Anova = append(det.Anova, record.AnovaRow{Term: "residuals", Type: 3, DF: record.Num(float64(res.DFResid)), SS: record.Num(res.Deviance),
		MS: record.Num(res.Deviance / float64(res.DFResid)), F: record.NaN, DenDF: record.NaN, P: record.NaN})
	if err := meansOf(det, f.linear, cmpF, plan.Transform{Kind: plan.TransformLog}, ep.Alpha); err != nil {
		return nil, err
	}
	det.GroupSummaries = groupSummaries(p, cmpF, ds)
	f.detail = det
	return f, nil
}

// analysisScale is the scale a step's contrasts are on: the log link of
// a count model (so that comparisons are rate ratios), else the step's
// declared transform.
func analysisScale(s *plan.Step) plan.Transform {
	if s.Model == method.Poisson.Name {
		return plan.Transform{Kind: plan.TransformLog}
	}
	return s.Transform
}
