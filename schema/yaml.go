package schema

import (
	"math"
	"strconv"
	"strings"

	"gopkg.in/yaml.v3"
)

// maxDepth bounds the nesting of a converted document. Plans nest a few
// levels deep; anything deeper is refused rather than walked.
const maxDepth = 64

// Index maps JSON pointers ("" for the root, "/columns/2/role") to the
// positions of the YAML nodes they came from.
type Index map[string]Where

// Where is the position of one value and, for a mapping member, of its key.
type Where struct {
	Line, Column       int // the value
	KeyLine, KeyColumn int // the key (0 for array elements and the root)
	node               *yaml.Node
	refused            bool // a problem was reported here during conversion
}

// Node returns the YAML node the value came from (nil when unknown).
func (w Where) Node() *yaml.Node { return w.node }

// FromYAML converts a YAML node tree to JSON values (map[string]any,
// []any, string, float64, bool, nil) and indexes each value's position by
// its JSON pointer. Scalars keep their text as written when tagged as
// strings or timestamps; numbers become float64. It never follows aliases:
// an alias or anchor is a problem, as are custom tags, merge keys,
// duplicate keys, non-string keys, non-finite numbers and nesting deeper
// than a plan can need. Values with problems are left out of the result.
func FromYAML(n *yaml.Node) (any, Index, []Problem) {
	c := converter{ix: Index{}}
	if n == nil {
		return nil, c.ix, nil
	}
	if n.Kind == yaml.DocumentNode {
		if len(n.Content) == 0 {
			return nil, c.ix, nil
		}
		n = n.Content[0]
	}
	v, _ := c.value(n, "", 0)
	return v, c.ix, c.probs
}

type converter struct {
	ix    Index
	probs []Problem
}

func (c *converter) problem(n *yaml.Node, ptr, code, msg string) {
	w := c.ix[ptr]
	w.refused = true
	c.ix[ptr] = w
	c.probs = append(c.probs, Problem{Line: n.Line, Column: n.Column, Path: displayPath(ptr), Code: code, Summary: msg})
}

func (c *converter) value(n *yaml.Node, ptr string, depth int) (any, bool) {
	w := c.ix[ptr]
	w.Line, w.Column, w.node = n.Line, n.Column, n
	c.ix[ptr] = w
	if depth > maxDepth {
		c.problem(n, ptr, "too-deep", "the document is nested more deeply than a plan can be")
		return nil, false
	}
	if n.Kind == yaml.AliasNode {
		c.problem(n, ptr, "yaml-alias", "aliases (*"+n.Value+") are not allowed in a plan; write the value out")
		return nil, false
	}
	if n.Anchor != "" {
		c.problem(n, ptr, "yaml-alias", "anchors (&"+n.Anchor+") are not allowed in a plan; write the value out")
		return nil, false
	}
	switch n.Kind {
	case yaml.MappingNode:
		if n.Tag != "" && n.ShortTag() != "!!map" {
			c.problem(n, ptr, "yaml-tag", "the tag "+n.Tag+" is not allowed in a plan")
			return nil, false
		}
		m := make(map[string]any, len(n.Content)/2)
		first := map[string]*yaml.Node{}
		for i := 0; i+1 < len(n.Content); i += 2 {
			k, val := n.Content[i], n.Content[i+1]
			if k.Kind != yaml.ScalarNode || (k.ShortTag() != "!!str" && k.ShortTag() != "!!merge") {
				c.problem(k, ptr, "bad-key", "keys must be plain names")
				continue
			}
			if k.ShortTag() == "!!merge" {
				c.problem(k, ptr, "yaml-alias", "merge keys (<<) are not allowed in a plan; write the keys out")
				continue
			}
			if f, dup := first[k.Value]; dup {
				c.problem(k, ptr, "yaml-duplicate-key", "the key "+strconv.Quote(k.Value)+" appears twice; the first is at line "+strconv.Itoa(f.Line))
				continue
			}
			first[k.Value] = k
			cp := ptr + "/" + escapeToken(k.Value)
			cw := c.ix[cp]
			cw.KeyLine, cw.KeyColumn = k.Line, k.Column
			c.ix[cp] = cw
			// A refused value is left out; its problem is already reported.
			if v, vok := c.value(val, cp, depth+1); vok {
				m[k.Value] = v
			}
		}
		return m, true
	case yaml.SequenceNode:
		if n.Tag != "" && n.ShortTag() != "!!seq" {
			c.problem(n, ptr, "yaml-tag", "the tag "+n.Tag+" is not allowed in a plan")
			return nil, false
		}
		a := make([]any, 0, len(n.Content))
		for i, e := range n.Content {
			// A refused element stays as null so that indexes keep their
			// meaning; problems at its pointer are suppressed.
			v, _ := c.value(e, ptr+"/"+strconv.Itoa(i), depth+1)
			a = append(a, v)
		}
		return a, true
	case yaml.ScalarNode:
		return c.scalar(n, ptr)
	}
	c.problem(n, ptr, "invalid", "this YAML node cannot be read")
	return nil, false
}

func (c *converter) scalar(n *yaml.Node, ptr string) (any, bool) {
	switch n.ShortTag() {
	case "!!str", "!!timestamp":
		return n.Value, true
	case "!!null":
		return nil, true
	case "!!bool":
		var b bool
		if err := n.Decode(&b); err != nil {
			c.problem(n, ptr, "invalid", "cannot read "+strconv.Quote(n.Value)+" as true or false")
			return nil, false
		}
		return b, true
	case "!!int", "!!float":
		var f float64
		if err := n.Decode(&f); err != nil {
			// Very large integers do not decode into float64 directly.
			g, perr := strconv.ParseFloat(strings.ReplaceAll(n.Value, "_", ""), 64)
			if perr != nil {
				c.problem(n, ptr, "invalid", "cannot read "+strconv.Quote(n.Value)+" as a number")
				return nil, false
			}
			f = g
		}
		if math.IsNaN(f) || math.IsInf(f, 0) {
			c.problem(n, ptr, "not-finite", "numbers must be finite; got "+n.Value)
			return nil, false
		}
		return f, true
	}
	c.problem(n, ptr, "yaml-tag", "the tag "+n.Tag+" is not allowed in a plan")
	return nil, false
}

func escapeToken(s string) string {
	s = strings.ReplaceAll(s, "~", "~0")
	return strings.ReplaceAll(s, "/", "~1")
}

func unescapeToken(s string) string {
	s = strings.ReplaceAll(s, "~1", "/")
	return strings.ReplaceAll(s, "~0", "~")
}

// splitPointer splits a JSON pointer into unescaped tokens.
func splitPointer(ptr string) []string {
	if ptr == "" {
		return nil
	}
	toks := strings.Split(strings.TrimPrefix(ptr, "/"), "/")
	for i, t := range toks {
		toks[i] = unescapeToken(t)
	}
	return toks
}

// displayPath turns "/endpoints/0/steps/1" into "endpoints[0].steps[1]".
func displayPath(ptr string) string {
	var b strings.Builder
	for _, t := range splitPointer(ptr) {
		if _, err := strconv.Atoi(t); err == nil && t != "" && t[0] != '+' && t[0] != '-' {
			b.WriteString("[" + t + "]")
			continue
		}
		if b.Len() > 0 {
			b.WriteByte('.')
		}
		b.WriteString(t)
	}
	return b.String()
}
