package engine

import (
	"crypto/ed25519"
	"path/filepath"
	"strings"
	"testing"
	"time"

	"furrow/checker/internal/fixture"

	"furrow/checker/record"
)

func run(t *testing.T, pp, out string, at time.Time) *record.Result {
	t.Helper()
	r, err := Run(RunOptions{PlanPath: pp, OutDir: out, Now: at, Tool: record.ToolInfo{Name: "furrow", Version: "test"}})
	if err != nil {
		t.Fatalf("run: %v", err)
	}
	return r
}

// A threshold of 1e-12 does not fail on these data; 0.99999 always fails.
// These make each decision path deterministic without depending on the
// p-values of the synthetic data.
func TestCascadePaths(t *testing.T) {
	for _, c := range []struct {
		name       string
		th         [3]string
		status     record.EndpointStatus
		reported   string
		reasons    [3]record.Reason
		executed   [3]bool
		hypotheses bool
	}{
		{"accept first", [3]string{"1e-12", "1e-12", "1e-12"}, record.EndpointAccepted, "first",
			[3]record.Reason{record.ReasonChecksPassed, record.ReasonNotReached, record.ReasonNotReached}, [3]bool{true, false, false}, true},
		{"fall back once", [3]string{"0.99999", "1e-12", "1e-12"}, record.EndpointAccepted, "second",
			[3]record.Reason{record.ReasonCheckFailed, record.ReasonChecksPassed, record.ReasonNotReached}, [3]bool{true, true, false}, true},
		{"fall back to last", [3]string{"0.99999", "0.99999", "1e-12"}, record.EndpointAccepted, "third",
			[3]record.Reason{record.ReasonCheckFailed, record.ReasonCheckFailed, record.ReasonChecksPassed}, [3]bool{true, true, true}, true},
		{"last fails too", [3]string{"0.99999", "0.99999", "0.99999"}, record.EndpointAssumptionsUnmet, "third",
			[3]record.Reason{record.ReasonCheckFailed, record.ReasonCheckFailed, record.ReasonLastResortAssumptionsUnmet}, [3]bool{true, true, true}, true},
	} {
		t.Run(c.name, func(t *testing.T) {
			pp := fixture.WriteCascade(t, c.th[0], c.th[1], c.th[2])
			fixture.Register(t, pp, fixture.T0)
			r := run(t, pp, filepath.Join(filepath.Dir(pp), "out"), fixture.T0.Add(time.Hour))
			ep := r.Endpoints[0]
			if ep.Status != c.status || ep.Reported != c.reported {
				t.Fatalf("status %s reported %q, want %s %q", ep.Status, ep.Reported, c.status, c.reported)
			}
			if len(ep.Steps) != 3 {
				t.Fatalf("%d steps recorded, want the 3 declared", len(ep.Steps))
			}
			for i, s := range ep.Steps {
				if s.Decision.Reason != c.reasons[i] || s.Executed != c.executed[i] {
					t.Errorf("step %s: reason %s executed %v, want %s %v (%s)", s.ID, s.Decision.Reason, s.Executed, c.reasons[i], c.executed[i], s.Decision.Detail)
				}
				if s.Executed && s.Decision.Rule == "" {
					t.Errorf("step %s: decision has no plan position", s.ID)
				}
				if (s.Results != nil) != (s.ID == c.reported) {
					t.Errorf("step %s: results present = %v", s.ID, s.Results != nil)
				}
			}
			if s := ep.Steps[0]; s.Decision.Reason == record.ReasonCheckFailed && (s.Decision.Next != "second" || !strings.HasPrefix(s.Decision.Rule, "plan.yaml:41:")) {
				t.Errorf("fallback decision %+v", s.Decision)
			}
			if len(ep.Hypotheses) != 1 || len(ep.Hypotheses[0].Comparisons) != 2 || ep.Hypotheses[0].Step != c.reported {
				t.Fatalf("hypotheses %+v", ep.Hypotheses)
			}
			if r.Inputs.Rows != 18 || r.Inputs.RowsKept != 17 || len(r.Exclusions) != 1 || r.Exclusions[0].Rule != "listed" {
				t.Errorf("exclusions: rows %d kept %d %+v", r.Inputs.Rows, r.Inputs.RowsKept, r.Exclusions)
			}
			if ep.Steps[0].N != 17 {
				t.Errorf("n = %d, want 17", ep.Steps[0].N)
			}
		})
	}
}

func writeRun(t *testing.T, pp, out string, at time.Time, key ed25519.PrivateKey) []byte {
	t.Helper()
	return fixture.WriteRecordFile(t, out, run(t, pp, out, at), key)
}

func TestRecordDeterministic(t *testing.T) {
	pp := fixture.WriteCascade(t, "0.99999", "1e-12", "1e-12")
	fixture.Register(t, pp, fixture.T0)
	out := filepath.Join(filepath.Dir(pp), "out")
	b1 := writeRun(t, pp, out, fixture.T0.Add(time.Hour), nil)
	b2 := writeRun(t, pp, out, fixture.T0.Add(5*time.Hour), nil)
	l1, l2 := strings.Split(string(b1), "\n"), strings.Split(string(b2), "\n")
	if len(l1) != len(l2) {
		t.Fatalf("records differ in length")
	}
	var diff []string
	for i := range l1 {
		if l1[i] != l2[i] {
			diff = append(diff, l1[i])
		}
	}
	// run_at is kept apart from the content hash, which is the same.
	if len(diff) != 1 || !strings.Contains(diff[0], `"run_at"`) {
		t.Fatalf("two runs differ in more than run_at: %q", diff)
	}
	// At the same time, they are the same.
	if b3 := writeRun(t, pp, out, fixture.T0.Add(time.Hour), nil); string(b3) != string(b1) {
		t.Fatal("two runs at the same time differ")
	}
}
