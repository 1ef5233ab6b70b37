package contract

import (
	"fmt"
	"io"
	"slices"
	"strconv"
	"strings"
	"text/tabwriter"

	"furrow/checker/table"
	"furrow/plan"
)

// DesignSummary describes the data as CheckData found them: sizes, units
// per treatment cell, missing values and the levels seen.
type DesignSummary struct {
	// Data is the data file (with the sheet for XLSX), as in positions.
	Data string
	// Rows is the number of data rows.
	Rows int
	// UnitColumn is the unit column's name ("" when the plan has none).
	UnitColumn string
	// Units is the number of distinct units (0 without a unit column).
	Units int
	// CellColumns name the columns that make a treatment cell: the site
	// column first when there is one, then treatment and factor columns.
	CellColumns []string
	// Replicates is design.replicates (0 when not declared).
	Replicates int
	// Cells lists every combination of the cell columns' levels (declared
	// levels, else those seen), the last column varying fastest.
	Cells []CellCount
	// LeastUnits is the plan's design.least-units (nil when not declared).
	LeastUnits *plan.LeastUnits
	// Lost lists the units the cells lack in the data (fewer than
	// Replicates), in cell order, when the plan declares least-units;
	// see [LostUnit].
	Lost []LostUnit
	// Missing lists the declared columns with missing values, in plan order.
	Missing []ColumnMissing
	// Levels lists, for each declared categorical column other than the
	// unit, the levels seen and their row counts: declared levels first in
	// declared order, then undeclared ones in order of appearance.
	Levels []ColumnLevels
}

// CellCount is the number of units in one treatment cell.
type CellCount struct {
	Levels []string // one level per DesignSummary.CellColumns entry
	Units  int
}

// ColumnMissing is the number of missing values in a column.
type ColumnMissing struct {
	Column  string
	Missing int
}

// ColumnLevels are the levels seen in a categorical column.
type ColumnLevels struct {
	Column string
	Levels []string
	Rows   []int // rows per level
}

func (c *contractCheck) summary() *DesignSummary {
	s := &DesignSummary{Data: c.t.PosFile(), Rows: c.t.NumRows(), Replicates: c.p.Design.Replicates, Cells: c.cells,
		LeastUnits: c.p.Design.LeastUnits, Lost: c.lost}
	if c.unitCol != nil {
		s.UnitColumn = c.unitCol.Name
		s.Units = len(c.unitOrder)
	}
	for _, pc := range c.cellCols {
		s.CellColumns = append(s.CellColumns, pc.Name)
	}
	for _, pc := range c.present() {
		tc := c.t.Column(pc.Name)
		n := 0
		for _, m := range tc.Missing {
			if m {
				n++
			}
		}
		if n > 0 {
			s.Missing = append(s.Missing, ColumnMissing{Column: pc.Name, Missing: n})
		}
		if !pc.IsFactor() || pc.Role == plan.RoleUnit {
			continue
		}
		count := map[string]int{}
		var extra []string
		for i, v := range tc.Text {
			if tc.Missing[i] {
				continue
			}
			if count[v] == 0 && !slices.Contains(pc.Levels, v) {
				extra = append(extra, v)
			}
			count[v]++
		}
		cl := ColumnLevels{Column: pc.Name}
		for _, l := range append(slices.Clone(pc.Levels), extra...) {
			if count[l] > 0 {
				cl.Levels = append(cl.Levels, l)
				cl.Rows = append(cl.Rows, count[l])
			}
		}
		s.Levels = append(s.Levels, cl)
	}
	return s
}

// WriteText writes the summary as a few aligned lines of plain text:
//
//	data plots.csv: 144 rows, 72 units (plot)
//	units per cell (replicates declared: 4)
//	  site  untreated  reference  candidate
//	  S1    4          4          4
//	lost units (least accepted: 3 per cell, below: stop)
//	  site  treatment  block
//	  S2    reference  B3
//	levels seen (rows)
//	  treatment  untreated 48, reference 48, candidate 48
//	missing values
//	  juveniles  3
//
// With two or more cell columns, the first (the site, when there is one)
// makes the rows of the cell table and the combinations of the others'
// levels (joined by ":") its columns; with one, a single row "all".
func (s *DesignSummary) WriteText(w io.Writer) error {
	ew := &errWriter{w: w}
	fmt.Fprintf(ew, "data %s: %d %s", s.Data, s.Rows, table.Plural(s.Rows, "row", "rows"))
	if s.UnitColumn != "" {
		fmt.Fprintf(ew, ", %d %s (%s)", s.Units, table.Plural(s.Units, "unit", "units"), s.UnitColumn)
	}
	fmt.Fprintln(ew)
	if len(s.CellColumns) > 0 && len(s.Cells) > 0 {
		what := "units"
		if s.UnitColumn == "" {
			what = "rows"
		}
		if s.Replicates > 0 {
			fmt.Fprintf(ew, "%s per cell (replicates declared: %d)\n", what, s.Replicates)
		} else {
			fmt.Fprintf(ew, "%s per cell (replicates not declared)\n", what)
		}
		s.writeCells(ew)
	}
	if len(s.Lost) > 0 {
		s.writeLost(ew)
	}
	if len(s.Levels) > 0 {
		fmt.Fprintln(ew, "levels seen (rows)")
		tw := tabwriter.NewWriter(ew, 0, 0, 2, ' ', 0)
		for _, cl := range s.Levels {
			var parts []string
			for i, l := range cl.Levels {
				if i == maxShown {
					parts = append(parts, fmt.Sprintf("and %d more", len(cl.Levels)-maxShown))
					break
				}
				parts = append(parts, table.Shown(l)+" "+strconv.Itoa(cl.Rows[i]))
			}
			fmt.Fprintf(tw, "  %s\t%s\n", cl.Column, strings.Join(parts, ", "))
		}
		tw.Flush()
	}
	if len(s.Missing) > 0 {
		fmt.Fprintln(ew, "missing values")
		tw := tabwriter.NewWriter(ew, 0, 0, 2, ' ', 0)
		for _, m := range s.Missing {
			fmt.Fprintf(tw, "  %s\t%d\n", m.Column, m.Missing)
		}
		tw.Flush()
	}
	return ew.err
}

// writeCells writes the units-per-cell table.
func (s *DesignSummary) writeCells(w io.Writer) {
	// The first cell column makes the rows when it is not the only one.
	siteFirst := len(s.CellColumns) > 1
	var rowKeys, colKeys []string
	grid := map[[2]string]int{}
	rowSeen, colSeen := map[string]bool{}, map[string]bool{}
	for _, cc := range s.Cells {
		shown := make([]string, len(cc.Levels))
		for i, l := range cc.Levels {
			shown[i] = table.Shown(l)
		}
		r, c := "all", strings.Join(shown, ":")
		if siteFirst {
			r, c = shown[0], strings.Join(shown[1:], ":")
		}
		if !rowSeen[r] {
			rowSeen[r] = true
			rowKeys = append(rowKeys, r)
		}
		if !colSeen[c] {
			colSeen[c] = true
			colKeys = append(colKeys, c)
		}
		grid[[2]string{r, c}] = cc.Units
	}
	// A table of more than maxShown rows or columns (levels the plan does
	// not declare) is cut, and says so.
	more := ""
	if len(rowKeys) > maxShown || len(colKeys) > maxShown {
		more = fmt.Sprintf("  (%d %s and %d %s in all; the first %d of each are shown)\n", len(rowKeys), table.Plural(len(rowKeys), "row", "rows"),
			len(colKeys), table.Plural(len(colKeys), "column", "columns"), maxShown)
		rowKeys, colKeys = rowKeys[:min(len(rowKeys), maxShown)], colKeys[:min(len(colKeys), maxShown)]
	}
	tw := tabwriter.NewWriter(w, 0, 0, 2, ' ', 0)
	head := ""
	if siteFirst {
		head = s.CellColumns[0]
	}
	fmt.Fprintf(tw, "  %s", head)
	for _, c := range colKeys {
		fmt.Fprintf(tw, "\t%s", c)
	}
	fmt.Fprintln(tw)
	for _, r := range rowKeys {
		fmt.Fprintf(tw, "  %s", r)
		for _, c := range colKeys {
			fmt.Fprintf(tw, "\t%d", grid[[2]string{r, c}])
		}
		fmt.Fprintln(tw)
	}
	tw.Flush()
	fmt.Fprint(w, more)
}

// writeLost writes the lost units, one a line, with their cell levels
// and block ("?" where the blocks do not tell).
func (s *DesignSummary) writeLost(w io.Writer) {
	if l := s.LeastUnits; l != nil {
		fmt.Fprintf(w, "lost units (least accepted: %d per %s, below: %s)\n", l.Count, l.Per, l.Below)
	} else {
		fmt.Fprintln(w, "lost units")
	}
	tw := tabwriter.NewWriter(w, 0, 0, 2, ' ', 0)
	fmt.Fprintf(tw, "  %s\tblock\n", strings.Join(s.CellColumns, "\t"))
	for _, l := range s.Lost {
		b := l.Block
		if b == "" {
			b = "?"
		}
		fmt.Fprintf(tw, "  %s\t%s\n", strings.Join(l.Cell, "\t"), b)
	}
	tw.Flush()
}

// maxShown is the most levels, and cell-table rows and columns, the text
// summary lists.
const maxShown = 20

// errWriter keeps the first write error.
type errWriter struct {
	w   io.Writer
	err error
}

// Write writes p unless an earlier write failed; after a failure it
// discards p and reports success, so the first error is the one kept.
func (e *errWriter) Write(p []byte) (int, error) {
	if e.err != nil {
		return len(p), nil
	}
	n, err := e.w.Write(p)
	e.err = err
	return n, err
}
