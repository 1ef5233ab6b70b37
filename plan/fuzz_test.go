package plan_test

import (
	"furrow/checker/method"
	"furrow/plan"

	"os"
	"path/filepath"
	"testing"
)

// FuzzParse feeds arbitrary bytes to Parse: it must never panic, never
// return an error, and a returned plan must hash deterministically. The
// committed corpus in testdata/fuzz/FuzzParse is extended here with the
// malformed fixtures and the example plans.
func FuzzParse(f *testing.F) {
	for _, pat := range []string{"testdata/*.yaml", "../testdata/plans/*.yaml", "../examples/*/plan.yaml"} {
		files, _ := filepath.Glob(pat)
		for _, file := range files {
			if src, err := os.ReadFile(file); err == nil {
				f.Add(src)
			}
		}
	}
	f.Fuzz(func(t *testing.T, src []byte) {
		p, ds, err := plan.Parse("fuzz.yaml", src, method.Default)
		if err != nil {
			t.Fatalf("Parse returned an error: %v", err)
		}
		if p == nil && len(ds) == 0 {
			t.Fatal("no plan and no diagnostics")
		}
		for _, d := range ds {
			if d.Summary == "" {
				t.Fatalf("empty summary: %+v", d)
			}
		}
		if p != nil && plan.Hash(p) != plan.Hash(p) {
			t.Fatal("hash not deterministic")
		}
	})
}
