package engine

import (
	"furrow/checker/record"
	"furrow/plan"
)

// planPaths returns the record's Result.PlanPaths: for every plan position
// the record holds (endpoints, steps, checks, decision rules, hypotheses,
// declared answers, exclusion rules, data warnings positioned in the
// plan), the plan data path of the value written there. Positions are in
// posText form; a position that names no value of the plan (a data
// position) is left out. When two values start at the same place, the
// shorter (enclosing) path is taken.
func planPaths(p *plan.Plan, r *record.Result) map[string]string {
	at := map[string]string{}
	for path, pos := range p.Where {
		if path == "" || !pos.IsValid() {
			continue
		}
		k := posText(pos)
		if old, ok := at[k]; !ok || len(path) < len(old) || (len(path) == len(old) && path < old) {
			at[k] = path
		}
	}
	out := map[string]string{}
	use := func(pos string) {
		if path, ok := at[pos]; ok {
			out[pos] = path
		}
	}
	for _, f := range r.DataWarnings {
		use(f.Pos)
	}
	for _, f := range r.PlanWarnings {
		use(f.Pos)
	}
	if r.Design != nil && r.Design.LeastUnits != nil {
		use(r.Design.LeastUnits.Pos)
	}
	for _, x := range r.Exclusions {
		use(x.RulePos)
	}
	for _, x := range r.ExclusionRules {
		use(x.Pos)
	}
	for _, e := range r.Endpoints {
		use(e.Pos)
		for _, s := range e.Steps {
			use(s.Pos)
			use(s.Decision.Rule)
			for _, c := range s.Checks {
				use(c.Pos)
			}
		}
		for _, h := range e.Hypotheses {
			use(h.Pos)
			use(h.Answer)
		}
	}
	return out
}
