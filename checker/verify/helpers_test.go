package verify

// Test helpers copied from checker/engine's tests (one copy per package
// until they move to a shared test package).

import (
	"testing"

	"time"

	"crypto/ed25519"
	"fmt"
	"furrow/checker/engine"
	"furrow/checker/record"
	"math"
	"math/rand/v2"
	"os"
	"path/filepath"
	"strings"
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
  least-units: {per: cell, count: 5, below: stop}
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
	r, err := engine.Run(engine.RunOptions{PlanPath: pp, OutDir: out, Now: at, Tool: record.ToolInfo{Name: "furrow", Version: "test"}})
	if err != nil {
		t.Fatalf("run: %v", err)
	}
	return r
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

// rankPlan is the plan of the invented trial in testdata/rank/plots.csv;
// %s are the treatment levels, the steps and the hypotheses.
const rankPlan = `furrow: 1
trial:
  id: T-RANK
  title: rank and welch steps (invented)
  version: "1.0"
  amendments: []
data:
  file: plots.csv
  format: csv
columns:
  - name: site
    role: site
    levels: [S1, S2, S3]
  - name: block
    role: block
  - name: plot
    role: unit
  - name: treatment
    role: treatment
    levels: [%s]
    control: control
  - name: time
    role: repeat
    levels: [before, harvest]
  - name: juveniles
    role: response
    min: 0
    max: 100000
design:
  layout: multi-site
  replicates: 4
  least-units: {per: cell, count: 3, below: stop}
endpoints:
  - id: density
    response: juveniles
    primary: true
    not-computable: fail
    steps:
%s
    hypotheses:
%s
`

const changeLog = `        outcome: {derive: change, from: before, to: harvest}
        transform: {kind: log-offset, offset: 1}
`

// rankRun writes the plan and data into a fresh folder, registers the
// plan and runs it. twoLevels keeps the control and a only.
func rankRun(t *testing.T, twoLevels bool, steps, hyps string) (*record.Result, string) {
	t.Helper()
	dir := t.TempDir()
	b, err := os.ReadFile(filepath.Join("..", "engine", "testdata", "rank", "plots.csv"))
	if err != nil {
		t.Fatal(err)
	}
	levels := "control, a, b"
	data := string(b)
	if twoLevels {
		levels = "control, a"
		var keep []string
		for _, l := range strings.Split(strings.TrimSpace(data), "\n") {
			if !strings.Contains(l, ",b,") {
				keep = append(keep, l)
			}
		}
		data = strings.Join(keep, "\n") + "\n"
	}
	if hyps == "" {
		hyps = "      []"
	}
	write(t, filepath.Join(dir, "plots.csv"), data)
	pp := filepath.Join(dir, "plan.yaml")
	write(t, pp, fmt.Sprintf(rankPlan, levels, steps, hyps))
	register(t, pp, t0)
	return run(t, pp, filepath.Join(dir, "out"), t0.Add(time.Hour)), pp
}
