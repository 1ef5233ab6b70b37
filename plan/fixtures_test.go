package plan_test

import (
	"furrow/checker/method"
	"furrow/internal/testkit"
	"furrow/plan"

	"flag"
	"os"
	"path/filepath"
	"strings"
	"testing"
)

var update = flag.Bool("update", false, "rewrite the golden .want files of testdata/plans and the README plan reference")

// formatDiags renders diagnostics one a line as "pos: summary", with
// "warning: " before the summary of warnings.
func formatDiags(ds plan.Diagnostics) string {
	var b strings.Builder
	for _, d := range ds {
		b.WriteString(d.Pos.String())
		b.WriteString(": ")
		if d.Severity == plan.Warning {
			b.WriteString("warning: ")
		}
		b.WriteString(d.Summary)
		b.WriteByte('\n')
	}
	return b.String()
}

// TestMalformedPlans loads every fixture in ../testdata/plans (positions
// use the base name) and compares its diagnostics with <name>.want.
// Regenerate with: go test ./plan -run TestMalformedPlans -update
func TestMalformedPlans(t *testing.T) {
	files, err := filepath.Glob("../testdata/plans/*.yaml")
	if err != nil {
		t.Fatal(err)
	}
	if len(files) < 20 {
		t.Fatalf("found %d plan fixtures, want at least 20", len(files))
	}
	for _, f := range files {
		name := filepath.Base(f)
		t.Run(strings.TrimSuffix(name, ".yaml"), func(t *testing.T) {
			src, err := os.ReadFile(f)
			if err != nil {
				t.Fatal(err)
			}
			_, ds, err := plan.Parse(name, src, method.Default)
			if err != nil {
				t.Fatalf("Parse: unexpected error %v", err)
			}
			if len(ds) == 0 {
				t.Fatalf("no diagnostics for a malformed plan")
			}
			got := formatDiags(ds)
			testkit.Golden(t, strings.TrimSuffix(f, ".yaml")+".want", []byte(got), *update, "go test ./plan -run TestMalformedPlans -update")
			for _, d := range ds {
				if d.Code == "" {
					t.Errorf("diagnostic without a code: %s", d.Error())
				}
				if strings.Contains(d.Summary, "/") && strings.Contains(d.Summary, "#/") {
					t.Errorf("summary leaks a JSON pointer: %s", d.Summary)
				}
			}
		})
	}
}
