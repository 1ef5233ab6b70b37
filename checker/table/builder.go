package table

import (
	"fmt"
	"math"
	"strings"

	"furrow/plan"
)

// Header cells that are not table columns (tableBuilder.pos).
const (
	blankCol    = -1 // no name: dropped, reported when it holds values
	repeatedCol = -2 // a name seen before: only the first is used
)

// tableBuilder collects rows for either reader.
type tableBuilder struct {
	t    *Table
	opts *readOptions
	// padRatio, when not 0, bounds the padding of short rows: at most
	// padRatio blank cells added per cell the file holds, once past
	// minPadding. held and padded count the cells so far.
	padRatio     int
	held, padded int
	// width is the number of header cells, including blank and repeated
	// ones.
	width int
	// pos maps a header cell index to its table column, blankCol or
	// repeatedCol.
	pos []int
	// blankFirst holds, per header index with no name, the first value
	// found in its column. Such columns are never stored: a header wider
	// than its names costs nothing per row.
	blankFirst map[int]blankValue
	// vals, native and has are the current row by table column (reused).
	vals   []string
	native []bool
	has    []bool
	// lim and diags hold the findings about cells made while rows are
	// added (bidirectional controls in levels).
	lim   *Limiter
	diags plan.Diagnostics
	// spaced lists, per table column with a factor role, each distinct
	// untrimmed level text in order of first occurrence; spacedAt finds
	// its entry.
	spaced   map[int][]*spacedText
	spacedAt map[int]map[string]*spacedText
}

// blankValue is the first value in a column whose header cell is blank.
type blankValue struct {
	text string
	row  int
}

// spacedText is one distinct level text that had white space trimmed.
type spacedText struct {
	raw   string
	row   int // table row of the first occurrence
	count int
}

// newTableBuilder makes the columns from the header cells. Blank header
// cells make no column (a value under one is reported at the end), and a
// repeated name is reported and only its first column kept. sizeHint is
// the expected number of rows (it only sets capacities).
func newTableBuilder(name, format, sheet string, headerRow int, header []string, o *readOptions, sizeHint int) (*tableBuilder, plan.Diagnostics) {
	// The hint only sets capacities: no more than a million cells.
	sizeHint = max(0, min(sizeHint, (1<<20)/max(len(header), 1)))
	t := &Table{Path: name, Format: format, Sheet: sheet, HeaderRow: headerRow, index: map[string]int{},
		rows: make([]int, 0, sizeHint)}
	b := &tableBuilder{t: t, opts: o, width: len(header), pos: make([]int, len(header)), lim: NewLimiter()}
	var diags plan.Diagnostics
	lim := NewLimiter()
	// The columns are allocated together: a header of a million names
	// costs one block, not a million.
	slab := make([]Column, 0, len(header))
	for i, h := range header {
		h = trimCell(h)
		if strings.HasPrefix(h, "\uFEFF") {
			h = trimCell(strings.TrimLeft(h, "\uFEFF"))
			diags = append(diags, plan.Diagnostic{
				Severity: plan.Warning, Code: "data-bom",
				Pos:     t.HeaderPos(i + 1),
				Summary: fmt.Sprintf("column name %s starts with a byte-order mark (U+FEFF), which is dropped; the header was likely pasted from a file saved with one", Quote(h)),
			})
		}
		if r, rn := plan.Bidi(h); r != 0 {
			lim.Add(&diags, "data-bidi", "", plan.Diagnostic{
				Severity: plan.Error, Code: "data-bidi",
				Pos:     t.HeaderPos(i + 1),
				Summary: fmt.Sprintf("column name %s %s", Quote(h), plan.BidiWords(r, rn)),
			})
		}
		if h == "" {
			b.pos[i] = blankCol
			continue
		}
		if j, dup := t.index[h]; dup {
			lim.Add(&diags, "data-header-repeated", "", plan.Diagnostic{
				Severity: plan.Error, Code: "data-header-repeated",
				Pos:     t.HeaderPos(i + 1),
				Summary: fmt.Sprintf("column name %s appears again (first as column %d); only the first is used", Quote(h), t.cols[j].Index),
			})
			b.pos[i] = repeatedCol
			continue
		}
		b.pos[i] = len(t.cols)
		t.index[h] = len(t.cols)
		slab = append(slab, Column{Name: h, Index: i + 1, Numeric: o.numeric[h]})
		c := &slab[len(slab)-1]
		if sizeHint > 0 {
			c.Text, c.Num, c.Missing = make([]string, 0, sizeHint), make([]float64, 0, sizeHint), make([]bool, 0, sizeHint)
		}
		t.cols = append(t.cols, c)
	}
	n := len(t.cols)
	b.vals, b.native, b.has = make([]string, n), make([]bool, n), make([]bool, n)
	return b, append(diags, lim.Summaries()...)
}

// add appends one data row: cells[j] is the cell at header index idx[j]
// (idx nil: at index j), in increasing order. native marks cells that are
// numbers in the file itself (XLSX number cells), parsed with "."
// whatever the plan's decimal mark; it may be nil. Cells beyond the
// header are ignored here (the readers report them); missing ones are
// blank. The error is a *CellsError when the table would be mostly
// blank cells that pad short rows.
func (b *tableBuilder) add(row int, idx []int, cells []string, native []bool) error {
	for k := range b.vals {
		b.vals[k], b.native[k], b.has[k] = "", false, false
	}
	for j, s := range cells {
		i := j
		if idx != nil {
			i = idx[j]
		}
		if i >= len(b.pos) {
			break
		}
		switch k := b.pos[i]; {
		case k >= 0:
			b.vals[k], b.has[k] = s, true
			b.native[k] = j < len(native) && native[j]
		case k == blankCol:
			if _, seen := b.blankFirst[i]; !seen {
				if v := trimCell(s); v != "" {
					if b.blankFirst == nil {
						b.blankFirst = map[int]blankValue{}
					}
					b.blankFirst[i] = blankValue{text: v, row: row}
				}
			}
		}
	}
	if b.padRatio > 0 {
		for _, h := range b.has {
			if h {
				b.held++
			} else {
				b.padded++
			}
		}
		if b.padded > max(minPadding, b.padRatio*b.held) {
			return &CellsError{Path: b.t.Path, Sheet: b.t.Sheet, Row: row, Columns: len(b.t.cols), Held: b.held, Padded: b.padded, Ratio: b.padRatio}
		}
	}
	b.t.rows = append(b.t.rows, row)
	for k, c := range b.t.cols {
		raw := b.vals[k]
		s := trimCell(raw)
		miss := b.opts.isMissing(s)
		v := math.NaN()
		if !miss {
			dec := b.opts.decimal
			if b.native[k] {
				dec = '.'
			}
			if x, ok := ParseNumber(s, dec); ok {
				v = x
			}
		}
		if !miss && b.isFactor(c.Name) {
			if b.has[k] && s != raw {
				b.noteSpaced(k, raw)
			}
			if r, rn := plan.Bidi(s); r != 0 {
				at := ""
				if b.t.Format == FormatXLSX {
					at = "cell " + CellRef(row, c.Index) + ": "
				}
				b.lim.Add(&b.diags, "data-bidi", c.Name, plan.Diagnostic{
					Severity: plan.Error, Code: "data-bidi",
					Pos: plan.Pos{File: b.t.PosFile(), Line: row, Column: c.Index}, Related: RelatedPos(b.opts.factor[c.Name]),
					Summary: fmt.Sprintf("%scolumn %s: level %s %s", at, Quote(c.Name), Quote(s), plan.BidiWords(r, rn)),
				})
			}
		}
		c.Text = append(c.Text, s)
		c.Num = append(c.Num, v)
		c.Missing = append(c.Missing, miss)
	}
	return nil
}

// isFactor reports whether the plan gives the named column a factor role.
func (b *tableBuilder) isFactor(name string) bool {
	_, ok := b.opts.factor[name]
	return ok
}

// noteSpaced counts a level text of table column k that had white space
// trimmed; the current row is the last one added.
func (b *tableBuilder) noteSpaced(k int, raw string) {
	if b.spacedAt == nil {
		b.spaced, b.spacedAt = map[int][]*spacedText{}, map[int]map[string]*spacedText{}
	}
	if b.spacedAt[k] == nil {
		b.spacedAt[k] = map[string]*spacedText{}
	}
	st := b.spacedAt[k][raw]
	if st == nil {
		st = &spacedText{raw: raw, row: len(b.t.rows) - 1}
		b.spacedAt[k][raw] = st
		b.spaced[k] = append(b.spaced[k], st)
	}
	st.count++
}

// spacedWarnings reports each distinct level text that had white space
// trimmed, once, at its first cell, with its count.
func (b *tableBuilder) spacedWarnings() plan.Diagnostics {
	var diags plan.Diagnostics
	lim := NewLimiter()
	t := b.t
	for k, c := range t.cols {
		for _, st := range b.spaced[k] {
			trimmed := trimCell(st.raw)
			at, where := "", fmt.Sprintf("%d cells, first at row %d", st.count, t.rows[st.row])
			if st.count == 1 {
				where = fmt.Sprintf("1 cell, row %d", t.rows[st.row])
			}
			if t.Format == FormatXLSX {
				at = "cell " + CellRef(t.rows[st.row], c.Index) + ": "
			}
			lim.Add(&diags, "data-level-space", c.Name, plan.Diagnostic{
				Severity: plan.Warning, Code: "data-level-space",
				Pos: t.Pos(st.row, c.Index), Related: RelatedPos(b.opts.factor[c.Name]),
				Summary: fmt.Sprintf("%scolumn %s: level %s has %s (%s); it is read as %s",
					at, Quote(c.Name), Quote(st.raw), spaceWords(st.raw), where, Quote(trimmed)),
			})
		}
	}
	return append(diags, lim.Summaries()...)
}

// blankRow reports whether every cell of a row is blank.
func blankRow(cells []string) bool {
	for _, s := range cells {
		if trimCell(s) != "" {
			return false
		}
	}
	return true
}

// finish reports the columns with no name that hold values, and the level
// texts that had white space trimmed.
func (b *tableBuilder) finish() (*Table, plan.Diagnostics) {
	t := b.t
	diags := append(b.spacedWarnings(), b.diags...)
	diags = append(diags, b.lim.Summaries()...)
	lim := NewLimiter()
	for i := range b.pos {
		v, ok := b.blankFirst[i]
		if !ok {
			continue
		}
		lim.Add(&diags, "data-header-blank", "", plan.Diagnostic{
			Severity: plan.Error, Code: "data-header-blank",
			Pos:     t.HeaderPos(i + 1),
			Summary: fmt.Sprintf("column %d has no name in the header but holds values (first %s at row %d)", i+1, Quote(v.text), v.row),
		})
	}
	return t, append(diags, lim.Summaries()...)
}
