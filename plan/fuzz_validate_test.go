package plan_test

import (
	"furrow/checker/method"
	"furrow/internal/testkit"
	"furrow/plan"

	"os"
	"path/filepath"
	"regexp"
	"testing"
)

// This file holds FuzzValidate: structural mutations of valid plans (values
// swapped or copied between keys, keys dropped, list items duplicated,
// removed or reordered, values replaced by odd scalars or by empty
// collections) so that the fuzzer spends its time in the semantic checks
// rather than in the YAML reader, which FuzzParse covers.

func validateSeedPlans() [][]byte {
	var out [][]byte
	for _, pat := range []string{"testdata/*.yaml", "../examples/*/plan.yaml"} {
		files, _ := filepath.Glob(pat)
		for _, file := range files {
			if src, err := os.ReadFile(file); err == nil {
				out = append(out, src)
			}
		}
	}
	return out
}

var hashForm = regexp.MustCompile(`^sha256:[0-9a-f]{64}$`)

// FuzzValidate mutates valid plans structurally: Parse must never panic or
// return an error, every finding has a summary and a code, and a plan
// without errors has a canonical form and a well-formed, deterministic
// hash that does not change when the same bytes are parsed again. Run it
// with go test -fuzz=FuzzValidate ./plan.
func FuzzValidate(f *testing.F) {
	for _, src := range validateSeedPlans() {
		f.Add(src, []byte{})
		f.Add(src, []byte{3, 0, 0})  // a duplicated list item
		f.Add(src, []byte{2, 5, 1})  // a dropped key
		f.Add(src, []byte{6, 9, 0})  // a reversed list
		f.Add(src, []byte{1, 40, 9}) // a copied value
	}
	f.Fuzz(func(t *testing.T, src, ops []byte) {
		if len(src) > 1<<14 {
			return
		}
		mut, ok := testkit.MutateYAML(src, ops)
		if !ok {
			mut = src
		}
		if len(mut) > 1<<16 {
			return // duplications can grow a plan; bound the work
		}
		p, ds, err := plan.Parse("fuzz.yaml", mut, method.Default)
		if err != nil {
			t.Fatalf("Parse returned an error: %v\n%s", err, mut)
		}
		for _, d := range ds {
			if d.Summary == "" || d.Code == "" {
				t.Fatalf("empty finding %+v\n%s", d, mut)
			}
		}
		if p == nil {
			if !ds.HasErrors() {
				t.Fatalf("no plan and no error finding\n%s", mut)
			}
			return
		}
		if ds.HasErrors() {
			return
		}
		if len(plan.Canonical(p)) == 0 {
			t.Fatalf("empty canonical form\n%s", mut)
		}
		h := plan.Hash(p)
		if !hashForm.MatchString(h) {
			t.Fatalf("hash %q is not of the form sha256:<hex>", h)
		}
		p2, _, _ := plan.Parse("fuzz.yaml", mut, method.Default)
		if p2 == nil || plan.Hash(p2) != h {
			t.Fatalf("hash differs between two parses of the same bytes\n%s", mut)
		}
	})
}
