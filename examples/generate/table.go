package main

import (
	"bytes"
	"encoding/csv"
	"math"
	"strconv"
	"strings"

	"github.com/xuri/excelize/v2"
)

// cell is one data value: text, a number, or missing.
type cell struct {
	text    string
	num     float64
	digits  int // decimals written for a number
	isNum   bool
	missing bool
}

func text(s string) cell { return cell{text: s} }

func number(x float64, digits int) cell {
	p := math.Pow(10, float64(digits))
	return cell{num: math.Round(x*p) / p, digits: digits, isNum: true}
}

func missing() cell { return cell{missing: true} }

// table is a generated data set: a header and rows of cells.
type table struct {
	header []string
	rows   [][]cell
}

// csvStyle is how a CSV file spells its separators and missing values.
type csvStyle struct {
	comma   rune
	decimal byte
	missing string
}

// csv renders the table as RFC 4180 CSV with LF line ends.
func (t *table) csv(st csvStyle) ([]byte, error) {
	var b bytes.Buffer
	w := csv.NewWriter(&b)
	w.Comma = st.comma
	if err := w.Write(t.header); err != nil {
		return nil, err
	}
	rec := make([]string, len(t.header))
	for _, row := range t.rows {
		for i, c := range row {
			switch {
			case c.missing:
				rec[i] = st.missing
			case c.isNum:
				s := strconv.FormatFloat(c.num, 'f', c.digits, 64)
				if st.decimal != '.' {
					s = strings.Replace(s, ".", string(st.decimal), 1)
				}
				rec[i] = s
			default:
				rec[i] = c.text
			}
		}
		if err := w.Write(rec); err != nil {
			return nil, err
		}
	}
	w.Flush()
	return b.Bytes(), w.Error()
}

// xlsx renders the table as a workbook with one sheet. Numbers are stored
// as numbers, text as text, and missing values as empty cells.
func (t *table) xlsx(sheet string) ([]byte, error) {
	f := excelize.NewFile()
	defer f.Close()
	if err := f.SetSheetName("Sheet1", sheet); err != nil {
		return nil, err
	}
	for j, h := range t.header {
		ref, err := excelize.CoordinatesToCellName(j+1, 1)
		if err != nil {
			return nil, err
		}
		if err := f.SetCellStr(sheet, ref, h); err != nil {
			return nil, err
		}
	}
	for i, row := range t.rows {
		for j, c := range row {
			if c.missing {
				continue
			}
			ref, err := excelize.CoordinatesToCellName(j+1, i+2)
			if err != nil {
				return nil, err
			}
			if c.isNum {
				err = f.SetCellFloat(sheet, ref, c.num, c.digits, 64)
			} else {
				err = f.SetCellStr(sheet, ref, c.text)
			}
			if err != nil {
				return nil, err
			}
		}
	}
	b, err := f.WriteToBuffer()
	if err != nil {
		return nil, err
	}
	return b.Bytes(), nil
}
