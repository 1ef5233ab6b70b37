package table

import (
	"furrow/schema"

	"bytes"
	"fmt"
	"math"
	"strconv"
	"strings"

	"github.com/xuri/excelize/v2"

	"furrow/plan"
)

// readXLSX reads one sheet of an XLSX workbook: the sheet the plan names,
// or the first sheet. Number cells (including the cached values of
// formulas) keep their value; cells with a date or time number format become
// ISO 8601 text; text cells are read as text and parsed as numbers with the
// plan's decimal mark, so numbers stored as text are numbers too.
func readXLSX(name string, data []byte, o *readOptions) (*Table, plan.Diagnostics, error) {
	if !bytes.HasPrefix(data, zipMagic) {
		if checkText(data) == nil {
			return nil, nil, fmt.Errorf("reading data %s: the file is text, not an xlsx workbook; declare format: csv", name)
		}
		return nil, nil, fmt.Errorf("reading data %s: the file is not an xlsx workbook", name)
	}
	f, err := excelize.OpenReader(bytes.NewReader(data))
	if err != nil {
		return nil, nil, fmt.Errorf("reading data %s: not a readable xlsx workbook: %w", name, err)
	}
	defer f.Close()

	sheets := f.GetSheetList()
	sheet := o.sheet
	if sheet == "" {
		if len(sheets) == 0 {
			return nil, nil, fmt.Errorf("reading data %s: the workbook has no sheets", name)
		}
		sheet = sheets[0]
	}
	found := false
	for _, s := range sheets {
		found = found || s == sheet
	}
	if !found {
		quoted := make([]string, len(sheets))
		for i, s := range sheets {
			quoted[i] = strconv.Quote(s)
		}
		summary := fmt.Sprintf("sheet %q is not in the workbook; its sheets are %s", sheet, strings.Join(quoted, ", "))
		if s := schema.Suggest(sheet, sheets); s != "" {
			summary += fmt.Sprintf("; did you mean %q?", s)
		}
		return nil, plan.Diagnostics{{
			Severity: plan.Error, Code: "data-sheet-missing",
			Pos: plan.Pos{File: name}, Summary: summary, Related: RelatedPos(o.dataPos),
		}}, nil
	}

	rows, err := f.GetRows(sheet, excelize.Options{RawCellValue: true})
	if err != nil {
		return nil, nil, fmt.Errorf("reading data %s, sheet %q: %w", name, sheet, err)
	}
	date1904 := false
	if wp, err := f.GetWorkbookProps(); err == nil && wp.Date1904 != nil {
		date1904 = *wp.Date1904
	}
	cv := &xlsxCells{f: f, sheet: sheet, date1904: date1904, dateStyle: map[int]int{}}
	posFile := name + "[" + sheet + "]"

	var (
		diags plan.Diagnostics
		b     *tableBuilder
		lim   = NewLimiter()
		blank []int
	)
	for i, raw := range rows {
		rowNum := i + 1
		if blankRow(raw) {
			if b != nil {
				blank = append(blank, rowNum)
			}
			continue
		}
		cells, native, err := cv.row(rowNum, raw)
		if err != nil {
			return nil, nil, fmt.Errorf("reading data %s, sheet %q, row %d: %w", name, sheet, rowNum, err)
		}
		if b == nil {
			var hd plan.Diagnostics
			b, hd = newTableBuilder(name, FormatXLSX, sheet, rowNum, cells, o, len(rows)-i)
			diags = append(diags, hd...)
			continue
		}
		if len(cells) > b.width {
			for k := b.width; k < len(cells); k++ {
				if trimCell(cells[k]) != "" {
					lim.Add(&diags, "data-ragged-row", "", plan.Diagnostic{
						Severity: plan.Error, Code: "data-ragged-row",
						Pos:     plan.Pos{File: posFile, Line: rowNum, Column: k + 1},
						Summary: fmt.Sprintf("cell %s holds %q but its column has no header", CellRef(rowNum, k+1), trimCell(cells[k])),
					})
					break
				}
			}
		}
		b.add(rowNum, cells, native)
	}
	diags = append(diags, lim.Summaries()...)
	if b == nil {
		return nil, plan.Diagnostics{{
			Severity: plan.Error, Code: "data-no-header",
			Pos: plan.Pos{File: posFile}, Summary: fmt.Sprintf("sheet %q is empty: no header row", sheet),
			Related: RelatedPos(o.dataPos),
		}}, nil
	}
	t, fd := b.finish()
	diags = append(diags, fd...)
	diags = append(diags, blankRowsWarning(t.PosFile(), trimTrailing(blank, t))...)
	return t, diags, nil
}

// xlsxCells turns raw cell values into the texts a Table holds.
type xlsxCells struct {
	f         *excelize.File
	sheet     string
	date1904  bool
	dateStyle map[int]int // style ID -> 0 not a date, 1 date, 2 date and time, 3 time only
}

// row converts one sheet row. native marks number cells.
func (x *xlsxCells) row(rowNum int, raw []string) ([]string, []bool, error) {
	cells := make([]string, len(raw))
	native := make([]bool, len(raw))
	for k, s := range raw {
		if s == "" {
			continue
		}
		ref := CellRef(rowNum, k+1)
		typ, err := x.f.GetCellType(x.sheet, ref)
		if err != nil {
			return nil, nil, err
		}
		switch typ {
		case excelize.CellTypeUnset, excelize.CellTypeNumber:
			v, perr := strconv.ParseFloat(strings.TrimSpace(s), 64)
			if perr != nil {
				cells[k] = s
				continue
			}
			kind, err := x.dateKind(ref)
			if err != nil {
				return nil, nil, err
			}
			if kind > 0 {
				if iso, ok := x.isoDate(v, kind); ok {
					cells[k] = iso
					continue
				}
			}
			cells[k] = formatNumberText(v)
			native[k] = true
		case excelize.CellTypeBool:
			if s == "1" || strings.EqualFold(s, "true") {
				cells[k] = "TRUE"
			} else {
				cells[k] = "FALSE"
			}
		default:
			cells[k] = s
		}
	}
	return cells, native, nil
}

// dateKind reports whether the cell's number format shows a date or time.
func (x *xlsxCells) dateKind(ref string) (int, error) {
	id, err := x.f.GetCellStyle(x.sheet, ref)
	if err != nil {
		return 0, err
	}
	if k, ok := x.dateStyle[id]; ok {
		return k, nil
	}
	k := 0
	if st, err := x.f.GetStyle(id); err == nil && st != nil {
		if st.CustomNumFmt != nil {
			k = dateFormatKind(*st.CustomNumFmt)
		} else {
			k = builtinDateKind(st.NumFmt)
		}
	}
	x.dateStyle[id] = k
	return k, nil
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
func (x *xlsxCells) isoDate(v float64, kind int) (string, bool) {
	if v < 0 || v > 2958465 { // 9999-12-31
		return "", false
	}
	tm, err := excelize.ExcelDateToTime(v, x.date1904)
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
