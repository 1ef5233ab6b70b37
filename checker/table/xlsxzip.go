package table

import (
	"archive/zip"
	"bytes"
	"encoding/xml"
	"errors"
	"fmt"
	"io"
	"path"
	"strconv"
	"strings"

	"furrow/plan"
)

// This file reads the parts of an XLSX workbook (ECMA-376 Part 2, the
// Open Packaging Conventions: a zip archive of XML parts joined by
// relationship parts) with bounds, so that no workbook can make furrow
// unpack or hold more than the data it describes:
//
//   - each part read, and all of them together, unpack to at most the
//     data size limit (Options.MaxSize), taken from the sizes the archive
//     declares (archive/zip refuses a member that unpacks to more);
//   - a part that unpacks to more than Options.MaxUnpackRatio times its
//     packed size (DefaultMaxUnpackRatio), once over packRatioFrom bytes,
//     is refused as a zip bomb (an *UnpackRatioError);
//   - an XML part may not hold a text of more than maxTextRun bytes
//     without markup (a cell holds at most 32767 characters), nor nest
//     elements more than maxDepth deep;
//   - only the parts needed are read: the package and workbook
//     relationships, the workbook, the styles, the shared strings and the
//     one sheet, each streamed once.

const (
	// packRatioFrom is the unpacked size of a part from which its unpack
	// ratio is bounded (see DefaultMaxUnpackRatio).
	packRatioFrom = 10 << 20
	// maxTextRun is the longest text between two tags, and the longest
	// cell text, read from an XML part.
	maxTextRun = 1 << 20
	// maxDepth is the deepest element nesting read (a sheet nests 5 deep).
	maxDepth = 32
)

// Relationship types (the end of the Type URI, the same in transitional
// and strict OOXML).
const (
	relOfficeDocument = "/officeDocument"
	relWorksheet      = "/worksheet"
	relStyles         = "/styles"
	relSharedStrings  = "/sharedStrings"
)

// workbook is an XLSX archive opened for reading.
type workbook struct {
	name     string               // the data file, for messages
	parts    map[string]*zip.File // by lower-case part name without a leading slash
	limit    int64                // Options.MaxSize
	ratio    int64                // Options.MaxUnpackRatio, resolved
	unpacked int64                // declared unpacked size of the parts opened so far
	path     string               // the workbook part
	rels     map[string]rel       // the workbook's relationships by Id
	sheets   []sheetRef           // in workbook order
	date1904 bool
}

type rel struct{ typ, target string }

// sheetRef is one sheet of the workbook: its name and its part.
type sheetRef struct{ name, part string }

// damaged returns the error for a workbook whose structure cannot be read.
func (w *workbook) damaged(format string, args ...any) error {
	return fmt.Errorf("reading data %s: not a readable xlsx workbook: %s", w.name, fmt.Sprintf(format, args...))
}

// openWorkbook opens the archive and reads its workbook part: the sheets
// and the date system.
func openWorkbook(name string, data []byte, limit, ratio int64) (*workbook, error) {
	zr, err := zip.NewReader(bytes.NewReader(data), int64(len(data)))
	if err != nil {
		return nil, fmt.Errorf("reading data %s: not a readable xlsx workbook: the zip archive is damaged (%v)", name, err)
	}
	w := &workbook{name: name, parts: make(map[string]*zip.File, len(zr.File)), limit: limit, ratio: ratio}
	for _, f := range zr.File {
		key := strings.ToLower(strings.TrimPrefix(strings.ReplaceAll(f.Name, `\`, "/"), "/"))
		if _, dup := w.parts[key]; !dup {
			w.parts[key] = f
		}
	}
	w.path = "xl/workbook.xml"
	if rels, err := w.readRels("_rels/.rels", ""); err != nil {
		return nil, err
	} else {
		for _, r := range rels {
			if strings.HasSuffix(r.typ, relOfficeDocument) {
				w.path = r.target
				break
			}
		}
	}
	if w.part(w.path) == nil {
		return nil, w.damaged("it has no workbook part (%s)", w.path)
	}
	if w.rels, err = w.readRels(relsPath(w.path), path.Dir(w.path)); err != nil {
		return nil, err
	}
	if err := w.readWorkbook(); err != nil {
		return nil, err
	}
	return w, nil
}

// part returns the archive member of a part name, or nil.
func (w *workbook) part(name string) *zip.File {
	return w.parts[strings.ToLower(strings.TrimPrefix(name, "/"))]
}

// relsPath is the relationship part of a part: xl/_rels/workbook.xml.rels.
func relsPath(part string) string {
	return path.Join(path.Dir(part), "_rels", path.Base(part)+".rels")
}

// related returns the part of the workbook's first relationship of the
// given type, or fallback when there is none.
func (w *workbook) related(typ, fallback string) string {
	best := ""
	for id, r := range w.rels {
		if strings.HasSuffix(r.typ, typ) && (best == "" || id < best) {
			best = id
		}
	}
	if best == "" {
		return fallback
	}
	return w.rels[best].target
}

// open returns a reader of a part's XML, bounded as the file comment
// says. A part the archive does not hold is (nil, nil).
func (w *workbook) open(name string) (*partReader, error) {
	f := w.part(name)
	if f == nil {
		return nil, nil
	}
	size := f.UncompressedSize64
	if size > uint64(w.limit) || w.unpacked+int64(size) > w.limit {
		if size > uint64(w.limit) {
			return nil, &SizeError{Path: w.name, Part: f.Name, Size: int64(min(size, 1<<62)), Limit: w.limit}
		}
		return nil, &SizeError{Path: w.name, Part: f.Name, Size: w.unpacked + int64(size), Limit: w.limit, Together: true}
	}
	if size > packRatioFrom && (size-1)/uint64(w.ratio) >= max(f.CompressedSize64, 1) {
		return nil, &UnpackRatioError{Path: w.name, Part: f.Name, Size: int64(min(size, 1<<62)), Packed: int64(min(f.CompressedSize64, 1<<62)), Limit: int(w.ratio)}
	}
	w.unpacked += int64(size)
	rc, err := f.Open()
	if err != nil {
		return nil, w.damaged("the part %s cannot be unpacked (%v)", f.Name, err)
	}
	pr := &partReader{w: w, name: f.Name, rc: rc}
	pr.dec = xml.NewDecoder(pr)
	pr.dec.Strict = true
	return pr, nil
}

// partReader streams one XML part: it counts the text between tags and
// the depth of elements, and turns every failure into a message that
// names the file and the part.
type partReader struct {
	w     *workbook
	name  string
	rc    io.ReadCloser
	dec   *xml.Decoder
	run   int   // bytes since the last '<'
	read  int64 // bytes read
	depth int
	open  [maxDepth]string // names of the open elements
	err   error            // a bound passed, reported instead of the decoder's error
}

// Read implements io.Reader for the decoder and enforces maxTextRun.
func (p *partReader) Read(b []byte) (int, error) {
	n, err := p.rc.Read(b)
	long := false
	for i := 0; i < n; {
		j := bytes.IndexByte(b[i:n], '<')
		if j < 0 {
			p.run += n - i
			break
		}
		long = long || p.run+j > maxTextRun
		p.run = 0
		i += j + 1
	}
	p.read += int64(n)
	if long || p.run > maxTextRun {
		p.err = fmt.Errorf("reading data %s: the workbook part %s holds a text of more than %s without markup (near byte %d); a cell holds at most 32767 characters, so the workbook is damaged or was made to exhaust the reader",
			p.w.name, p.name, plan.ByteSize(maxTextRun), p.read)
		return n, p.err
	}
	if err != nil && !errors.Is(err, io.EOF) {
		p.err = p.w.damaged("the part %s cannot be unpacked (%v)", p.name, err)
	}
	return n, err
}

// Close closes the part.
func (p *partReader) Close() error { return p.rc.Close() }

// token returns the next token; io.EOF at the end of the part. Start and
// end elements keep the depth.
func (p *partReader) token() (xml.Token, error) {
	tok, err := p.dec.RawToken()
	if err != nil {
		if p.err != nil {
			return nil, p.err
		}
		if errors.Is(err, io.EOF) {
			if p.depth > 0 {
				return nil, p.w.damaged("the part %s ends inside an element", p.name)
			}
			return nil, io.EOF
		}
		return nil, p.w.damaged("the part %s is not well-formed XML (%v)", p.name, err)
	}
	switch t := tok.(type) {
	case xml.StartElement:
		if p.depth == maxDepth {
			return nil, p.w.damaged("the part %s nests elements more than %d deep", p.name, maxDepth)
		}
		p.open[p.depth] = t.Name.Local
		p.depth++
	case xml.EndElement:
		if p.depth == 0 {
			return nil, p.w.damaged("the part %s closes an element it never opened (</%s>)", p.name, t.Name.Local)
		}
		p.depth--
		if p.open[p.depth] != t.Name.Local {
			return nil, p.w.damaged("the part %s closes element %s with </%s>", p.name, p.open[p.depth], t.Name.Local)
		}
	case xml.Directive:
		// A DOCTYPE may declare entities; a workbook never has one.
		return nil, p.w.damaged("the part %s holds a document type declaration", p.name)
	}
	return tok, nil
}

// text reads the character data up to the end of the element just
// started (nested elements are skipped), at most maxTextRun bytes.
func (p *partReader) text() (string, error) {
	var b strings.Builder
	depth := p.depth
	for {
		tok, err := p.token()
		if err != nil {
			return "", p.endOfPart(err)
		}
		switch t := tok.(type) {
		case xml.CharData:
			if b.Len()+len(t) > maxTextRun {
				return "", fmt.Errorf("reading data %s: the workbook part %s holds a text of more than %s; a cell holds at most 32767 characters",
					p.w.name, p.name, plan.ByteSize(maxTextRun))
			}
			b.Write(t)
		case xml.EndElement:
			if p.depth < depth {
				return b.String(), nil
			}
		}
	}
}

// skip reads up to the end of the element just started.
func (p *partReader) skip() error {
	depth := p.depth
	for p.depth >= depth {
		if _, err := p.token(); err != nil {
			return p.endOfPart(err)
		}
	}
	return nil
}

// endOfPart words an end of the part where an element was still open.
func (p *partReader) endOfPart(err error) error {
	if errors.Is(err, io.EOF) {
		return p.w.damaged("the part %s ends inside an element", p.name)
	}
	return err
}

// attr returns the value of the attribute with the given local name.
func attr(e xml.StartElement, local string) (string, bool) {
	for _, a := range e.Attr {
		if a.Name.Local == local {
			return a.Value, true
		}
	}
	return "", false
}

// relID returns the r:id attribute of an element (the relationships
// namespace, whatever its prefix).
func relID(e xml.StartElement) string {
	for _, a := range e.Attr {
		if a.Name.Local == "id" && a.Name.Space != "" {
			return a.Value
		}
	}
	return ""
}

// readRels reads a relationship part; targets are resolved against base
// (the folder of the part the relationships belong to). A missing part is
// no relationships.
func (w *workbook) readRels(name, base string) (map[string]rel, error) {
	p, err := w.open(name)
	if p == nil || err != nil {
		return nil, err
	}
	defer p.Close()
	out := map[string]rel{}
	for {
		tok, err := p.token()
		if errors.Is(err, io.EOF) {
			return out, nil
		}
		if err != nil {
			return nil, err
		}
		e, ok := tok.(xml.StartElement)
		if !ok || e.Name.Local != "Relationship" {
			continue
		}
		if mode, _ := attr(e, "TargetMode"); strings.EqualFold(mode, "External") {
			continue
		}
		id, _ := attr(e, "Id")
		typ, _ := attr(e, "Type")
		target, _ := attr(e, "Target")
		if strings.HasPrefix(target, "/") {
			target = strings.TrimPrefix(target, "/")
		} else {
			target = path.Join(base, target)
		}
		if _, dup := out[id]; !dup && len(out) < 1<<16 {
			out[id] = rel{typ: typ, target: path.Clean(target)}
		}
	}
}

// readWorkbook reads the sheet list and the date system.
func (w *workbook) readWorkbook() error {
	p, err := w.open(w.path)
	if err != nil {
		return err
	}
	defer p.Close()
	for {
		tok, err := p.token()
		if errors.Is(err, io.EOF) {
			return nil
		}
		if err != nil {
			return err
		}
		e, ok := tok.(xml.StartElement)
		if !ok {
			continue
		}
		switch e.Name.Local {
		case "workbookPr":
			if v, ok := attr(e, "date1904"); ok {
				w.date1904 = v == "1" || strings.EqualFold(v, "true")
			}
		case "sheet":
			name, _ := attr(e, "name")
			part := ""
			if r, ok := w.rels[relID(e)]; ok {
				part = r.target
			}
			if len(w.sheets) < 1<<16 {
				w.sheets = append(w.sheets, sheetRef{name: name, part: part})
			}
		}
	}
}

// readStyles returns the date kind of each cell format (the cellXfs list
// of the styles part, indexed by a cell's s attribute).
func (w *workbook) readStyles() ([]int, error) {
	p, err := w.open(w.related(relStyles, path.Join(path.Dir(w.path), "styles.xml")))
	if p == nil || err != nil {
		return nil, err
	}
	defer p.Close()
	custom := map[int]string{}
	var kinds []int
	inXfs := false
	for {
		tok, err := p.token()
		if errors.Is(err, io.EOF) {
			return kinds, nil
		}
		if err != nil {
			return nil, err
		}
		switch e := tok.(type) {
		case xml.StartElement:
			switch e.Name.Local {
			case "numFmt":
				id, err1 := strconv.Atoi(attrOr(e, "numFmtId"))
				code, ok := attr(e, "formatCode")
				if err1 == nil && ok && len(custom) < 1<<16 {
					custom[id] = code
				}
			case "cellXfs":
				inXfs = true
			case "xf":
				if !inXfs || len(kinds) >= 1<<20 {
					continue
				}
				id, _ := strconv.Atoi(attrOr(e, "numFmtId"))
				if code, ok := custom[id]; ok {
					kinds = append(kinds, dateFormatKind(code))
				} else {
					kinds = append(kinds, builtinDateKind(id))
				}
			}
		case xml.EndElement:
			if e.Name.Local == "cellXfs" {
				inXfs = false
			}
		}
	}
}

func attrOr(e xml.StartElement, local string) string {
	v, _ := attr(e, local)
	return v
}

// readSharedStrings returns the shared-string table, at most max strings.
func (w *workbook) readSharedStrings(max int) ([]string, error) {
	p, err := w.open(w.related(relSharedStrings, path.Join(path.Dir(w.path), "sharedStrings.xml")))
	if p == nil || err != nil {
		return nil, err
	}
	defer p.Close()
	var (
		out  []string
		cur  strings.Builder
		inSI bool
	)
	for {
		tok, err := p.token()
		if errors.Is(err, io.EOF) {
			return out, nil
		}
		if err != nil {
			return nil, err
		}
		switch e := tok.(type) {
		case xml.StartElement:
			switch e.Name.Local {
			case "si":
				inSI = true
				cur.Reset()
			case "rPh", "phoneticPr":
				if err := p.skip(); err != nil { // phonetic readings are not the text
					return nil, err
				}
			case "t":
				if !inSI {
					continue
				}
				s, err := p.text()
				if err != nil {
					return nil, err
				}
				if cur.Len()+len(s) > maxTextRun {
					return nil, fmt.Errorf("reading data %s: shared string %d of the workbook is longer than %s; a cell holds at most 32767 characters",
						w.name, len(out), plan.ByteSize(maxTextRun))
				}
				cur.WriteString(s)
			}
		case xml.EndElement:
			if e.Name.Local == "si" && inSI {
				if len(out) >= max {
					return nil, fmt.Errorf("reading data %s: the workbook's shared-string table holds more than %d strings, more than its sheet has cells for; the workbook is damaged or was made to exhaust the reader",
						w.name, max)
				}
				out = append(out, unescapeXString(cur.String()))
				inSI = false
			}
		}
	}
}

// unescapeXString decodes the _xHHHH_ escapes of ECMA-376 Part 1,
// 22.9.2.19 (ST_Xstring), which stand for characters XML cannot carry;
// _x005F_ is an escaped underscore.
func unescapeXString(s string) string {
	if !strings.Contains(s, "_x") {
		return s
	}
	var b strings.Builder
	for i := 0; i < len(s); {
		if i+7 <= len(s) && s[i] == '_' && s[i+1] == 'x' && s[i+6] == '_' {
			if v, err := strconv.ParseUint(s[i+2:i+6], 16, 16); err == nil {
				b.WriteRune(rune(v))
				i += 7
				continue
			}
		}
		b.WriteByte(s[i])
		i++
	}
	return b.String()
}
