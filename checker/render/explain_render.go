package render

import (
	"bytes"
	_ "embed"
	"html"
	"html/template"
	"path/filepath"
	"strings"

	"furrow/checker/record"
)

// Markdown renders the document as CommonMark with pipe tables.
func (d *Document) Markdown() []byte {
	var b bytes.Buffer
	b.WriteString("# " + d.Title + "\n\n")
	if d.Hash != "" {
		b.WriteString("Plan hash: `" + d.Hash + "`\n\n")
	}
	for _, s := range d.Sections {
		b.WriteString("## " + s.Heading + "\n\n")
		for _, bl := range s.Blocks {
			switch {
			case bl.Text != "":
				b.WriteString(bl.Text + "\n\n")
			case len(bl.Items) > 0:
				for _, it := range bl.Items {
					b.WriteString("- " + it + "\n")
				}
				b.WriteString("\n")
			case len(bl.Header) > 0:
				writeMDRow(&b, bl.Header)
				sep := make([]string, len(bl.Header))
				for i := range sep {
					sep[i] = "---"
				}
				writeMDRow(&b, sep)
				for _, r := range bl.Rows {
					writeMDRow(&b, r)
				}
				b.WriteString("\n")
			}
		}
	}
	return b.Bytes()
}

func writeMDRow(b *bytes.Buffer, cells []string) {
	b.WriteString("|")
	for _, c := range cells {
		c = strings.ReplaceAll(c, "|", "\\|")
		c = strings.ReplaceAll(c, "\n", " ")
		b.WriteString(" " + c + " |")
	}
	b.WriteString("\n")
}

//go:embed explain.css
var explainCSS string

var explainTmpl = template.Must(template.New("explain").Parse(`<!DOCTYPE html>
<html lang="en">
<head>
<meta charset="utf-8">
<meta name="viewport" content="width=device-width, initial-scale=1">
<title>{{.Title}}</title>
<style>{{.CSS}}</style>
</head>
<body>
<main>
<h1>{{.Title}}</h1>
{{if .Hash}}<p class="hash">Plan hash: <code>{{.Hash}}</code></p>{{end}}
{{range .Sections}}<section>
<h2>{{.Heading}}</h2>
{{range .Blocks}}{{if .Text}}<p>{{.Text}}</p>
{{else if .Items}}<ul>{{range .Items}}
<li>{{.}}</li>{{end}}
</ul>
{{else if .Header}}<table>
<thead><tr>{{range .Header}}<th>{{.}}</th>{{end}}</tr></thead>
<tbody>{{range .Rows}}
<tr>{{range .}}<td>{{.}}</td>{{end}}</tr>{{end}}
</tbody>
</table>
{{end}}{{end}}</section>
{{end}}</main>
</body>
</html>
`))

// HTML renders the document as one self-contained HTML page (inline CSS,
// no scripts, nothing fetched).
func (d *Document) HTML() []byte {
	type block struct {
		Text   template.HTML
		Items  []template.HTML
		Header []template.HTML
		Rows   [][]template.HTML
	}
	type section struct {
		Heading template.HTML
		Blocks  []block
	}
	view := struct {
		Title    template.HTML
		Hash     string
		CSS      template.CSS
		Sections []section
	}{Title: inline(d.Title), Hash: d.Hash, CSS: template.CSS(explainCSS)}
	for _, s := range d.Sections {
		vs := section{Heading: inline(s.Heading)}
		for _, bl := range s.Blocks {
			var vb block
			vb.Text = inline(bl.Text)
			for _, it := range bl.Items {
				vb.Items = append(vb.Items, inline(it))
			}
			for _, h := range bl.Header {
				vb.Header = append(vb.Header, inline(h))
			}
			for _, r := range bl.Rows {
				var vr []template.HTML
				for _, c := range r {
					vr = append(vr, inline(c))
				}
				vb.Rows = append(vb.Rows, vr)
			}
			vs.Blocks = append(vs.Blocks, vb)
		}
		view.Sections = append(view.Sections, vs)
	}
	var b bytes.Buffer
	if err := explainTmpl.Execute(&b, view); err != nil {
		// The template and view are fixed by this package; an error here is
		// a programming error, not a data problem.
		panic("checker: explain template: " + err.Error())
	}
	return b.Bytes()
}

// inline escapes s for HTML and turns `x` marks into <code>x</code>.
func inline(s string) template.HTML {
	parts := strings.Split(s, "`")
	var b strings.Builder
	for i, p := range parts {
		if i%2 == 1 && i < len(parts)-1 {
			b.WriteString("<code>" + html.EscapeString(p) + "</code>")
			continue
		}
		if i%2 == 1 {
			b.WriteString("`")
		}
		b.WriteString(html.EscapeString(p))
	}
	return template.HTML(b.String())
}

// WriteFile writes the document to path atomically: HTML when path ends in
// ".html" or ".htm", Markdown otherwise. An existing file is an error
// unless replace is true.
func (d *Document) WriteFile(path string, replace bool) error {
	body := d.Markdown()
	if ext := strings.ToLower(filepath.Ext(path)); ext == ".html" || ext == ".htm" {
		body = d.HTML()
	}
	return record.WriteFileAtomic(path, body, 0o644, !replace)
}
