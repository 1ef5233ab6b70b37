package verify

import (
	"bytes"
	"crypto/ed25519"
	"encoding/base64"
	"encoding/json"
	"errors"
	"os"
	"path/filepath"
	"runtime"
	"slices"
	"strings"
	"testing"
	"time"

	"furrow/checker/internal/fixture"

	"furrow/checker/engine"
	"furrow/checker/record"
)

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
	pp := fixture.WriteCascade(t, "0.99999", "1e-12", "1e-12")
	fixture.Register(t, pp, fixture.T0)
	dir := filepath.Dir(pp)
	out := filepath.Join(dir, "out")
	orig := writeRun(t, pp, out, fixture.T0.Add(time.Hour), nil)
	rec := filepath.Join(out, record.AuditFileName)
	if rep, _ := verifyCodes(t, VerifyOptions{Dir: out, Tool: record.ToolInfo{Version: "test"}}); !rep.OK() || len(rep.Deviations) != 0 {
		t.Fatalf("clean run: %+v", rep.Deviations)
	}
	edits := []struct {
		name, old, new string
		field          string
	}{
		{"decision", `"reason": "checks-passed"`, `"reason": "no-checks"`, "endpoints[0].steps[1].decision.reason"},
		{"verdict", `"verdict": "fail"`, `"verdict": "pass"`, "endpoints[0].steps[0].checks[0].verdict"},
		{"count", `"rows_kept": 17`, `"rows_kept": 18`, "inputs.rows_kept"},
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
			fixture.Write(t, rec, edited)
			defer fixture.Write(t, rec, string(orig))
			rep, m := verifyCodes(t, VerifyOptions{Dir: out, Tool: record.ToolInfo{Version: "test"}})
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
		var r record.Result
		rr, raw, err := record.ReadRecord(out)
		if err != nil {
			t.Fatal(err)
		}
		_ = raw
		r = *rr
		r.Endpoints[0].Steps[1].Checks[0].P *= 1.001
		b, _ := record.EncodeRecord(&r)
		fixture.Write(t, rec, string(b))
		defer fixture.Write(t, rec, string(orig))
		rep, m := verifyCodes(t, VerifyOptions{Dir: out, Tool: record.ToolInfo{Version: "test"}})
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
		fixture.Write(t, rec, edited)
		defer fixture.Write(t, rec, string(orig))
		rep, m := verifyCodes(t, VerifyOptions{Dir: out, Tool: record.ToolInfo{Version: "test"}})
		if rep.OK() || !slices.Contains(m[DevRecordEdited], "run_at") {
			t.Fatalf("unparsable run_at not caught: %v", m)
		}
	})
	t.Run("data edited", func(t *testing.T) {
		dp := filepath.Join(dir, "data.csv")
		d, _ := os.ReadFile(dp)
		fixture.Write(t, dp, strings.Replace(string(d), "u1,control,", "u1,control,1", 1))
		defer fixture.Write(t, dp, string(d))
		_, m := verifyCodes(t, VerifyOptions{Dir: out, Tool: record.ToolInfo{Version: "test"}})
		if m[DevDataChanged] == nil {
			t.Fatalf("data edit not caught: %v", m)
		}
	})
	t.Run("plan edited after registration", func(t *testing.T) {
		pb, _ := os.ReadFile(pp)
		fixture.Write(t, pp, strings.Replace(string(pb), "adjust: holm", "adjust: bonferroni", 1))
		defer fixture.Write(t, pp, string(pb))
		_, m := verifyCodes(t, VerifyOptions{Dir: out, Tool: record.ToolInfo{Version: "test"}})
		if m[DevPlanChanged] == nil {
			t.Fatalf("plan edit not caught: %v", m)
		}
		// And run refuses it.
		if _, err := engine.Run(engine.RunOptions{PlanPath: pp, OutDir: out, Now: fixture.T0}); err == nil {
			t.Error("run accepted a plan that differs from its registration")
		}
	})
	t.Run("tool version informational", func(t *testing.T) {
		rep, m := verifyCodes(t, VerifyOptions{Dir: out, Tool: record.ToolInfo{Version: "other"}})
		if !rep.OK() || m[DevToolVersion] == nil {
			t.Fatalf("tool version: ok=%v %v", rep.OK(), m)
		}
	})
}

func TestRegistrationChain(t *testing.T) {
	pp := fixture.WriteCascade(t, "1e-12", "1e-12", "1e-12")
	fixture.Register(t, pp, fixture.T0)
	pb, _ := os.ReadFile(pp)
	// Amending without a new version is refused.
	fixture.Write(t, pp, strings.Replace(string(pb), "adjust: holm", "adjust: hochberg", 1))
	if _, _, err := record.Register(pp, record.RegisterOptions{Now: fixture.T0.Add(time.Hour), GitCommit: func(string) string { return "" }}); err == nil {
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
	fixture.Write(t, pp, amended)
	res, ds, err := record.Register(pp, record.RegisterOptions{Now: fixture.T0.Add(24 * time.Hour), GitCommit: func(string) string { return "" }})
	if err != nil {
		t.Fatalf("amendment: %v %v", err, ds)
	}
	if !res.Amendment || res.Entry.Seq != 2 || res.Entry.Reason != "step-up procedure preferred" {
		t.Fatalf("amendment entry %+v", res.Entry)
	}
	reg, _, err := record.ReadRegistration(record.RegistrationPath(pp))
	if err != nil {
		t.Fatal(err)
	}
	if errs := reg.CheckChain(); errs != nil || reg.Entries[1].Previous != reg.Entries[0].EntryHash {
		t.Fatalf("fresh chain broken: %v", errs)
	}
	// Run after the amendment, then register another amendment: verify
	// reports an amendment after data lock.
	out := filepath.Join(filepath.Dir(pp), "out")
	writeRun(t, pp, out, fixture.T0.Add(48*time.Hour), nil)
	// Break a link: rewrite the first entry's reason.
	rp := record.RegistrationPath(pp)
	rb, _ := os.ReadFile(rp)
	fixture.Write(t, rp, strings.Replace(string(rb), "initial registration", "initial registration (edited)", 1))
	reg2, _, _ := record.ReadRegistration(rp)
	errs := reg2.CheckChain()
	if len(errs) == 0 {
		t.Fatal("edited entry not caught")
	}
	_, m := verifyCodes(t, VerifyOptions{Dir: out, Tool: record.ToolInfo{Version: "test"}})
	if m[DevPlanChanged] == nil {
		t.Fatalf("broken chain not reported by verify: %v", m)
	}
	if _, _, err := record.Register(pp, record.RegisterOptions{Now: fixture.T0.Add(50 * time.Hour), GitCommit: func(string) string { return "" }}); err == nil {
		t.Error("register accepted a broken record")
	}
	fixture.Write(t, rp, string(rb))
	// An amendment registered after the run.
	amended2 := strings.Replace(strings.Replace(strings.Replace(amended, "adjust: hochberg", "adjust: bonferroni", 1),
		`version: "1.1"
  amendments:`, `version: "1.2"
  amendments:`, 1), `changes: adjust holm -> hochberg`, `changes: adjust holm -> hochberg
    - version: "1.2"
      date: "2026-03-04"
      reason: late change
      changes: adjust`, 1)
	fixture.Write(t, pp, amended2)
	if _, ds, err := record.Register(pp, record.RegisterOptions{Now: fixture.T0.Add(72 * time.Hour), GitCommit: func(string) string { return "" }}); err != nil {
		t.Fatal(err, ds)
	}
	fixture.Write(t, pp, amended) // the plan as it was run
	_, m = verifyCodes(t, VerifyOptions{Dir: out, Tool: record.ToolInfo{Version: "test"}})
	if m[DevAmendmentAfterLock] == nil {
		t.Fatalf("amendment after the run not reported: %v", m)
	}
}

func TestSignature(t *testing.T) {
	pp := fixture.WriteCascade(t, "1e-12", "1e-12", "1e-12")
	fixture.Register(t, pp, fixture.T0)
	out := filepath.Join(filepath.Dir(pp), "out")
	pub1, priv1, err := record.GenerateKey(nil)
	if err != nil {
		t.Fatal(err)
	}
	pub2, _, _ := record.GenerateKey(nil)
	if _, err := record.ParsePublicKey(priv1); err == nil {
		t.Fatal("a private key was accepted as a public key")
	}
	if _, err := record.ParsePrivateKey(pub1); err == nil {
		t.Fatal("a public key was accepted as a private key")
	}
	key, _ := record.ParsePrivateKey(priv1)
	writeRun(t, pp, out, fixture.T0.Add(time.Hour), key)
	k1, _ := record.ParsePublicKey(pub1)
	k2, _ := record.ParsePublicKey(pub2)
	if rep, _ := verifyCodes(t, VerifyOptions{Dir: out, PublicKey: k1, Tool: record.ToolInfo{Version: "test"}}); !rep.OK() {
		t.Fatalf("good signature rejected: %+v", rep.Deviations)
	} else if s := rep.Signature; s == nil || !s.Signed || !s.Valid || !s.KeyGiven || s.Key != record.Fingerprint(k1) || len(s.Key) != len("sha256:")+16 {
		t.Fatalf("signature info %+v, want signed and valid by %s", s, record.Fingerprint(k1))
	}
	rep, m := verifyCodes(t, VerifyOptions{Dir: out, PublicKey: k2, Tool: record.ToolInfo{Version: "test"}})
	if rep.OK() || !strings.Contains(strings.Join(m[DevRecordEdited], " "), "integrity.signature") {
		t.Fatalf("signature by another key accepted: %+v", rep.Deviations)
	}
	// Re-signing an edited record with another key does not pass the given key.
	b, _ := os.ReadFile(filepath.Join(out, record.AuditFileName))
	if !bytes.Contains(b, []byte(record.PublicKeyPrefix)) {
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
	fixture.Write(t, filepath.Join(out, record.AuditFileName), moved)
	rep, m = verifyCodes(t, VerifyOptions{Dir: out, PublicKey: k1, Tool: record.ToolInfo{Version: "test"}})
	if rep.OK() || !strings.Contains(strings.Join(m[DevRecordEdited], " "), "integrity.signature") {
		t.Fatalf("a signed record with a moved run time passed: %+v", rep.Deviations)
	}
	if rep.Signature == nil || rep.Signature.Valid {
		t.Errorf("a broken signature reported as valid: %+v", rep.Signature)
	}

	// Re-signed: an edited record sealed again with another key is whole,
	// but verify names the other key, and --key with the first refuses it.
	rec2, _, err := record.ReadRecord(out)
	if err != nil {
		t.Fatal(err)
	}
	rec2.RunAt = "2026-03-01T09:30:00Z"
	_, priv2, _ := record.GenerateKey(nil)
	key2, _ := record.ParsePrivateKey(priv2)
	if err := record.Seal(rec2, key2); err != nil {
		t.Fatal(err)
	}
	b2, _ := record.EncodeRecord(rec2)
	fixture.Write(t, filepath.Join(out, record.AuditFileName), string(b2))
	rep, _ = verifyCodes(t, VerifyOptions{Dir: out, Tool: record.ToolInfo{Version: "test"}})
	k2pub := key2.Public().(ed25519.PublicKey)
	if s := rep.Signature; s == nil || !s.Valid || s.KeyGiven || s.Key != record.Fingerprint(k2pub) || s.Key == record.Fingerprint(k1) {
		t.Errorf("re-signed record: signature info %+v, want valid by %s", s, record.Fingerprint(k2pub))
	}
	rep, m = verifyCodes(t, VerifyOptions{Dir: out, PublicKey: k1, Tool: record.ToolInfo{Version: "test"}})
	if rep.OK() || !strings.Contains(strings.Join(m[DevRecordEdited], " "), "integrity.signature") {
		t.Errorf("re-signed record passed --key with the first key: %+v", rep.Deviations)
	}

	// One key, one spelling: a public key whose base64 differs only in its
	// padding bits (the same 32 bytes under lenient decoding) is refused.
	sig := rec2.Integrity.Signature
	txt := strings.TrimPrefix(sig.PublicKey, record.PublicKeyPrefix)
	last := txt[len(txt)-2] // the character before "=" carries 2 padding bits
	const b64 = "ABCDEFGHIJKLMNOPQRSTUVWXYZabcdefghijklmnopqrstuvwxyz0123456789+/"
	alias := txt[:len(txt)-2] + string(b64[strings.IndexByte(b64, last)^1]) + "="
	if lenient, err := base64.StdEncoding.DecodeString(alias); err != nil || !bytes.Equal(lenient, k2pub) {
		t.Fatalf("alias %q does not decode to the same key leniently: %v", alias, err)
	}
	sig.PublicKey = record.PublicKeyPrefix + alias
	b3, _ := record.EncodeRecord(rec2)
	fixture.Write(t, filepath.Join(out, record.AuditFileName), string(b3))
	if rep, _ := verifyCodes(t, VerifyOptions{Dir: out, Tool: record.ToolInfo{Version: "test"}}); rep.OK() {
		t.Errorf("a public key spelt another way passed: %+v", rep.Signature)
	}
}

// TestReadPrivateKeyFile refuses a key file its group or others may read.
func TestReadPrivateKeyFile(t *testing.T) {
	if runtime.GOOS == "windows" {
		t.Skip("no mode bits on Windows")
	}
	_, priv, _ := record.GenerateKey(nil)
	p := filepath.Join(t.TempDir(), "k.key")
	for _, c := range []struct {
		mode os.FileMode
		ok   bool
	}{{0o600, true}, {0o400, true}, {0o640, false}, {0o604, false}, {0o644, false}} {
		fixture.Write(t, p, priv)
		os.Chmod(p, c.mode)
		_, err := record.ReadPrivateKeyFile(p)
		var me *record.KeyModeError
		if c.ok != (err == nil) || (!c.ok && !errors.As(err, &me)) {
			t.Errorf("mode %04o: %v", c.mode, err)
		}
	}
}

func TestUnregisteredRun(t *testing.T) {
	pp := fixture.WriteCascade(t, "1e-12", "1e-12", "1e-12")
	out := filepath.Join(filepath.Dir(pp), "out")
	if _, err := engine.Run(engine.RunOptions{PlanPath: pp, OutDir: out, Now: fixture.T0}); err == nil {
		t.Fatal("run without registration accepted")
	}
	r, err := engine.Run(engine.RunOptions{PlanPath: pp, OutDir: out, Now: fixture.T0, Unregistered: true, Tool: record.ToolInfo{Version: "test"}})
	if err != nil {
		t.Fatal(err)
	}
	if !r.Unregistered {
		t.Fatal("record not marked unregistered")
	}
	os.MkdirAll(out, 0o755)
	if err := record.WriteRecord(out, r, nil); err != nil {
		t.Fatal(err)
	}
	rep, m := verifyCodes(t, VerifyOptions{Dir: out, Tool: record.ToolInfo{Version: "test"}})
	if rep.OK() || m[DevUnregisteredRun] == nil {
		t.Fatalf("unregistered run passed verify: %v", m)
	}
}

// A record with a rank step validates against the published schema and
// verifies clean when re-run.
func TestRankRecordVerifies(t *testing.T) {
	_, pp := rankRun(t, false, "      - id: ve\n        model: van-elteren\n"+fixture.ChangeLog+"        compare: treatment\n        within: site\n        answers:\n          - hypothesis: vs\n            estimate: hodges-lehmann\n",
		"      - id: vs\n        kind: versus-control\n        adjust: holm\n")
	out := filepath.Join(filepath.Dir(pp), "rec")
	writeRun(t, pp, out, fixture.T0.Add(2*time.Hour), nil)
	rep, err := Verify(VerifyOptions{Dir: out, Tool: record.ToolInfo{Version: "test"}})
	if err != nil {
		t.Fatal(err)
	}
	if !rep.OK() {
		t.Fatalf("deviations: %+v", rep.Deviations)
	}
}

// plainPair fails the test for a deviation whose recorded / now pair is
// empty on one side or the same on both, or that has no summary.
func plainPair(t *testing.T, where string, devs []Deviation) {
	t.Helper()
	for _, d := range devs {
		if d.Summary == "" {
			t.Errorf("%s: %s %s: no summary", where, d.Code, d.Field)
		}
		if (d.Recorded == "") != (d.Now == "") || (d.Recorded != "" && d.Recorded == d.Now) {
			t.Errorf("%s: %s %s: recorded %q, now %q", where, d.Code, d.Field, d.Recorded, d.Now)
		}
	}
}

// Long values that differ only late still read differently.
func TestPairTextShowsTheDifference(t *testing.T) {
	prefix := strings.Repeat("the plan moves on to the next step; ", 4)
	var devs []Deviation
	compareJSON("", map[string]any{"detail": prefix + "p = 0.01"}, map[string]any{"detail": prefix + "p = 0.02"}, DefaultRelTol, &devs)
	if len(devs) != 1 {
		t.Fatalf("want one deviation, got %+v", devs)
	}
	d := devs[0]
	if d.Recorded == d.Now || !strings.Contains(d.Recorded, "0.01") || !strings.Contains(d.Now, "0.02") || len(d.Recorded) > maxPairText+6 {
		t.Errorf("recorded %q, now %q", d.Recorded, d.Now)
	}
	// A string and a number with the same text differ.
	devs = nil
	compareJSON("", map[string]any{"n": "8"}, map[string]any{"n": json.Number("8")}, DefaultRelTol, &devs)
	if len(devs) != 1 || devs[0].Recorded == devs[0].Now {
		t.Errorf("string versus number: %+v", devs)
	}
}

// No deviation Verify reports has an empty or an identical recorded / now pair.
func TestDeviationPairsArePlain(t *testing.T) {
	pp := fixture.WriteCascade(t, "0.99999", "1e-12", "1e-12")
	dir := filepath.Dir(pp)
	// An unregistered run.
	r, err := engine.Run(engine.RunOptions{PlanPath: pp, OutDir: filepath.Join(dir, "unreg"), Now: fixture.T0, Unregistered: true, Tool: record.ToolInfo{Version: "test"}})
	if err != nil {
		t.Fatal(err)
	}
	os.MkdirAll(filepath.Join(dir, "unreg"), 0o755)
	if err := record.WriteRecord(filepath.Join(dir, "unreg"), r, nil); err != nil {
		t.Fatal(err)
	}
	rep, m := verifyCodes(t, VerifyOptions{Dir: filepath.Join(dir, "unreg"), Tool: record.ToolInfo{Version: "other"}})
	if m[DevUnregisteredRun] == nil || m[DevToolVersion] == nil {
		t.Fatalf("unregistered: %v", m)
	}
	plainPair(t, "unregistered", rep.Deviations)

	// A run dated before its registration, then an edited record with a
	// step the plan does not declare.
	fixture.Register(t, pp, fixture.T0.Add(time.Hour))
	out := filepath.Join(dir, "out")
	orig := writeRun(t, pp, out, fixture.T0, nil)
	rep, m = verifyCodes(t, VerifyOptions{Dir: out, Tool: record.ToolInfo{Version: "test"}})
	if m[DevPlanChanged] == nil {
		t.Fatalf("run before registration: %v", m)
	}
	plainPair(t, "run before registration", rep.Deviations)
	fixture.Write(t, filepath.Join(out, record.AuditFileName), strings.Replace(string(orig), `"id": "second"`, `"id": "extra"`, 1))
	rep, m = verifyCodes(t, VerifyOptions{Dir: out, Tool: record.ToolInfo{Version: "test"}})
	if m[DevStepNotDeclared] == nil || m[DevRecordEdited] == nil {
		t.Fatalf("undeclared step: %v", m)
	}
	plainPair(t, "undeclared step", rep.Deviations)
}
