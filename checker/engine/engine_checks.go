package engine

import (
	"fmt"
	"math"
	"strings"

	"furrow/checker/record"
	"furrow/plan"
	"furrow/stats/assume"
)

// checkOutcome is what one assumption test returns.
type checkOutcome struct {
	on        string
	n         int
	statistic float64
	df        []float64
	p         float64
}

// checkFunc runs one assumption test on a fitted step.
type checkFunc func(f *fitted, s *plan.Step, c *plan.Check, byCols []string) (checkOutcome, error)

// checkFuncs returns the registry of checks by plan name. Normality tests
// use the residuals; variance tests the residuals grouped by the check's
// "by" columns (default the treatment column); Breusch-Pagan the
// residuals against the fitted values (Koenker's studentised form).
func checkFuncs() map[string]checkFunc {
	return map[string]checkFunc{
		plan.CheckShapiroWilk: func(f *fitted, _ *plan.Step, _ *plan.Check, _ []string) (checkOutcome, error) {
			// Shapiro & Wilk (1965) with Royston's (1995) approximation (stats/assume).
			r, err := assume.ShapiroWilk(f.resid)
			return checkOutcome{on: "residuals", n: r.N, statistic: r.W, p: r.P}, err
		},
		plan.CheckAndersonDarling: func(f *fitted, _ *plan.Step, _ *plan.Check, _ []string) (checkOutcome, error) {
			r, err := assume.AndersonDarling(f.resid)
			return checkOutcome{on: "residuals", n: r.N, statistic: r.A2Star, p: r.P}, err
		},
		plan.CheckLevene:        groupedF(assume.Levene),
		plan.CheckBrownForsythe: groupedF(assume.BrownForsythe),
		plan.CheckBartlett: func(f *fitted, _ *plan.Step, _ *plan.Check, by []string) (checkOutcome, error) {
			g, err := residGroups(f, by)
			if err != nil {
				return checkOutcome{}, err
			}
			r, err := assume.Bartlett(g)
			return checkOutcome{on: "residuals by " + strings.Join(by, ":"), n: r.N, statistic: r.Stat, df: []float64{r.DF}, p: r.P}, err
		},
		plan.CheckBreuschPagan: func(f *fitted, _ *plan.Step, _ *plan.Check, _ []string) (checkOutcome, error) {
			r, err := assume.BreuschPaganFitted(f.resid, f.fit)
			return checkOutcome{on: "residuals vs fitted", n: r.N, statistic: r.Stat, df: []float64{r.DF}, p: r.P}, err
		},
	}
}

func groupedF(test func([][]float64) (assume.FTestResult, error)) checkFunc {
	return func(f *fitted, _ *plan.Step, _ *plan.Check, by []string) (checkOutcome, error) {
		g, err := residGroups(f, by)
		if err != nil {
			return checkOutcome{}, err
		}
		r, err := test(g)
		return checkOutcome{on: "residuals by " + strings.Join(by, ":"), n: r.N, statistic: r.F, df: []float64{r.DF1, r.DF2}, p: r.P}, err
	}
}

// residGroups splits the residuals by the joint levels of the by columns,
// groups in order of first appearance.
func residGroups(f *fitted, by []string) ([][]float64, error) {
	cols := make([][]string, len(by))
	for k, b := range by {
		c, ok := f.ds.factors[b]
		if !ok {
			return nil, fmt.Errorf("grouping column %q is not a factor of the analysed data", b)
		}
		cols[k] = c
	}
	idx := map[string]int{}
	var out [][]float64
	for i, r := range f.resid {
		parts := make([]string, len(by))
		for k := range by {
			parts[k] = cols[k][i]
		}
		key := strings.Join(parts, "\x00")
		g, ok := idx[key]
		if !ok {
			g = len(out)
			idx[key] = g
			out = append(out, nil)
		}
		out[g] = append(out[g], r)
	}
	return out, nil
}

// runCheck runs one declared check and compares its p-value with the threshold.
func (e *Cascade) runCheck(f *fitted, s *plan.Step, c *plan.Check) record.CheckResult {
	onFail := c.OnFail
	if onFail == "" {
		onFail = s.OnFail
	}
	by := c.By
	if len(by) == 0 && isVarianceTest(c.Test) {
		by = []string{f.compare}
	}
	cr := record.CheckResult{Test: c.Test, Pos: posText(c.Pos), By: by, FailBelow: record.Num(c.FailBelow), OnFail: onFail,
		Statistic: record.NaN, P: record.NaN}
	fn := e.checks[c.Test]
	if fn == nil {
		cr.Verdict, cr.Error = record.VerdictError, fmt.Sprintf("check %q is not available in this build", c.Test)
		return cr
	}
	if f.resid == nil {
		cr.Verdict, cr.Error = record.VerdictError, "the step has no residuals to check"
		return cr
	}
	if perfectFit(f) {
		// Residuals that are rounding noise around an exact fit would give
		// the tests a p-value of no meaning (input: a response constant
		// within every group).
		cr.Verdict, cr.Error = record.VerdictError, "the residuals are zero up to rounding, so the model fits the data exactly and the check cannot be computed"
		return cr
	}
	out, err := safeCheck(fn, f, s, c, by)
	cr.On, cr.N, cr.Statistic, cr.DF, cr.P = out.on, out.n, record.Num(out.statistic), record.Nums(out.df), record.Num(out.p)
	switch {
	case err != nil:
		cr.Verdict, cr.Error = record.VerdictError, err.Error()
		cr.Statistic, cr.P = record.NaN, record.NaN
	case math.IsNaN(out.p):
		cr.Verdict, cr.Error = record.VerdictError, "the test gave no p-value"
	case out.p < c.FailBelow:
		cr.Verdict = record.VerdictFail
	default:
		cr.Verdict = record.VerdictPass
	}
	return cr
}

// perfectFit reports whether a model's residuals are all zero up to
// rounding: no residual exceeds 1e-12 times the largest fitted value in
// magnitude (QR rounding leaves residuals of order n·eps times the data).
func perfectFit(f *fitted) bool {
	if f.residOnly || len(f.fit) == 0 || len(f.fit) != len(f.resid) {
		return false
	}
	scale, big := 0.0, 0.0
	for i := range f.resid {
		scale = math.Max(scale, math.Abs(f.fit[i]))
		big = math.Max(big, math.Abs(f.resid[i]))
	}
	return big <= 1e-12*scale
}

func safeCheck(fn checkFunc, f *fitted, s *plan.Step, c *plan.Check, by []string) (out checkOutcome, err error) {
	defer func() {
		if v := recover(); v != nil {
			out, err = checkOutcome{}, fmt.Errorf("internal error in %s: %v", c.Test, v)
		}
	}()
	return fn(f, s, c, by)
}

func isVarianceTest(name string) bool {
	return name == plan.CheckLevene || name == plan.CheckBrownForsythe || name == plan.CheckBartlett
}
