package main

import (
	"encoding/json"
	"fmt"
	"io"

	"furrow/checker"
	"furrow/plan"
)

// report is the --json output of lint and check, version 1 of its shape.
// Fields are never removed within a version; arrays are never null.
//
//	{
//	  "format": "furrow-findings/1",
//	  "command": "check",
//	  "plan": "examples/wheat-varieties/plan.yaml",
//	  "data": "examples/wheat-varieties/plots.csv",   // check only
//	  "ok": true,                                     // no errors
//	  "errors": 0,
//	  "warnings": 0,
//	  "findings": [ finding, ... ],                   // sorted by file, line, column
//	  "design": design                                // check only, when the data were read
//	}
type report struct {
	Format   string    `json:"format"`
	Command  string    `json:"command"`
	Plan     string    `json:"plan"`
	Data     string    `json:"data,omitempty"`
	OK       bool      `json:"ok"`
	Errors   int       `json:"errors"`
	Warnings int       `json:"warnings"`
	Findings []finding `json:"findings"`
	Design   *design   `json:"design,omitempty"` // check only, when the data were read
}

// reportFormat names the shape of report.
const reportFormat = "furrow-findings/1"

// finding is one diagnostic in the --json output. Line and column are 0
// when unknown. Path is the data path in the plan (e.g.
// "endpoints[0].steps[1]"), when known.
type finding struct {
	Severity string     `json:"severity"` // "error" or "warning"
	Code     string     `json:"code"`
	File     string     `json:"file"`
	Line     int        `json:"line"`
	Column   int        `json:"column"`
	Path     string     `json:"path,omitempty"`
	Summary  string     `json:"summary"`
	Related  []position `json:"related"`
}

// position is a related place in a plan or data file.
type position struct {
	File   string `json:"file"`
	Line   int    `json:"line"`
	Column int    `json:"column"`
}

// counts returns the number of errors and of warnings.
func counts(ds plan.Diagnostics) (errs, warns int) {
	for _, d := range ds {
		if d.Severity == plan.Error {
			errs++
		} else {
			warns++
		}
	}
	return errs, warns
}

// relPos returns the position with its file made relative to the cwd.
func (e *env) relPos(p plan.Pos) plan.Pos {
	p.File = e.rel(p.File)
	return p
}

// newReport builds the JSON report of sorted diagnostics.
func (e *env) newReport(cmd, planPath, dataPath string, ds plan.Diagnostics) report {
	errs, warns := counts(ds)
	r := report{
		Format:   reportFormat,
		Command:  cmd,
		Plan:     e.rel(planPath),
		Data:     e.rel(dataPath),
		OK:       errs == 0,
		Errors:   errs,
		Warnings: warns,
		Findings: []finding{},
	}
	for _, d := range ds {
		p := e.relPos(d.Pos)
		f := finding{
			Severity: d.Severity.String(),
			Code:     d.Code,
			File:     p.File,
			Line:     p.Line,
			Column:   p.Column,
			Path:     d.Path,
			Summary:  d.Summary,
			Related:  []position{},
		}
		for _, q := range d.Related {
			q = e.relPos(q)
			f.Related = append(f.Related, position{File: q.File, Line: q.Line, Column: q.Column})
		}
		r.Findings = append(r.Findings, f)
	}
	return r
}

// writeJSON prints v as indented JSON with a final newline.
func writeJSON(w io.Writer, v any) error {
	b, err := json.MarshalIndent(v, "", "  ")
	if err != nil {
		return err
	}
	_, err = w.Write(append(b, '\n'))
	return err
}

// writeFindings prints sorted diagnostics as text, one per line:
//
//	FILE:LINE:COL: SEVERITY: SUMMARY [CODE]
//		see FILE:LINE:COL
//
// followed by nothing else; the caller prints the totals.
func (e *env) writeFindings(w io.Writer, ds plan.Diagnostics) {
	for _, d := range ds {
		code := ""
		if d.Code != "" {
			code = " [" + d.Code + "]"
		}
		fmt.Fprintf(w, "%s: %s: %s%s\n", e.relPos(d.Pos), d.Severity, d.Summary, code)
		for _, q := range d.Related {
			fmt.Fprintf(w, "\tsee %s\n", e.relPos(q))
		}
	}
}

// totals words the number of errors and warnings: "2 errors, 1 warning".
func totals(errs, warns int) string {
	return plural(errs, "error") + ", " + plural(warns, "warning")
}

func plural(n int, word string) string {
	if n == 1 {
		return "1 " + word
	}
	return fmt.Sprintf("%d %ss", n, word)
}

// design is the design as seen in the data, in the --json output of check.
type design struct {
	Data        string       `json:"data"`
	Rows        int          `json:"rows"`
	UnitColumn  string       `json:"unit_column,omitempty"`
	Units       int          `json:"units"`
	Replicates  int          `json:"replicates"` // declared; 0 = not declared
	CellColumns []string     `json:"cell_columns"`
	Cells       []designCell `json:"cells"`
	Lost        []lostUnit   `json:"lost"`
	Missing     []missing    `json:"missing"`
}

// lostUnit is a unit a cell lacks in the data (fewer units than declared),
// with its cell levels and its block ("" when the blocks do not tell).
type lostUnit struct {
	Cell  []string `json:"cell"`
	Block string   `json:"block"`
}

// designCell is the number of units in one combination of cell levels.
type designCell struct {
	Levels []string `json:"levels"`
	Units  int      `json:"units"`
}

// missing is the number of missing values in one column.
type missing struct {
	Column  string `json:"column"`
	Missing int    `json:"missing"`
}

// newDesign copies a design summary into the JSON shape; nil stays nil.
func (e *env) newDesign(s *checker.DesignSummary) *design {
	if s == nil {
		return nil
	}
	d := &design{
		Data:        e.rel(s.Data),
		Rows:        s.Rows,
		UnitColumn:  s.UnitColumn,
		Units:       s.Units,
		Replicates:  s.Replicates,
		CellColumns: append([]string{}, s.CellColumns...),
		Cells:       []designCell{},
		Lost:        []lostUnit{},
		Missing:     []missing{},
	}
	for _, l := range s.Lost {
		d.Lost = append(d.Lost, lostUnit{Cell: append([]string{}, l.Cell...), Block: l.Block})
	}
	for _, c := range s.Cells {
		d.Cells = append(d.Cells, designCell{Levels: append([]string{}, c.Levels...), Units: c.Units})
	}
	for _, m := range s.Missing {
		d.Missing = append(d.Missing, missing{Column: m.Column, Missing: m.Missing})
	}
	return d
}
