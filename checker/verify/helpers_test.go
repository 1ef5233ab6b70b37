package verify

// Test helpers copied from checker/engine's tests (one copy per package
// until they move to a shared test package).

import (
	"testing"

	"furrow/checker/internal/fixture"

	"time"

	"crypto/ed25519"
	"os"
	"path/filepath"

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

func writeRun(t *testing.T, pp, out string, at time.Time, key ed25519.PrivateKey) []byte {
	t.Helper()
	return fixture.WriteRecordFile(t, out, run(t, pp, out, at), key)
}

// rankRun writes the plan and data into a fresh folder, registers the
// plan and runs it. twoLevels keeps the control and a only.
func rankRun(t *testing.T, twoLevels bool, steps, hyps string) (*record.Result, string) {
	t.Helper()
	b, err := os.ReadFile(filepath.Join("..", "engine", "testdata", "rank", "plots.csv"))
	if err != nil {
		t.Fatal(err)
	}
	pp := fixture.WriteRank(t, b, twoLevels, steps, hyps)
	return run(t, pp, filepath.Join(filepath.Dir(pp), "out"), fixture.T0.Add(time.Hour)), pp
}
