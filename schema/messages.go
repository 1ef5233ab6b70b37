package schema

import (
	"cmp"
	"errors"
	"fmt"
	"math"
	"slices"
	"strconv"
	"strings"

	"github.com/santhosh-tekuri/jsonschema/v5"
)

// validate runs the compiled schema and words each failing keyword in our
// own terms, reading the keyword's arguments from the schema source. The
// library's own messages are never shown.
func (s *Schema) validate(v any, ix Index) []Problem {
	err := s.c.Validate(v)
	if err == nil {
		return nil
	}
	var ve *jsonschema.ValidationError
	if !errors.As(err, &ve) {
		return []Problem{{Code: "invalid", Summary: "the document cannot be checked against the schema"}}
	}
	bad := map[string]bool{}
	if ix != nil {
		for p, w := range ix {
			if w.refused {
				bad[p] = true // reported, and left out, during conversion
			}
		}
	}
	var leaves []*jsonschema.ValidationError
	var walk func(e *jsonschema.ValidationError)
	walk = func(e *jsonschema.ValidationError) {
		if len(e.Causes) == 0 {
			leaves = append(leaves, e)
			return
		}
		for _, c := range e.Causes {
			walk(c)
		}
	}
	walk(ve)
	var out []Problem
	for _, l := range leaves {
		out = append(out, s.word(l, v, ix)...)
	}
	out = slices.DeleteFunc(out, func(p Problem) bool { return suppressed(p, bad) })
	return sortProblems(out)
}

// suppressed reports whether a problem concerns a value that was already
// reported (and left out) during conversion.
func suppressed(p Problem, bad map[string]bool) bool {
	for ptr := range bad {
		d := displayPath(ptr)
		if p.Path == d || strings.HasPrefix(p.Path, d+".") || strings.HasPrefix(p.Path, d+"[") {
			return true
		}
	}
	return false
}

func sortProblems(ps []Problem) []Problem {
	slices.SortStableFunc(ps, func(a, b Problem) int {
		return cmp.Or(cmp.Compare(a.Line, b.Line), cmp.Compare(a.Column, b.Column), strings.Compare(a.Summary, b.Summary))
	})
	// Drop exact duplicates (several schema branches can say the same).
	return slices.CompactFunc(ps, func(a, b Problem) bool { return a == b })
}

// keywordSchema resolves an absolute keyword location to the schema
// object holding the keyword, and the keyword itself.
func (s *Schema) keywordSchema(absLoc string) (map[string]any, string) {
	_, frag, _ := strings.Cut(absLoc, "#")
	toks := splitPointer(frag)
	if len(toks) == 0 {
		return s.doc, ""
	}
	var cur any = s.doc
	for _, t := range toks[:len(toks)-1] {
		switch c := cur.(type) {
		case map[string]any:
			cur = c[t]
		case []any:
			i, err := strconv.Atoi(t)
			if err != nil || i < 0 || i >= len(c) {
				return nil, toks[len(toks)-1]
			}
			cur = c[i]
		default:
			return nil, toks[len(toks)-1]
		}
	}
	m, _ := cur.(map[string]any)
	return m, toks[len(toks)-1]
}

func instanceAt(v any, ptr string) any {
	for _, t := range splitPointer(ptr) {
		switch c := v.(type) {
		case map[string]any:
			v = c[t]
		case []any:
			i, err := strconv.Atoi(t)
			if err != nil || i < 0 || i >= len(c) {
				return nil
			}
			v = c[i]
		default:
			return nil
		}
	}
	return v
}

// subject names the value at ptr for a sentence: its key, or
// "key[index]" for a list element, or "the plan" for the root.
func subject(ptr string) string {
	toks := splitPointer(ptr)
	if len(toks) == 0 {
		return "the document"
	}
	last := toks[len(toks)-1]
	if _, err := strconv.Atoi(last); err == nil && len(toks) > 1 {
		for i := len(toks) - 2; i >= 0; i-- {
			if _, err := strconv.Atoi(toks[i]); err != nil {
				return displayPath("/" + escapeToken(toks[i]) + ptrSuffix(toks[i+1:]))
			}
		}
	}
	return last
}

func ptrSuffix(toks []string) string {
	var b strings.Builder
	for _, t := range toks {
		b.WriteString("/" + escapeToken(t))
	}
	return b.String()
}

// place returns where a value sits (its value position).
func place(ix Index, ptr string) (int, int) {
	if ix == nil {
		return 0, 0
	}
	w := ix[ptr]
	return w.Line, w.Column
}

func (s *Schema) word(e *jsonschema.ValidationError, root any, ix Index) []Problem {
	sch, kw := s.keywordSchema(e.AbsoluteKeywordLocation)
	ptr := e.InstanceLocation
	val := instanceAt(root, ptr)
	line, col := place(ix, ptr)
	subj := subject(ptr)
	one := func(code, msg string) []Problem {
		return []Problem{{Line: line, Column: col, Path: displayPath(ptr), Code: code, Summary: msg}}
	}
	switch kw {
	case "type":
		if val == nil {
			return one("wrong-type", subj+" is empty; give it a value or remove the key")
		}
		if str, ok := val.(string); ok && wantsNumber(sch["type"]) && overflows(str) {
			// YAML reads 1e309 as text: it is too large for a number.
			return one("out-of-range", fmt.Sprintf("%s is out of the range of a double (its magnitude is beyond 1.8e308); got %s", subj, str))
		}
		return one("wrong-type", fmt.Sprintf("%s must be %s; got %s", subj, typePhrase(sch["type"]), describe(val)))
	case "enum":
		allowed, _ := sch["enum"].([]any)
		msg := fmt.Sprintf("%s must be one of %s; got %s", subj, joinValues(allowed), describe(val))
		if str, ok := val.(string); ok {
			if sug := Suggest(str, stringsOf(allowed)); sug != "" {
				msg += fmt.Sprintf(" (did you mean %q?)", sug)
			}
		}
		return one("not-allowed", msg)
	case "const":
		return one("not-allowed", fmt.Sprintf("%s must be %s; got %s", subj, describe(sch["const"]), describe(val)))
	case "required":
		obj, _ := val.(map[string]any)
		var out []Problem
		for _, k := range stringsOf(asSlice(sch["required"])) {
			if _, ok := obj[k]; ok {
				continue
			}
			where := "the plan"
			if ptr != "" {
				where = displayPath(ptr)
			}
			out = append(out, Problem{Line: line, Column: col, Path: displayPath(ptr + "/" + escapeToken(k)), Code: "missing-key",
				Summary: fmt.Sprintf("%s is missing the required key %q", where, k)})
		}
		return out
	case "additionalProperties":
		obj, _ := val.(map[string]any)
		props, _ := sch["properties"].(map[string]any)
		known := make([]string, 0, len(props))
		for k := range props {
			known = append(known, k)
		}
		slices.Sort(known)
		var out []Problem
		for k := range obj {
			if _, ok := props[k]; ok {
				continue
			}
			kp := ptr + "/" + escapeToken(k)
			kl, kc := 0, 0
			if ix != nil {
				kl, kc = ix[kp].KeyLine, ix[kp].KeyColumn
			}
			where := "at the top level"
			if ptr != "" {
				where = "in " + displayPath(ptr)
			}
			msg := fmt.Sprintf("unknown key %q %s; allowed keys are %s", k, where, strings.Join(known, ", "))
			if sug := Suggest(k, known); sug != "" {
				msg = fmt.Sprintf("unknown key %q %s (did you mean %q?)", k, where, sug)
			}
			out = append(out, Problem{Line: kl, Column: kc, Path: displayPath(kp), Code: "unknown-key", Summary: msg})
		}
		return out
	case "minItems":
		n := intOf(sch["minItems"])
		if n <= 1 {
			return one("too-few", subj+" must not be an empty list")
		}
		if n == intOf(sch["maxItems"]) {
			return one("too-few", fmt.Sprintf("%s must list exactly %d items; got %d", subj, n, len(asSlice(val))))
		}
		return one("too-few", fmt.Sprintf("%s must list at least %d items; got %d", subj, n, len(asSlice(val))))
	case "maxItems":
		n := intOf(sch["maxItems"])
		if n == intOf(sch["minItems"]) {
			return one("too-many", fmt.Sprintf("%s must list exactly %d items; got %d", subj, n, len(asSlice(val))))
		}
		return one("too-many", fmt.Sprintf("%s must list at most %d items; got %d", subj, n, len(asSlice(val))))
	case "uniqueItems":
		items := asSlice(val)
		var out []Problem
		for j := range items {
			for i := 0; i < j; i++ {
				if describe(items[i]) == describe(items[j]) {
					l, c := place(ix, ptr+"/"+strconv.Itoa(j))
					out = append(out, Problem{Line: l, Column: c, Path: displayPath(ptr + "/" + strconv.Itoa(j)), Code: "duplicate",
						Summary: fmt.Sprintf("%s lists %s more than once", subj, describe(items[j]))})
					break
				}
			}
		}
		if len(out) == 0 {
			out = one("duplicate", subj+" lists the same item more than once")
		}
		return out
	case "minLength":
		return one("too-few", subj+" must not be empty")
	case "maxLength":
		n := intOf(sch["maxLength"])
		if n == 1 {
			return one("too-many", fmt.Sprintf("%s must be a single character; got %s", subj, describe(val)))
		}
		return one("too-many", fmt.Sprintf("%s must be at most %d characters long", subj, n))
	case "pattern":
		if strings.Contains(fmt.Sprint(sch["pattern"]), "[0-9]{4}-[0-9]{2}-[0-9]{2}") {
			return one("bad-form", fmt.Sprintf("%s must be a date written YYYY-MM-DD; got %s", subj, describe(val)))
		}
		return one("bad-form", fmt.Sprintf("%s does not have the required form; got %s", subj, describe(val)))
	case "minimum":
		return one("out-of-range", fmt.Sprintf("%s must be at least %s; got %s", subj, describe(sch["minimum"]), describe(val)))
	case "maximum":
		return one("out-of-range", fmt.Sprintf("%s must be at most %s; got %s", subj, describe(sch["maximum"]), describe(val)))
	case "exclusiveMinimum", "exclusiveMaximum":
		lo, hasLo := sch["exclusiveMinimum"]
		hi, hasHi := sch["exclusiveMaximum"]
		switch {
		case hasLo && hasHi:
			return one("out-of-range", fmt.Sprintf("%s must be between %s and %s, both excluded; got %s", subj, describe(lo), describe(hi), describe(val)))
		case kw == "exclusiveMinimum":
			return one("out-of-range", fmt.Sprintf("%s must be greater than %s; got %s", subj, describe(lo), describe(val)))
		default:
			return one("out-of-range", fmt.Sprintf("%s must be less than %s; got %s", subj, describe(hi), describe(val)))
		}
	}
	desc, _ := sch["description"].(string)
	if desc != "" {
		return one("invalid", fmt.Sprintf("%s is not valid here (%s)", subj, strings.TrimSuffix(lowerFirst(desc), ".")))
	}
	return one("invalid", subj+" is not valid here")
}

func typePhrase(t any) string {
	names := stringsOf(asSlice(t))
	if s, ok := t.(string); ok {
		names = []string{s}
	}
	has := func(n string) bool { return slices.Contains(names, n) }
	switch {
	case has("string") && has("array") && len(names) == 2:
		return "a column name or a list of column names"
	case has("string") && has("number"):
		return "a single name or number"
	}
	var parts []string
	for _, n := range names {
		switch n {
		case "string":
			parts = append(parts, "text")
		case "number":
			parts = append(parts, "a number")
		case "integer":
			parts = append(parts, "a whole number")
		case "boolean":
			parts = append(parts, "true or false")
		case "array":
			parts = append(parts, "a list")
		case "object":
			parts = append(parts, "a set of keys")
		case "null":
			parts = append(parts, "empty")
		}
	}
	return strings.Join(parts, " or ")
}

// describe words a JSON value for a message.
func describe(v any) string {
	switch x := v.(type) {
	case nil:
		return "nothing"
	case string:
		return strconv.Quote(x)
	case bool:
		return strconv.FormatBool(x)
	case float64:
		if x == math.Trunc(x) && math.Abs(x) < 1e15 {
			return strconv.FormatFloat(x, 'f', -1, 64) // 1000000, not 1e+06
		}
		return strconv.FormatFloat(x, 'g', -1, 64)
	case []any:
		return "a list"
	case map[string]any:
		return "a set of keys"
	}
	return fmt.Sprint(v)
}

func joinValues(vs []any) string {
	parts := make([]string, len(vs))
	for i, v := range vs {
		if s, ok := v.(string); ok {
			parts[i] = s
		} else {
			parts[i] = describe(v)
		}
	}
	return strings.Join(parts, ", ")
}

func asSlice(v any) []any {
	a, _ := v.([]any)
	return a
}

func stringsOf(vs []any) []string {
	var out []string
	for _, v := range vs {
		if s, ok := v.(string); ok {
			out = append(out, s)
		}
	}
	return out
}

func intOf(v any) int {
	f, _ := v.(float64)
	return int(f)
}

func lowerFirst(s string) string {
	if s == "" {
		return s
	}
	return strings.ToLower(s[:1]) + s[1:]
}

// wantsNumber reports whether a schema type admits a number.
func wantsNumber(t any) bool {
	names := stringsOf(asSlice(t))
	if s, ok := t.(string); ok {
		names = []string{s}
	}
	return slices.Contains(names, "number") || slices.Contains(names, "integer")
}

// overflows reports whether s is written as a decimal number (digits, an
// optional sign, point and exponent) whose magnitude is beyond the
// largest double.
func overflows(s string) bool {
	s = strings.ReplaceAll(s, "_", "")
	if s == "" || strings.ContainsAny(s, "xXoObBpPiInN") {
		return false // hexadecimal, octal, inf and nan are other things
	}
	v, err := strconv.ParseFloat(s, 64)
	return errors.Is(err, strconv.ErrRange) && math.IsInf(v, 0)
}
