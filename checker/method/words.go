package method

import (
	"strings"

	"furrow/plan"
)

// Code marks a plan identifier inside a sentence; renderers turn the
// marks into `x` or <code>.
func Code(s string) string { return "\x60" + s + "\x60" }

// Codes marks every identifier.
func Codes(ss []string) []string {
	out := make([]string, len(ss))
	for i, s := range ss {
		out[i] = Code(s)
	}
	return out
}

// JoinAnd joins phrases as "a, b and c" ("none" for no phrase).
func JoinAnd(ss []string) string {
	switch len(ss) {
	case 0:
		return "none"
	case 1:
		return ss[0]
	}
	return strings.Join(ss[:len(ss)-1], ", ") + " and " + ss[len(ss)-1]
}

// TermList writes each term as its marked columns joined by sep.
func TermList(ts []plan.Term, sep string) []string {
	var out []string
	for _, t := range ts {
		out = append(out, strings.Join(Codes(t.Columns), sep))
	}
	return out
}

// RandomTerm writes a random term: its column, or the last column
// within the others ("plot within block × site").
func RandomTerm(t plan.Term) string {
	if len(t.Columns) == 1 {
		return Code(t.Columns[0])
	}
	inner := t.Columns[len(t.Columns)-1]
	outer := Codes(t.Columns[:len(t.Columns)-1])
	return Code(inner) + " within " + strings.Join(outer, " × ")
}

// roman writes an ANOVA type.
func roman(n int) string {
	switch n {
	case 1:
		return "I"
	case 2:
		return "II"
	}
	return "III"
}
