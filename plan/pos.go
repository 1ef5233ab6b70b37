package plan

import "fmt"

// Pos is a position in a file: a plan (line and column of a YAML node) or a
// data file (Line is the row number a user sees in the file or spreadsheet,
// Column the 1-based column number). A Pos is valid when Line > 0.
//
// String has four forms:
//
//	file:line:col   a full position
//	line:col        no file name
//	file            file only (Line == 0)
//	-               nothing known
type Pos struct {
	File   string
	Line   int
	Column int
}

// IsValid reports whether the position names a line.
func (p Pos) IsValid() bool { return p.Line > 0 }

// String formats the position in one of the documented forms.
func (p Pos) String() string {
	switch {
	case p.Line > 0 && p.File != "":
		if p.Column > 0 {
			return fmt.Sprintf("%s:%d:%d", p.File, p.Line, p.Column)
		}
		return fmt.Sprintf("%s:%d", p.File, p.Line)
	case p.Line > 0:
		if p.Column > 0 {
			return fmt.Sprintf("%d:%d", p.Line, p.Column)
		}
		return fmt.Sprintf("%d", p.Line)
	case p.File != "":
		return p.File
	}
	return "-"
}
