package render

// Test helpers copied from checker/engine's tests (one copy per package
// until they move to a shared test package).

import (
	"testing"

	"time"

	"furrow/checker/engine"
	"furrow/checker/record"
)

func run(t *testing.T, pp, out string, at time.Time) *record.Result {
	t.Helper()
	r, err := engine.Run(engine.RunOptions{PlanPath: pp, OutDir: out, Now: at, Tool: record.ToolInfo{Name: "furrow", Version: "test"}})
	if err != nil {
		t.Fatalf("run: %v", err)
	}
	return r
}
