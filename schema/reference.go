package schema

import (
	"bytes"
	"encoding/json"
	"fmt"
	"strconv"
	"strings"
)

// Reference returns the plan-language reference as Markdown: one table
// row per property path ("columns[].role"), in the order the schema
// declares them, with its type, allowed values and description, all read
// from plan.schema.json. README.md carries it between the markers
// <!-- plan-reference:begin --> and <!-- plan-reference:end -->.
func Reference() string {
	root, err := parseOrdered(Plan().raw)
	if err != nil {
		panic("schema: embedded plan schema: " + err.Error())
	}
	defs, _ := root.get("$defs").(*object)
	var b strings.Builder
	fmt.Fprintf(&b, "Plan format %d, schema `%s`.\n\n", PlanVersion, PlanID)
	b.WriteString("| Property | Type | Allowed values | Description |\n")
	b.WriteString("|---|---|---|---|\n")
	var walk func(path string, s *object, depth int)
	walk = func(path string, s *object, depth int) {
		if depth > 12 {
			return
		}
		s, _ = resolve(s, defs)
		props, _ := s.get("properties").(*object)
		if props == nil {
			return
		}
		for _, k := range props.keys {
			child, _ := props.vals[k].(*object)
			if child == nil {
				continue
			}
			p := k
			if path != "" {
				p = path + "." + k
			}
			rs, d := resolve(child, defs)
			fmt.Fprintf(&b, "| `%s` | %s | %s | %s |\n", p, cell(typeCell(rs, defs)), cell(allowedCell(rs, defs)), cell(d))
			walk(p, rs, depth+1)
			if items, ok := rs.get("items").(*object); ok {
				walk(p+"[]", items, depth+1)
			}
		}
	}
	walk("", root, 0)
	return b.String()
}

// resolve follows a $ref (one level, local) and returns the schema and
// its description (the referring schema's description wins).
func resolve(s *object, defs *object) (*object, string) {
	desc, _ := s.get("description").(string)
	if ref, ok := s.get("$ref").(string); ok && defs != nil {
		name := strings.TrimPrefix(ref, "#/$defs/")
		if t, ok := defs.get(name).(*object); ok {
			if desc == "" {
				desc, _ = t.get("description").(string)
			}
			return t, desc
		}
	}
	return s, desc
}

func typeCell(s *object, defs *object) string {
	var names []string
	switch t := s.get("type").(type) {
	case string:
		names = []string{t}
	case []any:
		for _, x := range t {
			if n, ok := x.(string); ok {
				names = append(names, n)
			}
		}
	}
	has := func(n string) bool {
		for _, x := range names {
			if x == n {
				return true
			}
		}
		return false
	}
	switch {
	case has("string") && has("array"):
		return "name or list of names"
	case has("string") && has("number"):
		return "name"
	}
	if len(names) != 1 {
		return strings.Join(names, " or ")
	}
	switch names[0] {
	case "string":
		return "text"
	case "object":
		return "mapping"
	case "array":
		if items, ok := s.get("items").(*object); ok {
			it, _ := resolve(items, defs)
			if it.get("properties") != nil {
				return "list of mappings"
			}
			return "list of " + typeCell(it, defs)
		}
		return "list"
	}
	return names[0]
}

func allowedCell(s *object, defs *object) string {
	if e, ok := s.get("enum").([]any); ok {
		parts := make([]string, len(e))
		for i, v := range e {
			parts[i] = "`" + scalarText(v) + "`"
		}
		return strings.Join(parts, ", ")
	}
	var parts []string
	if v, ok := s.get("minimum").(json.Number); ok {
		parts = append(parts, ">= "+v.String())
	}
	if v, ok := s.get("exclusiveMinimum").(json.Number); ok {
		parts = append(parts, "> "+v.String())
	}
	if v, ok := s.get("maximum").(json.Number); ok {
		parts = append(parts, "<= "+v.String())
	}
	if v, ok := s.get("exclusiveMaximum").(json.Number); ok {
		parts = append(parts, "< "+v.String())
	}
	if p, ok := s.get("pattern").(string); ok && strings.Contains(p, "[0-9]{4}-") {
		parts = append(parts, "YYYY-MM-DD")
	}
	if v, ok := s.get("maxLength").(json.Number); ok && v.String() == "1" {
		parts = append(parts, "one character")
	}
	if items, ok := s.get("items").(*object); ok {
		it, _ := resolve(items, defs)
		if a := allowedCell(it, defs); a != "" {
			parts = append(parts, "each: "+a)
		}
	}
	return strings.Join(parts, ", ")
}

func scalarText(v any) string {
	switch x := v.(type) {
	case string:
		return x
	case json.Number:
		return x.String()
	case bool:
		return strconv.FormatBool(x)
	}
	return fmt.Sprint(v)
}

func cell(s string) string {
	s = strings.ReplaceAll(s, "|", `\|`)
	return strings.ReplaceAll(s, "\n", " ")
}

// object is a JSON object that keeps its keys in document order.
type object struct {
	keys []string
	vals map[string]any
}

func (o *object) get(k string) any {
	if o == nil {
		return nil
	}
	return o.vals[k]
}

func parseOrdered(raw []byte) (*object, error) {
	dec := json.NewDecoder(bytes.NewReader(raw))
	dec.UseNumber()
	v, err := orderedValue(dec)
	if err != nil {
		return nil, err
	}
	o, ok := v.(*object)
	if !ok {
		return nil, fmt.Errorf("schema is not a JSON object")
	}
	return o, nil
}

func orderedValue(dec *json.Decoder) (any, error) {
	tok, err := dec.Token()
	if err != nil {
		return nil, err
	}
	switch t := tok.(type) {
	case json.Delim:
		switch t {
		case '{':
			o := &object{vals: map[string]any{}}
			for dec.More() {
				kt, err := dec.Token()
				if err != nil {
					return nil, err
				}
				k, _ := kt.(string)
				v, err := orderedValue(dec)
				if err != nil {
					return nil, err
				}
				o.keys = append(o.keys, k)
				o.vals[k] = v
			}
			_, err := dec.Token()
			return o, err
		case '[':
			var a []any
			for dec.More() {
				v, err := orderedValue(dec)
				if err != nil {
					return nil, err
				}
				a = append(a, v)
			}
			_, err := dec.Token()
			return a, err
		}
	}
	return tok, nil
}
