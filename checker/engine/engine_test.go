package engine

import (
	"crypto/ed25519"
	"fmt"
	"math"
	"math/rand/v2"
	"os"
	"path/filepath"
	"strings"
	"testing"
	"time"

	"furrow/checker/record"
)

// cascadePlan is a small CRD plan with three linear steps whose checks
// are tuned by the test through the thresholds.
const cascadePlan = `furrow: 1
trial:
  id: T-CASCADE
  title: synthetic cascade test (invented)
  version: "1.0"
  amendments: []
data:
  file: data.csv
  format: csv
columns:
  - name: unit
    role: unit
  - name: treatment
    role: treatment
    levels: [control, a, b]
    control: control
  - name: y
    role: response
    min: 1
    max: 1000
design:
  layout: crd
  replicates: 6
exclusions:
  - id: listed
    drop: unit
    when: listed
    units: [u18]
    reason: invented exclusion for the test
endpoints:
  - id: yield
    response: y
    primary: true
    not-computable: fail
    steps:
      - id: first
        model: linear
        fixed: [treatment]
        checks:
          - test: shapiro-wilk
            fail-below: %s
        on-fail: second
      - id: second
        model: linear
        transform: {kind: log}
        fixed: [treatment]
        checks:
          - test: levene
            fail-below: %s
        on-fail: third
      - id: third
        model: linear
        transform: {kind: sqrt}
        fixed: [treatment]
        checks:
          - test: brown-forsythe
            fail-below: %s
    hypotheses:
      - id: vs-control
        kind: versus-control
        adjust: holm
`

// writeCascade writes the plan (with the three thresholds) and seeded data
// into a fresh folder and returns the plan path.
func writeCascade(t *testing.T, th1, th2, th3 string) string {
	t.Helper()
	dir := t.TempDir()
	rng := rand.New(rand.NewPCG(7, 11))
	var b strings.Builder
	b.WriteString("unit,treatment,y\n")
	trts := []string{"control", "a", "b"}
	for i := 0; i < 18; i++ {
		tr := trts[i%3]
		mu := map[string]float64{"control": 20, "a": 26, "b": 31}[tr]
		y := mu * math.Exp(0.15*rng.NormFloat64())
		fmt.Fprintf(&b, "u%d,%s,%.3f\n", i+1, tr, y)
	}
	write(t, filepath.Join(dir, "data.csv"), b.String())
	pp := filepath.Join(dir, "plan.yaml")
	write(t, pp, fmt.Sprintf(cascadePlan, th1, th2, th3))
	return pp
}

func write(t *testing.T, path, s string) {
	t.Helper()
	if err := os.WriteFile(path, []byte(s), 0o644); err != nil {
		t.Fatal(err)
	}
}

var t0 = time.Date(2026, 3, 1, 9, 0, 0, 0, time.UTC)

func register(t *testing.T, pp string, at time.Time) {
	t.Helper()
	if _, ds, err := record.Register(pp, record.RegisterOptions{Now: at, ToolVersion: "test", GitCommit: func(string) string { return "" }}); err != nil {
		t.Fatalf("register: %v %v", err, ds)
	}
}

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
			pp := writeCascade(t, c.th[0], c.th[1], c.th[2])
			register(t, pp, t0)
			r := run(t, pp, filepath.Join(filepath.Dir(pp), "out"), t0.Add(time.Hour))
			ep := r.Endpoints[0]
			if ep.Status != c.status || ep.Reported != c.reported {
				t.Fatalf("status %s reported %q, want %s %q", ep.Status, ep.Reported, c.status, c.reported)
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
			if s := ep.Steps[0]; s.Decision.Reason == record.ReasonCheckFailed && (s.Decision.Next != "second" || !strings.HasPrefix(s.Decision.Rule, "plan.yaml:40:")) {
				t.Errorf("fallback decision %+v", s.Decision)
			}
			if len(ep.Hypotheses) != 1 || len(ep.Hypotheses[0].Comparisons) != 2 || ep.Hypotheses[0].Step != c.reported {
				t.Fatalf("hypotheses %+v", ep.Hypotheses)
			}
			if r.Inputs.Rows != 18 || r.Inputs.RowsAnalysed != 17 || len(r.Exclusions) != 1 || r.Exclusions[0].Rule != "listed" {
				t.Errorf("exclusions: rows %d analysed %d %+v", r.Inputs.Rows, r.Inputs.RowsAnalysed, r.Exclusions)
			}
			if ep.Steps[0].N != 17 {
				t.Errorf("n = %d, want 17", ep.Steps[0].N)
			}
		})
	}
}

func writeRun(t *testing.T, pp, out string, at time.Time, key ed25519.PrivateKey) []byte {
	t.Helper()
	r := run(t, pp, out, at)
	if err := os.MkdirAll(out, 0o755); err != nil {
		t.Fatal(err)
	}
	if err := record.WriteRecord(out, r, key); err != nil {
		t.Fatal(err)
	}
	b, err := os.ReadFile(filepath.Join(out, record.AuditFileName))
	if err != nil {
		t.Fatal(err)
	}
	if err := record.ValidateRecord(b); err != nil {
		t.Fatalf("produced record does not validate: %v", err)
	}
	return b
}

func TestRecordDeterministic(t *testing.T) {
	pp := writeCascade(t, "0.99999", "1e-12", "1e-12")
	register(t, pp, t0)
	out := filepath.Join(filepath.Dir(pp), "out")
	b1 := writeRun(t, pp, out, t0.Add(time.Hour), nil)
	b2 := writeRun(t, pp, out, t0.Add(5*time.Hour), nil)
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
	// run_at is inside the content hash, so the hash differs too.
	if len(diff) != 2 || !strings.Contains(diff[0], `"run_at"`) || !strings.Contains(diff[1], `"content_hash"`) {
		t.Fatalf("two runs differ in more than run_at and its content hash: %q", diff)
	}
	// At the same time, they are the same.
	if b3 := writeRun(t, pp, out, t0.Add(time.Hour), nil); string(b3) != string(b1) {
		t.Fatal("two runs at the same time differ")
	}
}
