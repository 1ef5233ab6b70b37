package testkit

import "gopkg.in/yaml.v3"

// Palette holds the scalar texts a mutation can write: numbers at the
// float64 limits, YAML special values, dates, and names the example plans use.
var Palette = []string{
	"", "0", "-1", "1e308", "-1e308", "5e-324", ".nan", ".inf", "-.inf", "null", "~",
	"true", "1000000000000", "x", "s1", "s2", "treatment", "plot", "time", "before",
	"2026-02-30", "1.0", "0.5", "2", "3", "linear", "mixed", "friedman", "none",
}

// MutateYAML is the structural mutator of the plan fuzzers (plan's
// FuzzValidate, checker's FuzzExplain): it decodes src as YAML, applies the
// mutations in ops (three bytes each: kind, i, j; at most 16) and returns
// the re-encoded document. The mutations swap or copy scalar values, drop
// a key, duplicate, remove or reorder list items, write a Palette value,
// or replace a node by an empty collection, so that the fuzzer spends its
// time in the semantic checks rather than the YAML reader. ok is false
// when src is not a YAML document or re-encoding fails. src is not modified.
func MutateYAML(src []byte, ops []byte) (out []byte, ok bool) {
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
				a.Value, a.Tag, a.Style = Palette[j%len(Palette)], "", 0
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
					*n = yaml.Node{Kind: yaml.ScalarNode, Value: Palette[j%len(Palette)]}
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
