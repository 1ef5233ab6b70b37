package contract

import (
	"strings"

	"furrow/schema"
)

// suggestColumn returns the name among candidates that an unmatched column
// name is most likely meant as: the near spelling schema.Suggest finds,
// else the one candidate that abbreviates name or that name abbreviates
// (see abbreviates), provided that candidate stands in that relation to no
// name of others but name. For a declared column missing from the file the
// candidates are the undeclared file columns and others the missing
// declared columns; for an undeclared file column the other way round, so
// both findings name the same pair. It returns "" when there is none.
func suggestColumn(name string, candidates, others []string) string {
	if g := schema.Suggest(name, candidates); g != "" {
		return g
	}
	g := onlyAbbreviation(name, candidates)
	if g == "" || onlyAbbreviation(g, others) != name {
		return ""
	}
	return g
}

// onlyAbbreviation returns the one candidate that abbreviates name or that
// name abbreviates, or "" when there is none or more than one.
func onlyAbbreviation(name string, candidates []string) string {
	found := ""
	for _, c := range candidates {
		if c == name || !(abbreviates(c, name) || abbreviates(name, c)) {
			continue
		}
		if found != "" {
			return ""
		}
		found = c
	}
	return found
}

// abbreviates reports whether short is an abbreviation of long: at least
// three characters and fewer than long has, starting with long's first
// character, and all appearing in long in order. That takes in prefixes
// ("treat", "rep" for "treatment", "replicate") and contractions ("trt",
// "yld" for "treatment", "yield"). Case is ignored.
func abbreviates(short, long string) bool {
	s, l := []rune(strings.ToLower(short)), []rune(strings.ToLower(long))
	if len(s) < 3 || len(s) >= len(l) || s[0] != l[0] {
		return false
	}
	j := 0
	for _, r := range l {
		if j < len(s) && r == s[j] {
			j++
		}
	}
	return j == len(s)
}
