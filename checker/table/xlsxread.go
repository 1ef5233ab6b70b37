package table

import (
	"bytes"
	"encoding/xml"
	"errors"
	"fmt"
	"io"
	"math"
	"strconv"
	"strings"

	"github.com/xuri/excelize/v2"

	"furrow/plan"
	"furrow/schema"
)

// oleMagic opens an OLE compound file: an old .xls workbook, or an .xlsx
// workbook encrypted with a password.
var oleMagic = []byte{0xD0, 0xCF, 0x11, 0xE0, 0xA1, 0xB1, 0x1A, 0xE1}

// Sheet bounds of ECMA-376 (and of every spreadsheet program).
const (
	maxSheetRows = 1 << 20 // 1048576
	maxSheetCols = 1 << 14 // 16384, column XFD
)

// readXLSX reads one sheet of an XLSX workbook: the sheet the plan names,
// or the first sheet. Number cells (including the cached values of
// formulas) keep their value; cells with a date or time number format
// become ISO 8601 text; text cells are read as text and parsed as numbers
// with the plan's decimal mark, so numbers stored as text are numbers too.
// The sheet is streamed row by row (see xlsxzip.go for the bounds on what
// is unpacked); a shared string the workbook does not hold and a formula
// saved without its value are error findings at their cell.
func readXLSX(name string, data []byte, o *readOptions) (*Table, plan.Diagnostics, error) {
	if !bytes.HasPrefix(data, zipMagic) {
		if bytes.HasPrefix(data, oleMagic) {
			return nil, nil, fmt.Errorf("reading data %s: the file is an old-format .xls workbook or a password-protected one, not an xlsx workbook; save it as an Excel workbook (.xlsx) without a password", name)
		}
		if enc := plan.TextEncoding(data); enc != "" {
			return nil, nil, fmt.Errorf("reading data %s: the file is %s, not an xlsx workbook", name, enc)
		}
		if checkText(data) == nil {
			return nil, nil, fmt.Errorf("reading data %s: the file is text, not an xlsx workbook; declare format: csv", name)
		}
		return nil, nil, fmt.Errorf("reading data %s: the file is not an xlsx workbook", name)
	}
	w, err := openWorkbook(name, data, o.maxSize, o.ratio)
	if err != nil {
		return nil, nil, err
	}
	names := make([]string, len(w.sheets))
	for i, s := range w.sheets {
		names[i] = s.name
	}
	sheet := o.sheet
	if sheet == "" {
		if len(names) == 0 {
			return nil, nil, fmt.Errorf("reading data %s: the workbook has no sheets", name)
		}
		sheet = names[0]
	}
	var ref *sheetRef
	for i := range w.sheets {
		if w.sheets[i].name == sheet {
			ref = &w.sheets[i]
			break
		}
	}
	if ref == nil {
		quoted := make([]string, 0, len(names))
		for i, s := range names {
			if i == 20 {
				quoted = append(quoted, fmt.Sprintf("and %d more", len(names)-20))
				break
			}
			quoted = append(quoted, Quote(s))
		}
		summary := fmt.Sprintf("sheet %s is not in the workbook; its sheets are %s", Quote(sheet), strings.Join(quoted, ", "))
		if s := schema.Suggest(sheet, names); s != "" {
			summary += fmt.Sprintf("; did you mean %s?", Quote(s))
		}
		return nil, plan.Diagnostics{{
			Severity: plan.Error, Code: "data-sheet-missing",
			Pos: plan.Pos{File: name}, Summary: summary, Related: RelatedPos(o.dataPos),
		}}, nil
	}
	part := w.part(ref.part)
	if ref.part == "" || part == nil {
		return nil, nil, w.damaged("it has no part for sheet %s", Quote(sheet))
	}
	// A shared string per byte of the sheet's XML is more than the sheet
	// has cells for (a cell takes ten bytes of XML or more).
	maxShared := int(max(min(int64(min(part.UncompressedSize64, 1<<62)), 16*int64(len(data))), 1<<20))
	styles, err := w.readStyles()
	if err != nil {
		return nil, nil, err
	}
	sst, err := w.readSharedStrings(maxShared)
	if err != nil {
		return nil, nil, err
	}
	pr, err := w.open(ref.part)
	if err != nil {
		return nil, nil, err
	}
	defer pr.Close()
	sr := &sheetReader{p: pr, sheet: sheet}
	cv := &cellValues{sst: sst, styles: styles, date1904: w.date1904}
	posFile := name + "[" + sheet + "]"

	var (
		diags plan.Diagnostics
		b     *tableBuilder
		lim   = NewLimiter()
		blank []int
		idx   []int
		texts []string
		nat   []bool
		// prevRow is the number of the last row the sheet holds.
		prevRow int
	)
	for {
		rowNum, cells, err := sr.next()
		if errors.Is(err, io.EOF) {
			break
		}
		if err != nil {
			return nil, nil, err
		}
		if b != nil {
			// Rows the sheet does not hold are blank rows.
			for r := prevRow + 1; r < rowNum; r++ {
				blank = append(blank, r)
			}
		}
		prevRow = rowNum
		// The header's width bounds the cells kept; before the header all
		// cells are.
		width := maxSheetCols
		if b != nil {
			width = b.width
		}
		idx, texts, nat = idx[:0], texts[:0], nat[:0]
		last, extra := 0, 0
		for _, c := range cells {
			text, native, problem := cv.value(c)
			if problem != "" {
				lim.Add(&diags, "data-xlsx-cell", "", plan.Diagnostic{
					Severity: plan.Error, Code: "data-xlsx-cell",
					Pos:     plan.Pos{File: posFile, Line: rowNum, Column: c.col},
					Summary: fmt.Sprintf("cell %s %s", CellRef(rowNum, c.col), problem),
				})
			}
			if c.col > width {
				if extra == 0 && trimCell(text) != "" {
					extra = c.col
					lim.Add(&diags, "data-ragged-row", "", plan.Diagnostic{
						Severity: plan.Error, Code: "data-ragged-row",
						Pos:     plan.Pos{File: posFile, Line: rowNum, Column: c.col},
						Summary: fmt.Sprintf("cell %s holds %s but its column has no header", CellRef(rowNum, c.col), Quote(trimCell(text))),
					})
				}
				continue
			}
			idx, texts, nat = append(idx, c.col-1), append(texts, text), append(nat, native)
			if text != "" {
				last = c.col
			}
		}
		if blankRow(texts) && extra == 0 {
			if b != nil {
				blank = append(blank, rowNum)
			}
			continue
		}
		if b == nil {
			// The header ends at its last name.
			header := make([]string, last)
			for j, i := range idx {
				if i < last {
					header[i] = texts[j]
				}
			}
			var hd plan.Diagnostics
			b, hd = newTableBuilder(name, FormatXLSX, sheet, rowNum, header, o, 0)
			b.padRatio = padRatioXLSX
			diags = append(diags, hd...)
			continue
		}
		if err := b.add(rowNum, idx, texts, nat); err != nil {
			return nil, nil, err
		}
	}
	diags = append(diags, lim.Summaries()...)
	if b == nil {
		return nil, append(diags, plan.Diagnostic{
			Severity: plan.Error, Code: "data-no-header",
			Pos: plan.Pos{File: posFile}, Summary: fmt.Sprintf("sheet %s is empty: no header row", Quote(sheet)),
			Related: RelatedPos(o.dataPos),
		}), nil
	}
	t, fd := b.finish()
	diags = append(diags, fd...)
	diags = append(diags, blankRowsWarning(t.PosFile(), trimTrailing(blank, t))...)
	return t, diags, nil
}

// xcell is one cell of a sheet row as the sheet's XML holds it.
type xcell struct {
	col     int    // 1-based column
	typ     string // the t attribute ("" for a number)
	style   int    // the s attribute
	value   string // the text of <v>
	hasV    bool
	formula string // the text of <f>
	hasF    bool
	inline  string // the text of <is>
	hasIS   bool
}

// sheetReader streams the rows of a sheet part.
type sheetReader struct {
	p      *partReader
	sheet  string
	inData bool
	row    int // number of the last row returned
	cells  []xcell
}

// damaged words a structural problem of the sheet at a row.
func (s *sheetReader) damaged(row int, format string, args ...any) error {
	return fmt.Errorf("reading data %s, sheet %s, row %d: the sheet is damaged: %s", s.p.w.name, Quote(s.sheet), row, fmt.Sprintf(format, args...))
}

// next returns the next row of the sheet (its number and its cells in
// column order), or io.EOF after the last. The cells are reused by the
// next call.
func (s *sheetReader) next() (int, []xcell, error) {
	for {
		tok, err := s.p.token()
		if err != nil {
			return 0, nil, err
		}
		switch e := tok.(type) {
		case xml.StartElement:
			switch {
			case e.Name.Local == "sheetData":
				s.inData = true
			case e.Name.Local == "row" && s.inData:
				return s.readRow(e)
			case s.inData:
				if err := s.p.skip(); err != nil {
					return 0, nil, err
				}
			}
		case xml.EndElement:
			if e.Name.Local == "sheetData" {
				s.inData = false
			}
		}
	}
}

// readRow reads one row element, its start just read.
func (s *sheetReader) readRow(e xml.StartElement) (int, []xcell, error) {
	num := s.row + 1
	if r, ok := attr(e, "r"); ok {
		n, err := strconv.Atoi(strings.TrimSpace(r))
		if err != nil || n < 1 || n > maxSheetRows {
			return 0, nil, s.damaged(num, "the row number %s is not one from 1 to %d", Quote(r), maxSheetRows)
		}
		if n <= s.row {
			return 0, nil, s.damaged(n, "row %d comes after row %d (rows must be in order)", n, s.row)
		}
		num = n
	}
	if num > maxSheetRows {
		return 0, nil, s.damaged(num, "a sheet has at most %d rows", maxSheetRows)
	}
	s.row = num
	s.cells = s.cells[:0]
	depth := s.p.depth
	for {
		tok, err := s.p.token()
		if err != nil {
			return 0, nil, s.p.endOfPart(err)
		}
		switch t := tok.(type) {
		case xml.StartElement:
			if t.Name.Local != "c" {
				if err := s.p.skip(); err != nil {
					return 0, nil, err
				}
				continue
			}
			if err := s.readCell(t, num); err != nil {
				return 0, nil, err
			}
		case xml.EndElement:
			if s.p.depth < depth {
				return num, s.cells, nil
			}
		}
	}
}

// readCell reads one c element of row num, its start just read.
func (s *sheetReader) readCell(e xml.StartElement, num int) error {
	c := xcell{col: 1}
	if n := len(s.cells); n > 0 {
		c.col = s.cells[n-1].col + 1
	}
	if r, ok := attr(e, "r"); ok {
		row, col, okRef := parseCellRef(r)
		if !okRef {
			return s.damaged(num, "%s is not a cell reference (column A to XFD, row 1 to %d)", Quote(r), maxSheetRows)
		}
		if row != num {
			return s.damaged(num, "cell %s is in row %d", r, num)
		}
		if n := len(s.cells); n > 0 && col <= s.cells[n-1].col {
			return s.damaged(num, "cell %s comes after cell %s (cells must be in order)", r, CellRef(num, s.cells[n-1].col))
		}
		c.col = col
	}
	if c.col > maxSheetCols {
		return s.damaged(num, "a row has at most %d cells (A to XFD)", maxSheetCols)
	}
	c.typ, _ = attr(e, "t")
	if v, ok := attr(e, "s"); ok {
		if n, err := strconv.Atoi(v); err == nil && n >= 0 {
			c.style = n
		}
	}
	depth := s.p.depth
	for {
		tok, err := s.p.token()
		if err != nil {
			return s.p.endOfPart(err)
		}
		switch t := tok.(type) {
		case xml.StartElement:
			var err error
			switch t.Name.Local {
			case "v":
				c.value, err = s.p.text()
				c.hasV = true
			case "f":
				c.formula, err = s.p.text()
				c.hasF = true
			case "is":
				c.inline, err = s.inlineText()
				c.hasIS = true
			default:
				err = s.p.skip()
			}
			if err != nil {
				return err
			}
		case xml.EndElement:
			if s.p.depth < depth {
				s.cells = append(s.cells, c)
				return nil
			}
		}
	}
}

// inlineText reads the text of an is element (its t runs, without
// phonetic readings), its start just read.
func (s *sheetReader) inlineText() (string, error) {
	var b strings.Builder
	depth := s.p.depth
	for {
		tok, err := s.p.token()
		if err != nil {
			return "", s.p.endOfPart(err)
		}
		switch t := tok.(type) {
		case xml.StartElement:
			switch t.Name.Local {
			case "rPh", "phoneticPr":
				if err := s.p.skip(); err != nil {
					return "", err
				}
			case "t":
				txt, err := s.p.text()
				if err != nil {
					return "", err
				}
				if b.Len()+len(txt) > maxTextRun {
					return "", fmt.Errorf("reading data %s: a cell of sheet %s holds a text of more than %s; a cell holds at most 32767 characters",
						s.p.w.name, Quote(s.sheet), plan.ByteSize(maxTextRun))
				}
				b.WriteString(txt)
			}
		case xml.EndElement:
			if s.p.depth < depth {
				return unescapeXString(b.String()), nil
			}
		}
	}
}

// parseCellRef reads "AB12" (an optional $ before each part) as row 12,
// column 28; ok is false unless the column is A to XFD and the row 1 to
// 1048576.
func parseCellRef(ref string) (row, col int, ok bool) {
	ref = strings.TrimPrefix(ref, "$")
	i := 0
	for i < len(ref) && i < 4 {
		ch := ref[i] | 0x20 // lower case
		if ch < 'a' || ch > 'z' {
			break
		}
		col = col*26 + int(ch-'a') + 1
		i++
	}
	if i == 0 || col > maxSheetCols {
		return 0, 0, false
	}
	digits := strings.TrimPrefix(ref[i:], "$")
	if digits == "" || len(digits) > 7 || digits[0] == '0' {
		return 0, 0, false
	}
	for j := 0; j < len(digits); j++ {
		if digits[j] < '0' || digits[j] > '9' {
			return 0, 0, false
		}
		row = row*10 + int(digits[j]-'0')
	}
	if row > maxSheetRows {
		return 0, 0, false
	}
	return row, col, true
}

// cellValues turns cells into the texts a Table holds.
type cellValues struct {
	sst      []string
	styles   []int // date kind of each cell format
	date1904 bool
}

// value returns the text of a cell, whether it is a number cell (native:
// parsed with "." whatever the plan's decimal mark) and, when the cell
// cannot be read as the workbook means it, what is wrong ("" when
// nothing): the text is then "".
func (x *cellValues) value(c xcell) (text string, native bool, problem string) {
	if c.hasF && !c.hasV && !c.hasIS {
		what := "a formula"
		if f := strings.TrimSpace(c.formula); f != "" {
			what = "the formula " + Quote("="+f)
		}
		return "", false, fmt.Sprintf("holds %s saved without its value; furrow reads the values a spreadsheet program saves with its formulas: open the workbook in one, let it calculate, and save it", what)
	}
	switch c.typ {
	case "s":
		if !c.hasV || strings.TrimSpace(c.value) == "" {
			return "", false, ""
		}
		i, err := strconv.Atoi(strings.TrimSpace(c.value))
		if err != nil || i < 0 || i >= len(x.sst) {
			return "", false, fmt.Sprintf("refers to shared string %s, but the workbook holds %s; the workbook is damaged: open it in a spreadsheet program and save it again",
				Quote(c.value), sharedCount(len(x.sst)))
		}
		return x.sst[i], false, ""
	case "inlineStr":
		if c.hasIS {
			return c.inline, false, ""
		}
		return c.value, false, ""
	case "b":
		if !c.hasV {
			return "", false, ""
		}
		if v := strings.TrimSpace(c.value); v == "1" || strings.EqualFold(v, "true") {
			return "TRUE", false, ""
		}
		return "FALSE", false, ""
	case "str", "e", "d":
		return c.value, false, ""
	}
	if !c.hasV {
		return "", false, ""
	}
	v, err := strconv.ParseFloat(strings.TrimSpace(c.value), 64)
	if err != nil {
		return c.value, false, "" // not a number after all: its text (1e309 is out of range)
	}
	if kind := x.dateKind(c.style); kind > 0 {
		if iso, ok := isoDate(v, kind, x.date1904); ok {
			return iso, false, ""
		}
	}
	return formatNumberText(v), true, ""
}

// sharedCount words the size of the shared-string table.
func sharedCount(n int) string {
	switch n {
	case 0:
		return "no shared strings"
	case 1:
		return "1 shared string (number 0)"
	}
	return fmt.Sprintf("%d shared strings (numbers 0 to %d)", n, n-1)
}

// dateKind reports whether a cell format shows a date or time (0 not a
// date, 1 date, 2 date and time, 3 time only).
func (x *cellValues) dateKind(style int) int {
	if style < 0 || style >= len(x.styles) {
		return 0
	}
	return x.styles[style]
}

// builtinDateKind classifies the built-in number formats of ECMA-376
// Part 1, 18.8.30 (numFmt): 14-17 and 22 show dates (22 with time), 18-21
// and 45-47 times; 27-36 and 50-58 are East Asian date formats.
func builtinDateKind(id int) int {
	switch {
	case id >= 14 && id <= 17, id >= 27 && id <= 36, id >= 50 && id <= 58:
		return 1
	case id == 22:
		return 2
	case id >= 18 && id <= 21, id >= 45 && id <= 47:
		return 3
	}
	return 0
}

// dateFormatKind classifies a custom number format code by the date and
// time tokens (y, m, d, h, s) outside quoted text, escapes and brackets.
func dateFormatKind(code string) int {
	if sec, _, ok := strings.Cut(code, ";"); ok {
		code = sec
	}
	var hasDate, hasTime, hasM bool
	for i := 0; i < len(code); i++ {
		switch ch := code[i]; ch {
		case '"':
			for i++; i < len(code) && code[i] != '"'; i++ {
			}
		case '\\', '_', '*':
			i++
		case '[':
			j := strings.IndexByte(code[i:], ']')
			if j < 0 {
				return 0
			}
			inner := strings.ToLower(code[i+1 : i+j])
			if inner != "" && strings.Trim(inner, "hms") == "" {
				hasTime = true
			}
			i += j
		case 'y', 'Y', 'd', 'D':
			hasDate = true
		case 'h', 'H', 's', 'S':
			hasTime = true
		case 'm', 'M':
			hasM = true
		case 'g', 'G':
			if strings.HasPrefix(strings.ToLower(code[i:]), "general") {
				i += len("general") - 1
			}
		}
	}
	// m is a month in a date format and minutes next to hours or seconds;
	// alone (as in "mmm") it is a month.
	switch {
	case hasDate && hasTime:
		return 2
	case hasDate:
		return 1
	case hasTime:
		return 3
	case hasM:
		return 1
	}
	return 0
}

// isoDate writes a date serial number as YYYY-MM-DD (kind 1), with
// THH:MM:SS when it has a time of day (kind 2), or as HH:MM:SS (kind 3).
func isoDate(v float64, kind int, date1904 bool) (string, bool) {
	if v < 0 || v > 2958465 { // 9999-12-31
		return "", false
	}
	tm, err := excelize.ExcelDateToTime(v, date1904)
	if err != nil {
		return "", false
	}
	tm = tm.Round(1e9)
	_, frac := math.Modf(v)
	switch {
	case kind == 3 && v < 1:
		return tm.Format("15:04:05"), true
	case frac != 0 && kind != 1:
		return tm.Format("2006-01-02T15:04:05"), true
	}
	return tm.Format("2006-01-02"), true
}

// formatNumberText writes a number cell in shortest round-trip form, plain
// decimal for ordinary magnitudes (so 1000000 stays 1000000).
func formatNumberText(v float64) string {
	if a := math.Abs(v); a == 0 || (a >= 1e-6 && a < 1e21) {
		return strconv.FormatFloat(v, 'f', -1, 64)
	}
	return strconv.FormatFloat(v, 'g', -1, 64)
}

// trimTrailing keeps the blank rows that lie before the table's last row.
func trimTrailing(blank []int, t *Table) []int {
	if len(t.rows) == 0 {
		return nil
	}
	last := t.rows[len(t.rows)-1]
	var out []int
	for _, r := range blank {
		if r < last {
			out = append(out, r)
		}
	}
	return out
}
