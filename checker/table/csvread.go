package table

import (
	"bytes"
	"encoding/csv"
	"errors"
	"fmt"
	"io"
	"strings"
	"unicode/utf8"

	"furrow/plan"
)

// zipMagic opens every zip archive, and so every XLSX workbook.
var zipMagic = []byte("PK\x03\x04")

// readCSV reads CSV text (RFC 4180: quoted fields, doubled quotes, line
// breaks inside quotes) with an optional UTF-8 byte-order mark and either
// line ending. name is used in messages and positions.
func readCSV(name string, data []byte, o *readOptions) (*Table, plan.Diagnostics, error) {
	if err := checkText(data); err != nil {
		return nil, nil, fmt.Errorf("reading data %s: %w", name, err)
	}
	var diags plan.Diagnostics
	data = bytes.TrimPrefix(data, []byte("\uFEFF"))
	if n := 0; bytes.HasPrefix(data, []byte("\uFEFF")) {
		for bytes.HasPrefix(data, []byte("\uFEFF")) {
			data, n = data[3:], n+1
		}
		diags = append(diags, plan.Diagnostic{Severity: plan.Warning, Code: "data-bom",
			Pos:     plan.Pos{File: name, Line: 1, Column: 1},
			Summary: fmt.Sprintf("the file starts with %d byte-order marks (U+FEFF), where a text file has at most one; they are dropped, but the file was likely converted twice: save it again as utf-8", n+1)})
	}
	// A file whose lines end in a lone carriage return (old spreadsheet
	// exports) has no line feed at all: read its carriage returns as line
	// ends, so its rows are rows and their numbers are the ones a user sees.
	if bytes.IndexByte(data, '\n') < 0 && bytes.IndexByte(data, '\r') >= 0 {
		data = bytes.ReplaceAll(data, []byte{'\r'}, []byte{'\n'})
	}

	if d, ok := delimiterHint(name, data, o); ok {
		// Read with the wrong delimiter every declared column is missing
		// and every row ragged: say the one thing that is wrong.
		return nil, append(diags, d), nil
	}

	r := csv.NewReader(bytes.NewReader(data))
	r.Comma = o.delim
	r.FieldsPerRecord = -1
	r.ReuseRecord = true

	var (
		b     *tableBuilder
		lim   = NewLimiter()
		blank []int
	)
	quoteProblem := func(err error) plan.Diagnostics {
		var pe *csv.ParseError
		if !errors.As(err, &pe) {
			return nil
		}
		d := plan.Diagnostic{Severity: plan.Error, Code: "data-quote", Related: RelatedPos(o.dataPos),
			Pos: plan.Pos{File: name, Line: pe.StartLine}}
		switch {
		case errors.Is(pe.Err, csv.ErrBareQuote):
			d.Summary = fmt.Sprintf("row %d: a quote appears inside an unquoted field (line %d); enclose the field in quotes and double the quote inside it", pe.StartLine, pe.Line)
		case errors.Is(pe.Err, csv.ErrQuote):
			if _, next := r.Read(); next == io.EOF {
				d.Summary = fmt.Sprintf("row %d: a quoted field opened here is never closed; the rest of the file cannot be read", pe.StartLine)
			} else {
				d.Summary = fmt.Sprintf("row %d: text follows the closing quote of a field (line %d); enclose the whole field in quotes and double the quote inside it", pe.StartLine, pe.Line)
			}
		default:
			d.Summary = fmt.Sprintf("row %d: %v", pe.StartLine, pe.Err)
		}
		return plan.Diagnostics{d}
	}

	for {
		rec, err := r.Read()
		if err == io.EOF {
			break
		}
		if err != nil {
			if qd := quoteProblem(err); qd != nil {
				return nil, append(diags, qd...), nil
			}
			return nil, nil, fmt.Errorf("reading data %s: %w", name, err)
		}
		line, _ := r.FieldPos(0)
		if blankRow(rec) {
			if b != nil {
				blank = append(blank, line)
			}
			continue
		}
		if b == nil {
			var hd plan.Diagnostics
			b, hd = newTableBuilder(name, FormatCSV, "", line, rec, o, bytes.Count(data, []byte{'\n'}))
			b.padRatio = padRatioCSV
			diags = append(diags, hd...)
			continue
		}
		switch {
		case len(rec) < b.width:
			lim.Add(&diags, "data-ragged-row", "", plan.Diagnostic{
				Severity: plan.Error, Code: "data-ragged-row",
				Pos:     plan.Pos{File: name, Line: line},
				Summary: fmt.Sprintf("row %d has %d fields, the header has %d", line, len(rec), b.width),
			})
		case len(rec) > b.width && !blankRow(rec[b.width:]):
			lim.Add(&diags, "data-ragged-row", "", plan.Diagnostic{
				Severity: plan.Error, Code: "data-ragged-row",
				Pos:     plan.Pos{File: name, Line: line, Column: b.width + 1},
				Summary: fmt.Sprintf("row %d has %d fields, the header has %d", line, len(rec), b.width),
			})
		}
		if err := b.add(line, nil, rec, nil); err != nil {
			return nil, nil, err
		}
	}
	diags = append(diags, lim.Summaries()...)
	if b == nil {
		return nil, nil, fmt.Errorf("reading data %s: the file holds no header row", name)
	}
	t, fd := b.finish()
	diags = append(diags, fd...)
	diags = append(diags, blankRowsWarning(t.PosFile(), trimTrailing(blank, t))...)
	return t, diags, nil
}

// checkText returns an error when data is not UTF-8 text: a zip archive
// (an XLSX workbook given as CSV), NUL bytes, or invalid UTF-8.
func checkText(data []byte) error {
	if bytes.HasPrefix(data, zipMagic) {
		return errors.New("the file is a zip archive (an xlsx workbook?), not csv text; declare format: xlsx")
	}
	if enc := plan.TextEncoding(data); enc != "" {
		return fmt.Errorf("the file is %s, not utf-8; save it as utf-8 (in a spreadsheet program: CSV UTF-8)", enc)
	}
	if i := bytes.IndexByte(data, 0); i >= 0 {
		return fmt.Errorf("the file holds binary data (a NUL byte on line %d), not csv text", 1+bytes.Count(data[:i], []byte("\n")))
	}
	if !utf8.Valid(data) {
		i := 0
		for i < len(data) {
			r, n := utf8.DecodeRune(data[i:])
			if r == utf8.RuneError && n <= 1 {
				break
			}
			i += n
		}
		return fmt.Errorf("line %d is not valid utf-8 text; save the file as utf-8", 1+bytes.Count(data[:i], []byte("\n")))
	}
	return nil
}

// blankRowsWarning reports rows that were skipped because every cell was
// blank, when any lie between data rows.
func blankRowsWarning(file string, rows []int) plan.Diagnostics {
	if len(rows) == 0 {
		return nil
	}
	return plan.Diagnostics{{
		Severity: plan.Warning, Code: "data-blank-rows",
		Pos:     plan.Pos{File: file, Line: rows[0]},
		Summary: fmt.Sprintf("%d blank %s skipped (first at row %d)", len(rows), Plural(len(rows), "row", "rows"), rows[0]),
	}}
}

// RelatedPos returns a one-element list when p is valid, else nil.
func RelatedPos(p plan.Pos) []plan.Pos {
	if p.IsValid() {
		return []plan.Pos{p}
	}
	return nil
}

// Plural returns one when n is 1, else many.
func Plural(n int, one, many string) string {
	if n == 1 {
		return one
	}
	return many
}

// delimiterCandidates are the delimiters a header is tried with when it
// does not split on the declared one, in order of preference.
var delimiterCandidates = []rune{';', ',', '\t', '|'}

// delimiterHint reports a file written with another delimiter than the
// plan's: its first non-blank line gives at most one non-blank field with
// the declared delimiter (or cannot be read with it), and at least two
// declared column names with one of delimiterCandidates.
func delimiterHint(name string, data []byte, o *readOptions) (plan.Diagnostic, bool) {
	line, text := firstTextLine(data)
	if text == "" {
		return plan.Diagnostic{}, false
	}
	// The hint needs the first names only: a header longer than
	// maxHintHeader is judged by its start (cut after a delimiter), so that
	// a header of a million names is not split four times over.
	if len(text) > maxHintHeader {
		cut := text[:maxHintHeader]
		if i := strings.LastIndexAny(cut, ",;\t|"+string(o.delim)); i > 0 {
			cut = cut[:i]
		}
		text = cut
	}
	if fields, ok := headerFields(text, o.delim); ok {
		nonBlank := 0
		for _, f := range fields {
			if f != "" {
				nonBlank++
			}
			if o.names[f] {
				return plan.Diagnostic{}, false
			}
		}
		if nonBlank > 1 {
			return plan.Diagnostic{}, false
		}
	}
	var (
		best  rune
		found []string
	)
	for _, r := range delimiterCandidates {
		if r == o.delim || !strings.ContainsRune(text, r) {
			continue
		}
		fields, ok := headerFields(text, r)
		if !ok {
			continue
		}
		var names []string
		seen := map[string]bool{}
		for _, f := range fields {
			if o.names[f] && !seen[f] {
				seen[f] = true
				names = append(names, f)
			}
		}
		if len(names) >= 2 && len(names) > len(found) {
			best, found = r, names
		}
	}
	if found == nil {
		return plan.Diagnostic{}, false
	}
	return plan.Diagnostic{
		Severity: plan.Error, Code: "data-delimiter",
		Pos: plan.Pos{File: name, Line: line}, Related: RelatedPos(o.dataPos),
		Summary: fmt.Sprintf("the header %s does not split on %q; split on %q it gives the declared columns %s: declare delimiter: %q in the data section",
			Quote(text), string(o.delim), string(best), wordList(found, 5), string(best)),
	}, true
}

// maxHintHeader is how much of the header delimiterHint reads.
const maxHintHeader = 64 << 10

// firstTextLine returns the first line of data that is not blank, without
// its line end, and its line number.
func firstTextLine(data []byte) (int, string) {
	for line := 1; len(data) > 0; line++ {
		text := data
		if i := bytes.IndexByte(data, '\n'); i >= 0 {
			text, data = data[:i], data[i+1:]
		} else {
			data = nil
		}
		if s := strings.TrimSuffix(string(text), "\r"); strings.TrimSpace(s) != "" {
			return line, s
		}
	}
	return 0, ""
}

// headerFields splits one line as a CSV record with the delimiter r, each
// field trimmed; ok is false when the line is not a well-formed record.
func headerFields(text string, r rune) ([]string, bool) {
	cr := csv.NewReader(strings.NewReader(text))
	cr.Comma = r
	cr.FieldsPerRecord = -1
	rec, err := cr.Read()
	if err != nil {
		return nil, false
	}
	for i := range rec {
		rec[i] = trimCell(rec[i])
	}
	return rec, true
}

// wordList writes "a", "a and b", "a, b and c", or the first max names
// and "and N more".
func wordList(words []string, max int) string {
	if len(words) > max+1 {
		return strings.Join(words[:max], ", ") + fmt.Sprintf(" and %d more", len(words)-max)
	}
	if len(words) < 2 {
		return strings.Join(words, "")
	}
	return strings.Join(words[:len(words)-1], ", ") + " and " + words[len(words)-1]
}
