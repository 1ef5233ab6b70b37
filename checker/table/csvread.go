package table

import (
	"bytes"
	"encoding/csv"
	"errors"
	"fmt"
	"io"
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
	data = bytes.TrimPrefix(data, []byte("\uFEFF"))
	// A file whose lines end in a lone carriage return (old spreadsheet
	// exports) has no line feed at all: read its carriage returns as line
	// ends, so its rows are rows and their numbers are the ones a user sees.
	if bytes.IndexByte(data, '\n') < 0 && bytes.IndexByte(data, '\r') >= 0 {
		data = bytes.ReplaceAll(data, []byte{'\r'}, []byte{'\n'})
	}

	r := csv.NewReader(bytes.NewReader(data))
	r.Comma = o.delim
	r.FieldsPerRecord = -1
	r.ReuseRecord = true

	var (
		diags plan.Diagnostics
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
		b.add(line, rec, nil)
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
