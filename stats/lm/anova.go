package lm

import (
	"errors"
	"fmt"
	"math"
	"strings"

	"furrow/stats/design"
	"furrow/stats/dist"
)

// ANOVA table types.
const (
	// TypeI is the sequential table: each term adjusted for the terms
	// before it in model order.
	TypeI = 1
	// TypeII adjusts each term for every term that does not contain it
	// (Langsrud 2003, "ANOVA for unbalanced data: Use Type II instead of
	// Type III sums of squares", Stat Comput 13:163-167).
	TypeII = 2
	// TypeIII adjusts each term for all other terms, i.e. tests that the
	// term's coefficients are zero. Meaningful with sum-to-zero coding
	// (Searle 1987, "Linear Models for Unbalanced Data", Wiley, ch. 4).
	TypeIII = 3
)

// ANOVARow is one row of an ANOVA table.
type ANOVARow struct {
	// Term is the term label ("residuals" for the residual row).
	Term string
	// DF is the number of estimable degrees of freedom the term adds; a
	// term with columns that are all aliased has DF 0 and NaN for MS, F, P.
	DF int
	// Cols is the number of columns of the term; Cols > DF means some of
	// the term's columns are aliased.
	Cols      int
	SS, MS, F float64
	P         float64
	// Aliased reports that some of the term's columns are aliased in the
	// full model.
	Aliased bool
}

// ANOVATable is an ANOVA table of a fit.
type ANOVATable struct {
	// Type is TypeI, TypeII or TypeIII.
	Type int
	// Rows has one row per model term, in model order (no intercept row).
	Rows []ANOVARow
	// Residual is the residual row (F and P are NaN).
	Residual ANOVARow
}

// ANOVA returns the ANOVA table of the given type. It needs a fit made by
// FitModel. Every sum of squares is an extra sum of squares computed from
// the QR factor of the full model and Q'y: the columns of R for the base
// terms and for the tested term are refactorised (rank x p, small), and the
// squared effects of the tested columns are summed, so no two large sums of
// squares are subtracted.
//
// Type III needs sum-to-zero coding when the model has an interaction; with
// treatment coding it returns an error rather than a table whose main
// effects test differences at a reference level. Type III is also refused
// when the model has aliased columns (an empty cell): the hypothesis of
// equal-weight marginal means is then not testable as stated.
func (r *Result) ANOVA(typ int) (*ANOVATable, error) {
	m := r.dm
	if m == nil {
		return nil, errors.New("anova: the fit has no term structure (use FitModel)")
	}
	switch typ {
	case TypeI, TypeII:
	case TypeIII:
		if m.Coding != design.SumToZero {
			for _, tc := range m.Terms {
				if len(tc.Vars) > 1 {
					return nil, errors.New("anova: type III needs sum-to-zero coding in a model with interactions")
				}
			}
		}
		if len(r.Aliased) > 0 {
			return nil, fmt.Errorf("anova: type III tests are not defined with aliased columns (%s)", strings.Join(r.AliasedNames(), ", "))
		}
	default:
		return nil, fmt.Errorf("anova: unknown table type %d", typ)
	}
	aliased := make([]bool, r.P)
	for _, j := range r.Aliased {
		aliased[j] = true
	}
	tab := &ANOVATable{Type: typ}
	mse := r.RSS / float64(r.DFResid)
	var seq []int // Type I: columns of the terms so far
	if m.Intercept {
		seq = append(seq, 0)
	}
	for i, tc := range m.Terms {
		var base []int
		switch typ {
		case TypeI:
			base = seq
			seq = append(append([]int(nil), seq...), tc.Cols...)
		case TypeII:
			if m.Intercept {
				base = append(base, 0)
			}
			for j, o := range m.Terms {
				if j != i && !m.Contains(j, i) {
					base = append(base, o.Cols...)
				}
			}
		case TypeIII:
			if m.Intercept {
				base = append(base, 0)
			}
			for j, o := range m.Terms {
				if j != i {
					base = append(base, o.Cols...)
				}
			}
		}
		ss, df := r.extraSS(base, tc.Cols)
		row := ANOVARow{Term: tc.Label, DF: df, Cols: len(tc.Cols), SS: ss}
		for _, c := range tc.Cols {
			if aliased[c] {
				row.Aliased = true
			}
		}
		row.MS, row.F, row.P = math.NaN(), math.NaN(), math.NaN()
		if df > 0 {
			row.MS = ss / float64(df)
			row.F = row.MS / mse
			row.P = dist.FUpper(row.F, float64(df), float64(r.DFResid))
		}
		tab.Rows = append(tab.Rows, row)
	}
	tab.Residual = ANOVARow{Term: "residuals", DF: r.DFResid, Cols: 0, SS: r.RSS, MS: mse, F: math.NaN(), P: math.NaN()}
	return tab, nil
}

// extraSS returns the sum of squares the columns add explains beyond the
// columns base, and the number of independent columns it adds.
func (r *Result) extraSS(base, add []int) (float64, int) {
	q := r.q
	rk := q.rank
	pos := make([]int, r.P) // pivot position of each original column
	for k, j := range q.piv {
		pos[j] = k
	}
	all := append(append([]int(nil), base...), add...)
	cols := make([][]float64, len(all))
	for c, j := range all {
		v := make([]float64, rk)
		for i := 0; i < rk; i++ {
			v[i] = q.r(i, pos[j])
		}
		cols[c] = v
	}
	sq := factorize(cols, rk, r.tol, -1)
	z := append([]float64(nil), r.z...)
	sq.qtApply(z)
	var ss float64
	df := 0
	for k := 0; k < sq.rank; k++ {
		if sq.piv[k] >= len(base) {
			ss += z[k] * z[k]
			df++
		}
	}
	return ss, df
}
