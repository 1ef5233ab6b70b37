package infer

import (
	"errors"
	"fmt"
	"math"
	"strings"

	"gonum.org/v1/gonum/mat"

	"furrow/stats/internal/fsum"
)

// LevelContrast is a declared contrast: coefficients over the levels of a
// factor, that is over the rows of its means grid, e.g. a new product
// against the mean of two references (new 1, refA -0.5, refB -0.5).
type LevelContrast struct {
	Name string
	// Levels names the levels (row labels of the grid) given a
	// coefficient, each once; the levels not named get 0.
	Levels []string
	Coef   []float64
	// Comparison declares that the contrast compares levels, so its
	// coefficients must sum to zero; without it the coefficients may be
	// any linear combination of the means (the mean of two references).
	Comparison bool
}

// sumTol is the tolerance of the zero sum of a comparison, relative to the
// sum of the absolute coefficients: decimal coefficients such as 0.1, 0.2,
// -0.3 sum to 1e-16 of it, a coefficient written 0.333 for 1/3 to 1e-3.
const sumTol = 1e-10

// Weights returns the coefficient of every level of levels (in that order).
// It is an error for the contrast to have no name, no coefficients, a
// different number of levels and coefficients, a level named twice or
// not among levels, a coefficient that is not finite, only zero
// coefficients, or, for a comparison, coefficients that do not sum to zero.
func (c LevelContrast) Weights(levels []string) ([]float64, error) {
	if c.Name == "" {
		return nil, errors.New("contrast with no name")
	}
	if len(c.Levels) == 0 {
		return nil, fmt.Errorf("contrast %q has no coefficients", c.Name)
	}
	if len(c.Levels) != len(c.Coef) {
		return nil, fmt.Errorf("contrast %q names %d levels but gives %d coefficients", c.Name, len(c.Levels), len(c.Coef))
	}
	w := make([]float64, len(levels))
	set := make([]bool, len(levels))
	var sum fsum.Sum
	var abs float64
	for i, lev := range c.Levels {
		j := indexOf(levels, lev)
		if j < 0 {
			return nil, fmt.Errorf("contrast %q: level %q is not one of %s", c.Name, lev, strings.Join(levels, ", "))
		}
		if set[j] {
			return nil, fmt.Errorf("contrast %q: level %q given twice", c.Name, lev)
		}
		v := c.Coef[i]
		if math.IsNaN(v) || math.IsInf(v, 0) {
			return nil, fmt.Errorf("contrast %q: coefficient of %q is %v", c.Name, lev, v)
		}
		set[j] = true
		w[j] = v
		sum.Add(v)
		abs += math.Abs(v)
	}
	if abs == 0 {
		return nil, fmt.Errorf("contrast %q: every coefficient is zero", c.Name)
	}
	if c.Comparison && math.Abs(sum.Value()) > sumTol*abs {
		return nil, fmt.Errorf("contrast %q is declared a comparison but its coefficients sum to %v, not zero", c.Name, sum.Value())
	}
	return w, nil
}

// combine returns Σ_i w_i L_i, the coefficient row of the contrast with
// weights w over the rows of L.
func combine(L mat.Matrix, w []float64) []float64 {
	_, c := L.Dims()
	out := make([]float64, c)
	for j := range out {
		var s fsum.Sum
		for i, wi := range w {
			if wi != 0 {
				s.Add(wi * L.At(i, j))
			}
		}
		out[j] = s.Value()
	}
	return out
}

// checkGrid checks that labels name the rows of L, each once.
func checkGrid(L mat.Matrix, labels []string) error {
	r, _ := L.Dims()
	if len(labels) != r {
		return fmt.Errorf("%d labels for %d rows of L", len(labels), r)
	}
	for i, l := range labels {
		if indexOf(labels[:i], l) >= 0 {
			return fmt.Errorf("row label %q given twice", l)
		}
	}
	return nil
}

// LevelContrasts estimates declared contrasts over the rows of a means
// grid: contrast c with weights w over the rows (labels name them, see
// LevelContrast.Weights) is the linear function l = Σ_i w_i L_i of the
// coefficients, reported with its SE, the model's df for l, t, p and
// interval, labelled with its name. A trend contrast from
// PolynomialContrasts, the pairs of PairwiseContrasts and the comparisons
// of ControlContrasts are declared contrasts too.
func LevelContrasts(m Model, L mat.Matrix, labels []string, cs []LevelContrast, opt Options) ([]Estimate, error) {
	if err := checkGrid(L, labels); err != nil {
		return nil, fmt.Errorf("declared contrasts: %w", err)
	}
	beta, v, err := modelParts(m)
	if err != nil {
		return nil, fmt.Errorf("declared contrasts: %w", err)
	}
	out := make([]Estimate, 0, len(cs))
	for _, c := range cs {
		w, err := c.Weights(labels)
		if err != nil {
			return nil, fmt.Errorf("declared contrasts: %w", err)
		}
		e, err := estimate(m, beta, v, combine(L, w), c.Name, opt)
		if err != nil {
			return nil, fmt.Errorf("declared contrasts: %w", err)
		}
		out = append(out, e)
	}
	return out, nil
}

// PairwiseContrasts returns the comparisons of every pair of levels, level
// i minus level j for i < j, named "a - b", in the order of Pairwise.
func PairwiseContrasts(levels []string) []LevelContrast {
	var out []LevelContrast
	for i := range levels {
		for j := i + 1; j < len(levels); j++ {
			out = append(out, LevelContrast{Name: levels[i] + " - " + levels[j], Levels: []string{levels[i], levels[j]}, Coef: []float64{1, -1}, Comparison: true})
		}
	}
	return out
}

// ControlContrasts returns the comparisons of every other level with the
// control level, named "level - control", in the order of levels.
func ControlContrasts(levels []string, control string) ([]LevelContrast, error) {
	if indexOf(levels, control) < 0 {
		return nil, fmt.Errorf("control level %q is not one of %s", control, strings.Join(levels, ", "))
	}
	var out []LevelContrast
	for _, l := range levels {
		if l != control {
			out = append(out, LevelContrast{Name: l + " - " + control, Levels: []string{l, control}, Coef: []float64{1, -1}, Comparison: true})
		}
	}
	return out, nil
}

// InteractionFactor is one factor of a cell-means grid with the contrasts
// declared over its levels for an interaction contrast.
type InteractionFactor struct {
	Levels    []string
	Contrasts []LevelContrast
}

// InteractionContrasts returns the interaction contrasts of a cell-means
// grid of two or more factors. The rows of L are the cells, the first
// factor varying slowest (stats/design's MeansGrid(a, b) order): row
// i·len(b) + j is cell (a_i, b_j). For one contrast c_k per factor the
// weight of a cell is the product of the factors' coefficients, the
// Kronecker product c_1 ⊗ c_2 ⊗ ... over the grid; for two comparisons
// it is a difference of differences, Σ_ij a_i b_j μ_ij (the interaction
// contrasts of Boik 1979, Psychol Bull 86:1084). Every
// contrast must sum to zero (Comparison or not), so each estimate is free
// of the factors' main effects. One estimate is returned per combination
// of contrasts, the first factor's contrast varying slowest (emmeans'
// contrast(..., interaction = ) varies the first fastest), labelled with
// the contrasts' names joined by ":", a name with a space in parentheses:
// "(full - rainfed):linear". On a log scale BackTransformDifferences
// reports a pairwise-by-pairwise contrast as a ratio of ratios.
func InteractionContrasts(m Model, L mat.Matrix, factors []InteractionFactor, opt Options) ([]Estimate, error) {
	if len(factors) < 2 {
		return nil, fmt.Errorf("interaction contrasts: %d factors; an interaction needs two or more", len(factors))
	}
	cells := 1
	weights := make([][][]float64, len(factors))
	combos := 1
	for f, fac := range factors {
		if len(fac.Contrasts) == 0 {
			return nil, fmt.Errorf("interaction contrasts: factor %d has no contrasts", f+1)
		}
		for i, l := range fac.Levels {
			if indexOf(fac.Levels[:i], l) >= 0 {
				return nil, fmt.Errorf("interaction contrasts: factor %d has level %q twice", f+1, l)
			}
		}
		cells *= len(fac.Levels)
		combos *= len(fac.Contrasts)
		for _, c := range fac.Contrasts {
			c.Comparison = true // an interaction contrast compares within every factor
			w, err := c.Weights(fac.Levels)
			if err != nil {
				return nil, fmt.Errorf("interaction contrasts: factor %d: %w", f+1, err)
			}
			weights[f] = append(weights[f], w)
		}
	}
	if r, _ := L.Dims(); r != cells {
		return nil, fmt.Errorf("interaction contrasts: L has %d rows for a grid of %d cells", r, cells)
	}
	beta, v, err := modelParts(m)
	if err != nil {
		return nil, fmt.Errorf("interaction contrasts: %w", err)
	}
	out := make([]Estimate, 0, combos)
	pick := make([]int, len(factors))
	for k := 0; k < combos; k++ {
		// Decode k with the last factor's contrast varying fastest.
		rem := k
		for f := len(factors) - 1; f >= 0; f-- {
			pick[f] = rem % len(factors[f].Contrasts)
			rem /= len(factors[f].Contrasts)
		}
		w := []float64{1}
		names := make([]string, len(factors))
		for f := range factors {
			w = kronSlow(w, weights[f][pick[f]])
			n := factors[f].Contrasts[pick[f]].Name
			if strings.Contains(n, " ") {
				n = "(" + n + ")"
			}
			names[f] = n
		}
		e, err := estimate(m, beta, v, combine(L, w), strings.Join(names, ":"), opt)
		if err != nil {
			return nil, fmt.Errorf("interaction contrasts: %w", err)
		}
		out = append(out, e)
	}
	return out, nil
}

// kronSlow returns a ⊗ b with a's index varying slowest.
func kronSlow(a, b []float64) []float64 {
	out := make([]float64, 0, len(a)*len(b))
	for _, x := range a {
		for _, y := range b {
			out = append(out, x*y)
		}
	}
	return out
}

// LevelContrastsBy estimates the declared contrasts within every group
// (LevelContrasts within every group).
func LevelContrastsBy(m Model, groups []Group, cs []LevelContrast, opt Options) ([]GroupEstimates, error) {
	return byGroups(groups, "declared contrasts by group", func(g Group) ([]Estimate, error) {
		return LevelContrasts(m, g.L, g.Labels, cs, opt)
	})
}
