package engine

import (
	"furrow/checker/record"
	"furrow/checker/table"
	"furrow/plan"
)

// observedData collects the observed response and design columns of the
// analysed table for the report's figures.
func observedData(p *plan.Plan, kept *table.Table, response string) *record.ObservedData {
	od := &record.ObservedData{Response: response, Values: record.Nums(kept.Floats(response))}
	if od.Values == nil {
		od.Values = []record.Num{}
	}
	for _, c := range p.Columns {
		switch c.Role {
		case plan.RoleTreatment, plan.RoleFactor, plan.RoleBlock, plan.RoleSite:
			levels := c.Levels
			if levels == nil {
				levels = []string{}
			}
			od.Factors = append(od.Factors, record.ObservedFactor{Name: c.Name, Role: c.Role, Levels: levels, Values: texts(kept, c.Name)})
		case plan.RoleUnit:
			if od.Unit == nil {
				od.Unit = texts(kept, c.Name)
			}
		case plan.RoleRepeat:
			if od.Repeat == "" {
				od.Repeat = c.Name
				od.RepeatLevels = c.Levels
				od.RepeatValues = texts(kept, c.Name)
			}
		}
	}
	if od.Factors == nil {
		od.Factors = []record.ObservedFactor{}
	}
	return od
}

func texts(t *table.Table, name string) []string {
	v := t.Texts(name)
	if v == nil {
		return []string{}
	}
	return v
}
