package main

// The malformed inputs made in code for TestMalformedInputs: hostile and
// broken data files (CSV and XLSX) and special files, each written into a
// folder with the plan it is checked against. Together with the committed
// fixtures (testdata/plans, testdata/data) and the fuzz seed corpora they
// are the inputs the closing figure counts.

import (
	"archive/zip"
	"bytes"
	"fmt"
	"math/rand/v2"
	"os"
	"path/filepath"
	"runtime"
	"slices"
	"strings"
	"testing"
	"unicode/utf16"
)

// malformedCase is one input for check: the arguments after "check", run
// in dir.
type malformedCase struct {
	name  string
	dir   string
	args  []string
	bytes int64 // size of the inputs, for the memory bound
}

// dataPlan is the plan every generated data file is checked against (a
// small RCBD trial with two treatments and a response in [0, 20]).
const dataPlan = `furrow: 1
trial:
  id: T-M
  title: Malformed input trial (invented)
  version: "1.0"
data:
  file: %s
  format: %s
  missing: ["", "NA"]
columns:
  - name: block
    role: block
    levels: [B1, B2]
  - name: plot
    role: unit
  - name: treatment
    role: treatment
    levels: [control, product]
    control: control
  - name: yield
    role: response
    unit: t/ha
    min: 0
    max: 20
design:
  layout: rcbd
  replicates: 2
  least-units: {per: cell, count: 1, below: warn}
endpoints:
  - id: yield
    response: yield
    primary: true
    not-computable: fail
    steps:
      - id: anova
        model: linear
        fixed: [block, treatment]
    hypotheses:
      - id: vs-control
        kind: versus-control
        adjust: dunnett
`

// goodCSV is data the plan accepts.
const goodCSV = "block,plot,treatment,yield\nB1,1,control,6.1\nB1,2,product,6.9\nB2,3,control,5.8\nB2,4,product,7.2\n"

// goodRows are goodCSV's cells, for workbooks.
var goodRows = [][]string{{"block", "plot", "treatment", "yield"}, {"B1", "1", "control", "6.1"}, {"B1", "2", "product", "6.9"}, {"B2", "3", "control", "5.8"}, {"B2", "4", "product", "7.2"}}

// generatedCases writes the generated inputs under root and returns them.
func generatedCases(t *testing.T, root string) []malformedCase {
	var cases []malformedCase
	n := 0
	add := func(name, file string, data []byte, extra ...string) {
		n++
		dir := filepath.Join(root, fmt.Sprintf("g%03d", n))
		if err := os.MkdirAll(dir, 0o755); err != nil {
			t.Fatal(err)
		}
		format := "csv"
		if strings.HasSuffix(file, ".xlsx") {
			format = "xlsx"
		}
		write(t, filepath.Join(dir, "plan.yaml"), []byte(fmt.Sprintf(dataPlan, file, format)))
		if data != nil {
			write(t, filepath.Join(dir, file), data)
		}
		cases = append(cases, malformedCase{name: name, dir: dir, args: append(extra, "plan.yaml"), bytes: int64(len(data)) + 1024})
	}

	// CSV text.
	csvs := map[string]string{
		"empty":                   "",
		"bom only":                "\uFEFF",
		"three boms":              "\uFEFF\uFEFF\uFEFF" + goodCSV,
		"header only":             "block,plot,treatment,yield\n",
		"blank lines":             "\n\n\r\n\n",
		"cr only":                 strings.ReplaceAll(goodCSV, "\n", "\r"),
		"nul in a cell":           strings.Replace(goodCSV, "6.9", "6\x009", 1),
		"latin-1":                 strings.Replace(goodCSV, "control,6.1", "contr\xf4le,6.1", 1),
		"unterminated quote":      strings.Replace(goodCSV, "B2,3", "\"B2,3", 1),
		"bare quote":              strings.Replace(goodCSV, "B2,3", "B\"2,3", 1),
		"text after quote":        strings.Replace(goodCSV, "B2,3", "\"B2\"x,3", 1),
		"ragged":                  strings.Replace(goodCSV, "B2,3,control,5.8", "B2,3", 1),
		"semicolons":              strings.ReplaceAll(goodCSV, ",", ";"),
		"tabs":                    strings.ReplaceAll(goodCSV, ",", "\t"),
		"1e309":                   strings.Replace(goodCSV, "6.1", "1e309", 1),
		"-1e309":                  strings.Replace(goodCSV, "6.1", "-1e309", 1),
		"400 digits":              strings.Replace(goodCSV, "6.1", "9"+strings.Repeat("9", 399), 1),
		"hex number":              strings.Replace(goodCSV, "6.1", "0x1p3", 1),
		"inf and nan":             strings.Replace(strings.Replace(goodCSV, "6.1", "inf", 1), "6.9", "NaN", 1),
		"duplicate header":        strings.Replace(goodCSV, "yield", "block", 1),
		"blank header cell":       strings.Replace(goodCSV, "plot,", ",", 1),
		"only a header of blanks": ",,,,\n,,,,\n",
		"newline in a level":      strings.Replace(goodCSV, "B1,1,control", "B1,1,\"cont\nrol\"", 1),
		"bom in a level":          strings.Replace(goodCSV, "B1,1,control", "B1,1,\uFEFFcontrol", 1),
		"zero-width space level":  strings.Replace(goodCSV, "B1,1,control", "B1,1,con\u200Btrol", 1),
		"long line no newline":    strings.Repeat("x", 5<<20),
		"a million blank lines":   "block,plot,treatment,yield\n" + strings.Repeat("\n", 1<<20) + "B1,1,control,6\n",
		"zip given as csv":        "PK\x03\x04" + strings.Repeat("\x00", 60),
		"xml given as csv":        "<?xml version=\"1.0\"?><worksheet/>",
		"yaml given as csv":       fmt.Sprintf(dataPlan, "x.csv", "csv"),
	}
	for _, r := range "\u202A\u202B\u202C\u202D\u202E\u2066\u2067\u2068\u2069" {
		csvs[fmt.Sprintf("bidi U+%04X in a level", r)] = strings.Replace(goodCSV, "B1,2,product", "B1,2,prod"+string(r)+"uct", 1)
		csvs[fmt.Sprintf("bidi U+%04X in a name", r)] = strings.Replace(goodCSV, "yield", "yi"+string(r)+"eld", 1)
	}
	for _, name := range sortedKeys(csvs) {
		add("csv: "+name, "plots.csv", []byte(csvs[name]))
	}
	for _, enc := range []struct {
		name string
		f    func(string) []byte
	}{
		{"utf-16le with bom", func(s string) []byte { return append([]byte{0xFF, 0xFE}, utf16le(s)...) }},
		{"utf-16le", utf16le},
		{"utf-16be with bom", func(s string) []byte { return append([]byte{0xFE, 0xFF}, swap16(utf16le(s))...) }},
		{"utf-16be", func(s string) []byte { return swap16(utf16le(s)) }},
		{"utf-32le with bom", func(s string) []byte { return append([]byte{0xFF, 0xFE, 0, 0}, utf32(s, false)...) }},
		{"utf-32le", func(s string) []byte { return utf32(s, false) }},
		{"utf-32be with bom", func(s string) []byte { return append([]byte{0, 0, 0xFE, 0xFF}, utf32(s, true)...) }},
		{"utf-32be", func(s string) []byte { return utf32(s, true) }},
	} {
		add("csv: "+enc.name, "plots.csv", enc.f(goodCSV))
	}
	// Large ones.
	var wide strings.Builder
	wide.WriteString("block,plot,treatment,yield")
	for i := 0; i < 1000000; i++ {
		fmt.Fprintf(&wide, ",c%d", i)
	}
	wide.WriteString("\nB1,1,control,6\n")
	add("csv: a million undeclared columns", "plots.csv", []byte(wide.String()))
	add("csv: a million named columns over short rows", "plots.csv", []byte(strings.TrimSuffix(wide.String(), "B1,1,control,6\n")+strings.Repeat("B1\n", 100)))
	add("csv: a 10 MB cell", "plots.csv", []byte(strings.Replace(goodCSV, "6.1", strings.Repeat("z", 10<<20), 1)))
	add("csv: a 10 MB level", "plots.csv", []byte(strings.Replace(goodCSV, "B1,1,control", "B1,1,"+strings.Repeat("c", 10<<20), 1)))
	var levels strings.Builder
	levels.WriteString("block,plot,treatment,yield\n")
	for i := 0; i < 100000; i++ {
		fmt.Fprintf(&levels, "B%d,%d,t%d,5\n", 1+i%2, i, i)
	}
	add("csv: 100000 undeclared levels", "plots.csv", []byte(levels.String()))
	// Cut and flipped copies of good data.
	rng := rand.New(rand.NewPCG(11, 5))
	for i := 1; i <= 20; i++ {
		cut := len(goodCSV) * i / 21
		add(fmt.Sprintf("csv: cut at byte %d", cut), "plots.csv", []byte(goodCSV[:cut]))
	}
	for i := 0; i < 20; i++ {
		b := []byte(goodCSV)
		k := rng.IntN(len(b))
		b[k] = byte(rng.IntN(256))
		add(fmt.Sprintf("csv: byte %d set to %#x", k, b[k]), "plots.csv", b)
	}

	// XLSX.
	good := workbook(t, sheetPart(goodRows))
	for i := 1; i <= 30; i++ {
		cut := len(good) * i / 31
		add(fmt.Sprintf("xlsx: cut at byte %d", cut), "plots.xlsx", good[:cut])
	}
	for i := 0; i < 30; i++ {
		b := bytes.Clone(good)
		k := rng.IntN(len(b))
		b[k] ^= byte(1 + rng.IntN(255))
		add(fmt.Sprintf("xlsx: byte %d flipped", k), "plots.xlsx", b)
	}
	head, tail := sheetHead, sheetTail
	rowsXML := sheetRows(goodRows)
	hdrXML := sheetRows(goodRows[:1])
	var lastCol, wideHdr strings.Builder
	lastCol.WriteString(hdrXML)
	for r := 2; r < 100000; r++ {
		fmt.Fprintf(&lastCol, `<row r="%d"><c r="XFD%d"><v>1</v></c></row>`, r, r)
	}
	wideHdr.WriteString(`<row r="1">`)
	for c := 1; c <= 16384; c++ {
		fmt.Fprintf(&wideHdr, `<c t="inlineStr"><is><t>c%d</t></is></c>`, c)
	}
	wideHdr.WriteString(`</row>`)
	for r := 2; r < 400; r++ {
		fmt.Fprintf(&wideHdr, `<row r="%d"><c r="A%d"><v>1</v></c></row>`, r, r)
	}
	sheets := map[string]string{
		"one cell per row in the last column": head + lastCol.String() + tail,
		"16384 names over one-cell rows":      head + wideHdr.String() + tail,
		"a stray space in XFD1":               head + strings.Replace(hdrXML, `</row>`, `<c r="XFD1" t="inlineStr"><is><t> </t></is></c></row>`, 1) + rowsXML[len(hdrXML):] + tail,
		"a megabyte of white space":           head + rowsXML + strings.Repeat(" ", 1<<20+1) + tail,
		"a zip bomb of white space":           head + rowsXML + strings.Repeat("<x/>"+strings.Repeat(" ", 1000), 11<<10) + tail,
		"nested 100 deep":                     head + rowsXML + strings.Repeat("<x>", 100) + strings.Repeat("</x>", 100) + tail,
		"a doctype with entities":             `<!DOCTYPE lolz [<!ENTITY lol "lol"><!ENTITY lol2 "&lol;&lol;&lol;">]>` + head + strings.Replace(rowsXML, "control", "&lol2;", 1) + tail,
		"an undefined entity":                 head + strings.Replace(rowsXML, "control", "&nope;", 1) + tail,
		"a shared string past the table":      head + strings.Replace(rowsXML, `t="inlineStr"><is><t>control</t></is>`, `t="s"><v>99</v>`, 1) + tail,
		"a negative shared string":            head + strings.Replace(rowsXML, `t="inlineStr"><is><t>control</t></is>`, `t="s"><v>-1</v>`, 1) + tail,
		"a shared string that is no number":   head + strings.Replace(rowsXML, `t="inlineStr"><is><t>control</t></is>`, `t="s"><v>abc</v>`, 1) + tail,
		"a formula without a value":           head + strings.Replace(rowsXML, `<v>6.1</v>`, `<f>1+1</f>`, 1) + tail,
		"a shared formula without a value":    head + strings.Replace(rowsXML, `<v>6.1</v>`, `<f t="shared" si="0"/>`, 1) + tail,
		"an error cell":                       head + strings.Replace(rowsXML, `<c r="D2"><v>6.1</v>`, `<c r="D2" t="e"><v>#DIV/0!</v>`, 1) + tail,
		"a boolean yield":                     head + strings.Replace(rowsXML, `<c r="D2"><v>6.1</v>`, `<c r="D2" t="b"><v>1</v>`, 1) + tail,
		"1e309 in a number cell":              head + strings.Replace(rowsXML, `<v>6.1</v>`, `<v>1e309</v>`, 1) + tail,
		"rows out of order":                   head + hdrXML + `<row r="3"/><row r="2"/>` + tail,
		"row 0":                               head + hdrXML + `<row r="0"/>` + tail,
		"row 1048577":                         head + hdrXML + `<row r="1048577"/>` + tail,
		"row number that is no number":        head + hdrXML + `<row r="two"/>` + tail,
		"cell ref past XFD":                   head + hdrXML + `<row r="2"><c r="XFE2"><v>1</v></c></row>` + tail,
		"cell ref in another row":             head + hdrXML + `<row r="2"><c r="A9"><v>1</v></c></row>` + tail,
		"cells out of order":                  head + hdrXML + `<row r="2"><c r="C2"><v>1</v></c><c r="A2"><v>1</v></c></row>` + tail,
		"cell ref of garbage":                 head + hdrXML + `<row r="2"><c r="$$"><v>1</v></c></row>` + tail,
		"mismatched tags":                     head + hdrXML + `<row r="2"><c r="A2"></row></c>` + tail,
		"cut inside a row":                    head + hdrXML + `<row r="2"><c r="A2">`,
		"not xml at all":                      "this is not xml",
		"utf-16 declared":                     `<?xml version="1.0" encoding="UTF-16"?>` + head[len(`<?xml version="1.0" encoding="UTF-8"?>`):] + rowsXML + tail,
		"no sheetData":                        `<?xml version="1.0" encoding="UTF-8"?><worksheet/>`,
		"an empty sheet":                      head + tail,
		"a 2 MB inline string":                head + strings.Replace(rowsXML, "control", strings.Repeat("c", 2<<20), 1) + tail,
		"an inline string of runs":            head + strings.Replace(rowsXML, `<is><t>control</t></is>`, `<is><r><t>cont</t></r><r><t>rol</t></r><rPh><t>x</t></rPh></is>`, 1) + tail,
		"a bidi override in a level":          head + strings.Replace(rowsXML, "<t>control</t>", "<t>cont\u202erol</t>", 1) + tail,
	}
	for _, name := range sortedKeys(sheets) {
		add("xlsx: "+name, "plots.xlsx", workbook(t, sheets[name]))
	}
	sst := func(n int) string {
		return `<sst xmlns="http://schemas.openxmlformats.org/spreadsheetml/2006/main">` + strings.Repeat("<si/>", n) + `</sst>`
	}
	parts := map[string]map[string]string{
		"no workbook part":           {"xl/workbook.xml": ""},
		"no package relationships":   {"_rels/.rels": ""},
		"no workbook relationships":  {"xl/_rels/workbook.xml.rels": ""},
		"no sheet part":              {"xl/worksheets/sheet1.xml": ""},
		"a sheet of another name":    {"xl/workbook.xml": strings.Replace(workbookXML, `name="plots"`, `name="Sheet1"`, 1)},
		"no sheets":                  {"xl/workbook.xml": strings.Replace(workbookXML, `<sheet name="plots" sheetId="1" r:id="rId1"/>`, "", 1)},
		"a million and one strings":  {"xl/sharedStrings.xml": sst(1<<20 + 1)},
		"styles that are not xml":    {"xl/styles.xml": "<styleSheet><cellXfs>"},
		"a relationship loop":        {"xl/_rels/workbook.xml.rels": strings.Replace(workbookRels, "worksheets/sheet1.xml", "../xl/workbook.xml", 1)},
		"a target outside the zip":   {"xl/_rels/workbook.xml.rels": strings.Replace(workbookRels, "worksheets/sheet1.xml", "../../../../etc/passwd", 1)},
		"a date1904 workbook":        {"xl/workbook.xml": strings.Replace(workbookXML, "<sheets>", `<workbookPr date1904="1"/><sheets>`, 1)},
		"a doctype in the workbook":  {"xl/workbook.xml": `<!DOCTYPE x>` + workbookXML},
		"a deep relationship part":   {"_rels/.rels": strings.Repeat("<a>", 50) + strings.Repeat("</a>", 50)},
		"a megabyte workbook name":   {"xl/workbook.xml": strings.Replace(workbookXML, `name="plots"`, `name="`+strings.Repeat("p", 1<<20+10)+`"`, 1)},
		"an empty shared-string set": {"xl/sharedStrings.xml": sst(0)},
	}
	for _, name := range sortedKeys(parts) {
		add("xlsx: "+name, "plots.xlsx", workbookWith(t, sheetPart(goodRows), parts[name]))
	}
	add("xlsx: an old .xls header", "plots.xlsx", append([]byte{0xD0, 0xCF, 0x11, 0xE0, 0xA1, 0xB1, 0x1A, 0xE1}, make([]byte, 504)...))
	add("xlsx: csv text named .xlsx", "plots.xlsx", []byte(goodCSV))
	add("xlsx: utf-16 text named .xlsx", "plots.xlsx", append([]byte{0xFF, 0xFE}, utf16le(goodCSV)...))
	add("xlsx: an empty zip", "plots.xlsx", emptyZip(t))
	add("xlsx: zip magic and nothing", "plots.xlsx", []byte("PK\x03\x04"))

	// Files that are not regular, or not where the plan may read.
	add("file: missing", "absent.csv", nil)
	add("file: a folder", "sub", nil)
	if err := os.Mkdir(filepath.Join(cases[len(cases)-1].dir, "sub"), 0o755); err != nil {
		t.Fatal(err)
	}
	add("file: outside by ..", "../outside.csv", nil)
	write(t, filepath.Join(root, "outside.csv"), []byte("root:x:0:0:root:/root:/bin/bash\n"))
	add("file: absolute elsewhere", filepath.ToSlash(filepath.Join(root, "outside.csv")), nil)
	add("file: over --max-data-size", "plots.csv", []byte(goodCSV), "--max-data-size", "64")
	if runtime.GOOS != "windows" {
		add("file: a link out of the folder", "link.csv", nil)
		if err := os.Symlink(filepath.Join(root, "outside.csv"), filepath.Join(cases[len(cases)-1].dir, "link.csv")); err != nil {
			t.Fatal(err)
		}
		add("file: a link loop", "loop.csv", nil)
		d := cases[len(cases)-1].dir
		if err := os.Symlink("loop2.csv", filepath.Join(d, "loop.csv")); err != nil {
			t.Fatal(err)
		}
		if err := os.Symlink("loop.csv", filepath.Join(d, "loop2.csv")); err != nil {
			t.Fatal(err)
		}
		add("file: a named pipe", "pipe.csv", nil)
		if err := mkfifo(filepath.Join(cases[len(cases)-1].dir, "pipe.csv")); err != nil {
			t.Fatal(err)
		}
		if _, err := os.Stat("/dev/zero"); err == nil {
			add("file: /dev/zero allowed outside", "/dev/zero", nil, "--allow-outside-data")
			add("file: /dev/zero as DATA", "plots.csv", nil)
			cases[len(cases)-1].args = append(cases[len(cases)-1].args, "/dev/zero")
		}
	}
	return cases
}

// Parts of a workbook written by hand.
const (
	sheetHead    = `<?xml version="1.0" encoding="UTF-8"?><worksheet xmlns="http://schemas.openxmlformats.org/spreadsheetml/2006/main"><sheetData>`
	sheetTail    = `</sheetData></worksheet>`
	workbookXML  = `<?xml version="1.0" encoding="UTF-8"?><workbook xmlns="http://schemas.openxmlformats.org/spreadsheetml/2006/main" xmlns:r="http://schemas.openxmlformats.org/officeDocument/2006/relationships"><sheets><sheet name="plots" sheetId="1" r:id="rId1"/></sheets></workbook>`
	workbookRels = `<?xml version="1.0" encoding="UTF-8"?><Relationships xmlns="http://schemas.openxmlformats.org/package/2006/relationships">` +
		`<Relationship Id="rId1" Type="http://schemas.openxmlformats.org/officeDocument/2006/relationships/worksheet" Target="worksheets/sheet1.xml"/>` +
		`<Relationship Id="rId2" Type="http://schemas.openxmlformats.org/officeDocument/2006/relationships/sharedStrings" Target="sharedStrings.xml"/>` +
		`<Relationship Id="rId3" Type="http://schemas.openxmlformats.org/officeDocument/2006/relationships/styles" Target="styles.xml"/></Relationships>`
	packageRels = `<?xml version="1.0" encoding="UTF-8"?><Relationships xmlns="http://schemas.openxmlformats.org/package/2006/relationships">` +
		`<Relationship Id="rId1" Type="http://schemas.openxmlformats.org/officeDocument/2006/relationships/officeDocument" Target="xl/workbook.xml"/></Relationships>`
)

// sheetRows writes rows as row elements: numbers as number cells, other
// texts as inline strings.
func sheetRows(rows [][]string) string {
	var b strings.Builder
	for r, row := range rows {
		fmt.Fprintf(&b, `<row r="%d">`, r+1)
		for c, v := range row {
			ref := fmt.Sprintf("%c%d", 'A'+c, r+1)
			if _, err := fmt.Sscanf(v, "%g", new(float64)); err == nil && r > 0 && c != 0 {
				fmt.Fprintf(&b, `<c r="%s"><v>%s</v></c>`, ref, v)
			} else {
				fmt.Fprintf(&b, `<c r="%s" t="inlineStr"><is><t>%s</t></is></c>`, ref, v)
			}
		}
		b.WriteString(`</row>`)
	}
	return b.String()
}

func sheetPart(rows [][]string) string { return sheetHead + sheetRows(rows) + sheetTail }

// workbook zips a workbook whose one sheet is sheet.
func workbook(t *testing.T, sheet string) []byte {
	return workbookWith(t, sheet, nil)
}

// workbookWith zips a workbook with its parts replaced by parts ("" for a
// part left out).
func workbookWith(t *testing.T, sheet string, parts map[string]string) []byte {
	t.Helper()
	all := map[string]string{"_rels/.rels": packageRels, "xl/workbook.xml": workbookXML, "xl/_rels/workbook.xml.rels": workbookRels, "xl/worksheets/sheet1.xml": sheet}
	for k, v := range parts {
		all[k] = v
	}
	var out bytes.Buffer
	zw := zip.NewWriter(&out)
	for _, name := range sortedKeys(all) {
		if all[name] == "" {
			continue
		}
		w, err := zw.Create(name)
		if err != nil {
			t.Fatal(err)
		}
		if _, err := w.Write([]byte(all[name])); err != nil {
			t.Fatal(err)
		}
	}
	if err := zw.Close(); err != nil {
		t.Fatal(err)
	}
	return out.Bytes()
}

func emptyZip(t *testing.T) []byte {
	var out bytes.Buffer
	if err := zip.NewWriter(&out).Close(); err != nil {
		t.Fatal(err)
	}
	return out.Bytes()
}

func utf16le(s string) []byte {
	var b []byte
	for _, u := range utf16.Encode([]rune(s)) {
		b = append(b, byte(u), byte(u>>8))
	}
	return b
}

func swap16(b []byte) []byte {
	out := bytes.Clone(b)
	for i := 0; i+1 < len(out); i += 2 {
		out[i], out[i+1] = out[i+1], out[i]
	}
	return out
}

func utf32(s string, be bool) []byte {
	var b []byte
	for _, r := range s {
		if be {
			b = append(b, byte(r>>24), byte(r>>16), byte(r>>8), byte(r))
		} else {
			b = append(b, byte(r), byte(r>>8), byte(r>>16), byte(r>>24))
		}
	}
	return b
}

func write(t *testing.T, path string, b []byte) {
	t.Helper()
	if err := os.WriteFile(path, b, 0o644); err != nil {
		t.Fatal(err)
	}
}

func sortedKeys[V any](m map[string]V) []string {
	keys := make([]string, 0, len(m))
	for k := range m {
		keys = append(keys, k)
	}
	slices.Sort(keys)
	return keys
}
