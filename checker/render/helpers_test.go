package render

// Test helpers copied from checker/engine's tests (one copy per package
// until they move to a shared test package).

import (
	"testing"

	"time"

	"furrow/checker/engine"
	"furrow/checker/record"
	"os"
)

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
