package engine

import (
	"fmt"
	"path/filepath"
	"testing"
	"time"

	"furrow/checker/internal/fixture"
)

// Every plan position the record holds is in PlanPaths, under the data
// path of the plan value it points at.
func TestPlanPathsNameEveryPosition(t *testing.T) {
	pp := fixture.WriteCascade(t, "0.99999", "1e-12", "1e-12")
	fixture.Register(t, pp, fixture.T0)
	r := run(t, pp, filepath.Join(filepath.Dir(pp), "out"), fixture.T0.Add(time.Hour))
	want := map[string]string{}
	for i, x := range r.ExclusionRules {
		want[x.Pos] = fmt.Sprintf("exclusions[%d]", i)
	}
	for _, x := range r.Exclusions {
		want[x.RulePos] = "exclusions[0]"
	}
	for _, e := range r.Endpoints {
		want[e.Pos] = "endpoints[0]"
		for j, s := range e.Steps {
			step := fmt.Sprintf("endpoints[0].steps[%d]", j)
			want[s.Pos] = step
			for k, c := range s.Checks {
				want[c.Pos] = fmt.Sprintf("%s.checks[%d]", step, k)
			}
		}
		for k, h := range e.Hypotheses {
			want[h.Pos] = fmt.Sprintf("endpoints[0].hypotheses[%d]", k)
		}
	}
	if len(want) < 8 {
		t.Fatalf("too few positions to test: %v", want)
	}
	for pos, path := range want {
		if got := r.PlanPaths[pos]; got != path {
			t.Errorf("plan_paths[%q] = %q, want %q", pos, got, path)
		}
	}
	for _, e := range r.Endpoints {
		for _, s := range e.Steps {
			if s.Decision.Rule != "" && r.PlanPaths[s.Decision.Rule] == "" {
				t.Errorf("step %s: decision rule %s has no plan path", s.ID, s.Decision.Rule)
			}
		}
	}
}
