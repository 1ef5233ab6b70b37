package verify

import (
	"encoding/json"
	"os"
	"path/filepath"
	"slices"
	"strings"
	"testing"
	"time"

	"furrow/checker/internal/fixture"

	"furrow/checker/record"
)

// TestRecordCopiesAreChecked edits, under a recomputed content hash, the
// fields verify used to skip: the record's copy of the registration, the
// plan positions' plan paths, the plan file's hash and the tool. Each is
// named; the tool and a plan file whose content is unchanged are
// informational.
func TestRecordCopiesAreChecked(t *testing.T) {
	pp := fixture.WriteCascade(t, "0.99999", "1e-12", "1e-12")
	fixture.Register(t, pp, fixture.T0)
	out := filepath.Join(filepath.Dir(pp), "out")
	raw := writeRun(t, pp, out, fixture.T0.Add(time.Hour), nil)
	opt := VerifyOptions{Dir: out, Tool: record.ToolInfo{Name: "furrow", Version: "test", Build: "b1"}}
	rec := decodeRecord(t, raw)
	rec["tool"].(map[string]any)["build"] = "b1"
	fixture.Write(t, filepath.Join(out, record.AuditFileName), string(reseal(t, rec)))
	raw, _ = os.ReadFile(filepath.Join(out, record.AuditFileName))
	if rep, _ := verifyCodes(t, opt); len(rep.Deviations) != 0 {
		t.Fatalf("clean run: %+v", rep.Deviations)
	}
	for _, c := range []struct {
		field string
		code  DeviationCode
		set   any
	}{
		{"inputs.registration.path", DevRecordEdited, "other.registration.json"},
		{"inputs.registration.file_sha256", DevPlanChanged, record.SHA256Hex([]byte("x"))},
		{"inputs.registration.matches", DevRecordEdited, false},
		{"inputs.registration.chain[0].reason", DevRecordEdited, "initial registration, later"},
		{"inputs.registration.chain[0].registered_at", DevRecordEdited, "2026-02-01T09:00:00Z"},
		// An unsigned record: the recorded plan file hash may be the edit
		// itself, so it is a deviation, not a reformatting (issue 11).
		{"inputs.plan_file_sha256", DevPlanFileDiffers, record.SHA256Hex([]byte("x"))},
		{"tool.build", DevToolVersion, "b2"},
		{"tool.name", DevToolVersion, "furrow2"},
	} {
		t.Run(c.field, func(t *testing.T) {
			doc := decodeRecord(t, raw)
			n := 0
			fixture.WalkLeaves("", doc, func(p string, v any, set func(any)) {
				if p == c.field {
					set(c.set)
					n++
				}
			})
			if n != 1 {
				t.Fatalf("field %s not found", c.field)
			}
			fixture.Write(t, filepath.Join(out, record.AuditFileName), string(reseal(t, doc)))
			defer fixture.Write(t, filepath.Join(out, record.AuditFileName), string(raw))
			rep, m := verifyCodes(t, opt)
			if !slices.ContainsFunc(m[c.code], func(f string) bool { return f == c.field || strings.HasPrefix(c.field, f+".") }) {
				t.Fatalf("edit of %s under a recomputed hash: want %s, got %+v", c.field, c.code, rep.Deviations)
			}
			if rep.OK() != c.code.Informational() {
				t.Errorf("edit of %s: verify OK = %v", c.field, rep.OK())
			}
		})
	}
	// A plan position that stands for another plan value.
	t.Run("plan_paths", func(t *testing.T) {
		doc := decodeRecord(t, raw)
		paths := doc["plan_paths"].(map[string]any)
		var pos string
		for k, v := range paths {
			if v == "endpoints[0].steps[0].checks[0]" {
				pos = k
			}
		}
		paths[pos] = "endpoints[0].steps[2].checks[0]"
		fixture.Write(t, filepath.Join(out, record.AuditFileName), string(reseal(t, doc)))
		defer fixture.Write(t, filepath.Join(out, record.AuditFileName), string(raw))
		rep, m := verifyCodes(t, opt)
		b, _ := json.Marshal(pos)
		if rep.OK() || !slices.Contains(m[DevResultsDiffer], "plan_paths["+string(b)+"]") {
			t.Fatalf("edited plan path of %s: %+v", pos, rep.Deviations)
		}
	})
}
