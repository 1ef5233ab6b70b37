package verify

import (
	"os"
	"path/filepath"
	"slices"
	"strings"
	"testing"
	"time"

	"furrow/checker/internal/fixture"

	"furrow/checker/record"
)

// TestVerifyCoversTheRunFolder edits, removes and adds files of a run
// folder written by record.WriteRun, the record untouched: each is a
// report-edited deviation naming the file.
func TestVerifyCoversTheRunFolder(t *testing.T) {
	pp := fixture.WriteCascade(t, "0.99999", "1e-12", "1e-12")
	fixture.Register(t, pp, fixture.T0)
	out := filepath.Join(filepath.Dir(pp), "out")
	r := run(t, pp, out, fixture.T0.Add(time.Hour))
	fill := func(tmp string) error {
		os.MkdirAll(filepath.Join(tmp, "tables"), 0o755)
		os.WriteFile(filepath.Join(tmp, "tables", "checks.csv"), []byte("test,p\n"), 0o644)
		return os.WriteFile(filepath.Join(tmp, "report.md"), []byte("yield: step first accepted\n"), 0o644)
	}
	if err := record.WriteRun(out, r, nil, false, fill); err != nil {
		t.Fatal(err)
	}
	if got := len(r.Files); got != 2 {
		t.Fatalf("the record lists %d files, want 2: %+v", got, r.Files)
	}
	opt := VerifyOptions{Dir: out, Tool: record.ToolInfo{Version: "test"}}
	if rep, _ := verifyCodes(t, opt); len(rep.Deviations) != 0 {
		t.Fatalf("clean run folder: %+v", rep.Deviations)
	}
	report := filepath.Join(out, "report.md")
	orig, _ := os.ReadFile(report)
	for _, c := range []struct {
		name    string
		edit    func()
		summary string
	}{
		{"edited", func() { fixture.Write(t, report, strings.Replace(string(orig), "accepted", "REJECTED", 1)) }, "report.md is not the file the run wrote"},
		{"removed", func() { os.Remove(report) }, "report.md, which the run wrote, is not in the run folder"},
		{"added", func() { fixture.Write(t, filepath.Join(out, "tables", "extra.csv"), "x\n") }, "tables/extra.csv is in the run folder but is not one of the files the run wrote"},
	} {
		t.Run(c.name, func(t *testing.T) {
			c.edit()
			defer func() {
				fixture.Write(t, report, string(orig))
				os.Remove(filepath.Join(out, "tables", "extra.csv"))
			}()
			rep, m := verifyCodes(t, opt)
			if rep.OK() || m[DevReportEdited] == nil || m[DevRecordEdited] != nil {
				t.Fatalf("%s report: %+v", c.name, rep.Deviations)
			}
			if !slices.ContainsFunc(rep.Deviations, func(d Deviation) bool { return strings.HasPrefix(d.Summary, c.summary) }) {
				t.Errorf("no deviation says %q: %+v", c.summary, rep.Deviations)
			}
		})
	}
	// A listed path outside the folder is refused, not read, even under a
	// recomputed content hash.
	raw, _ := os.ReadFile(filepath.Join(out, record.AuditFileName))
	doc := decodeRecord(t, raw)
	doc["files"].([]any)[0].(map[string]any)["path"] = "../plan.yaml"
	fixture.Write(t, filepath.Join(out, record.AuditFileName), string(reseal(t, doc)))
	if _, m := verifyCodes(t, opt); !slices.Contains(m[DevRecordEdited], "files[0].path") {
		t.Errorf("a listed path outside the run folder: %v", m)
	}
}
