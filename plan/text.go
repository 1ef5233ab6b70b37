package plan

import (
	"bytes"
	"fmt"
	"strings"

	"gopkg.in/yaml.v3"
)

// TextEncoding names the encoding of src when it is UTF-16 or UTF-32
// text rather than UTF-8: by its byte-order mark, or without one by the
// NUL bytes that ASCII characters carry in those encodings ("utf-16 text
// (little-endian, with a byte-order mark)"). It returns "" otherwise.
func TextEncoding(src []byte) string {
	switch {
	case bytes.HasPrefix(src, []byte{0, 0, 0xFE, 0xFF}):
		return "utf-32 text (big-endian, with a byte-order mark)"
	case bytes.HasPrefix(src, []byte{0xFF, 0xFE, 0, 0}):
		return "utf-32 text (little-endian, with a byte-order mark)"
	case bytes.HasPrefix(src, []byte{0xFE, 0xFF}):
		return "utf-16 text (big-endian, with a byte-order mark)"
	case bytes.HasPrefix(src, []byte{0xFF, 0xFE}):
		return "utf-16 text (little-endian, with a byte-order mark)"
	}
	// Without a mark: count the NUL bytes at each position modulo 4 of
	// the first few kilobytes. ASCII text is x000 in UTF-32LE, 000x in
	// UTF-32BE, x0 in UTF-16LE and 0x in UTF-16BE.
	n := min(len(src), 4096) &^ 3
	if n < 8 {
		return ""
	}
	var z [4]int
	for i := 0; i < n; i++ {
		if src[i] == 0 {
			z[i%4]++
		}
	}
	q := n / 4
	full := func(k int) bool { return z[k] > 0 && z[k]*10 >= q*8 }
	empty := func(k int) bool { return z[k]*10 <= q*2 }
	switch {
	case empty(0) && full(1) && full(2) && full(3):
		return "utf-32 text (little-endian, without a byte-order mark)"
	case full(0) && full(1) && full(2) && empty(3):
		return "utf-32 text (big-endian, without a byte-order mark)"
	case empty(0) && full(1) && empty(2) && full(3):
		return "utf-16 text (little-endian, without a byte-order mark)"
	case full(0) && empty(1) && full(2) && empty(3):
		return "utf-16 text (big-endian, without a byte-order mark)"
	}
	return ""
}

// bidiNames are the bidirectional control characters (Unicode UAX #9,
// explicit embeddings, overrides and isolates). Text holding one displays
// in another order than it is stored ("Trojan Source", CVE-2021-42574),
// so a name or level holding one can read as another.
var bidiNames = map[rune]string{
	'\u202A': "left-to-right embedding",
	'\u202B': "right-to-left embedding",
	'\u202C': "pop directional formatting",
	'\u202D': "left-to-right override",
	'\u202E': "right-to-left override",
	'\u2066': "left-to-right isolate",
	'\u2067': "right-to-left isolate",
	'\u2068': "first strong isolate",
	'\u2069': "pop directional isolate",
}

// Bidi returns the first bidirectional control character in s and its
// name, or 0 and "".
func Bidi(s string) (rune, string) {
	if !strings.ContainsAny(s, "\u202A\u202B\u202C\u202D\u202E\u2066\u2067\u2068\u2069") {
		return 0, ""
	}
	for _, r := range s {
		if name, ok := bidiNames[r]; ok {
			return r, name
		}
	}
	return 0, ""
}

// BidiWords is the end of a finding about a bidirectional control
// character r named name.
func BidiWords(r rune, name string) string {
	return fmt.Sprintf("holds the bidirectional control character U+%04X (%s), which shows text in another order than it is stored; remove it", r, name)
}

// bidiFindings reports bidirectional control characters in the plan: as
// written anywhere in src (comments included), and, for double-quoted
// scalars, written as escapes ("\u202E"), which the YAML tree holds
// decoded.
func bidiFindings(name string, src []byte, doc *yaml.Node) Diagnostics {
	var ds Diagnostics
	lines := map[int]bool{}
	for i, l := range strings.Split(string(src), "\n") {
		col := 1
		for _, r := range l {
			if n, ok := bidiNames[r]; ok {
				ds = append(ds, diagAt(name, i+1, col, "bidi-control", "the plan "+BidiWords(r, n)))
				lines[i+1] = true
				break // one a line
			}
			col++
		}
	}
	var walk func(n *yaml.Node)
	walk = func(n *yaml.Node) {
		if n == nil {
			return
		}
		if n.Kind == yaml.ScalarNode && n.Style == yaml.DoubleQuotedStyle && !lines[n.Line] {
			if r, rn := Bidi(n.Value); r != 0 {
				ds = append(ds, diagAt(name, n.Line, n.Column, "bidi-control", fmt.Sprintf("the text %s %s", quoteShort(n.Value), BidiWords(r, rn))))
			}
		}
		for _, c := range n.Content {
			walk(c)
		}
	}
	walk(doc)
	return ds
}

// quoteShort quotes s, cut to 60 characters.
func quoteShort(s string) string {
	r := []rune(s)
	if len(r) <= 60 {
		return fmt.Sprintf("%q", s)
	}
	return fmt.Sprintf("%q", string(r[:60])+"…")
}
