package design

import (
	"errors"
	"fmt"
	"math"
	"sort"
	"strings"

	"gonum.org/v1/gonum/mat"
)

// Coding selects how a factor's levels become columns when the factor
// enters a term through contrasts (see the package documentation for when
// a factor is coded by indicators instead).
type Coding int

const (
	// Treatment coding: one 0/1 column per level other than the reference
	// level. Coefficients are differences from the reference level.
	Treatment Coding = iota
	// SumToZero coding: one column per level other than the omitted level;
	// the omitted level's row is -1 in every column. Coefficients are
	// deviations from the unweighted mean of the level means.
	SumToZero
)

// String returns "treatment" or "sum".
func (c Coding) String() string {
	switch c {
	case Treatment:
		return "treatment"
	case SumToZero:
		return "sum"
	}
	return fmt.Sprintf("Coding(%d)", int(c))
}

// Factor is a categorical variable. Codes[i] is the index into Levels of
// observation i. A negative or out-of-range code is a data error reported by
// NewFrame.
type Factor struct {
	Name   string
	Levels []string
	Codes  []int
}

// Numeric is a numeric variable (a covariate). NaN and infinite values are
// data errors reported by NewFrame.
type Numeric struct {
	Name   string
	Values []float64
}

// Frame holds the variables of a data set by name, all of the same length.
// A Frame keeps references to the slices it was given; they must not be
// changed while the Frame is in use. Frame never modifies them.
type Frame struct {
	n        int
	factors  map[string]*Factor
	numerics map[string]*Numeric
}

// NewFrame checks the variables (equal lengths, unique names, valid codes,
// finite values, at least one level per factor) and returns a Frame.
func NewFrame(factors []Factor, numerics []Numeric) (*Frame, error) {
	f := &Frame{n: -1, factors: map[string]*Factor{}, numerics: map[string]*Numeric{}}
	seen := map[string]bool{}
	setN := func(name string, n int) error {
		if f.n < 0 {
			f.n = n
			return nil
		}
		if n != f.n {
			return fmt.Errorf("variable %q has %d values, others have %d", name, n, f.n)
		}
		return nil
	}
	for i := range factors {
		fac := &factors[i]
		if fac.Name == "" {
			return nil, errors.New("factor with an empty name")
		}
		if seen[fac.Name] {
			return nil, fmt.Errorf("variable %q given twice", fac.Name)
		}
		seen[fac.Name] = true
		if len(fac.Levels) == 0 {
			return nil, fmt.Errorf("factor %q has no levels", fac.Name)
		}
		lv := map[string]bool{}
		for _, l := range fac.Levels {
			if lv[l] {
				return nil, fmt.Errorf("factor %q has level %q twice", fac.Name, l)
			}
			lv[l] = true
		}
		if err := setN(fac.Name, len(fac.Codes)); err != nil {
			return nil, err
		}
		for r, c := range fac.Codes {
			if c < 0 || c >= len(fac.Levels) {
				return nil, fmt.Errorf("factor %q has no valid level at row %d (code %d)", fac.Name, r, c)
			}
		}
		f.factors[fac.Name] = fac
	}
	for i := range numerics {
		num := &numerics[i]
		if num.Name == "" {
			return nil, errors.New("numeric variable with an empty name")
		}
		if seen[num.Name] {
			return nil, fmt.Errorf("variable %q given twice", num.Name)
		}
		seen[num.Name] = true
		if err := setN(num.Name, len(num.Values)); err != nil {
			return nil, err
		}
		for r, v := range num.Values {
			if math.IsNaN(v) || math.IsInf(v, 0) {
				return nil, fmt.Errorf("numeric %q is not finite at row %d", num.Name, r)
			}
		}
		f.numerics[num.Name] = num
	}
	if f.n < 0 {
		f.n = 0
	}
	return f, nil
}

// Len returns the number of observations.
func (f *Frame) Len() int { return f.n }

// Term is one model term: a single variable (main effect) or several
// (an interaction of any order). Nesting is written as an interaction
// without the inner factor's main effect: block + block:plot.
type Term struct {
	Vars []string
}

// Label returns the variable names joined by ":".
func (t Term) Label() string { return strings.Join(t.Vars, ":") }

// Spec describes a model: an optional intercept, the terms in order, the
// coding used for factors that enter through contrasts, and per factor the
// reference level (treatment coding: the omitted level, default the first;
// sum-to-zero coding: the level coded -1, default the last).
type Spec struct {
	Intercept bool
	Terms     []Term
	Coding    Coding
	Reference map[string]string
}

// TermCols describes the columns of one model term in a Matrix.
type TermCols struct {
	// Label is the term label, e.g. "treatment:time".
	Label string
	// Vars are the term's variables in model order.
	Vars []string
	// Cols are the column indices of X that belong to the term.
	Cols []int
	// Indicator[k] is true when Vars[k] is a factor coded by one indicator
	// column per level (its margin is absent from the model), false when
	// it is coded by contrasts or is numeric.
	Indicator []bool
}

// varCoding is the coding of one variable inside one term: for a factor a
// k x m matrix (row = level), for a numeric a single column of values.
type varCoding struct {
	name    string
	factor  *Factor
	numeric *Numeric
	m       int       // number of columns this variable contributes
	code    []float64 // k*m row-major coding matrix (factors)
	labels  []string  // m column labels, e.g. "f[a]"
}

type termPlan struct {
	vars []varCoding
}

// Matrix is a model matrix with its column names and term structure.
type Matrix struct {
	// X is the n x p model matrix.
	X *mat.Dense
	// Names holds p column names: "(intercept)", "f[level]",
	// "f[a]:g[b]", "x", "f[a]:x".
	Names []string
	// Intercept reports whether column 0 is the intercept.
	Intercept bool
	// Terms describes the columns of each model term, in model order.
	Terms []TermCols
	// Coding is the coding used for contrast-coded factors.
	Coding Coding

	plans    []termPlan
	numMeans map[string]float64
}

// Build builds the model matrix of spec s on frame f.
//
// A factor F in a term T is coded by contrasts when the term T without F
// (the empty term being the intercept) appears earlier in the model, and
// by one indicator column per level otherwise. This keeps the column space
// of every term the one its position in the hierarchy implies: nested
// terms (block + block:plot) and interactions whose margins are missing
// get full columns, as in Chambers & Hastie (1992) "Statistical Models
// in S", ch. 2. Without an intercept, a factor main effect coded by
// indicators counts as the intercept for later terms (so only the first
// factor gets all its levels).
func Build(f *Frame, s Spec) (*Matrix, error) {
	if f == nil {
		return nil, errors.New("building model matrix: no data frame")
	}
	if s.Coding != Treatment && s.Coding != SumToZero {
		return nil, fmt.Errorf("building model matrix: unknown coding %d", int(s.Coding))
	}
	refNames := make([]string, 0, len(s.Reference))
	for name := range s.Reference {
		refNames = append(refNames, name)
	}
	sort.Strings(refNames) // the first bad entry reported is always the same one
	for _, name := range refNames {
		lev := s.Reference[name]
		fac, ok := f.factors[name]
		if !ok {
			return nil, fmt.Errorf("building model matrix: reference level given for %q, which is not a factor", name)
		}
		if indexOf(fac.Levels, lev) < 0 {
			return nil, fmt.Errorf("building model matrix: factor %q has no level %q", name, lev)
		}
	}
	keys := make([]string, 0, len(s.Terms)+1) // sorted var sets of earlier terms
	if s.Intercept {
		keys = append(keys, "")
	}
	m := &Matrix{Intercept: s.Intercept, Coding: s.Coding, numMeans: map[string]float64{}}
	if s.Intercept {
		m.Names = append(m.Names, "(intercept)")
	}
	p := len(m.Names)
	for ti, t := range s.Terms {
		if len(t.Vars) == 0 {
			return nil, fmt.Errorf("building model matrix: term %d has no variables", ti+1)
		}
		key := setKey(t.Vars, "")
		for _, k := range keys {
			if k == key && k != "" {
				return nil, fmt.Errorf("building model matrix: term %q appears twice", t.Label())
			}
		}
		tc := TermCols{Label: t.Label(), Vars: append([]string(nil), t.Vars...)}
		var tp termPlan
		seen := map[string]bool{}
		for _, v := range t.Vars {
			if seen[v] {
				return nil, fmt.Errorf("building model matrix: term %q names %q twice", t.Label(), v)
			}
			seen[v] = true
			if fac, ok := f.factors[v]; ok {
				contrast := contains(keys, setKey(t.Vars, v))
				tc.Indicator = append(tc.Indicator, !contrast)
				vc, err := factorCoding(fac, contrast, s.Coding, s.Reference[v])
				if err != nil {
					return nil, fmt.Errorf("building model matrix: term %q: %w", t.Label(), err)
				}
				tp.vars = append(tp.vars, vc)
				continue
			}
			if num, ok := f.numerics[v]; ok {
				tc.Indicator = append(tc.Indicator, false)
				tp.vars = append(tp.vars, varCoding{name: v, numeric: num, m: 1, labels: []string{v}})
				if _, done := m.numMeans[v]; !done {
					m.numMeans[v] = mean(num.Values)
				}
				continue
			}
			return nil, fmt.Errorf("building model matrix: term %q names unknown variable %q", t.Label(), v)
		}
		// Column labels: the first variable varies fastest.
		labels := []string{""}
		for k, vc := range tp.vars {
			next := make([]string, 0, len(labels)*vc.m)
			for j := 0; j < vc.m; j++ {
				for _, l := range labels {
					if k == 0 {
						next = append(next, vc.labels[j])
					} else {
						next = append(next, l+":"+vc.labels[j])
					}
				}
			}
			labels = next
		}
		for range labels {
			tc.Cols = append(tc.Cols, p)
			p++
		}
		m.Names = append(m.Names, labels...)
		m.Terms = append(m.Terms, tc)
		m.plans = append(m.plans, tp)
		keys = append(keys, key)
		// A factor main effect coded by indicators spans the constant: in a
		// model without intercept, later terms treat the intercept as
		// present (the first factor gets all levels, the others contrasts).
		if len(tc.Vars) == 1 && tc.Indicator[0] && !contains(keys, "") {
			keys = append(keys, "")
		}
	}
	n := f.n
	if n == 0 || p == 0 {
		return nil, fmt.Errorf("building model matrix: empty matrix (%d rows, %d columns)", n, p)
	}
	data := make([]float64, n*p)
	m.fill(data, n, p)
	m.X = mat.NewDense(n, p, data)
	return m, nil
}

// fill writes the model matrix row by row into data (row-major n x p).
func (m *Matrix) fill(data []float64, n, p int) {
	if m.Intercept {
		for i := 0; i < n; i++ {
			data[i*p] = 1
		}
	}
	buf := make([]float64, 0, p)
	for ti, tp := range m.plans {
		start := m.Terms[ti].Cols[0]
		ncol := len(m.Terms[ti].Cols)
		if len(tp.vars) == 1 {
			vc := tp.vars[0]
			if vc.numeric != nil {
				for i, v := range vc.numeric.Values {
					data[i*p+start] = v
				}
				continue
			}
			for i, c := range vc.factor.Codes {
				copy(data[i*p+start:i*p+start+ncol], vc.code[c*vc.m:(c+1)*vc.m])
			}
			continue
		}
		for i := 0; i < n; i++ {
			buf = buf[:1]
			buf[0] = 1
			for _, vc := range tp.vars {
				if vc.numeric != nil {
					x := vc.numeric.Values[i]
					for j := range buf {
						buf[j] *= x
					}
					continue
				}
				row := vc.code[vc.factor.Codes[i]*vc.m : (vc.factor.Codes[i]+1)*vc.m]
				buf = kron(buf, row)
			}
			copy(data[i*p+start:i*p+start+ncol], buf)
		}
	}
}

// kron returns the products a[i]*b[j] with i varying fastest, appended in
// place when capacity allows (a is overwritten).
func kron(a, b []float64) []float64 {
	na := len(a)
	var out []float64
	if cap(a) >= na*len(b) {
		out = a[:na*len(b)]
	} else {
		out = make([]float64, na*len(b))
		copy(out, a)
	}
	// Fill from the back so a's values are read before they are overwritten.
	for j := len(b) - 1; j >= 0; j-- {
		for i := na - 1; i >= 0; i-- {
			out[j*na+i] = a[i] * b[j]
		}
	}
	return out
}

func factorCoding(fac *Factor, contrast bool, coding Coding, ref string) (varCoding, error) {
	k := len(fac.Levels)
	vc := varCoding{name: fac.Name, factor: fac}
	if !contrast {
		vc.m = k
		vc.code = make([]float64, k*k)
		for i := 0; i < k; i++ {
			vc.code[i*k+i] = 1
			vc.labels = append(vc.labels, fac.Name+"["+fac.Levels[i]+"]")
		}
		return vc, nil
	}
	if k < 2 {
		return vc, fmt.Errorf("factor %q has a single level and cannot be coded by contrasts", fac.Name)
	}
	omit := 0
	if coding == SumToZero {
		omit = k - 1
	}
	if ref != "" {
		omit = indexOf(fac.Levels, ref)
	}
	vc.m = k - 1
	vc.code = make([]float64, k*(k-1))
	j := 0
	for lvl := 0; lvl < k; lvl++ {
		if lvl == omit {
			continue
		}
		vc.code[lvl*(k-1)+j] = 1
		vc.labels = append(vc.labels, fac.Name+"["+fac.Levels[lvl]+"]")
		j++
	}
	if coding == SumToZero {
		for j := 0; j < k-1; j++ {
			vc.code[omit*(k-1)+j] = -1
		}
	}
	return vc, nil
}

func setKey(vars []string, drop string) string {
	s := make([]string, 0, len(vars))
	for _, v := range vars {
		if v != drop {
			s = append(s, v)
		}
	}
	sort.Strings(s)
	return strings.Join(s, "\x00")
}

func contains(list []string, s string) bool {
	for _, l := range list {
		if l == s {
			return true
		}
	}
	return false
}

func indexOf(list []string, s string) int {
	for i, l := range list {
		if l == s {
			return i
		}
	}
	return -1
}

// mean is a two-pass mean (the second pass corrects the rounding of the first).
func mean(x []float64) float64 {
	if len(x) == 0 {
		return 0
	}
	var s float64
	for _, v := range x {
		s += v
	}
	mu := s / float64(len(x))
	var c float64
	for _, v := range x {
		c += v - mu
	}
	return mu + c/float64(len(x))
}

// Contains reports whether term i's variables are a proper subset of term
// j's (term j "contains" term i in the sense of Langsrud 2003).
func (m *Matrix) Contains(j, i int) bool {
	a, b := m.Terms[i].Vars, m.Terms[j].Vars
	if len(a) >= len(b) {
		return false
	}
	for _, v := range a {
		if indexOf(b, v) < 0 {
			return false
		}
	}
	return true
}

// TermIndex returns the index in Terms of the term with the given label
// (variables in any order), or -1.
func (m *Matrix) TermIndex(label string) int {
	key := setKey(strings.Split(label, ":"), "")
	for i, t := range m.Terms {
		if setKey(t.Vars, "") == key {
			return i
		}
	}
	return -1
}
