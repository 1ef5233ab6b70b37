package checker

import (
	"bytes"
	"crypto/ed25519"
	"encoding/json"
	"fmt"
	"math"
	"math/rand/v2"
	"os"
	"path/filepath"
	"slices"
	"strings"
	"testing"
	"time"
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
	if _, ds, err := Register(pp, RegisterOptions{Now: at, ToolVersion: "test", GitCommit: func(string) string { return "" }}); err != nil {
		t.Fatalf("register: %v %v", err, ds)
	}
}

func run(t *testing.T, pp, out string, at time.Time) *Result {
	t.Helper()
	r, err := Run(RunOptions{PlanPath: pp, OutDir: out, Now: at, Tool: ToolInfo{Name: "furrow", Version: "test"}})
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
		status     EndpointStatus
		reported   string
		reasons    [3]Reason
		executed   [3]bool
		hypotheses bool
	}{
		{"accept first", [3]string{"1e-12", "1e-12", "1e-12"}, EndpointAccepted, "first",
			[3]Reason{ReasonChecksPassed, ReasonNotReached, ReasonNotReached}, [3]bool{true, false, false}, true},
		{"fall back once", [3]string{"0.99999", "1e-12", "1e-12"}, EndpointAccepted, "second",
			[3]Reason{ReasonCheckFailed, ReasonChecksPassed, ReasonNotReached}, [3]bool{true, true, false}, true},
		{"fall back to last", [3]string{"0.99999", "0.99999", "1e-12"}, EndpointAccepted, "third",
			[3]Reason{ReasonCheckFailed, ReasonCheckFailed, ReasonChecksPassed}, [3]bool{true, true, true}, true},
		{"last fails too", [3]string{"0.99999", "0.99999", "0.99999"}, EndpointAssumptionsUnmet, "third",
			[3]Reason{ReasonCheckFailed, ReasonCheckFailed, ReasonLastResortAssumptionsUnmet}, [3]bool{true, true, true}, true},
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
			if s := ep.Steps[0]; s.Decision.Reason == ReasonCheckFailed && (s.Decision.Next != "second" || !strings.HasPrefix(s.Decision.Rule, "plan.yaml:39:")) {
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
	if err := WriteRecord(out, r, key); err != nil {
		t.Fatal(err)
	}
	b, err := os.ReadFile(filepath.Join(out, AuditFileName))
	if err != nil {
		t.Fatal(err)
	}
	if err := ValidateRecord(b); err != nil {
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
	if len(diff) != 1 || !strings.Contains(diff[0], `"run_at"`) {
		t.Fatalf("two runs differ in more than run_at: %q", diff)
	}
}

func verifyCodes(t *testing.T, opt VerifyOptions) (*VerifyReport, map[DeviationCode][]string) {
	t.Helper()
	rep, err := Verify(opt)
	if err != nil {
		t.Fatalf("verify: %v", err)
	}
	m := map[DeviationCode][]string{}
	for _, d := range rep.Deviations {
		m[d.Code] = append(m[d.Code], d.Field)
	}
	return rep, m
}

func TestVerifyCatchesEdits(t *testing.T) {
	pp := writeCascade(t, "0.99999", "1e-12", "1e-12")
	register(t, pp, t0)
	dir := filepath.Dir(pp)
	out := filepath.Join(dir, "out")
	orig := writeRun(t, pp, out, t0.Add(time.Hour), nil)
	rec := filepath.Join(out, AuditFileName)
	if rep, _ := verifyCodes(t, VerifyOptions{Dir: out, Tool: ToolInfo{Version: "test"}}); !rep.OK() || len(rep.Deviations) != 0 {
		t.Fatalf("clean run: %+v", rep.Deviations)
	}
	edits := []struct {
		name, old, new string
		field          string
	}{
		{"decision", `"reason": "checks-passed"`, `"reason": "no-checks"`, "endpoints[0].steps[1].decision.reason"},
		{"verdict", `"verdict": "fail"`, `"verdict": "pass"`, "endpoints[0].steps[0].checks[0].verdict"},
		{"count", `"rows_analysed": 17`, `"rows_analysed": 18`, "inputs.rows_analysed"},
		{"hash", `"table_hash": "sha256:`, `"table_hash": "sha256:0`, "inputs.table_hash"},
	}
	for _, e := range edits {
		t.Run(e.name, func(t *testing.T) {
			edited := strings.Replace(string(orig), e.old, e.new, 1)
			if e.name == "hash" {
				edited = strings.Replace(edited, e.new, e.new[:len(e.new)], 1)
				i := strings.Index(edited, e.new)
				edited = edited[:i+len(e.new)] + edited[i+len(e.new)+1:] // keep 64 hex digits
			}
			if edited == string(orig) {
				t.Fatal("edit did not apply")
			}
			write(t, rec, edited)
			defer write(t, rec, string(orig))
			rep, m := verifyCodes(t, VerifyOptions{Dir: out, Tool: ToolInfo{Version: "test"}})
			if rep.OK() || m[DevRecordEdited] == nil {
				t.Fatalf("edit not caught: %+v", rep.Deviations)
			}
			all := strings.Join(append(m[DevResultsDiffer], m[DevDataChanged]...), " ")
			if !strings.Contains(all, e.field) {
				t.Errorf("field %s not named; got %v", e.field, m)
			}
		})
	}
	// Every number: edit a p-value.
	t.Run("number", func(t *testing.T) {
		var r Result
		rr, raw, err := ReadRecord(out)
		if err != nil {
			t.Fatal(err)
		}
		_ = raw
		r = *rr
		r.Endpoints[0].Steps[1].Checks[0].P *= 1.001
		b, _ := EncodeRecord(&r)
		write(t, rec, string(b))
		defer write(t, rec, string(orig))
		rep, m := verifyCodes(t, VerifyOptions{Dir: out, Tool: ToolInfo{Version: "test"}})
		if rep.OK() || !strings.Contains(strings.Join(m[DevResultsDiffer], " "), "endpoints[0].steps[1].checks[0].p") {
			t.Fatalf("number edit not named: %v", m)
		}
	})
	// run_at is outside the content hash; a value that is not a time must
	// not slip through the registration-date comparison.
	t.Run("run_at", func(t *testing.T) {
		edited := strings.Replace(string(orig), `"run_at": "`, `"run_at": "zz`, 1)
		if edited == string(orig) {
			t.Fatal("edit did not apply")
		}
		write(t, rec, edited)
		defer write(t, rec, string(orig))
		rep, m := verifyCodes(t, VerifyOptions{Dir: out, Tool: ToolInfo{Version: "test"}})
		if rep.OK() || !slices.Contains(m[DevRecordEdited], "run_at") {
			t.Fatalf("unparsable run_at not caught: %v", m)
		}
	})
	t.Run("data edited", func(t *testing.T) {
		dp := filepath.Join(dir, "data.csv")
		d, _ := os.ReadFile(dp)
		write(t, dp, strings.Replace(string(d), "u1,control,", "u1,control,1", 1))
		defer write(t, dp, string(d))
		_, m := verifyCodes(t, VerifyOptions{Dir: out, Tool: ToolInfo{Version: "test"}})
		if m[DevDataChanged] == nil {
			t.Fatalf("data edit not caught: %v", m)
		}
	})
	t.Run("plan edited after registration", func(t *testing.T) {
		pb, _ := os.ReadFile(pp)
		write(t, pp, strings.Replace(string(pb), "adjust: holm", "adjust: bonferroni", 1))
		defer write(t, pp, string(pb))
		_, m := verifyCodes(t, VerifyOptions{Dir: out, Tool: ToolInfo{Version: "test"}})
		if m[DevPlanChanged] == nil {
			t.Fatalf("plan edit not caught: %v", m)
		}
		// And run refuses it.
		if _, err := Run(RunOptions{PlanPath: pp, OutDir: out, Now: t0}); err == nil {
			t.Error("run accepted a plan that differs from its registration")
		}
	})
	t.Run("tool version informational", func(t *testing.T) {
		rep, m := verifyCodes(t, VerifyOptions{Dir: out, Tool: ToolInfo{Version: "other"}})
		if !rep.OK() || m[DevToolVersion] == nil {
			t.Fatalf("tool version: ok=%v %v", rep.OK(), m)
		}
	})
}

func TestRegistrationChain(t *testing.T) {
	pp := writeCascade(t, "1e-12", "1e-12", "1e-12")
	register(t, pp, t0)
	pb, _ := os.ReadFile(pp)
	// Amending without a new version is refused.
	write(t, pp, strings.Replace(string(pb), "adjust: holm", "adjust: hochberg", 1))
	if _, _, err := Register(pp, RegisterOptions{Now: t0.Add(time.Hour), GitCommit: func(string) string { return "" }}); err == nil {
		t.Fatal("amendment without a new version accepted")
	}
	amended := strings.Replace(strings.Replace(string(pb), "adjust: holm", "adjust: hochberg", 1),
		`version: "1.0"
  amendments: []`, `version: "1.1"
  amendments:
    - version: "1.1"
      date: "2026-03-02"
      reason: step-up procedure preferred
      changes: adjust holm -> hochberg`, 1)
	write(t, pp, amended)
	res, ds, err := Register(pp, RegisterOptions{Now: t0.Add(24 * time.Hour), GitCommit: func(string) string { return "" }})
	if err != nil {
		t.Fatalf("amendment: %v %v", err, ds)
	}
	if !res.Amendment || res.Entry.Seq != 2 || res.Entry.Reason != "step-up procedure preferred" {
		t.Fatalf("amendment entry %+v", res.Entry)
	}
	reg, _, err := ReadRegistration(RegistrationPath(pp))
	if err != nil {
		t.Fatal(err)
	}
	if errs := reg.CheckChain(); errs != nil || reg.Entries[1].Previous != reg.Entries[0].EntryHash {
		t.Fatalf("fresh chain broken: %v", errs)
	}
	// Run after the amendment, then register another amendment: verify
	// reports an amendment after data lock.
	out := filepath.Join(filepath.Dir(pp), "out")
	writeRun(t, pp, out, t0.Add(48*time.Hour), nil)
	// Break a link: rewrite the first entry's reason.
	rp := RegistrationPath(pp)
	rb, _ := os.ReadFile(rp)
	write(t, rp, strings.Replace(string(rb), "initial registration", "initial registration (edited)", 1))
	reg2, _, _ := ReadRegistration(rp)
	errs := reg2.CheckChain()
	if len(errs) == 0 {
		t.Fatal("edited entry not caught")
	}
	_, m := verifyCodes(t, VerifyOptions{Dir: out, Tool: ToolInfo{Version: "test"}})
	if m[DevPlanChanged] == nil {
		t.Fatalf("broken chain not reported by verify: %v", m)
	}
	if _, _, err := Register(pp, RegisterOptions{Now: t0.Add(50 * time.Hour), GitCommit: func(string) string { return "" }}); err == nil {
		t.Error("register accepted a broken record")
	}
	write(t, rp, string(rb))
	// An amendment registered after the run.
	amended2 := strings.Replace(strings.Replace(strings.Replace(amended, "adjust: hochberg", "adjust: bonferroni", 1),
		`version: "1.1"
  amendments:`, `version: "1.2"
  amendments:`, 1), `changes: adjust holm -> hochberg`, `changes: adjust holm -> hochberg
    - version: "1.2"
      date: "2026-03-04"
      reason: late change
      changes: adjust`, 1)
	write(t, pp, amended2)
	if _, ds, err := Register(pp, RegisterOptions{Now: t0.Add(72 * time.Hour), GitCommit: func(string) string { return "" }}); err != nil {
		t.Fatal(err, ds)
	}
	write(t, pp, amended) // the plan as it was run
	_, m = verifyCodes(t, VerifyOptions{Dir: out, Tool: ToolInfo{Version: "test"}})
	if m[DevAmendmentAfterLock] == nil {
		t.Fatalf("amendment after the run not reported: %v", m)
	}
}

func TestSignature(t *testing.T) {
	pp := writeCascade(t, "1e-12", "1e-12", "1e-12")
	register(t, pp, t0)
	out := filepath.Join(filepath.Dir(pp), "out")
	pub1, priv1, err := GenerateKey(nil)
	if err != nil {
		t.Fatal(err)
	}
	pub2, _, _ := GenerateKey(nil)
	if _, err := ParsePublicKey(priv1); err == nil {
		t.Fatal("a private key was accepted as a public key")
	}
	if _, err := ParsePrivateKey(pub1); err == nil {
		t.Fatal("a public key was accepted as a private key")
	}
	key, _ := ParsePrivateKey(priv1)
	writeRun(t, pp, out, t0.Add(time.Hour), key)
	k1, _ := ParsePublicKey(pub1)
	k2, _ := ParsePublicKey(pub2)
	if rep, _ := verifyCodes(t, VerifyOptions{Dir: out, PublicKey: k1, Tool: ToolInfo{Version: "test"}}); !rep.OK() {
		t.Fatalf("good signature rejected: %+v", rep.Deviations)
	}
	rep, m := verifyCodes(t, VerifyOptions{Dir: out, PublicKey: k2, Tool: ToolInfo{Version: "test"}})
	if rep.OK() || !strings.Contains(strings.Join(m[DevRecordEdited], " "), "integrity.signature") {
		t.Fatalf("signature by another key accepted: %+v", rep.Deviations)
	}
	// Re-signing an edited record with another key does not pass the given key.
	b, _ := os.ReadFile(filepath.Join(out, AuditFileName))
	if !bytes.Contains(b, []byte(PublicKeyPrefix)) {
		t.Fatal("signature block has no public key")
	}
	// The run time is outside the content hash but inside the signature:
	// moving it (say, to after an amendment) breaks the signature.
	var rec map[string]any
	if err := json.Unmarshal(b, &rec); err != nil {
		t.Fatal(err)
	}
	moved := strings.Replace(string(b), `"run_at": "`+rec["run_at"].(string)+`"`, `"run_at": "2026-01-01T00:00:00Z"`, 1)
	if moved == string(b) {
		t.Fatal("run_at not found in the record")
	}
	write(t, filepath.Join(out, AuditFileName), moved)
	rep, m = verifyCodes(t, VerifyOptions{Dir: out, PublicKey: k1, Tool: ToolInfo{Version: "test"}})
	if rep.OK() || !strings.Contains(strings.Join(m[DevRecordEdited], " "), "integrity.signature") {
		t.Fatalf("a signed record with a moved run time passed: %+v", rep.Deviations)
	}
}

func TestUnregisteredRun(t *testing.T) {
	pp := writeCascade(t, "1e-12", "1e-12", "1e-12")
	out := filepath.Join(filepath.Dir(pp), "out")
	if _, err := Run(RunOptions{PlanPath: pp, OutDir: out, Now: t0}); err == nil {
		t.Fatal("run without registration accepted")
	}
	r, err := Run(RunOptions{PlanPath: pp, OutDir: out, Now: t0, Unregistered: true, Tool: ToolInfo{Version: "test"}})
	if err != nil {
		t.Fatal(err)
	}
	if !r.Unregistered {
		t.Fatal("record not marked unregistered")
	}
	os.MkdirAll(out, 0o755)
	if err := WriteRecord(out, r, nil); err != nil {
		t.Fatal(err)
	}
	rep, m := verifyCodes(t, VerifyOptions{Dir: out, Tool: ToolInfo{Version: "test"}})
	if rep.OK() || m[DevUnregisteredRun] == nil {
		t.Fatalf("unregistered run passed verify: %v", m)
	}
}
