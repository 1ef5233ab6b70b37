package table

import "testing"

// Test helpers exported to the external test package (fuzz_test.go).

// GoodCSV is goodCSV for the external tests.
const GoodCSV = goodCSV

// XLSXSeeds are the seeds of FuzzReadXLSX made in code (the committed
// corpus holds more): a sound workbook, and raw ones damaged in a few
// ways.
func XLSXSeeds(t testing.TB) [][]byte {
	sound := rawXLSX(t, map[string]string{"xl/worksheets/sheet1.xml": sheetXML(goodRows...)})
	return [][]byte{
		sound,
		sound[:len(sound)/2],
		rawXLSX(t, map[string]string{"xl/worksheets/sheet1.xml": sheetXML(rawHeader, `<row r="2"><c r="C2" t="s"><v>9</v></c><c r="D2"><f>1+1</f></c></row>`)}),
		rawXLSX(t, map[string]string{"xl/worksheets/sheet1.xml": sheetXML(rawHeader, `<row r="3"/><row r="2"/>`)}),
		rawXLSX(t, map[string]string{"xl/workbook.xml": "\x00absent"}),
	}
}
