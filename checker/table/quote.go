package table

import (
	"strconv"
	"unicode"
	"unicode/utf8"
)

// QuoteMax is the most characters of a cell or header text that messages
// quote; a longer text is cut there, marked with "…" and followed by its
// length, so that a 10 MB cell (or the first line of some file that is not
// data) does not end up in a message whole.
const QuoteMax = 60

// Quote quotes a text from the data for a message, as strconv.Quote does
// (control and invisible characters escaped), cut to QuoteMax characters:
//
//	"ctl"
//	"aaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaa…" (10485760 characters)
func Quote(s string) string {
	if len(s) <= QuoteMax {
		return strconv.Quote(s)
	}
	n := utf8.RuneCountInString(s)
	if n <= QuoteMax {
		return strconv.Quote(s)
	}
	cut, i := 0, 0
	for i < len(s) && cut < QuoteMax {
		_, size := utf8.DecodeRuneInString(s[i:])
		i += size
		cut++
	}
	q := strconv.Quote(s[:i])
	return q[:len(q)-1] + "…\" (" + strconv.Itoa(n) + " characters)"
}

// Shown is s where a message lists it unquoted (a level in a list of
// levels): s itself when it is at most QuoteMax characters of printable
// text without spaces around it, else Quote(s).
func Shown(s string) string {
	if len(s) > QuoteMax || s == "" || trimCell(s) != s {
		return Quote(s)
	}
	for _, r := range s {
		if !unicode.IsPrint(r) || unicode.Is(unicode.Cf, r) {
			return Quote(s)
		}
	}
	return s
}
