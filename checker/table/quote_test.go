package table

import (
	"strconv"
	"strings"
	"testing"

	"furrow/checker/internal/fixture"
)

func TestQuote(t *testing.T) {
	long := strings.Repeat("a", 10<<20)
	cases := []struct{ in, want string }{
		{"ctl", `"ctl"`},
		{"tab\there", `"tab\there"`},
		{strings.Repeat("b", 60), `"` + strings.Repeat("b", 60) + `"`},
		{long, `"` + strings.Repeat("a", 60) + `…" (10485760 characters)`},
		{strings.Repeat("é", 61), `"` + strings.Repeat("é", 60) + `…" (61 characters)`},
		{"root:x:0:0:root:/root:/bin/bash,daemon:x:1:1:daemon:/usr/sbin:/usr/sbin/nologin", `"root:x:0:0:root:/root:/bin/bash,daemon:x:1:1:daemon:/usr/sbi…" (79 characters)`},
	}
	for _, c := range cases {
		if got := Quote(c.in); got != c.want {
			t.Errorf("Quote(%.20q) = %s, want %s", c.in, got, c.want)
		}
	}
	for in, want := range map[string]string{"ctl": "ctl", "two words": "two words", " ctl": `" ctl"`, "a\nb": `"a\nb"`, "": `""`, "x\u202ey": `"x\u202ey"`} {
		if got := Shown(in); got != want {
			t.Errorf("Shown(%q) = %s, want %s", in, got, want)
		}
	}
}

// TestReadCSVPadding: rows far shorter than a wide header make a table
// that is mostly padding; it is refused once the padding passes the
// bound, instead of growing to header width times rows.
func TestReadCSVPadding(t *testing.T) {
	var b strings.Builder
	for i := 0; i < 100000; i++ {
		if i > 0 {
			b.WriteByte(',')
		}
		b.WriteString("c" + strconv.Itoa(i))
	}
	b.WriteString("\n")
	for i := 0; i < 100; i++ {
		b.WriteString("1\n")
	}
	dir := t.TempDir()
	fixture.WriteData(t, dir, "plots.csv", []byte(b.String()))
	_, _, err := ReadTable(fixture.TablePlan(dir, "plots.csv"), "")
	if err == nil || !strings.Contains(err.Error(), "by row 12 the rows hold 11 cells and 1099989 blank ones pad them to the 100000 named columns of the header; a table that is mostly padding is refused (at most 1 blank cell per cell held, once past 1048576)") {
		t.Errorf("error %v", err)
	}
}
