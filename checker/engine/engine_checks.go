package engine

import (
	"fmt"
	"math"
	"strings"

	"furrow/checker/method"
	"furrow/checker/record"
	"furrow/plan"
)

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
	m := e.methods.CheckNamed(c.Test)
	by := c.By
	if len(by) == 0 && m != nil && m.Target == method.ResidualsByGroup {
		by = []string{f.compare}
	}
	cr := record.CheckResult{Test: c.Test, Pos: posText(c.Pos), By: by, FailBelow: record.Num(c.FailBelow), OnFail: onFail,
		NotComputable: c.NotComputable, Statistic: record.NaN, P: record.NaN}
	if m == nil {
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
	out, err := safeCheck(m, f, by)
	cr.On, cr.N, cr.Statistic, cr.DF, cr.P = out.On, out.N, record.Num(out.Statistic), record.Nums(out.DF), record.Num(out.P)
	switch {
	case err != nil:
		cr.Verdict, cr.Error = record.VerdictError, err.Error()
		cr.Statistic, cr.P = record.NaN, record.NaN
	case math.IsNaN(out.P):
		cr.Verdict, cr.Error = record.VerdictError, "the test gave no p-value"
	case out.P < c.FailBelow:
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

// safeCheck runs a check on the fit's residuals (grouped by the by
// columns for a grouped check), turning a panic into an error.
func safeCheck(m *method.Check, f *fitted, by []string) (out method.Outcome, err error) {
	defer func() {
		if v := recover(); v != nil {
			out, err = method.Outcome{}, fmt.Errorf("internal error in %s: %v", m.Name, v)
		}
	}()
	in := method.Input{Resid: f.resid, Fitted: f.fit}
	if m.Target == method.ResidualsByGroup {
		g, err := residGroups(f, by)
		if err != nil {
			return method.Outcome{}, err
		}
		in.Groups, in.By = g, by
	}
	return m.Run(in)
}
