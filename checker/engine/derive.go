package engine

import (
	"errors"
	"fmt"
	"math"
	"slices"

	"furrow/checker/record"
	"furrow/checker/table"
	"furrow/plan"
)

// dataset is the outcome a step analyses: one value per observation after
// derivation and transform, with the factor levels and covariates of each
// observation. It is built fresh for every step and never shared.
type dataset struct {
	y       []float64            // analysed values (transformed)
	raw     []float64            // values before the transform
	factors map[string][]string  // factor column -> level per observation
	nums    map[string][]float64 // covariate -> value per observation
	units   []string             // experimental unit per observation ("" when none)
	rows    []int                // file row number of the (first) source row
	// src lists, per observation, the file row numbers of every data row
	// behind it (one for raw; from and to for change and baseline; every
	// row averaged for unit-mean).
	src [][]int
	// unused lists each row of the table that no observation uses, with
	// the reason, in file order.
	unused []record.UnusedRow
	// baseline is the name of the added baseline covariate (derive: baseline).
	baseline string
}

func (d *dataset) n() int { return len(d.y) }

// factorNames returns the names of the plan's factor columns present in the table.
func factorNames(p *plan.Plan, t *table.Table) []string {
	var out []string
	for _, c := range p.Columns {
		if c.IsFactor() && t.Column(c.Name) != nil {
			out = append(out, c.Name)
		}
	}
	return out
}

func covariateNames(p *plan.Plan, t *table.Table) []string {
	var out []string
	for _, c := range p.Columns {
		if c.Role == plan.RoleCovariate && t.Column(c.Name) != nil {
			out = append(out, c.Name)
		}
	}
	return out
}

// cellText returns the text of the named column at row i, and false when
// the column is absent or the cell is missing.
func cellText(t *table.Table, name string, i int) (string, bool) {
	c := t.Column(name)
	if c == nil || c.Missing[i] {
		return "", false
	}
	return c.Text[i], true
}

// baselineName is the covariate name of the baseline value in an ANCOVA step.
func baselineName(response, from string) string { return response + "@" + from }

// derive builds the analysed outcome of a step from the kept table. Rows
// whose response, or one of the step's covariates (useCovs), is missing
// are left out, and so are, for the per-unit outcomes, rows without a unit,
// rows at a level of the repeat factor the outcome does not use, and (change,
// baseline) the row of a unit that has no value at the other time point.
// Each row left out is listed in dataset.unused with its reason.
//
// The transform is applied to each measured value before the derivation
// combines them: a change on a log scale is log(to) - log(from), a log
// ratio; a unit mean is transformed after averaging.
func derive(p *plan.Plan, t *table.Table, response string, o plan.Outcome, tr plan.Transform, useCovs []string) (*dataset, error) {
	f, err := transformFunc(tr)
	if err != nil {
		return nil, err
	}
	var terr error
	fx := func(v float64, row int) float64 {
		y := f(v)
		if (math.IsNaN(y) || math.IsInf(y, 0)) && terr == nil {
			terr = fmt.Errorf("transform %s is not defined for the value %g (file row %d)", transformLabel(tr), v, row)
		}
		return y
	}
	ycol := t.Column(response)
	if ycol == nil {
		return nil, fmt.Errorf("the data have no response column %q", response)
	}
	facs := factorNames(p, t)
	covs := covariateNames(p, t)
	unitCol := unitColumn(p)
	repeat := ColumnByRole(p, plan.RoleRepeat)
	d := &dataset{factors: map[string][]string{}, nums: map[string][]float64{}}
	for _, f := range facs {
		d.factors[f] = []string{}
	}
	for _, c := range covs {
		d.nums[c] = []float64{}
	}
	unitOf := func(i int) string {
		if unitCol == "" {
			return ""
		}
		u, _ := t.Text(unitCol, i)
		return u
	}
	unused := func(i int, reason, column string) {
		d.unused = append(d.unused, record.UnusedRow{Row: t.RowNumber(i), Unit: unitOf(i), Reason: reason, Column: column})
	}
	// missingCov returns the first of the step's covariates missing in row i.
	missingCov := func(i int) string {
		for _, c := range useCovs {
			if v, ok := t.Float(c, i); !ok || math.IsNaN(v) {
				return c
			}
		}
		return ""
	}
	addRow := func(i int, raw, y float64) {
		d.src = append(d.src, []int{t.RowNumber(i)})
		d.raw = append(d.raw, raw)
		d.y = append(d.y, y)
		for _, f := range facs {
			s, _ := t.Text(f, i)
			d.factors[f] = append(d.factors[f], s)
		}
		for _, c := range covs {
			v, _ := t.Float(c, i)
			d.nums[c] = append(d.nums[c], v)
		}
		u := ""
		if unitCol != "" {
			u, _ = t.Text(unitCol, i)
		}
		d.units = append(d.units, u)
		d.rows = append(d.rows, t.RowNumber(i))
	}
	present := func(i int) bool {
		return !ycol.Missing[i] && !math.IsNaN(ycol.Num[i])
	}
	switch o.Derive {
	case plan.DeriveRaw, "":
		for i := 0; i < t.NumRows(); i++ {
			switch c := missingCov(i); {
			case !present(i):
				unused(i, record.UnusedMissingResponse, "")
			case c != "":
				unused(i, record.UnusedMissingCovariate, c)
			default:
				addRow(i, ycol.Num[i], fx(ycol.Num[i], t.RowNumber(i)))
			}
		}
	case plan.DeriveChange, plan.DeriveBaseline:
		if unitCol == "" || repeat == nil {
			return nil, fmt.Errorf("derive %s needs a unit column and a repeat column in the plan", o.Derive)
		}
		from, to := map[string]int{}, map[string]int{}
		var order []string
		for i := 0; i < t.NumRows(); i++ {
			u, okU := cellText(t, unitCol, i)
			lv, okT := cellText(t, repeat.Name, i)
			var m map[string]int
			switch {
			case !okU:
				unused(i, record.UnusedMissingUnit, unitCol)
				continue
			case okT && lv == o.From:
				m = from
			case okT && lv == o.To:
				m = to
			default:
				unused(i, record.UnusedOtherTime, repeat.Name)
				continue
			}
			if !present(i) {
				unused(i, record.UnusedMissingResponse, "")
				continue
			}
			if _, dup := m[u]; dup {
				return nil, fmt.Errorf("unit %q has more than one value at %s %q (derive %s needs one per unit; use unit-mean first)", u, repeat.Name, lv, o.Derive)
			}
			if _, seen := from[u]; !seen {
				if _, seen2 := to[u]; !seen2 {
					order = append(order, u)
				}
			}
			m[u] = i
		}
		var base []float64
		for _, u := range order {
			i, okTo := to[u]
			j, okFrom := from[u]
			switch {
			case !okTo:
				unused(j, record.UnusedNoSecondTime, repeat.Name)
				continue
			case !okFrom:
				unused(i, record.UnusedNoSecondTime, repeat.Name)
				continue
			}
			// The observation takes its covariates from the end-point row.
			if c := missingCov(i); c != "" {
				unused(j, record.UnusedMissingCovariate, c)
				unused(i, record.UnusedMissingCovariate, c)
				continue
			}
			yt, yf := fx(ycol.Num[i], t.RowNumber(i)), fx(ycol.Num[j], t.RowNumber(j))
			if o.Derive == plan.DeriveChange {
				addRow(i, ycol.Num[i]-ycol.Num[j], yt-yf)
			} else {
				addRow(i, ycol.Num[i], yt)
				base = append(base, yf)
			}
			g := len(d.src) - 1
			d.src[g] = []int{t.RowNumber(min(i, j)), t.RowNumber(max(i, j))}
		}
		delete(d.factors, repeat.Name)
		if o.Derive == plan.DeriveBaseline {
			d.baseline = baselineName(response, o.From)
			d.nums[d.baseline] = base
		}
	case plan.DeriveUnitMean:
		if unitCol == "" {
			return nil, errors.New("derive unit-mean needs a unit column in the plan")
		}
		type key struct{ u, lv string }
		idx := map[key]int{}
		var sums []float64
		var counts []int
		for i := 0; i < t.NumRows(); i++ {
			u, okU := cellText(t, unitCol, i)
			if !okU {
				unused(i, record.UnusedMissingUnit, unitCol)
				continue
			}
			lv := ""
			if repeat != nil {
				var okT bool
				lv, okT = cellText(t, repeat.Name, i)
				if o.At != "" && (!okT || lv != o.At) {
					unused(i, record.UnusedOtherTime, repeat.Name)
					continue
				}
			}
			if !present(i) {
				unused(i, record.UnusedMissingResponse, "")
				continue
			}
			if c := missingCov(i); c != "" {
				unused(i, record.UnusedMissingCovariate, c)
				continue
			}
			k := key{u, lv}
			g, ok := idx[k]
			if !ok {
				g = len(sums)
				idx[k] = g
				sums = append(sums, 0)
				counts = append(counts, 0)
				addRow(i, 0, 0)
			} else {
				d.src[g] = append(d.src[g], t.RowNumber(i))
			}
			sums[g] += ycol.Num[i]
			counts[g]++
		}
		for g := range sums {
			d.raw[g] = sums[g] / float64(counts[g])
			d.y[g] = fx(d.raw[g], d.rows[g])
		}
		if repeat != nil && o.At != "" {
			delete(d.factors, repeat.Name)
		}
	default:
		return nil, fmt.Errorf("unknown derivation %q", o.Derive)
	}
	if terr != nil {
		return nil, terr
	}
	slices.SortFunc(d.unused, func(a, b record.UnusedRow) int { return a.Row - b.Row })
	if len(d.raw) == 0 {
		return nil, errors.New("no observations left after derivation")
	}
	return d, nil
}

// transformFunc returns the forward transform. Values outside the domain
// give NaN or an infinity, which applyTransform reports.
func transformFunc(tr plan.Transform) (func(float64) float64, error) {
	switch tr.Kind {
	case plan.TransformNone, "":
		return func(x float64) float64 { return x }, nil
	case plan.TransformLog:
		return func(x float64) float64 { return logPos(x) }, nil
	case plan.TransformLogOffset:
		c := tr.Offset
		return func(x float64) float64 { return logPos(x + c) }, nil
	case plan.TransformLog10:
		return func(x float64) float64 { return logPos(x) / math.Ln10 }, nil
	case plan.TransformSqrt:
		return math.Sqrt, nil
	case plan.TransformReciprocal:
		return func(x float64) float64 {
			if x == 0 {
				return math.NaN()
			}
			return 1 / x
		}, nil
	case plan.TransformArcsine:
		return func(x float64) float64 {
			if x < 0 || x > 1 {
				return math.NaN()
			}
			return math.Asin(math.Sqrt(x))
		}, nil
	case plan.TransformBoxCox:
		// Box & Cox (1964) JRSS B 26:211, fixed lambda; defined for x > 0.
		l := tr.Lambda
		return func(x float64) float64 {
			if x <= 0 {
				return math.NaN()
			}
			if l == 0 {
				return math.Log(x)
			}
			return math.Expm1(l*math.Log(x)) / l
		}, nil
	}
	return nil, fmt.Errorf("unknown transform %q", tr.Kind)
}

func logPos(x float64) float64 {
	if x <= 0 {
		return math.NaN()
	}
	return math.Log(x)
}

// backTransform maps a value on the analysis scale to the response scale;
// ok is false when the transform has no inverse at that value.
func backTransform(tr plan.Transform, y float64) (float64, bool) {
	switch tr.Kind {
	case plan.TransformNone, "":
		return y, true
	case plan.TransformLog:
		return math.Exp(y), true
	case plan.TransformLogOffset:
		return math.Exp(y) - tr.Offset, true
	case plan.TransformLog10:
		return math.Pow(10, y), true
	case plan.TransformSqrt:
		if y < 0 {
			return 0, true
		}
		return y * y, true
	case plan.TransformReciprocal:
		if y == 0 {
			return math.NaN(), false
		}
		return 1 / y, true
	case plan.TransformArcsine:
		s := math.Sin(math.Max(0, math.Min(math.Pi/2, y)))
		return s * s, true
	case plan.TransformBoxCox:
		if tr.Lambda == 0 {
			return math.Exp(y), true
		}
		b := tr.Lambda*y + 1
		if b <= 0 {
			return math.NaN(), false
		}
		return math.Exp(math.Log(b) / tr.Lambda), true
	}
	return math.NaN(), false
}

// IsLogScale reports whether differences on the analysis scale are log ratios.
func IsLogScale(tr plan.Transform) bool {
	return tr.Kind == plan.TransformLog || tr.Kind == plan.TransformLog10 || tr.Kind == plan.TransformLogOffset ||
		(tr.Kind == plan.TransformBoxCox && tr.Lambda == 0)
}

// logBase is the factor that turns an analysis-scale difference into a natural-log ratio.
func logBase(tr plan.Transform) float64 {
	if tr.Kind == plan.TransformLog10 {
		return math.Ln10
	}
	return 1
}

// transformLabel describes the analysis scale for a response name.
func transformLabel(tr plan.Transform) string {
	switch tr.Kind {
	case plan.TransformLogOffset:
		return fmt.Sprintf("log(x + %g)", tr.Offset)
	case plan.TransformBoxCox:
		return fmt.Sprintf("box-cox(x, %g)", tr.Lambda)
	case "":
		return plan.TransformNone
	}
	return tr.Kind
}

// scaleText writes the analysed quantity, e.g. "log(juveniles + 1)".
func scaleText(response string, o plan.Outcome, tr plan.Transform) string {
	// The transform is applied to each measured value before a change or
	// baseline derivation (a change on the log scale is a log ratio), and
	// after averaging for a unit mean: the text follows that order.
	switch o.Derive {
	case plan.DeriveChange:
		return fmt.Sprintf("%s - %s", transformed(response+"@"+o.To, tr), transformed(response+"@"+o.From, tr))
	case plan.DeriveBaseline:
		return fmt.Sprintf("%s, adjusted for %s", transformed(response+"@"+o.To, tr), transformed(response+"@"+o.From, tr))
	case plan.DeriveUnitMean:
		v := "mean(" + response + ")"
		if o.At != "" {
			v = "mean(" + response + "@" + o.At + ")"
		}
		return transformed(v, tr)
	}
	return transformed(response, tr)
}

// transformed writes the transform applied to the expression v.
func transformed(v string, tr plan.Transform) string {
	switch tr.Kind {
	case plan.TransformNone, "":
		return v
	case plan.TransformLogOffset:
		return fmt.Sprintf("log(%s + %g)", v, tr.Offset)
	case plan.TransformBoxCox:
		return fmt.Sprintf("box-cox(%s, %g)", v, tr.Lambda)
	case plan.TransformArcsine:
		return "asin(sqrt(" + v + "))"
	}
	return tr.Kind + "(" + v + ")"
}

// levelsOf returns the declared levels of a factor column, restricted to
// those present in values, in declared order; undeclared values follow in
// order of first appearance.
func levelsOf(p *plan.Plan, name string, values []string) []string {
	present := map[string]bool{}
	for _, v := range values {
		present[v] = true
	}
	var out []string
	if c := PlanColumn(p, name); c != nil {
		for _, l := range c.Levels {
			if present[l] {
				out = append(out, l)
				delete(present, l)
			}
		}
	}
	for _, v := range values {
		if present[v] {
			out = append(out, v)
			delete(present, v)
		}
	}
	return out
}

// sortedLevels is levelsOf for factors with no declared order (units).
func sortedLevels(values []string) []string {
	out := slices.Clone(values)
	slices.Sort(out)
	return slices.Compact(out)
}
