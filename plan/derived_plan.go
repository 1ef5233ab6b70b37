package plan

import (
	"fmt"

	"gopkg.in/yaml.v3"
)

// derived decodes one entry of the plan's "derived" list.
func (d *treeDecoder) derived(n *yaml.Node, path string) Derived {
	e := Derived{Pos: d.pos(n)}
	for k, v := range d.members(n, path) {
		switch k {
		case "name":
			e.Name = d.str(v)
		case "unit":
			e.Unit = d.str(v)
		case "formula":
			e.Formula = d.str(v)
		case "reference":
			e.Reference = d.str(v)
		case "when-zero":
			e.WhenZero = d.str(v)
		}
	}
	return e
}

type cDerived struct {
	Name      string `json:"name"`
	Unit      string `json:"unit"`
	Formula   string `json:"formula"`
	Reference string `json:"reference"`
	WhenZero  string `json:"when-zero"`
}

// canonicalDerived is the canonical form of the derived variables; nil
// (left out of the hash input) when the plan declares none, so that plans
// without them keep their hash.
func canonicalDerived(p *Plan) []cDerived {
	var out []cDerived
	for _, x := range p.Derived {
		out = append(out, cDerived{x.Name, x.Unit, x.Formula, x.Reference, x.WhenZero})
	}
	return out
}

// FormulaColumns are the columns a derived formula of p may name: the
// numeric columns (responses and covariates) with their units and ranges.
// A unit of "1" counts as no unit.
func FormulaColumns(p *Plan) map[string]FormulaColumn {
	cols := map[string]FormulaColumn{}
	for _, c := range p.Columns {
		if c.IsNumeric() {
			cols[c.Name] = FormulaColumn{Unit: normUnit(c.Unit), Min: c.Min, Max: c.Max}
		}
	}
	return cols
}

func normUnit(u string) string {
	if u == "1" {
		return ""
	}
	return u
}

// derivedVars checks the derived variables: distinct names that are no
// column, a formula that parses and names only declared numeric columns,
// units that agree, the declared unit equal to the formula's, a reference
// when control means are named, and a zero-divisor rule when a divisor can
// be zero given the declared ranges.
func (v *validator) derivedVars() {
	cols := FormulaColumns(v.p)
	seen := map[string]bool{}
	for i, d := range v.p.Derived {
		path := fmt.Sprintf("derived[%d]", i)
		if _, ok := v.cols[d.Name]; ok {
			v.errf("derived-name", path+".name", "derived variable %s has the name of a column; give it its own name", d.Name)
		} else if seen[d.Name] {
			v.errf("derived-name", path+".name", "derived variable %s is declared twice", d.Name)
		}
		seen[d.Name] = true
		unit, _, controls, zero, probs := AnalyseFormula(d.Formula, cols)
		for _, pr := range probs {
			v.add(Error, "derived-formula", path+".formula", formulaMessage(d, pr))
		}
		if len(probs) > 0 {
			continue
		}
		if unit != normUnit(d.Unit) {
			v.errf("derived-unit", path+".unit", "derived variable %s declares unit %s but its formula gives %s", d.Name, d.Unit, show(unit))
		}
		switch {
		case len(controls) > 0 && d.Reference == "":
			v.errf("derived-reference", path, "the formula of %s names control means (control.%s): declare reference: block or trial", d.Name, controls[0])
		case len(controls) == 0 && d.Reference != "":
			v.errf("derived-reference", path+".reference", "reference applies only to a formula that names control.<column>")
		}
		if len(zero) > 0 && d.WhenZero == "" {
			v.errf("derived-zero", path+".formula", "a divisor of %s can be zero (at character %d of the formula) given the declared ranges: declare when-zero: missing or stop, or a range that excludes zero", d.Name, zero[0]+1)
		}
	}
}

func formulaMessage(d Derived, pr FormulaProblem) string {
	if pr.Offset < 0 {
		return fmt.Sprintf("the formula of %s: %s", d.Name, pr.Summary)
	}
	return fmt.Sprintf("the formula of %s, at character %d: %s", d.Name, pr.Offset+1, pr.Summary)
}
