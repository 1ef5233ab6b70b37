package design

import (
	"errors"
	"fmt"
	"math"
	"slices"

	"gonum.org/v1/gonum/mat"
)

// MeansGrid returns the matrix L of estimated-marginal-mean rows for the
// level combinations of the named factors, and one label per row.
//
// Each row is the model-matrix row averaged with equal weights over every
// level of the model's other factors, with numeric covariates at their mean
// (the population marginal means of Searle, Speed & Milliken 1980, Am Stat
// 34:216). Because every column of a term is a product of one coding value
// per variable, the average over independent equally weighted levels is the
// product of per-variable averages; no enumeration of the other factors'
// levels is needed. The first named factor varies slowest. Labels join
// "factor[level]" with ":".
//
// Whether a row is estimable depends on the fit (aliased columns); check it
// there.
func (m *Matrix) MeansGrid(factors []string) (*mat.Dense, []string, error) {
	if len(factors) == 0 {
		return nil, nil, errors.New("means grid: no factors named")
	}
	facs, err := m.gridFactors(factors, nil)
	if err != nil {
		return nil, nil, fmt.Errorf("means grid: %w", err)
	}
	L, labels := m.gridRows(factors, facs, map[string]int{})
	return L, labels, nil
}

// GridGroup is the part of a conditional means grid that belongs to one
// level combination of the by factors.
type GridGroup struct {
	// By labels the level combination of the by factors: "factor[level]"
	// joined with ":" ("" when no by factor is named).
	By string
	// L holds the mean rows of the level combinations of the grid's
	// factors within this by level, in the order MeansGrid gives them;
	// Labels are MeansGrid's labels of those rows (without the by part).
	L      *mat.Dense
	Labels []string
}

// MeansGridBy returns the conditional means grid "factors | by" (the
// "a | b" means of emmeans): for every level combination of the by
// factors (the first by factor varying slowest) one [GridGroup] whose rows
// are the means of the level combinations of factors with the by factors
// held at that combination. Every other factor of the model is averaged
// with equal weights and numeric covariates are held at their mean, as in
// MeansGrid; group g's row i is the row of MeansGrid(by..., factors...)
// for the same levels, so averaging the groups' rows with equal weights
// over the by levels gives MeansGrid(factors). The same factor may not be
// named twice, nor in both lists. With no by factor the single group is
// MeansGrid(factors).
func (m *Matrix) MeansGridBy(factors, by []string) ([]GridGroup, error) {
	if len(factors) == 0 {
		return nil, errors.New("conditional means grid: no factors named")
	}
	facs, err := m.gridFactors(factors, nil)
	if err != nil {
		return nil, fmt.Errorf("conditional means grid: %w", err)
	}
	byFacs, err := m.gridFactors(by, factors)
	if err != nil {
		return nil, fmt.Errorf("conditional means grid: by factors: %w", err)
	}
	groups := 1
	for _, f := range byFacs {
		groups *= len(f.Levels)
	}
	out := make([]GridGroup, groups)
	idx := make([]int, len(by))
	for g := range out {
		decode(g, byFacs, idx)
		at := make(map[string]int, len(by)+len(factors))
		for i, name := range by {
			at[name] = idx[i]
		}
		L, labels := m.gridRows(factors, facs, at)
		out[g] = GridGroup{By: gridLabel(by, byFacs, idx), L: L, Labels: labels}
	}
	return out, nil
}

// gridFactors looks up the named factors, refusing a name given twice, a
// name that is not a factor of the model and a name among exclude.
func (m *Matrix) gridFactors(names, exclude []string) ([]*Factor, error) {
	facs := make([]*Factor, len(names))
	for i, name := range names {
		if slices.Contains(names[:i], name) {
			return nil, fmt.Errorf("factor %q named twice", name)
		}
		if slices.Contains(exclude, name) {
			return nil, fmt.Errorf("factor %q named both as a grid factor and as a by factor", name)
		}
		fac := m.findFactor(name)
		if fac == nil {
			return nil, fmt.Errorf("%q is not a factor of the model", name)
		}
		facs[i] = fac
	}
	return facs, nil
}

// decode writes into idx the level codes of combination r, the last
// factor varying fastest.
func decode(r int, facs []*Factor, idx []int) {
	for i := len(facs) - 1; i >= 0; i-- {
		k := len(facs[i].Levels)
		idx[i] = r % k
		r /= k
	}
}

// gridLabel joins "factor[level]" of the combination idx with ":".
func gridLabel(names []string, facs []*Factor, idx []int) string {
	lab := ""
	for i, name := range names {
		if i > 0 {
			lab += ":"
		}
		lab += name + "[" + facs[i].Levels[idx[i]] + "]"
	}
	return lab
}

// gridRows returns the mean rows of every level combination of factors
// (the first varying slowest) with the factors already in at held fixed
// too, and their labels. at is modified.
func (m *Matrix) gridRows(factors []string, facs []*Factor, at map[string]int) (*mat.Dense, []string) {
	rows := 1
	for _, f := range facs {
		rows *= len(f.Levels)
	}
	L := mat.NewDense(rows, len(m.Names), nil)
	labels := make([]string, rows)
	idx := make([]int, len(factors))
	for r := 0; r < rows; r++ {
		decode(r, facs, idx)
		for i, name := range factors {
			at[name] = idx[i]
		}
		labels[r] = gridLabel(factors, facs, idx)
		m.averageRow(at, L.RawRowView(r))
	}
	return L, labels
}

// averageRow writes into dst the model row with the factors in at fixed at
// the given level codes and every other variable averaged.
func (m *Matrix) averageRow(at map[string]int, dst []float64) {
	if m.Intercept {
		dst[0] = 1
	}
	for ti, tp := range m.plans {
		v := []float64{1}
		for _, vc := range tp.vars {
			var part []float64
			switch {
			case vc.numeric != nil:
				part = []float64{m.numMeans[vc.name]}
			default:
				k := len(vc.factor.Levels)
				if lvl, ok := at[vc.name]; ok {
					part = vc.code[lvl*vc.m : (lvl+1)*vc.m]
				} else {
					part = make([]float64, vc.m)
					for l := 0; l < k; l++ {
						for j := 0; j < vc.m; j++ {
							part[j] += vc.code[l*vc.m+j]
						}
					}
					for j := range part {
						part[j] /= float64(k)
					}
				}
			}
			v = kron(v, part)
		}
		for j, c := range m.Terms[ti].Cols {
			dst[c] = v[j]
		}
	}
}

func (m *Matrix) findFactor(name string) *Factor {
	for _, tp := range m.plans {
		for _, vc := range tp.vars {
			if vc.name == name && vc.factor != nil {
				return vc.factor
			}
		}
	}
	return nil
}

// TypeIIIHypothesis returns the hypothesis matrix of term i for a Type III
// test: one row per column of the term selecting its coefficient, so that
// L b = 0 states that the term's coefficients are all zero. With sum-to-zero
// coding and no empty cells this is the Type III hypothesis of Searle (1987)
// "Linear Models for Unbalanced Data", ch. 4 (equal-weight marginal means).
// It panics if i is out of range.
func (m *Matrix) TypeIIIHypothesis(i int) *mat.Dense {
	cols := m.Terms[i].Cols
	L := mat.NewDense(len(cols), len(m.Names), nil)
	for r, c := range cols {
		L.Set(r, c, 1)
	}
	return L
}

// TypeIIHypothesis returns a full-row-rank hypothesis matrix for the Type II
// test of term i given the Gram matrix G = X'WX of the fit (X'X for least
// squares, X'V⁻¹X for a mixed model). The test is of the term adjusted for
// every term that does not contain it (Langsrud 2003, Stat Comput 13:163):
//
//	L = G[T,·] − G[T,C] G[C,C]⁺ G[C,·]
//
// where T are the term's columns and C the intercept and the columns of the
// terms that neither are nor contain term i. Dependent rows (aliased
// columns) are removed with a singular value decomposition; a term with no
// estimable part gives an error. It panics if i is out of range or G has the
// wrong size.
func (m *Matrix) TypeIIHypothesis(i int, gram mat.Symmetric) (*mat.Dense, error) {
	p := len(m.Names)
	if gram.SymmetricDim() != p {
		panic("design: gram matrix size does not match the model matrix")
	}
	T := m.Terms[i].Cols
	var C []int
	if m.Intercept {
		C = append(C, 0)
	}
	for j := range m.Terms {
		if j == i || m.Contains(j, i) {
			continue
		}
		C = append(C, m.Terms[j].Cols...)
	}
	g := mat.DenseCopyOf(gram)
	L := mat.NewDense(len(T), p, nil)
	for r, c := range T {
		for k := 0; k < p; k++ {
			L.Set(r, k, g.At(c, k))
		}
	}
	if len(C) > 0 {
		gcc := mat.NewDense(len(C), len(C), nil)
		gtc := mat.NewDense(len(T), len(C), nil)
		gc := mat.NewDense(len(C), p, nil)
		for a, ca := range C {
			for b, cb := range C {
				gcc.Set(a, b, g.At(ca, cb))
			}
			for r, c := range T {
				gtc.Set(r, a, g.At(c, ca))
			}
			for k := 0; k < p; k++ {
				gc.Set(a, k, g.At(ca, k))
			}
		}
		pinv, err := pseudoInverse(gcc)
		if err != nil {
			return nil, fmt.Errorf("type II hypothesis for %q: %w", m.Terms[i].Label, err)
		}
		var tmp, corr mat.Dense
		tmp.Mul(gtc, pinv)
		corr.Mul(&tmp, gc)
		L.Sub(L, &corr)
	}
	scale := 0.0
	for _, c := range T {
		scale = math.Max(scale, math.Abs(g.At(c, c)))
	}
	out, err := rowBasis(L, scale)
	if err != nil {
		return nil, fmt.Errorf("type II hypothesis for %q: %w", m.Terms[i].Label, err)
	}
	return out, nil
}

// relTol is the relative singular-value cut-off used for pseudo-inverses and
// row bases of hypothesis matrices.
const relTol = 1e-9

func pseudoInverse(a *mat.Dense) (*mat.Dense, error) {
	var svd mat.SVD
	if !svd.Factorize(a, mat.SVDThin) {
		return nil, errors.New("singular value decomposition did not converge")
	}
	s := svd.Values(nil)
	var u, v mat.Dense
	svd.UTo(&u)
	svd.VTo(&v)
	r, c := a.Dims()
	out := mat.NewDense(c, r, nil)
	if len(s) == 0 || s[0] == 0 {
		return out, nil
	}
	for k, sk := range s {
		if sk <= relTol*s[0] {
			break
		}
		for i := 0; i < c; i++ {
			for j := 0; j < r; j++ {
				out.Set(i, j, out.At(i, j)+v.At(i, k)*u.At(j, k)/sk)
			}
		}
	}
	return out, nil
}

// rowBasis returns rows spanning the row space of a: the right singular
// vectors whose singular values exceed relTol*scale, scaled by them.
func rowBasis(a *mat.Dense, scale float64) (*mat.Dense, error) {
	var svd mat.SVD
	if !svd.Factorize(a, mat.SVDThin) {
		return nil, errors.New("singular value decomposition did not converge")
	}
	s := svd.Values(nil)
	cut := relTol * scale
	if len(s) == 0 || s[0] <= cut {
		return nil, errors.New("the term has no estimable part")
	}
	var v mat.Dense
	svd.VTo(&v)
	_, p := a.Dims()
	k := 0
	for k < len(s) && s[k] > cut {
		k++
	}
	out := mat.NewDense(k, p, nil)
	for r := 0; r < k; r++ {
		for j := 0; j < p; j++ {
			out.Set(r, j, s[r]*v.At(j, r))
		}
	}
	return out, nil
}

// CovariateMeans returns the numeric variables of the model with the
// value MeansGrid holds them at (their mean over the rows the matrix was
// built from), sorted by name.
func (m *Matrix) CovariateMeans() (names []string, means []float64) {
	for name := range m.numMeans {
		names = append(names, name)
	}
	slices.Sort(names)
	for _, name := range names {
		means = append(means, m.numMeans[name])
	}
	return names, means
}

// FactorNames returns the factors of the model, in the order they first
// appear in its terms.
func (m *Matrix) FactorNames() []string {
	var out []string
	for _, tp := range m.plans {
		for _, vc := range tp.vars {
			if vc.factor != nil && !slices.Contains(out, vc.name) {
				out = append(out, vc.name)
			}
		}
	}
	return out
}
