package render

import (
	"fmt"
	"strings"

	"furrow/plan"
)

// derivedSection writes out the derived variables: each formula, its unit,
// where control means come from, what a zero divisor does, and the
// built-in functions it calls with their sources. It is left out of the
// document when the plan declares none.
func derivedSection(p *plan.Plan) []Section {
	if len(p.Derived) == 0 {
		return nil
	}
	s := Section{Heading: "Derived variables"}
	var items []string
	used := map[string]bool{}
	for _, d := range p.Derived {
		item := fmt.Sprintf("%s (%s) = %s, computed for every data row.", code(d.Name), d.Unit, code(d.Formula))
		switch d.Reference {
		case plan.ReferenceBlock:
			item += " control.<column> is the mean of the column over the control units of the same block."
		case plan.ReferenceTrial:
			item += " control.<column> is the mean of the column over every control unit of the trial."
		}
		switch d.WhenZero {
		case plan.ZeroMissing:
			item += " Where a divisor is zero the value is missing, and the row is listed in the run record."
		case plan.ZeroStop:
			item += " Where a divisor is zero the run stops."
		}
		items = append(items, item)
		for _, f := range plan.DerivedFunctions {
			if strings.Contains(d.Formula, f.Name+"(") {
				used[f.Name] = true
			}
		}
	}
	s.Blocks = []Block{{Items: items}}
	var fns []string
	for _, f := range plan.DerivedFunctions {
		if used[f.Name] {
			fns = append(fns, fmt.Sprintf("%s(%s): %s.", code(f.Name), strings.Join(f.Params, ", "), f.Doc))
		}
	}
	if len(fns) > 0 {
		s.Blocks = append(s.Blocks, Block{Text: "The built-in functions used:"}, Block{Items: fns})
	}
	return []Section{s}
}
