package infer

import (
	"fmt"
	"math"

	"gonum.org/v1/gonum/mat"

	"furrow/stats/multcomp"
)

// MarginalMeans returns estimated marginal means (population marginal
// means, Searle, Speed & Milliken 1980 Am Stat 34:216): row i of L holds
// the weights that average the model's predictions over the reference grid
// into the mean for labels[i] (stats/design builds L). Each mean carries its
// SE, df and confidence interval.
func MarginalMeans(m Model, L mat.Matrix, labels []string, opt Options) ([]Estimate, error) {
	r, _ := L.Dims()
	if len(labels) != r {
		return nil, fmt.Errorf("marginal means: %d labels for %d rows of L", len(labels), r)
	}
	out, err := Contrasts(m, L, labels, opt)
	if err != nil {
		return nil, fmt.Errorf("marginal means: %w", err)
	}
	return out, nil
}

// rowDiff returns row a of L minus row b.
func rowDiff(L mat.Matrix, a, b int) []float64 {
	_, c := L.Dims()
	d := make([]float64, c)
	for j := range d {
		d[j] = L.At(a, j) - L.At(b, j)
	}
	return d
}

// VersusControl returns the differences between each marginal mean and the
// mean of row control, labelled "level - control", in the order of L's
// rows (the control row omitted).
func VersusControl(m Model, L mat.Matrix, labels []string, control int, opt Options) ([]Estimate, error) {
	r, _ := L.Dims()
	if len(labels) != r {
		return nil, fmt.Errorf("comparisons with control: %d labels for %d rows of L", len(labels), r)
	}
	if control < 0 || control >= r {
		return nil, fmt.Errorf("comparisons with control: control row %d outside 0..%d", control, r-1)
	}
	beta, v, err := modelParts(m)
	if err != nil {
		return nil, fmt.Errorf("comparisons with control: %w", err)
	}
	var out []Estimate
	for i := 0; i < r; i++ {
		if i == control {
			continue
		}
		e, err := estimate(m, beta, v, rowDiff(L, i, control), labels[i]+" - "+labels[control], opt)
		if err != nil {
			return nil, fmt.Errorf("comparisons with control: %w", err)
		}
		out = append(out, e)
	}
	return out, nil
}

// Pairwise returns all differences between marginal means, row i minus row
// j for i < j, labelled "a - b", in the order (0,1), (0,2), ..., (1,2), ...
func Pairwise(m Model, L mat.Matrix, labels []string, opt Options) ([]Estimate, error) {
	r, _ := L.Dims()
	if len(labels) != r {
		return nil, fmt.Errorf("pairwise comparisons: %d labels for %d rows of L", len(labels), r)
	}
	beta, v, err := modelParts(m)
	if err != nil {
		return nil, fmt.Errorf("pairwise comparisons: %w", err)
	}
	var out []Estimate
	for i := 0; i < r; i++ {
		for j := i + 1; j < r; j++ {
			e, err := estimate(m, beta, v, rowDiff(L, i, j), labels[i]+" - "+labels[j], opt)
			if err != nil {
				return nil, fmt.Errorf("pairwise comparisons: %w", err)
			}
			out = append(out, e)
		}
	}
	return out, nil
}

// Adjusted is a family of estimates with multiplicity-adjusted p-values.
type Adjusted struct {
	Method    multcomp.Method // or "tukey", "dunnett"
	Estimates []Estimate      // the unadjusted rows, unchanged
	PAdjusted []float64
	// Lower and Upper are simultaneous limits for tukey, dunnett and
	// bonferroni (at level 1 - α/m); for holm, hochberg and
	// benjamini-hochberg no simultaneous interval exists and they repeat
	// the unadjusted limits.
	Lower, Upper []float64
	// Critical is the SE multiplier of the simultaneous limits (NaN when
	// there are none).
	Critical float64
	// DF is the common df used by tukey and dunnett: the smallest df of the
	// family (conservative when mixed-model df differ between rows).
	DF float64
}

// Multiplicity methods understood by Adjust beyond those of
// multcomp.Adjust.
const (
	MethodTukey   multcomp.Method = "tukey"
	MethodDunnett multcomp.Method = "dunnett"
)

// Adjust applies a multiplicity adjustment to a family of estimates from
// one model: bonferroni, holm, hochberg, benjamini-hochberg or none act on
// the p-values; tukey treats the rows as pairwise differences among k means
// (Tukey-Kramer with each row's SE); dunnett computes single-step
// multivariate-t p-values and simultaneous intervals from the correlation
// of the rows, corr(l_i'β, l_j'β) = l_i'V l_j / (SE_i SE_j). All rows must
// share the options (level and side) they were computed with.
func Adjust(m Model, rows []Estimate, method multcomp.Method, k int) (*Adjusted, error) {
	if len(rows) == 0 {
		return nil, fmt.Errorf("adjusting %s: no estimates", method)
	}
	level, side := rows[0].Level, rows[0].Side
	df := math.Inf(1)
	p := make([]float64, len(rows))
	est := make([]float64, len(rows))
	se := make([]float64, len(rows))
	for i, r := range rows {
		if r.Level != level || r.Side != side {
			return nil, fmt.Errorf("adjusting %s: row %q has level %v side %v, row %q level %v side %v", method, r.Label, r.Level, r.Side, rows[0].Label, level, side)
		}
		df = math.Min(df, r.DF)
		p[i], est[i], se[i] = r.P, r.Estimate, r.SE
	}
	a := &Adjusted{Method: method, Estimates: rows, Critical: math.NaN(), DF: df}
	a.Lower = make([]float64, len(rows))
	a.Upper = make([]float64, len(rows))
	for i, r := range rows {
		a.Lower[i], a.Upper[i] = r.Lower, r.Upper
	}
	switch method {
	case MethodTukey:
		if side != TwoSided {
			return nil, fmt.Errorf("adjusting tukey: only two-sided comparisons, got %v", side)
		}
		f, err := multcomp.Tukey(est, se, k, df, level)
		if err != nil {
			return nil, fmt.Errorf("adjusting tukey: %w", err)
		}
		a.fromFamily(f)
	case MethodDunnett:
		beta, v, err := modelParts(m)
		if err != nil {
			return nil, fmt.Errorf("adjusting dunnett: %w", err)
		}
		n := len(rows)
		corr := mat.NewSymDense(n, nil)
		for i := 0; i < n; i++ {
			if len(rows[i].L) != len(beta) {
				return nil, fmt.Errorf("adjusting dunnett: row %q does not match the model", rows[i].Label)
			}
			li := mat.NewVecDense(len(beta), rows[i].L)
			for j := i; j < n; j++ {
				lj := mat.NewVecDense(len(beta), rows[j].L)
				corr.SetSym(i, j, mat.Inner(li, v, lj)/(se[i]*se[j]))
			}
		}
		for i := 0; i < n; i++ {
			corr.SetSym(i, i, 1)
		}
		f, err := multcomp.Dunnett(est, se, corr, df, side, level)
		if err != nil {
			return nil, fmt.Errorf("adjusting dunnett: %w", err)
		}
		a.fromFamily(f)
	default:
		adj, err := multcomp.Adjust(p, method)
		if err != nil {
			return nil, err
		}
		a.PAdjusted = adj
		if method == multcomp.Bonferroni {
			alpha := (1 - level) / float64(len(rows))
			for i, r := range rows {
				e, err := estimate(m, mustBeta(m), m.CoefCov(), r.L, r.Label, Options{Level: 1 - alpha, Side: side})
				if err != nil {
					return nil, fmt.Errorf("adjusting bonferroni: %w", err)
				}
				a.Lower[i], a.Upper[i] = e.Lower, e.Upper
				if side == TwoSided {
					a.Critical = (e.Upper - e.Estimate) / e.SE
				}
			}
		}
	}
	return a, nil
}

func mustBeta(m Model) []float64 { return m.Coefficients() }

func (a *Adjusted) fromFamily(f *multcomp.Family) {
	a.Critical = f.Critical
	a.PAdjusted = make([]float64, len(f.Comparisons))
	for i, c := range f.Comparisons {
		a.PAdjusted[i] = c.PAdjusted
		a.Lower[i], a.Upper[i] = c.Lower, c.Upper
	}
}
