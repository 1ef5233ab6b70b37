package engine

import (
	"fmt"
	"math"
	"slices"

	"furrow/checker/record"
	"furrow/checker/table"
	"furrow/plan"
)

// unitColumn returns the plan's unit column name, or "".
func unitColumn(p *plan.Plan) string {
	for _, c := range p.Columns {
		if c.Role == plan.RoleUnit {
			return c.Name
		}
	}
	return ""
}

// ColumnByRole returns the plan column with the given role, or nil.
func ColumnByRole(p *plan.Plan, role string) *plan.Column {
	for i := range p.Columns {
		if p.Columns[i].Role == role {
			return &p.Columns[i]
		}
	}
	return nil
}

// PlanColumn returns the plan column with the given name, or nil.
func PlanColumn(p *plan.Plan, name string) *plan.Column {
	for i := range p.Columns {
		if p.Columns[i].Name == name {
			return &p.Columns[i]
		}
	}
	return nil
}

// ApplyExclusions applies the plan's exclusion rules in plan order to t and
// returns the kept table, every removed row (in file order) and one summary
// per rule. A row is attributed to the first rule that removes it.
func ApplyExclusions(p *plan.Plan, t *table.Table) (*table.Table, []record.ExcludedRow, []record.ExclusionRule, error) {
	n := t.NumRows()
	removedBy := make([]int, n) // rule index + 1; 0 = kept
	unitCol := unitColumn(p)
	var units []string
	if unitCol != "" {
		units = t.Texts(unitCol)
	}
	repeat := ColumnByRole(p, plan.RoleRepeat)
	rules := make([]record.ExclusionRule, len(p.Exclusions))
	for k, ex := range p.Exclusions {
		rules[k] = record.ExclusionRule{ID: ex.ID, Pos: posText(ex.Pos), Drop: ex.Drop, When: ex.When, Reason: ex.Reason}
		hit := make([]bool, n)
		switch ex.When {
		case plan.WhenMissing, plan.WhenOutOfRange:
			col := t.Column(ex.Column)
			if col == nil {
				return nil, nil, nil, fmt.Errorf("exclusion %s: the data have no column %q", ex.ID, ex.Column)
			}
			pc := PlanColumn(p, ex.Column)
			for i := 0; i < n; i++ {
				if ex.At != "" {
					if repeat == nil {
						return nil, nil, nil, fmt.Errorf("exclusion %s: at %q needs a repeat column in the plan", ex.ID, ex.At)
					}
					if lv, _ := t.Text(repeat.Name, i); lv != ex.At {
						continue
					}
				}
				if ex.When == plan.WhenMissing {
					hit[i] = col.Missing[i] || (col.Numeric && math.IsNaN(col.Num[i]))
				} else if !col.Missing[i] && pc != nil {
					v := col.Num[i]
					hit[i] = (pc.Min != nil && v < *pc.Min) || (pc.Max != nil && v > *pc.Max)
				}
			}
		case plan.WhenListed:
			if unitCol == "" {
				return nil, nil, nil, fmt.Errorf("exclusion %s: listed units need a unit column in the plan", ex.ID)
			}
			for i := 0; i < n; i++ {
				hit[i] = slices.Contains(ex.Units, units[i])
			}
		default:
			return nil, nil, nil, fmt.Errorf("exclusion %s: unknown condition %q", ex.ID, ex.When)
		}
		if ex.Drop == plan.DropUnit {
			if unitCol == "" {
				return nil, nil, nil, fmt.Errorf("exclusion %s: drop unit needs a unit column in the plan", ex.ID)
			}
			bad := map[string]bool{}
			for i := 0; i < n; i++ {
				if hit[i] {
					bad[units[i]] = true
				}
			}
			for i := 0; i < n; i++ {
				hit[i] = bad[units[i]]
			}
		}
		for i := 0; i < n; i++ {
			if hit[i] && removedBy[i] == 0 {
				removedBy[i] = k + 1
			}
		}
	}
	var out []record.ExcludedRow
	seenUnit := make([]map[string]bool, len(rules))
	for i := 0; i < n; i++ {
		k := removedBy[i] - 1
		if k < 0 {
			continue
		}
		u := ""
		if units != nil {
			u = units[i]
		}
		out = append(out, record.ExcludedRow{Row: t.RowNumber(i), Unit: u, Rule: rules[k].ID, RulePos: rules[k].Pos})
		rules[k].RowsRemoved++
		if u != "" {
			if seenUnit[k] == nil {
				seenUnit[k] = map[string]bool{}
			}
			if !seenUnit[k][u] {
				seenUnit[k][u] = true
				rules[k].Units = append(rules[k].Units, u)
			}
		}
	}
	slices.SortFunc(out, func(a, b record.ExcludedRow) int { return a.Row - b.Row })
	for k := range rules {
		slices.Sort(rules[k].Units)
	}
	kept := t.Filter(func(i int) bool { return removedBy[i] == 0 })
	return kept, out, rules, nil
}
