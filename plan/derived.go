package plan

import (
	"errors"
	"fmt"
	"math"
	"sort"
	"strings"

	"github.com/expr-lang/expr"
	"github.com/expr-lang/expr/ast"
	"github.com/expr-lang/expr/file"
	"github.com/expr-lang/expr/parser"
	"github.com/expr-lang/expr/vm"
)

// Derived is a variable computed, per data row, from declared columns by a
// declared formula (plan key "derived"). The formula is an expression over
// the plan's numeric columns (by name), the mean of a column over the
// control units of the same block or of the whole trial (control.<name>,
// Reference says which), number literals and the built-in functions of
// DerivedFunctions. It is type-checked at lint, its units are followed
// through every operation, and a divisor that can be zero needs WhenZero.
type Derived struct {
	Name    string // name of the derived variable, distinct from every column
	Unit    string // the unit the formula gives; lint checks it
	Formula string // the expression text
	// Reference is where control.<column> means come from: ReferenceBlock
	// (the control units of the row's block) or ReferenceTrial (all
	// control units); empty when the formula names no control mean.
	Reference string
	// WhenZero is what a zero divisor gives: ZeroMissing (the value is
	// missing for that row, and listed) or ZeroStop (the run stops);
	// empty = not declared, which lint refuses when a divisor can be zero.
	WhenZero string
	Pos      Pos
}

// Control-mean references and zero-divisor rules of a derived variable.
const (
	ReferenceBlock = "block"   // control means over the control units of the same block
	ReferenceTrial = "trial"   // control means over every control unit
	ZeroMissing    = "missing" // a zero divisor makes the row's value missing
	ZeroStop       = "stop"    // a zero divisor stops the run
)

// ControlPrefix is how a formula names the control mean of a column.
const ControlPrefix = "control"

// DerivedFunction is one built-in function a derived formula may call.
type DerivedFunction struct {
	Name   string
	Params []string // parameter names, in order
	// Doc says what it computes, with its source.
	Doc string
	// Eval computes the value; ok is false when a divisor is zero.
	Eval func(x []float64) (v float64, ok bool)
	// divisors lists, for each divisor of the formula, the argument
	// index it depends on and the value at which it is zero.
	divisors []divisor
	// unit gives the result unit from the argument units, or an error
	// naming the mismatch.
	unit func(u []string) (string, error)
}

type divisor struct {
	arg  int
	zero float64 // the divisor is zero when the argument equals this
}

func sameUnits(names []string, u []string) error {
	for i := 1; i < len(u); i++ {
		if u[i] != u[0] {
			return fmt.Errorf("%s is in %s but %s is in %s; they must be in the same unit", names[0], show(u[0]), names[i], show(u[i]))
		}
	}
	return nil
}

func show(u string) string {
	if u == "" {
		return "no unit"
	}
	return u
}

// DerivedFunctions are the built-in functions of derived formulas, in the
// order explain lists them.
var DerivedFunctions = []*DerivedFunction{
	{
		Name: "abbott", Params: []string{"treated", "control"},
		Doc: "efficacy in percent from the surviving (or infested) count in a treated unit and in the control: 100 (1 - treated/control); Abbott (1925), J. Econ. Entomol. 18:265-267",
		Eval: func(x []float64) (float64, bool) {
			if x[1] == 0 {
				return 0, false
			}
			return 100 * (1 - x[0]/x[1]), true
		},
		divisors: []divisor{{arg: 1}},
		unit: func(u []string) (string, error) {
			return "%", sameUnits([]string{"treated", "control"}, u)
		},
	},
	{
		Name: "henderson_tilton", Params: []string{"treated_before", "treated_after", "control_before", "control_after"},
		Doc: "efficacy in percent from counts before and after treatment in a treated unit and in the control: 100 (1 - (treated_after control_before)/(treated_before control_after)); Henderson & Tilton (1955), J. Econ. Entomol. 48:157-161",
		Eval: func(x []float64) (float64, bool) {
			d := x[0] * x[3]
			if d == 0 {
				return 0, false
			}
			return 100 * (1 - (x[1]*x[2])/d), true
		},
		divisors: []divisor{{arg: 0}, {arg: 3}},
		unit: func(u []string) (string, error) {
			return "%", sameUnits([]string{"treated_before", "treated_after", "control_before", "control_after"}, u)
		},
	},
	{
		Name: "schneider_orelli", Params: []string{"treated_mortality", "control_mortality"},
		Doc: "corrected mortality in percent from the percent mortality in a treated unit and in the control: 100 (treated - control)/(100 - control); Schneider-Orelli (1947), Entomologisches Praktikum",
		Eval: func(x []float64) (float64, bool) {
			if x[1] == 100 {
				return 0, false
			}
			return 100 * (x[0] - x[1]) / (100 - x[1]), true
		},
		divisors: []divisor{{arg: 1, zero: 100}},
		unit: func(u []string) (string, error) {
			for i, n := range []string{"treated_mortality", "control_mortality"} {
				if u[i] != "%" {
					return "", fmt.Errorf("%s is in %s; a mortality must be in %%", n, show(u[i]))
				}
			}
			return "%", nil
		},
	},
	{
		Name: "daily_gain", Params: []string{"final_weight", "initial_weight", "days"},
		Doc: "average daily gain: (final_weight - initial_weight)/days",
		Eval: func(x []float64) (float64, bool) {
			if x[2] == 0 {
				return 0, false
			}
			return (x[0] - x[1]) / x[2], true
		},
		divisors: []divisor{{arg: 2}},
		unit: func(u []string) (string, error) {
			if err := sameUnits([]string{"final_weight", "initial_weight"}, u[:2]); err != nil {
				return "", err
			}
			return quotient(u[0], u[2]), nil
		},
	},
	{
		Name: "feed_conversion", Params: []string{"feed_intake", "weight_gain"},
		Doc: "feed conversion ratio: feed_intake/weight_gain (feed eaten per unit of gain)",
		Eval: func(x []float64) (float64, bool) {
			if x[1] == 0 {
				return 0, false
			}
			return x[0] / x[1], true
		},
		divisors: []divisor{{arg: 1}},
		unit: func(u []string) (string, error) {
			return quotient(u[0], u[1]), nil
		},
	},
	{
		Name: "standard_moisture", Params: []string{"yield", "moisture", "standard"},
		Doc: "yield at a standard moisture content: yield (100 - moisture)/(100 - standard), moisture and standard in percent of fresh weight",
		Eval: func(x []float64) (float64, bool) {
			if x[2] == 100 {
				return 0, false
			}
			return x[0] * (100 - x[1]) / (100 - x[2]), true
		},
		divisors: []divisor{{arg: 2, zero: 100}},
		unit: func(u []string) (string, error) {
			for i, n := range []string{"moisture", "standard"} {
				if u[i+1] != "%" && u[i+1] != "" {
					return "", fmt.Errorf("%s is in %s; a moisture content must be in %%", n, show(u[i+1]))
				}
			}
			return u[0], nil
		},
	},
}

// DerivedFunctionByName returns the built-in function of that name, or nil.
func DerivedFunctionByName(name string) *DerivedFunction {
	for _, f := range DerivedFunctions {
		if f.Name == name {
			return f
		}
	}
	return nil
}

// quotient is the unit of a/b: "1" (no unit) when they are equal.
func quotient(a, b string) string {
	switch {
	case a == b:
		return ""
	case b == "":
		return a
	case a == "":
		return "1/" + b
	}
	return a + "/" + b
}

func product(a, b string) string {
	switch {
	case a == "":
		return b
	case b == "":
		return a
	}
	return a + "*" + b
}

// FormulaProblem is one finding on a derived formula: Offset is the byte
// offset in the formula text (or -1 for the formula as a whole).
type FormulaProblem struct {
	Offset  int
	Summary string
}

// FormulaColumn is what a formula knows of a column it may name.
type FormulaColumn struct {
	Unit     string
	Min, Max *float64
}

// formulaInfo is the result of analysing one formula.
type formulaInfo struct {
	unit       string
	known      bool // unit could be followed
	names      []string
	controls   []string
	zeroPlaces []int // offsets of divisors that can be zero
}

// AnalyseFormula parses the formula, refuses anything but number
// literals, declared numeric columns, control.<column>, the arithmetic
// operators and the built-in functions, follows the units, and finds every
// divisor that can be zero given the columns' declared ranges. It returns
// the unit the formula gives, the columns and control means it names, and
// its problems.
func AnalyseFormula(src string, cols map[string]FormulaColumn) (unit string, names, controls []string, zero []int, probs []FormulaProblem) {
	tree, err := parser.Parse(src)
	if err != nil {
		return "", nil, nil, nil, []FormulaProblem{exprProblem(err)}
	}
	a := &analyser{cols: cols}
	u, _ := a.walk(tree.Node)
	if len(a.probs) > 0 {
		return "", nil, nil, nil, a.probs
	}
	if _, err := compileFormula(src, a.names, a.controls); err != nil {
		return "", nil, nil, nil, []FormulaProblem{exprProblem(err)}
	}
	return u.u, a.names, a.controls, a.zero, nil
}

func exprProblem(err error) FormulaProblem {
	var fe *file.Error
	if errors.As(err, &fe) {
		msg := fe.Message
		return FormulaProblem{Offset: fe.From, Summary: strings.ToLower(msg[:1]) + msg[1:]}
	}
	return FormulaProblem{Offset: -1, Summary: err.Error()}
}

type unitOf struct {
	u       string
	literal bool    // a number literal (takes the unit of what it is added to)
	value   float64 // its value when literal
	lo, hi  float64 // the declared range of the value (±Inf when unknown)
}

type analyser struct {
	cols            map[string]FormulaColumn
	names, controls []string
	zero            []int
	probs           []FormulaProblem
}

func (a *analyser) fail(n ast.Node, format string, args ...any) (unitOf, bool) {
	a.probs = append(a.probs, FormulaProblem{Offset: n.Location().From, Summary: fmt.Sprintf(format, args...)})
	return unitOf{}, false
}

func addOnce(list []string, s string) []string {
	for _, x := range list {
		if x == s {
			return list
		}
	}
	return append(list, s)
}

func (a *analyser) column(n ast.Node, name string, control bool) (unitOf, bool) {
	c, ok := a.cols[name]
	if !ok {
		what := "column"
		if control {
			what = "column of control." + name
		}
		return a.fail(n, "%s %q is not a declared numeric column (a response or covariate)", what, name)
	}
	if control {
		a.controls = addOnce(a.controls, name)
	} else {
		a.names = addOnce(a.names, name)
	}
	r := unitOf{u: c.Unit, lo: math.Inf(-1), hi: math.Inf(1)}
	if c.Min != nil {
		r.lo = *c.Min
	}
	if c.Max != nil {
		r.hi = *c.Max
	}
	return r, true
}

// canBe reports whether the value can equal z.
func (u unitOf) canBe(z float64) bool {
	if u.literal {
		return u.value == z
	}
	return u.lo <= z && z <= u.hi
}

func (a *analyser) walk(n ast.Node) (unitOf, bool) {
	switch n := n.(type) {
	case *ast.IntegerNode:
		return unitOf{literal: true, value: float64(n.Value), lo: float64(n.Value), hi: float64(n.Value)}, true
	case *ast.FloatNode:
		return unitOf{literal: true, value: n.Value, lo: n.Value, hi: n.Value}, true
	case *ast.IdentifierNode:
		if n.Value == ControlPrefix {
			return a.fail(n, "control names the control mean of a column: write control.<column>")
		}
		return a.column(n, n.Value, false)
	case *ast.MemberNode:
		id, ok := n.Node.(*ast.IdentifierNode)
		prop, ok2 := n.Property.(*ast.StringNode)
		if !ok || !ok2 || id.Value != ControlPrefix || n.Optional || n.Method {
			return a.fail(n, "a formula may name a column, or its control mean as control.<column>; nothing else has fields")
		}
		return a.column(n, prop.Value, true)
	case *ast.UnaryNode:
		if n.Operator != "-" && n.Operator != "+" {
			return a.fail(n, "operator %s is not arithmetic; a formula may use + - * / and the built-in functions", n.Operator)
		}
		u, ok := a.walk(n.Node)
		if ok && n.Operator == "-" {
			u.value, u.lo, u.hi = -u.value, -u.hi, -u.lo
		}
		return u, ok
	case *ast.BinaryNode:
		l, ok1 := a.walk(n.Left)
		r, ok2 := a.walk(n.Right)
		if !ok1 || !ok2 {
			return unitOf{}, false
		}
		all := unitOf{lo: math.Inf(-1), hi: math.Inf(1)}
		switch n.Operator {
		case "+", "-":
			switch {
			case l.literal && r.literal:
				all = unitOf{literal: true, lo: math.Inf(-1), hi: math.Inf(1)}
				if n.Operator == "+" {
					all.value = l.value + r.value
				} else {
					all.value = l.value - r.value
				}
				all.lo, all.hi = all.value, all.value
			case l.literal:
				all.u = r.u
			case r.literal:
				all.u = l.u
			case l.u != r.u:
				return a.fail(n, "%s mixes units: the left side is in %s, the right side in %s", n.Operator, show(l.u), show(r.u))
			default:
				all.u = l.u
			}
			if n.Operator == "-" && r.literal && !l.literal {
				// c - x is zero only where x can equal c; keep the shifted range.
				all.lo, all.hi = l.lo-r.value, l.hi-r.value
			}
			if n.Operator == "-" && l.literal && !r.literal {
				all.lo, all.hi = l.value-r.hi, l.value-r.lo
			}
			return all, true
		case "*":
			all.u = product(l.u, r.u)
			if l.literal && r.literal {
				all = unitOf{literal: true, value: l.value * r.value, lo: l.value * r.value, hi: l.value * r.value}
			} else if (l.literal && l.value != 0 && !r.canBe(0)) || (r.literal && r.value != 0 && !l.canBe(0)) ||
				(!l.literal && !r.literal && !l.canBe(0) && !r.canBe(0)) {
				all.lo, all.hi = math.Inf(1), math.Inf(1) // cannot be zero; exact range not followed
				all.lo = 1
			}
			return all, true
		case "/":
			if r.canBe(0) {
				a.zero = append(a.zero, n.Right.Location().From)
			}
			all.u = quotient(l.u, r.u)
			if !l.canBe(0) {
				all.lo, all.hi = 1, math.Inf(1)
			}
			return all, true
		}
		return a.fail(n, "operator %s is not allowed; a formula may use + - * / and the built-in functions", n.Operator)
	case *ast.BuiltinNode:
		return a.fail(n, "%s is not a built-in function; the built-ins are %s", n.Name, derivedNames())
	case *ast.CallNode:
		id, ok := n.Callee.(*ast.IdentifierNode)
		if !ok {
			return a.fail(n, "only the built-in functions can be called")
		}
		f := DerivedFunctionByName(id.Value)
		if f == nil {
			return a.fail(n, "%s is not a built-in function; the built-ins are %s", id.Value, derivedNames())
		}
		if len(n.Arguments) != len(f.Params) {
			return a.fail(n, "%s takes %d arguments (%s), not %d", f.Name, len(f.Params), strings.Join(f.Params, ", "), len(n.Arguments))
		}
		var us []unitOf
		var units []string
		okAll := true
		for _, arg := range n.Arguments {
			u, ok := a.walk(arg)
			okAll = okAll && ok
			us = append(us, u)
			units = append(units, u.u)
		}
		if !okAll {
			return unitOf{}, false
		}
		for i, u := range us {
			if u.literal {
				units[i] = literalUnit(f, i, units)
			}
		}
		for _, d := range f.divisors {
			if us[d.arg].canBe(d.zero) {
				a.zero = append(a.zero, n.Arguments[d.arg].Location().From)
			}
		}
		u, err := f.unit(units)
		if err != nil {
			return a.fail(n, "%s: %v", f.Name, err)
		}
		return unitOf{u: u, lo: math.Inf(-1), hi: math.Inf(1)}, true
	}
	return a.fail(n, "this part of the formula is not arithmetic; a formula may use numbers, columns, control.<column>, + - * / and the built-in functions")
}

// literalUnit is the unit a number literal argument takes: that of the
// first argument that has one (a literal count is in the unit of the
// counts it stands beside), or "%" where the function needs a percentage.
func literalUnit(f *DerivedFunction, i int, units []string) string {
	switch f.Name {
	case "schneider_orelli":
		return "%"
	case "standard_moisture":
		if i > 0 {
			return "%"
		}
	}
	for j, u := range units {
		if j != i && u != "" {
			return u
		}
	}
	return ""
}

func derivedNames() string {
	var s []string
	for _, f := range DerivedFunctions {
		s = append(s, f.Name)
	}
	return strings.Join(s, ", ")
}

// errZeroDivisor is what a compiled formula returns for a zero divisor.
var errZeroDivisor = errors.New("a divisor is zero")

// IsZeroDivisor reports whether err is a formula's zero divisor.
func IsZeroDivisor(err error) bool { return errors.Is(err, errZeroDivisor) }

// compileFormula compiles the formula with expr, in a sandbox that knows
// only the named columns, the control means and the built-in functions
// (every other built-in of the library is disabled), typed float64.
func compileFormula(src string, names, controls []string) (*vm.Program, error) {
	env := map[string]any{}
	for _, n := range names {
		env[n] = 0.0
	}
	ctl := map[string]float64{}
	for _, n := range controls {
		ctl[n] = 0
	}
	if len(controls) > 0 {
		env[ControlPrefix] = ctl
	}
	opts := []expr.Option{expr.Env(env), expr.DisableAllBuiltins(), expr.AsFloat64()}
	for _, f := range DerivedFunctions {
		opts = append(opts, expr.Function(f.Name, func(params ...any) (any, error) {
			x := make([]float64, len(params))
			for i, p := range params {
				x[i] = toFloat(p)
			}
			v, ok := f.Eval(x)
			if !ok {
				return nil, fmt.Errorf("%s: %w", f.Name, errZeroDivisor)
			}
			return v, nil
		}, funcType(len(f.Params))))
	}
	return expr.Compile(src, opts...)
}

// funcType is the typed signature of a built-in with n float64 arguments,
// so that expr checks the argument types at compile time.
func funcType(n int) any {
	switch n {
	case 2:
		return new(func(float64, float64) float64)
	case 3:
		return new(func(float64, float64, float64) float64)
	case 4:
		return new(func(float64, float64, float64, float64) float64)
	}
	panic("plan: no signature for a built-in with this many arguments")
}

func toFloat(p any) float64 {
	switch v := p.(type) {
	case float64:
		return v
	case int:
		return float64(v)
	}
	return math.NaN()
}

// Formula is a compiled derived formula, ready to evaluate per row.
type Formula struct {
	prog     *vm.Program
	Names    []string // columns it names, in order of first use
	Controls []string // control means it names
}

// CompileDerived compiles a derived variable's formula for evaluation. It
// returns an error when the formula does not pass AnalyseFormula (a plan
// that passed lint always compiles).
func CompileDerived(d Derived, cols map[string]FormulaColumn) (*Formula, error) {
	_, names, controls, _, probs := AnalyseFormula(d.Formula, cols)
	if len(probs) > 0 {
		return nil, fmt.Errorf("derived %s: %s", d.Name, probs[0].Summary)
	}
	prog, err := compileFormula(d.Formula, names, controls)
	if err != nil {
		return nil, fmt.Errorf("derived %s: %w", d.Name, err)
	}
	sort.Strings(controls)
	return &Formula{prog: prog, Names: names, Controls: controls}, nil
}

// Eval evaluates the formula with the row's values and control means. A
// zero divisor gives an error for which IsZeroDivisor is true.
func (f *Formula) Eval(values, controls map[string]float64) (float64, error) {
	env := map[string]any{}
	for _, n := range f.Names {
		env[n] = values[n]
	}
	if len(f.Controls) > 0 {
		env[ControlPrefix] = controls
	}
	out, err := expr.Run(f.prog, env)
	if err != nil {
		if errors.Is(err, errZeroDivisor) || strings.Contains(err.Error(), errZeroDivisor.Error()) {
			return 0, errZeroDivisor
		}
		return 0, err
	}
	v := toFloat(out)
	if math.IsInf(v, 0) || math.IsNaN(v) {
		// A / whose divisor was zero (the only way arithmetic on finite
		// values gives these).
		return 0, errZeroDivisor
	}
	return v, nil
}
