package plan

import (
	"cmp"
	"slices"
	"strings"
)

// Severity says whether a diagnostic stops the work (Error) or is carried
// along (Warning).
type Severity int

// Severities.
const (
	Error Severity = iota
	Warning
)

// String returns "error" or "warning".
func (s Severity) String() string {
	if s == Warning {
		return "warning"
	}
	return "error"
}

// Diagnostic is one finding about a plan or about data checked against a
// plan. Pos is where the problem is; Related are other positions that
// explain it (for a data finding, the plan line that declared what was
// expected).
type Diagnostic struct {
	Severity Severity
	// Code is a short stable identifier of the kind of finding, e.g.
	// "unknown-column" or "level-undeclared"; tests and --json use it.
	Code    string
	Pos     Pos
	Path    string // data path in the plan, e.g. "endpoints[0].steps[1].fixed[2]" (optional)
	Summary string // one plain sentence, lower case, no final period
	Related []Pos
}

// Error formats the diagnostic as "pos: summary".
func (d Diagnostic) Error() string {
	return d.Pos.String() + ": " + d.Summary
}

// Diagnostics is a list of findings. A nil list is a valid empty list.
type Diagnostics []Diagnostic

// HasErrors reports whether any diagnostic is an error.
func (ds Diagnostics) HasErrors() bool {
	for _, d := range ds {
		if d.Severity == Error {
			return true
		}
	}
	return false
}

// Sort orders diagnostics by file, line, column, then summary, and drops
// exact duplicates.
func (ds Diagnostics) Sort() Diagnostics {
	out := slices.Clone(ds)
	slices.SortStableFunc(out, func(a, b Diagnostic) int {
		return cmp.Or(
			strings.Compare(a.Pos.File, b.Pos.File),
			cmp.Compare(a.Pos.Line, b.Pos.Line),
			cmp.Compare(a.Pos.Column, b.Pos.Column),
			strings.Compare(a.Summary, b.Summary),
		)
	})
	return slices.CompactFunc(out, func(a, b Diagnostic) bool {
		return a.Pos == b.Pos && a.Summary == b.Summary && a.Severity == b.Severity
	})
}

// Err returns the diagnostics as an error when any is an error, else nil.
func (ds Diagnostics) Err() error {
	if !ds.HasErrors() {
		return nil
	}
	return diagError(ds)
}

type diagError Diagnostics

func (e diagError) Error() string {
	var b strings.Builder
	for i, d := range e {
		if i > 0 {
			b.WriteByte('\n')
		}
		b.WriteString(d.Error())
	}
	return b.String()
}
