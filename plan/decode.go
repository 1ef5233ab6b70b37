package plan

import (
	"bytes"
	"errors"
	"fmt"
	"io"
	"io/fs"
	"regexp"
	"strconv"
	"strings"
	"unicode/utf8"

	"furrow/schema"

	"gopkg.in/yaml.v3"
)

// MaxSize is the largest plan file, in bytes, that Load and Parse read. A
// plan is a few kilobytes; anything near this size is not a plan.
const MaxSize = 1 << 20

// Load reads the plan file at path and returns the decoded plan with its
// findings, sorted. m gives the rules of the model kinds and checks the
// build offers (the registry in furrow/checker/method). The error is non-nil only when the file cannot be read;
// everything wrong with its content is a diagnostic, positioned with
// File = path as given. The plan is nil when the document could not be
// decoded (YAML syntax, unsupported format, schema problems); otherwise
// it is returned with defaults filled, together with the semantic
// findings of Validate.
func Load(path string, m Methods) (*Plan, Diagnostics, error) {
	src, err := ReadFile(path, MaxSize)
	var big *TooLargeError
	switch {
	case errors.As(err, &big):
		return nil, Diagnostics{tooLarge(path)}, nil
	case errors.Is(err, fs.ErrNotExist) || errors.Is(err, fs.ErrPermission):
		return nil, nil, fmt.Errorf("reading plan: %w", err)
	case err != nil:
		return nil, nil, fmt.Errorf("reading plan %s: %w", path, err)
	}
	return Parse(path, src, m)
}

// Parse decodes and validates a plan held in src; name is used as the
// file of every position. It never returns a non-nil error (the result is
// there to mirror Load); see Load for the meaning of the other results.
// src is not modified.
func Parse(name string, src []byte, m Methods) (*Plan, Diagnostics, error) {
	if m == nil {
		panic("plan: Parse needs the build's Methods")
	}
	if ds := precheck(name, src); ds != nil {
		return nil, ds.Sort(), nil
	}
	root, ds := parseYAML(name, src)
	if root == nil {
		return nil, ds.Sort(), nil
	}
	ds = append(ds, bidiFindings(name, src, root)...)
	ds = append(ds, underflowFindings(name, root)...)
	if d, ok := checkFormat(name, root); !ok {
		return nil, append(ds, d).Sort(), nil
	}
	for _, pr := range schema.Plan().ValidateYAML(root) {
		ds = append(ds, Diagnostic{
			Severity: Error,
			Code:     pr.Code,
			Pos:      Pos{File: name, Line: pr.Line, Column: pr.Column},
			Path:     pr.Path,
			Summary:  pr.Summary,
		})
	}
	if ds.HasErrors() {
		return nil, ds.Sort(), nil
	}
	p := decode(name, root)
	p.fillDefaults(m)
	ds = append(ds, Validate(p, m)...)
	return p, ds.Sort(), nil
}

// leadingBOMs counts the byte-order marks src starts with.
func leadingBOMs(src []byte) int {
	n := 0
	for bytes.HasPrefix(src, []byte("\ufeff")) {
		src = src[3:]
		n++
	}
	return n
}

// tooLarge is the finding for a plan file over MaxSize.
func tooLarge(name string) Diagnostic {
	return Diagnostic{Severity: Error, Code: "too-large", Pos: Pos{File: name},
		Summary: fmt.Sprintf("the file is larger than %d bytes; a plan is a short text file", MaxSize)}
}

func diagAt(name string, line, col int, code, msg string) Diagnostic {
	return Diagnostic{Severity: Error, Code: code, Pos: Pos{File: name, Line: line, Column: col}, Summary: msg}
}

// precheck refuses input that is not a small UTF-8 text before YAML sees
// it, and finds tabs used for indentation (which YAML forbids) so they can
// be named precisely.
func precheck(name string, src []byte) Diagnostics {
	if len(src) > MaxSize {
		return Diagnostics{tooLarge(name)}
	}
	if enc := TextEncoding(src); enc != "" {
		return Diagnostics{diagAt(name, 1, 1, "not-utf8",
			fmt.Sprintf("the file is %s, not utf-8; save the plan as utf-8", enc))}
	}
	line, col := 1, 1
	for i := 0; i < len(src); {
		r, size := utf8.DecodeRune(src[i:])
		if r == 0 || (r == utf8.RuneError && size == 1) {
			return Diagnostics{diagAt(name, line, col, "not-text",
				"the file is not text (it holds a byte that no UTF-8 text file contains); a plan must be a YAML text file")}
		}
		if r == '\n' {
			line, col = line+1, 1
		} else {
			col++
		}
		i += size
	}
	src = bytes.TrimPrefix(src, []byte("\ufeff"))
	if n := leadingBOMs(src); n > 0 {
		return Diagnostics{diagAt(name, 1, 1, "bom",
			fmt.Sprintf("the file starts with %d byte-order marks (U+FEFF), where a text file has at most one; it was likely converted twice: save the plan again as utf-8", n+1))}
	}
	var ds Diagnostics
	inBlock, blockIndent := false, 0
	for i, l := range strings.Split(string(src), "\n") {
		l = strings.TrimSuffix(l, "\r")
		trimmed := strings.TrimLeft(l, " \t")
		if trimmed == "" {
			continue
		}
		lead := l[:len(l)-len(trimmed)]
		indent := len(lead)
		if inBlock && indent > blockIndent && !strings.Contains(lead[:min(blockIndent+1, len(lead))], "\t") {
			continue // inside a literal or folded block scalar: tabs are text
		}
		inBlock = false
		if j := strings.IndexByte(lead, '\t'); j >= 0 {
			ds = append(ds, diagAt(name, i+1, j+1, "yaml-tab",
				"a tab is used for indentation; YAML indentation must use spaces"))
		}
		if blockScalarStart.MatchString(trimmed) {
			inBlock, blockIndent = true, indent
		}
	}
	return ds
}

var blockScalarStart = regexp.MustCompile(`(^|[:\-]\s+|^-\s*)[|>][0-9+\-]*\s*(#.*)?$`)

// parseYAML parses exactly one YAML document. Syntax problems become
// diagnostics in plain words.
func parseYAML(name string, src []byte) (root *yaml.Node, ds Diagnostics) {
	defer func() {
		if r := recover(); r != nil {
			root = nil
			ds = Diagnostics{diagAt(name, 1, 1, "yaml-syntax", "the YAML cannot be read")}
		}
	}()
	dec := yaml.NewDecoder(bytes.NewReader(src))
	var doc yaml.Node
	if err := dec.Decode(&doc); err != nil {
		if errors.Is(err, io.EOF) {
			return nil, Diagnostics{{Severity: Error, Code: "empty", Pos: Pos{File: name},
				Summary: "the plan file is empty; a plan starts with \"furrow: 1\""}}
		}
		return nil, Diagnostics{syntaxDiag(name, src, err)}
	}
	var second yaml.Node
	switch err := dec.Decode(&second); {
	case errors.Is(err, io.EOF):
	case err != nil:
		return nil, Diagnostics{syntaxDiag(name, src, err)}
	default:
		line, col := second.Line, second.Column
		if len(second.Content) > 0 {
			line, col = second.Content[0].Line, second.Content[0].Column
		}
		return nil, Diagnostics{diagAt(name, line, col, "yaml-documents",
			"the file holds more than one YAML document (separated by ---); a plan is a single document")}
	}
	if len(doc.Content) == 0 || (doc.Content[0].Kind == yaml.ScalarNode && doc.Content[0].ShortTag() == "!!null") {
		return nil, Diagnostics{{Severity: Error, Code: "empty", Pos: Pos{File: name},
			Summary: "the plan file is empty; a plan starts with \"furrow: 1\""}}
	}
	return &doc, nil
}

var yamlLine = regexp.MustCompile(`^yaml: line (\d+): (.*)$`)

// syntaxPhrases rewords the YAML parser's messages.
var syntaxPhrases = []struct{ has, say string }{
	{"mapping values are not allowed", "a colon followed by a space starts a value, which is not allowed at this place; check the indentation, or quote text that contains \": \""},
	{"did not find expected key", "a key was expected here; check that this line is indented like its neighbours"},
	{"could not find expected ':'", "a key must be followed by a colon (:)"},
	{"found character that cannot start any token", "this character cannot start a value; put the text in quotes"},
	{"did not find expected node content", "a value is missing here"},
	{"found unexpected end of stream", "the file ends in the middle of a value; look for an unclosed quote or bracket"},
	{"did not find expected ',' or ']'", "a list in brackets [ ] is not closed, or its items are not separated by commas"},
	{"did not find expected ',' or '}'", "a mapping in braces { } is not closed, or its entries are not separated by commas"},
	{"found unknown escape character", "a double-quoted text holds an unknown escape sequence (\\); use single quotes"},
	{"block sequence entries are not allowed", "a list item (-) is not allowed here; check the indentation"},
	{"found a tab character", "a tab is used where YAML needs spaces"},
	{"did not find expected '-' indicator", "a list item (-) was expected here; check the indentation"},
	{"did not find URI escaped octet", "a tag is malformed"},
	{"found undefined tag handle", "a tag (!) is used that is not defined; tags are not allowed in a plan"},
	{"exceeded max depth", "the document is nested too deeply"},
	{"unknown anchor", "an alias (*name) refers to an anchor that does not exist; aliases are not allowed in a plan"},
	{"found unexpected ':'", "an unexpected colon (:); put the text in quotes"},
	{"invalid leading UTF-8 octet", "the file is not valid UTF-8 text"},
	{"control characters are not allowed", "the file holds control characters; a plan must be plain text"},
	{"found incompatible YAML document", "the YAML version directive is not supported"},
	{"did not find expected comment or line break", "unexpected text after a value on the same line"},
	{"did not find expected alphabetic or numeric character", "an anchor, alias or tag name is malformed"},
	{"did not find the expected '>'", "a verbatim tag is not closed"},
	{"found duplicate %YAML directive", "the %YAML directive appears twice"},
	{"found unexpected document indicator", "a document marker (--- or ...) appears inside a quoted text"},
	{"found unexpected end of stream while scanning a quoted scalar", "a quoted text is not closed"},
}

func syntaxDiag(name string, src []byte, err error) Diagnostic {
	msg := err.Error()
	line := 0
	rest := strings.TrimPrefix(msg, "yaml: ")
	if m := yamlLine.FindStringSubmatch(msg); m != nil {
		line, _ = strconv.Atoi(m[1])
		rest = m[2]
	}
	say := ""
	for _, p := range syntaxPhrases {
		if strings.Contains(rest, p.has) {
			say = p.say
		}
	}
	if say == "" {
		say = "the YAML cannot be read (" + rest + ")"
	}
	col := 0
	if line > 0 {
		col = firstColumn(src, line)
	}
	return diagAt(name, line, col, "yaml-syntax", say)
}

// firstColumn returns the 1-based column of the first non-blank character
// of the given 1-based line, or 1.
func firstColumn(src []byte, line int) int {
	lines := bytes.Split(src, []byte("\n"))
	if line < 1 || line > len(lines) {
		return 1
	}
	l := lines[line-1]
	for i, c := range l {
		if c != ' ' && c != '\t' {
			return utf8.RuneCount(l[:i]) + 1
		}
	}
	return 1
}

// checkFormat refuses a plan whose "furrow" version this package does not
// read, before the schema of format 1 is applied to it.
func checkFormat(name string, doc *yaml.Node) (Diagnostic, bool) {
	root := doc.Content[0]
	if root.Kind != yaml.MappingNode {
		return Diagnostic{}, true // the schema words this
	}
	for i := 0; i+1 < len(root.Content); i += 2 {
		k, v := root.Content[i], root.Content[i+1]
		if k.Value != "furrow" || v.Kind != yaml.ScalarNode {
			continue
		}
		if v.Value == strconv.Itoa(FormatVersion) {
			return Diagnostic{}, true
		}
		return diagAt(name, v.Line, v.Column, "format-version",
			fmt.Sprintf("plan format %q is not supported; this furrow reads format %d", v.Value, FormatVersion)), false
	}
	return Diagnostic{}, true
}

// underflowFindings reports every number written in the plan that is not
// zero but is too small for a double, so that it would be read as 0 (1e-400):
// the plan would mean something other than what is written.
func underflowFindings(name string, root *yaml.Node) Diagnostics {
	var ds Diagnostics
	var walk func(n *yaml.Node, depth int)
	walk = func(n *yaml.Node, depth int) {
		if n == nil || depth > 64 {
			return
		}
		if n.Kind == yaml.ScalarNode && n.ShortTag() == "!!float" {
			if f, err := strconv.ParseFloat(n.Value, 64); err == nil && f == 0 && strings.ContainsAny(strings.SplitN(strings.ToLower(n.Value), "e", 2)[0], "123456789") {
				ds = append(ds, diagAt(name, n.Line, n.Column, "out-of-range",
					fmt.Sprintf("the number %s is below the smallest double (about 4.9e-324) and would be read as 0; write 0, or a number a double can hold", n.Value)))
			}
		}
		for _, c := range n.Content {
			walk(c, depth+1)
		}
	}
	walk(root, 0)
	return ds
}
