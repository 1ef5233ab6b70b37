package plan_test

import (
	"furrow/checker/method"
	"furrow/plan"

	"os"
	"path/filepath"
	"regexp"
	"testing"

	"gopkg.in/yaml.v3"
)

// This file holds FuzzValidate: structural mutations of valid plans (values
// swapped or copied between keys, keys dropped, list items duplicated,
// removed or reordered, values replaced by odd scalars or by empty
// collections) so that the fuzzer spends its time in the semantic checks
// rather than in the YAML reader, which FuzzParse covers.

// validatePalette holds the scalar texts a mutation can write.
var validatePalette = []string{
	"", "0", "-1", "1e308", "-1e308", "5e-324", ".nan", ".inf", "-.inf", "null", "~",
	"true", "1000000000000", "x", "s1", "s2", "treatment", "plot", "time", "before",
	"2026-02-30", "1.0", "0.5", "2", "3", "linear", "mixed", "friedman", "none",
}

// mutatePlanYAML decodes src as YAML, applies the mutations in ops (three
// bytes each: kind, i, j) and returns the re-encoded document. ok is false
// when src is not a YAML document or re-encoding fails.
func mutatePlanYAML(src []byte, ops []byte) (out []byte, ok bool) {
	var doc yaml.Node
	if err := yaml.Unmarshal(src, &doc); err != nil || doc.Kind != yaml.DocumentNode {
		return nil, false
	}
	for k := 0; k+2 < len(ops) && k/3 < 16; k += 3 {
		var scalars, maps, seqs, all []*yaml.Node
		var walk func(n *yaml.Node, depth int)
		walk = func(n *yaml.Node, depth int) {
			if depth > 64 {
				return
			}
			all = append(all, n)
			switch n.Kind {
			case yaml.ScalarNode:
				scalars = append(scalars, n)
			case yaml.MappingNode:
				maps = append(maps, n)
			case yaml.SequenceNode:
				seqs = append(seqs, n)
			}
			for _, c := range n.Content {
				walk(c, depth+1)
			}
		}
		walk(&doc, 0)
		kind, i, j := ops[k]%8, int(ops[k+1]), int(ops[k+2])
		switch kind {
		case 0: // swap two scalar values
			if len(scalars) > 1 {
				a, b := scalars[i%len(scalars)], scalars[j%len(scalars)]
				a.Value, b.Value = b.Value, a.Value
				a.Tag, b.Tag = "", ""
			}
		case 1: // copy one scalar's value into another (references, cycles)
			if len(scalars) > 1 {
				a, b := scalars[i%len(scalars)], scalars[j%len(scalars)]
				a.Value, a.Tag, a.Style = b.Value, "", 0
			}
		case 2: // drop a key of a mapping
			if len(maps) > 0 {
				m := maps[i%len(maps)]
				if n := len(m.Content) / 2; n > 0 {
					p := j % n
					m.Content = append(m.Content[:2*p], m.Content[2*p+2:]...)
				}
			}
		case 3: // duplicate a list item (a step, a check, a column)
			if len(seqs) > 0 {
				s := seqs[i%len(seqs)]
				if n := len(s.Content); n > 0 && n < 64 {
					p := j % n
					c := deepCopyNode(s.Content[p], 0)
					s.Content = append(s.Content[:p+1], append([]*yaml.Node{c}, s.Content[p+1:]...)...)
				}
			}
		case 4: // remove a list item
			if len(seqs) > 0 {
				s := seqs[i%len(seqs)]
				if n := len(s.Content); n > 0 {
					p := j % n
					s.Content = append(s.Content[:p], s.Content[p+1:]...)
				}
			}
		case 5: // write an odd scalar
			if len(scalars) > 0 {
				a := scalars[i%len(scalars)]
				a.Value, a.Tag, a.Style = validatePalette[j%len(validatePalette)], "", 0
			}
		case 6: // reverse a list (step order)
			if len(seqs) > 0 {
				s := seqs[i%len(seqs)]
				for l, r := 0, len(s.Content)-1; l < r; l, r = l+1, r-1 {
					s.Content[l], s.Content[r] = s.Content[r], s.Content[l]
				}
			}
		case 7: // replace a node by an empty mapping, an empty list or a scalar
			if len(all) > 1 {
				n := all[1+i%(len(all)-1)]
				switch j % 3 {
				case 0:
					*n = yaml.Node{Kind: yaml.MappingNode, Tag: "!!map"}
				case 1:
					*n = yaml.Node{Kind: yaml.SequenceNode, Tag: "!!seq"}
				default:
					*n = yaml.Node{Kind: yaml.ScalarNode, Value: validatePalette[j%len(validatePalette)]}
				}
			}
		}
	}
	b, err := yaml.Marshal(&doc)
	if err != nil {
		return nil, false
	}
	return b, true
}

func deepCopyNode(n *yaml.Node, depth int) *yaml.Node {
	c := *n
	if depth > 64 {
		c.Content = nil
		return &c
	}
	c.Content = make([]*yaml.Node, len(n.Content))
	for i, x := range n.Content {
		c.Content[i] = deepCopyNode(x, depth+1)
	}
	return &c
}

// validateSeedPlans returns the example plans and fixtures the corpus starts from.
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
		mut, ok := mutatePlanYAML(src, ops)
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
