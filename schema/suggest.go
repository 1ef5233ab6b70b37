package schema

import (
	"strings"
	"unicode/utf8"
)

// This file holds the did-you-mean rule that every furrow message uses
// (plan schema errors, plan checks, data checks), so that a misspelling is
// answered the same way wherever it is found.

// Suggest returns the candidate closest to s: equal ignoring case, else
// within a small edit distance (none below 3 characters, 1 up to 4, 2 from
// 5 on). It returns "" when nothing is close.
func Suggest(s string, candidates []string) string {
	ls := strings.ToLower(s)
	for _, c := range candidates {
		if strings.ToLower(c) == ls && c != s {
			return c
		}
	}
	n := utf8.RuneCountInString(s)
	limit := 0
	switch {
	case n >= 5:
		limit = 2
	case n >= 3:
		limit = 1
	}
	best, bestD := "", limit+1
	for _, c := range candidates {
		// The distance is at least the difference in length: a candidate
		// far longer or shorter is not near (and a 10 MB cell is not
		// compared rune by rune).
		if c == s || !nearLength(n, c, limit) {
			continue
		}
		if d := EditDistance(ls, strings.ToLower(c)); d < bestD {
			best, bestD = c, d
		}
	}
	return best
}

// EditDistance counts the insertions, deletions, substitutions and
// transpositions of adjacent runes that turn a into b: the restricted
// (optimal string alignment) form of Damerau's distance (Damerau 1964,
// Communications of the ACM 7:171; Levenshtein 1966, Soviet Physics
// Doklady 10:707), computed with three rows.
func EditDistance(a, b string) int {
	ra, rb := []rune(a), []rune(b)
	prev2 := make([]int, len(rb)+1)
	prev := make([]int, len(rb)+1)
	cur := make([]int, len(rb)+1)
	for j := range prev {
		prev[j] = j
	}
	for i := 1; i <= len(ra); i++ {
		cur[0] = i
		for j := 1; j <= len(rb); j++ {
			cost := 1
			if ra[i-1] == rb[j-1] {
				cost = 0
			}
			cur[j] = min(prev[j]+1, cur[j-1]+1, prev[j-1]+cost)
			if i > 1 && j > 1 && ra[i-1] == rb[j-2] && ra[i-2] == rb[j-1] {
				cur[j] = min(cur[j], prev2[j-2]+1)
			}
		}
		prev2, prev, cur = prev, cur, prev2
	}
	return prev[len(rb)]
}

// nearLength reports whether c has within limit of n runes, counting no
// further than it needs to.
func nearLength(n int, c string, limit int) bool {
	if len(c) < n-limit {
		return false // fewer bytes than the runes needed
	}
	m := 0
	for range c {
		if m++; m > n+limit {
			return false
		}
	}
	return m >= n-limit
}
