package table

import (
	"crypto/sha256"
	"encoding/hex"
	"errors"
	"fmt"
	"io/fs"
	"math"
	"path/filepath"
	"strconv"
	"strings"
	"unicode"
	"unicode/utf8"

	"furrow/plan"
)

// Data file formats a Table can be read from.
const (
	FormatCSV  = "csv"
	FormatXLSX = "xlsx"
)

// Column is one column of a Table. Its slices are indexed by table row and
// belong to the table: callers must treat them as read-only and use
// Table.Subset or Table.Filter to get a smaller table.
type Column struct {
	// Name is the header text, trimmed.
	Name string
	// Index is the 1-based position of the column in the file or sheet
	// (the column number a user sees; D is 4).
	Index int
	// Numeric is true when the plan declares the column as numeric
	// (a response or a covariate). It decides how ContentHash writes cells.
	Numeric bool
	// Text is the cell text as read, trimmed of surrounding white space
	// (reported for factor columns; see the package documentation).
	// For XLSX, numbers are written in shortest round-trip form and dates
	// as YYYY-MM-DD.
	Text []string
	// Num is the cell parsed as a number with the plan's decimal mark, or
	// NaN when the cell is missing or not a number.
	Num []float64
	// Missing marks cells that are blank or equal to a declared missing code.
	Missing []bool
}

// Table is one data table read from a CSV file or an XLSX sheet. Both
// formats give the same Table for the same cells. A Table is never modified
// after ReadTable returns it; Subset and Filter return new tables.
type Table struct {
	// Path is the data file as a slash path, as resolved by ReadTable.
	Path string
	// Format is FormatCSV or FormatXLSX.
	Format string
	// Sheet is the sheet read (XLSX only).
	Sheet string
	// FileHash is "sha256:<hex>" of the file's bytes.
	FileHash string
	// HeaderRow is the row number of the header (1 unless the file starts
	// with blank lines).
	HeaderRow int

	cols  []*Column
	index map[string]int
	rows  []int // file row number of each table row
}

// NumRows returns the number of data rows.
func (t *Table) NumRows() int { return len(t.rows) }

// NumColumns returns the number of columns.
func (t *Table) NumColumns() int { return len(t.cols) }

// ColumnNames returns the column names in file order.
func (t *Table) ColumnNames() []string {
	out := make([]string, len(t.cols))
	for i, c := range t.cols {
		out[i] = c.Name
	}
	return out
}

// Columns returns the columns in file order. The columns are shared with
// the table and must not be modified.
func (t *Table) Columns() []*Column {
	return append([]*Column(nil), t.cols...)
}

// Column returns the column with the given name, or nil when the table has
// no such column.
func (t *Table) Column(name string) *Column {
	if i, ok := t.index[name]; ok {
		return t.cols[i]
	}
	return nil
}

// RowNumber returns the row number a user sees in the file for table row i
// (0-based): the line where a CSV record starts, or the spreadsheet row.
func (t *Table) RowNumber(i int) int { return t.rows[i] }

// RowNumbers returns a copy of the file row number of every table row.
func (t *Table) RowNumbers() []int { return append([]int(nil), t.rows...) }

// Text returns the text of the named column at row i, and whether the
// column exists.
func (t *Table) Text(name string, i int) (string, bool) {
	c := t.Column(name)
	if c == nil {
		return "", false
	}
	return c.Text[i], true
}

// Float returns the named column at row i as a number (NaN when missing or
// not a number), and whether the column exists.
func (t *Table) Float(name string, i int) (float64, bool) {
	c := t.Column(name)
	if c == nil {
		return math.NaN(), false
	}
	return c.Num[i], true
}

// Floats returns a copy of the named column's numbers (NaN for missing or
// non-numeric cells), or nil when there is no such column.
func (t *Table) Floats(name string) []float64 {
	c := t.Column(name)
	if c == nil {
		return nil
	}
	return append([]float64(nil), c.Num...)
}

// Texts returns a copy of the named column's texts, or nil when there is no
// such column.
func (t *Table) Texts(name string) []string {
	c := t.Column(name)
	if c == nil {
		return nil
	}
	return append([]string(nil), c.Text...)
}

// PosFile is the file part of positions in this table: the path, and for
// XLSX the sheet in brackets ("plots.xlsx[plots]").
func (t *Table) PosFile() string {
	if t.Format == FormatXLSX {
		return t.Path + "[" + t.Sheet + "]"
	}
	return t.Path
}

// Pos returns the position of table row i (0-based) in column col
// (1-based file column index; 0 for the whole row).
func (t *Table) Pos(i, col int) plan.Pos {
	return plan.Pos{File: t.PosFile(), Line: t.rows[i], Column: col}
}

// HeaderPos returns the position of a header cell (col is 1-based; 0 for the
// whole header).
func (t *Table) HeaderPos(col int) plan.Pos {
	return plan.Pos{File: t.PosFile(), Line: t.HeaderRow, Column: col}
}

// CellRef returns the spreadsheet reference ("D17") of a row number and a
// 1-based column index. It is used in messages about XLSX cells.
func CellRef(row, col int) string {
	return ColumnLetters(col) + strconv.Itoa(row)
}

// ColumnLetters returns the spreadsheet letters of a 1-based column index
// (1 is A, 27 is AA), or "?" for an index below 1.
func ColumnLetters(col int) string {
	if col < 1 {
		return "?"
	}
	var b []byte
	for col > 0 {
		col--
		b = append(b, byte('A'+col%26))
		col /= 26
	}
	for i, j := 0, len(b)-1; i < j; i, j = i+1, j-1 {
		b[i], b[j] = b[j], b[i]
	}
	return string(b)
}

// Subset returns a new table with the given rows (0-based table row
// indices), in the given order. It returns an error when an index is out of
// range. The receiver is not modified.
func (t *Table) Subset(rows []int) (*Table, error) {
	for _, r := range rows {
		if r < 0 || r >= len(t.rows) {
			return nil, fmt.Errorf("subset of %s: row index %d out of range [0, %d)", t.Path, r, len(t.rows))
		}
	}
	out := t.emptyLike(len(rows))
	for _, r := range rows {
		out.rows = append(out.rows, t.rows[r])
	}
	for k, c := range t.cols {
		nc := out.cols[k]
		for _, r := range rows {
			nc.Text = append(nc.Text, c.Text[r])
			nc.Num = append(nc.Num, c.Num[r])
			nc.Missing = append(nc.Missing, c.Missing[r])
		}
	}
	return out, nil
}

// Filter returns a new table with the rows for which keep returns true;
// keep receives the 0-based table row index. The receiver is not modified.
func (t *Table) Filter(keep func(i int) bool) *Table {
	var idx []int
	for i := range t.rows {
		if keep(i) {
			idx = append(idx, i)
		}
	}
	out, _ := t.Subset(idx) // indices are in range by construction
	return out
}

func (t *Table) emptyLike(n int) *Table {
	out := &Table{
		Path: t.Path, Format: t.Format, Sheet: t.Sheet, FileHash: t.FileHash, HeaderRow: t.HeaderRow,
		index: make(map[string]int, len(t.index)),
		rows:  make([]int, 0, n),
	}
	for k, v := range t.index {
		out.index[k] = v
	}
	for _, c := range t.cols {
		out.cols = append(out.cols, &Column{
			Name: c.Name, Index: c.Index, Numeric: c.Numeric,
			Text: make([]string, 0, n), Num: make([]float64, 0, n), Missing: make([]bool, 0, n),
		})
	}
	return out
}

// contentHashTag opens the canonical serialisation; it changes when the
// serialisation does.
const contentHashTag = "furrow table v1\n"

// ContentHash returns "sha256:<hex>" of the table's canonical serialisation
// (specified in the package documentation, "Content hash"). It depends on
// the column names and order and the cell values, not on the file format,
// the delimiter, quoting, line endings or row numbers, so the same cells
// read from CSV and from XLSX give the same hash.
func (t *Table) ContentHash() string {
	h := sha256.New()
	var buf []byte
	str := func(tag byte, s string) {
		buf = append(buf, tag)
		buf = strconv.AppendInt(buf, int64(len(s)), 10)
		buf = append(buf, ':')
		buf = append(buf, s...)
	}
	buf = append(buf, contentHashTag...)
	buf = append(buf, "columns "...)
	buf = strconv.AppendInt(buf, int64(len(t.cols)), 10)
	buf = append(buf, " rows "...)
	buf = strconv.AppendInt(buf, int64(len(t.rows)), 10)
	buf = append(buf, '\n')
	for _, c := range t.cols {
		str('c', c.Name)
		buf = append(buf, '\n')
	}
	for i := range t.rows {
		for _, c := range t.cols {
			switch {
			case c.Missing[i]:
				buf = append(buf, 'm')
			case c.Numeric && !math.IsNaN(c.Num[i]):
				str('n', strconv.FormatFloat(c.Num[i], 'g', -1, 64))
			default:
				str('t', c.Text[i])
			}
		}
		buf = append(buf, '\n')
		if len(buf) > 1<<16 {
			h.Write(buf)
			buf = buf[:0]
		}
	}
	h.Write(buf)
	return "sha256:" + hex.EncodeToString(h.Sum(nil))
}

// trimCell trims the white space a cell may carry around its value.
func trimCell(s string) string {
	return strings.TrimSpace(s)
}

// ReadTable reads the data file a plan names with the default Options;
// see ReadTableWith.
func ReadTable(p *plan.Plan, dataPath string) (*Table, plan.Diagnostics, error) {
	return ReadTableWith(p, dataPath, Options{})
}

// ReadTableWith reads the data file a plan names. dataPath "" means
// p.Data.File relative to the directory of the plan file (p.Path), which
// must resolve inside that directory unless o.AllowOutside (else the error
// is an *OutsideError); any other value is used as given. The format,
// sheet, delimiter, decimal mark and missing codes come from p.Data; the
// format is taken from the file extension when the plan gives none, or
// when dataPath is given and its extension (.csv, .txt, .xlsx, .xlsm)
// names a format.
//
// The error is for unreadable input: a missing, empty or binary file, a
// file that is not CSV or XLSX, one that is not a regular file (a named
// pipe, a device), or one over the size limit (a *SizeError). Problems
// with the content (ragged rows, an unterminated quote, a missing sheet,
// empty or repeated header names) are diagnostics positioned in the data
// file. The table is nil when the diagnostics leave nothing to check (no
// header, a missing sheet, a quote that swallows the rest of the file, a
// header that splits only on another delimiter); otherwise it holds every
// row read.
func ReadTableWith(p *plan.Plan, dataPath string, o Options) (*Table, plan.Diagnostics, error) {
	if p == nil {
		return nil, nil, fmt.Errorf("reading data: no plan")
	}
	path, err := resolveDataPath(p, dataPath, o)
	if err != nil {
		return nil, nil, err
	}
	name := filepath.ToSlash(path)
	data, err := plan.ReadFile(path, o.maxSize())
	var big *plan.TooLargeError
	switch {
	case errors.As(err, &big):
		return nil, nil, &SizeError{Path: name, Size: big.Size, Limit: big.Limit}
	case errors.Is(err, fs.ErrNotExist) || errors.Is(err, fs.ErrPermission):
		return nil, nil, fmt.Errorf("reading data: %w", err)
	case err != nil:
		return nil, nil, fmt.Errorf("reading data %s: %w", name, err)
	}
	if len(data) == 0 {
		return nil, nil, fmt.Errorf("reading data %s: the file is empty", name)
	}
	format := strings.ToLower(p.Data.Format)
	byExt := ""
	switch strings.ToLower(filepath.Ext(path)) {
	case ".xlsx", ".xlsm":
		byExt = FormatXLSX
	case ".csv", ".txt":
		byExt = FormatCSV
	}
	// A data file given explicitly whose extension names the other format
	// (the plan says csv, the file is plots.xlsx) is read as its extension
	// says: the same data kept in both forms check and run alike.
	if format == "" || (dataPath != "" && byExt != "") {
		format = byExt
	}
	if format == "" {
		format = FormatCSV
	}
	opts, err := newReadOptions(p)
	if err != nil {
		return nil, nil, fmt.Errorf("reading data %s: %w", name, err)
	}
	opts.maxSize = o.maxSize()
	opts.ratio = o.unpackRatio()
	sum := sha256.Sum256(data)
	fileHash := "sha256:" + hex.EncodeToString(sum[:])
	var (
		t     *Table
		diags plan.Diagnostics
	)
	switch format {
	case FormatCSV:
		// The clash matters only to CSV: XLSX cells need no delimiter.
		if opts.decimal == ',' && opts.delim == ',' {
			return nil, nil, fmt.Errorf("reading data %s: decimal mark and delimiter are both \",\"; declare another delimiter (for example \";\")", name)
		}
		t, diags, err = readCSV(name, data, opts)
	case FormatXLSX:
		t, diags, err = readXLSX(name, data, opts)
	default:
		return nil, nil, fmt.Errorf("reading data %s: unknown format %q (want csv or xlsx)", name, p.Data.Format)
	}
	if err != nil {
		return nil, nil, err
	}
	if t != nil {
		t.FileHash = fileHash
	}
	return t, diags.Sort(), nil
}

// readOptions are the parts of the plan that decide how cells are read.
type readOptions struct {
	delim   rune
	decimal byte
	missing []string // trimmed missing codes; a blank cell is always missing
	numeric map[string]bool
	factor  map[string]plan.Pos // columns with a factor role (their cells are levels), at their declaration
	names   map[string]bool     // every declared column
	sheet   string
	dataPos plan.Pos
	maxSize int64 // Options.MaxSize (what an XLSX workbook may unpack to)
	ratio   int64 // Options.MaxUnpackRatio, resolved
}

func newReadOptions(p *plan.Plan) (*readOptions, error) {
	o := &readOptions{delim: ',', decimal: '.', sheet: p.Data.Sheet, dataPos: p.Data.Pos,
		numeric: map[string]bool{}, factor: map[string]plan.Pos{}, names: map[string]bool{}}
	if d := p.Data.Delimiter; d != "" {
		r, n := utf8.DecodeRuneInString(d)
		if d == `\t` || d == "tab" {
			r, n = '\t', len(d)
		}
		if n != len(d) || r == '"' || r == '\r' || r == '\n' || r == utf8.RuneError {
			return nil, fmt.Errorf("delimiter %q is not one usable character", d)
		}
		o.delim = r
	}
	switch p.Data.Decimal {
	case "", ".":
	case ",":
		o.decimal = ','
	default:
		return nil, fmt.Errorf("decimal mark %q is not \".\" or \",\"", p.Data.Decimal)
	}
	for _, m := range p.Data.Missing {
		if m = trimCell(m); m != "" {
			o.missing = append(o.missing, m)
		}
	}
	for i := range p.Columns {
		c := &p.Columns[i]
		o.names[c.Name] = true
		if c.IsNumeric() {
			o.numeric[c.Name] = true
		}
		if c.IsFactor() {
			o.factor[c.Name] = c.Pos
		}
	}
	return o, nil
}

// isMissing reports whether a trimmed cell is blank or a missing code.
func (o *readOptions) isMissing(s string) bool {
	if s == "" {
		return true
	}
	for _, m := range o.missing {
		if s == m {
			return true
		}
	}
	return false
}

// spaceWords says what white space surrounds s: "a trailing space",
// "2 leading spaces", "leading white space" (when it is not all spaces:
// tabs, no-break spaces), or both ends joined by "and".
func spaceWords(s string) string {
	lead := s[:len(s)-len(strings.TrimLeftFunc(s, unicode.IsSpace))]
	trail := s[len(strings.TrimRightFunc(s, unicode.IsSpace)):]
	end := func(ws, side string) string {
		switch n := len(ws); {
		case strings.Trim(ws, " ") != "":
			return side + " white space"
		case n == 1:
			return "a " + side + " space"
		default:
			return fmt.Sprintf("%d %s spaces", n, side)
		}
	}
	switch {
	case lead != "" && trail != "":
		return end(lead, "leading") + " and " + end(trail, "trailing")
	case lead != "":
		return end(lead, "leading")
	}
	return end(trail, "trailing")
}

// ParseNumber parses a trimmed cell as a decimal number with the given
// decimal mark: an optional sign, digits with at most one decimal mark, and
// an optional exponent. Thousands separators, hexadecimal, "inf" and "nan"
// are not numbers here, and neither is a number beyond the range of a
// double (see Overflows).
func ParseNumber(s string, dec byte) (float64, bool) {
	v, grammar, finite := number(s, dec)
	return v, grammar && finite
}

// Overflows reports whether a trimmed cell is written as a number (the
// grammar of ParseNumber) whose magnitude is beyond the largest double,
// about 1.8e308, as 1e309 is: ParseNumber refuses it, and a message says
// why.
func Overflows(s string, dec byte) bool {
	_, grammar, finite := number(s, dec)
	return grammar && !finite
}

// number parses s as ParseNumber does; grammar says whether it is written
// as a number, finite whether its value is within the range of a double.
func number(s string, dec byte) (v float64, grammar, finite bool) {
	n := len(s)
	if n == 0 || n > 64 {
		if n > 64 {
			return parseLongNumber(s, dec)
		}
		return 0, false, false
	}
	var buf [64]byte
	i := 0
	if s[0] == '+' || s[0] == '-' {
		buf[0] = s[0]
		i = 1
	}
	digits, marks := 0, 0
	for ; i < n; i++ {
		ch := s[i]
		switch {
		case ch >= '0' && ch <= '9':
			digits++
			buf[i] = ch
			continue
		case ch == dec:
			marks++
			buf[i] = '.'
			continue
		}
		break
	}
	if digits == 0 || marks > 1 {
		return 0, false, false
	}
	if i < n {
		if s[i] != 'e' && s[i] != 'E' {
			return 0, false, false
		}
		buf[i] = 'e'
		i++
		if i < n && (s[i] == '+' || s[i] == '-') {
			buf[i] = s[i]
			i++
		}
		ed := 0
		for ; i < n && s[i] >= '0' && s[i] <= '9'; i++ {
			buf[i] = s[i]
			ed++
		}
		if ed == 0 || i < n {
			return 0, false, false
		}
	}
	v, finite = finiteFloat(string(buf[:n]))
	return v, true, finite
}

// finiteFloat parses a validated number; overflow is not a number,
// underflow gives the nearest representable value.
func finiteFloat(s string) (float64, bool) {
	v, err := strconv.ParseFloat(s, 64)
	if math.IsInf(v, 0) || (err != nil && !errors.Is(err, strconv.ErrRange)) {
		return 0, false
	}
	return v, true
}

// parseLongNumber handles cells longer than ParseNumber's buffer.
func parseLongNumber(s string, dec byte) (v float64, grammar, finite bool) {
	if dec == ',' {
		if strings.ContainsRune(s, '.') {
			return 0, false, false
		}
		s = strings.Replace(s, ",", ".", 1)
	}
	// Re-check the grammar on a short form: the digits themselves do not
	// matter for validity, only their arrangement.
	var short strings.Builder
	prevDigit := false
	for i := 0; i < len(s); i++ {
		d := s[i] >= '0' && s[i] <= '9'
		if d && prevDigit {
			continue
		}
		prevDigit = d
		short.WriteByte(s[i])
	}
	if short.Len() > 64 {
		return 0, false, false
	}
	if _, ok := ParseNumber(short.String(), '.'); !ok {
		return 0, false, false
	}
	v, finite = finiteFloat(s)
	return v, true, finite
}

// FromCells builds a table as if read from a CSV file called name whose
// header row is header and whose records, from row 2 on, are cells, using
// the reading options of p (the default options when p's are unusable).
// native marks the columns whose cells are numbers written in shortest
// form, parsed with "." whatever the plan's decimal mark (as XLSX number
// cells are); it may be nil. Findings are dropped: the cells are assumed
// well formed.
func FromCells(p *plan.Plan, name string, header []string, cells [][]string, native []bool) *Table {
	o, err := newReadOptions(p)
	if err != nil {
		o = &readOptions{delim: ',', decimal: '.', numeric: map[string]bool{}, factor: map[string]plan.Pos{}, names: map[string]bool{}}
	}
	b, _ := newTableBuilder(name, FormatCSV, "", 1, header, o, len(cells))
	for i, row := range cells {
		_ = b.add(i+2, nil, row, native) // no budget: the cells are in memory already
	}
	t, _ := b.finish()
	return t
}
