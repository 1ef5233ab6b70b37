package table

import (
	"fmt"

	"furrow/plan"
)

// FindingsPerColumn is how many findings of one code are listed for one
// column before the rest are summarised in a single "and N more" line.
const FindingsPerColumn = 20

// Limiter keeps at most FindingsPerColumn findings per code and column and
// summarises the rest.
type Limiter struct {
	n     map[string]int
	first map[string]plan.Diagnostic
	col   map[string]string
	order []string
}

// NewLimiter returns an empty Limiter.
func NewLimiter() *Limiter {
	return &Limiter{n: map[string]int{}, first: map[string]plan.Diagnostic{}, col: map[string]string{}}
}

// Add appends d to ds unless FindingsPerColumn findings with the same code
// and column were already added.
func (l *Limiter) Add(ds *plan.Diagnostics, code, column string, d plan.Diagnostic) {
	key := code + "\x00" + column
	l.n[key]++
	switch n := l.n[key]; {
	case n <= FindingsPerColumn:
		*ds = append(*ds, d)
	case n == FindingsPerColumn+1:
		l.first[key] = d
		l.col[key] = column
		l.order = append(l.order, key)
	}
}

// Summaries returns one "and N more" diagnostic per code and column that
// went over the limit, positioned at the first finding left out.
func (l *Limiter) Summaries() plan.Diagnostics {
	var out plan.Diagnostics
	for _, key := range l.order {
		d := l.first[key]
		more := l.n[key] - FindingsPerColumn
		where := ""
		if col := l.col[key]; col != "" {
			where = fmt.Sprintf(" in column %q", col)
		}
		out = append(out, plan.Diagnostic{Severity: d.Severity, Code: d.Code, Pos: d.Pos, Related: d.Related,
			Summary: fmt.Sprintf("and %d more %s findings%s from here on", more, d.Code, where)})
	}
	return out
}
