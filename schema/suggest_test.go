package schema

import "testing"

func TestSuggest(t *testing.T) {
	// Edit distances of textbook pairs: kitten/sitting 3, flaw/lawn 2
	// (Levenshtein; well known, from memory); a transposition counts
	// one (ca/ac 1, Damerau's adjacent transposition).
	if d := EditDistance("kitten", "sitting"); d != 3 {
		t.Errorf("kitten/sitting = %d, want 3", d)
	}
	if d := EditDistance("flaw", "lawn"); d != 2 {
		t.Errorf("flaw/lawn = %d, want 2", d)
	}
	if d := EditDistance("ca", "ac"); d != 1 {
		t.Errorf("ca/ac = %d, want 1", d)
	}
	if d := EditDistance("", "abc"); d != 3 {
		t.Errorf("empty/abc = %d, want 3", d)
	}
	cases := []struct {
		s    string
		c    []string
		want string
	}{
		{"yeild", []string{"plot", "yield"}, "yield"},
		{"Yield", []string{"yield"}, "yield"},
		{"nwe", []string{"ctl", "new"}, "new"},
		{"treatmnt", []string{"treatment"}, "treatment"},
		{"abc", []string{"xyz"}, ""},
		{"a", []string{"b"}, ""},
		{"A", []string{"a"}, "a"},
		{"ab", []string{"cd"}, ""},
	}
	for _, c := range cases {
		if got := Suggest(c.s, c.c); got != c.want {
			t.Errorf("Suggest(%q, %q) = %q, want %q", c.s, c.c, got, c.want)
		}
	}
}
