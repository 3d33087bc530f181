package html

import (
	"bytes"
	"fmt"
	"html/template"
	"io"
	"strconv"
	"strings"
)

// Page is one report: a title and its sections, in reading order.
type Page struct {
	Title    string
	Sections []Section
}

// Section is a top-level part of the page with an <h2> heading. ID, when
// set, is the heading's anchor and puts the section in the page's contents.
type Section struct {
	ID      string
	Heading string
	Blocks  []Block
}

// Block is one piece of a section: Heading, Paragraph, Table, Details, SQL,
// Forest, Line, Bars or Funnel (a pointer to one is accepted too; a nil
// pointer renders nothing).
type Block interface{ isBlock() }

// Heading is a sub-heading inside a section (Level 3 to 6; other values are
// clamped).
type Heading struct {
	Level int
	Text  string
	ID    string
}

// Paragraph is plain text; it is escaped, never interpreted as HTML.
type Paragraph struct {
	Text string
}

// Table is a data table. Caption is its accessible name; Header is one row
// of column headings.
type Table struct {
	ID      string
	Caption string
	Header  []string
	Rows    [][]Cell
}

// Cell is one table cell. ID makes the cell a link target; Link, when set,
// must be an in-page anchor ("#cte-cohort") and makes the text a link to it.
// Numeric cells are right-aligned with tabular figures.
type Cell struct {
	Text    string
	ID      string
	Link    string
	Numeric bool
}

// Details is a collapsible block (<details>): Summary is always visible, the
// blocks show when opened. Open starts it opened.
type Details struct {
	Summary string
	Open    bool
	Blocks  []Block
}

// SQL is a preformatted query listing made of named fragments, typically one
// per CTE and one for the final SELECT. Each fragment is an anchor: a table
// cell can link to "#"+fragment ID, and the browser highlights the target.
type SQL struct {
	ID        string
	Caption   string
	Fragments []SQLFragment
}

// SQLFragment is one consecutive piece of the query text. ID defaults to
// CTEID(Name) when empty; a fragment with neither is plain text.
type SQLFragment struct {
	Name string
	ID   string
	Text string
}

func (Heading) isBlock()   {}
func (Paragraph) isBlock() {}
func (Table) isBlock()     {}
func (Details) isBlock()   {}
func (SQL) isBlock()       {}
func (Forest) isBlock()    {}
func (Line) isBlock()      {}
func (Bars) isBlock()      {}
func (Funnel) isBlock()    {}

// CTEID returns the anchor id of a CTE name: "cte-" followed by the name with
// every character other than ASCII letters, digits, '-' and '_' replaced by
// '-'. CTEID("cohort") == "cte-cohort".
func CTEID(name string) string { return "cte-" + slug(name) }

func slug(s string) string {
	var b strings.Builder
	for _, r := range s {
		if validIDRune(r) {
			b.WriteRune(r)
		} else {
			b.WriteByte('-')
		}
	}
	return b.String()
}

func validIDRune(r rune) bool {
	return r >= 'a' && r <= 'z' || r >= 'A' && r <= 'Z' || r >= '0' && r <= '9' || r == '-' || r == '_'
}

// plot is implemented by the four plot blocks.
type plot interface {
	Block
	id() string
	withID(string) Block
	SVG() string
	Table() Table
}

// Render writes p as one self-contained HTML document. It returns an error,
// and writes nothing, when an id is invalid or used twice, when a link is not
// an in-page anchor, or when an anchor has no target.
func Render(w io.Writer, p Page) error {
	p, err := prepare(p)
	if err != nil {
		return err
	}
	var buf bytes.Buffer
	if err := pageTmpl.Execute(&buf, p); err != nil {
		return fmt.Errorf("html: %w", err)
	}
	_, err = w.Write(buf.Bytes())
	return err
}

// prepare copies p, giving plots without an ID one ("fig-1", …) and
// fragments without an ID their CTEID, and checks ids and links.
func prepare(p Page) (Page, error) {
	out := Page{Title: p.Title, Sections: make([]Section, len(p.Sections))}
	n := 0
	var fix func([]Block) []Block
	fix = func(bs []Block) []Block {
		cp := make([]Block, len(bs))
		for i, b := range bs {
			switch v := deref(b).(type) {
			case nil:
				cp[i] = nil
			case Details:
				v.Blocks = fix(v.Blocks)
				cp[i] = v
			case SQL:
				fr := make([]SQLFragment, len(v.Fragments))
				for j, f := range v.Fragments {
					if f.ID == "" && f.Name != "" {
						f.ID = CTEID(f.Name)
					}
					fr[j] = f
				}
				v.Fragments = fr
				cp[i] = v
			case plot:
				n++
				if v.id() == "" {
					cp[i] = v.withID("fig-" + strconv.Itoa(n))
				} else {
					cp[i] = v
				}
			default:
				cp[i] = v
			}
		}
		return cp
	}
	for i, s := range p.Sections {
		s.Blocks = fix(s.Blocks)
		out.Sections[i] = s
	}
	return out, check(out)
}

// deref turns a pointer block into its value; a nil pointer becomes nil.
func deref(b Block) Block {
	switch v := b.(type) {
	case *Heading:
		return ptr(v)
	case *Paragraph:
		return ptr(v)
	case *Table:
		return ptr(v)
	case *Details:
		return ptr(v)
	case *SQL:
		return ptr(v)
	case *Forest:
		return ptr(v)
	case *Line:
		return ptr(v)
	case *Bars:
		return ptr(v)
	case *Funnel:
		return ptr(v)
	}
	return b
}

func ptr[T Block](p *T) Block {
	if p == nil {
		return nil
	}
	return *p
}

// check validates ids and links of a prepared page.
func check(p Page) error {
	ids := map[string]bool{}
	var links []string
	var errs []string
	add := func(id string) {
		if id == "" {
			return
		}
		for _, r := range id {
			if !validIDRune(r) {
				errs = append(errs, fmt.Sprintf("id %q: only ASCII letters, digits, '-' and '_' are allowed", id))
				return
			}
		}
		if ids[id] {
			errs = append(errs, fmt.Sprintf("id %q is used twice", id))
		}
		ids[id] = true
	}
	table := func(t Table) {
		add(t.ID)
		for _, r := range t.Rows {
			for _, c := range r {
				add(c.ID)
				if c.Link != "" {
					links = append(links, c.Link)
				}
			}
		}
	}
	var walk func([]Block)
	walk = func(bs []Block) {
		for _, b := range bs {
			switch v := b.(type) {
			case Heading:
				add(v.ID)
			case Table:
				table(v)
			case Details:
				walk(v.Blocks)
			case SQL:
				add(v.ID)
				for _, f := range v.Fragments {
					add(f.ID)
				}
			case plot:
				id := v.id()
				add(id)
				add(id + "-svg")
				add(id + "-desc")
				table(v.Table())
			}
		}
	}
	for _, s := range p.Sections {
		add(s.ID)
		walk(s.Blocks)
	}
	for _, l := range links {
		if !strings.HasPrefix(l, "#") {
			errs = append(errs, fmt.Sprintf("link %q: only in-page anchors (#id) are allowed, so the page never fetches anything", l))
			continue
		}
		if !ids[l[1:]] {
			errs = append(errs, fmt.Sprintf("link %q has no target on the page", l))
		}
	}
	if len(errs) > 0 {
		return fmt.Errorf("html: %s", strings.Join(errs, "; "))
	}
	return nil
}

// figure is what the template needs of a plot.
type figure struct {
	ID    string
	Title string
	SVG   template.HTML
	Table Table
}

var funcs = template.FuncMap{
	"kind": func(b Block) string {
		switch b.(type) {
		case Heading:
			return "heading"
		case Paragraph:
			return "para"
		case Table:
			return "table"
		case Details:
			return "details"
		case SQL:
			return "sql"
		case plot:
			return "figure"
		}
		return ""
	},
	"figure": func(b Block) figure {
		p := b.(plot)
		var title string
		switch v := p.(type) {
		case Forest:
			title = v.Title
		case Line:
			title = v.Title
		case Bars:
			title = v.Title
		case Funnel:
			title = v.Title
		}
		// The SVG is built by this package with every text escaped by esc.
		return figure{ID: p.id(), Title: title, SVG: template.HTML(p.SVG()), Table: p.Table()}
	},
	"hopen": func(h Heading) template.HTML {
		l := strconv.Itoa(min(max(h.Level, 3), 6))
		if h.ID != "" {
			return template.HTML("<h" + l + ` id="` + esc(h.ID) + `">`)
		}
		return template.HTML("<h" + l + ">")
	},
	"hclose": func(h Heading) template.HTML {
		return template.HTML("</h" + strconv.Itoa(min(max(h.Level, 3), 6)) + ">")
	},
	"anchor": func(s string) template.URL { return template.URL(s) },
	// t escapes text for a text node with the same escaper as the SVG text,
	// so signs print as typed ("+1.20%") rather than as "&#43;".
	"t": func(s string) template.HTML { return template.HTML(esc(s)) },
}

const css = `
:root { color-scheme: light; }
* { box-sizing: border-box; }
body { font: 15px/1.45 system-ui, -apple-system, "Segoe UI", Helvetica, Arial, sans-serif; color: #1a1a1a; background: #fff; max-width: 62rem; margin: 0 auto; padding: 1.5rem; }
h1 { font-size: 1.6rem; margin: 0 0 1rem; }
h2 { font-size: 1.3rem; margin: 2rem 0 .6rem; border-bottom: 1px solid #ccc; padding-bottom: .2rem; }
h3, h4, h5, h6 { font-size: 1.05rem; margin: 1.2rem 0 .4rem; }
a { color: #0b5394; }
nav ol { margin: 0; padding-left: 1.4rem; }
table { border-collapse: collapse; margin: .6rem 0 1rem; font-size: .92rem; }
caption { text-align: left; font-weight: 600; padding: .2rem 0; }
th, td { border: 1px solid #bfbfbf; padding: .25rem .5rem; vertical-align: top; }
th { background: #f0f0f0; text-align: left; }
td.num { text-align: right; font-variant-numeric: tabular-nums; white-space: nowrap; }
td:target, .frag:target { background: #fff2b3; outline: 2px solid #8a6d00; }
figure { margin: 1rem 0 1.5rem; }
figure svg { max-width: 100%; height: auto; display: block; }
figcaption { font-weight: 600; margin-bottom: .3rem; }
pre.sql { background: #f5f5f5; border: 1px solid #d0d0d0; padding: .6rem; overflow-x: auto; font: .85rem/1.4 ui-monospace, "DejaVu Sans Mono", Menlo, Consolas, monospace; }
.frag { display: block; }
.frag-name { color: #595959; }
details { margin: .6rem 0; border: 1px solid #d0d0d0; padding: .3rem .6rem; }
summary { cursor: pointer; font-weight: 600; }
@media print {
  body { max-width: none; padding: 0; font-size: 10pt; }
  nav { display: none; }
  a { color: inherit; text-decoration: none; }
  figure, table, pre, details { break-inside: avoid; }
  pre.sql { white-space: pre-wrap; overflow: visible; }
  details::details-content { content-visibility: visible; display: block; }
  summary { list-style: none; }
}
`

var pageTmpl = template.Must(template.New("page").Funcs(funcs).Parse(`<!DOCTYPE html>
<html lang="en">
<head>
<meta charset="utf-8">
<meta name="viewport" content="width=device-width, initial-scale=1">
<meta http-equiv="Content-Security-Policy" content="default-src 'none'; style-src 'unsafe-inline'">
<title>{{t .Title}}</title>
<style>` + css + `</style>
</head>
<body>
<h1>{{t .Title}}</h1>
{{- $nav := false}}{{range .Sections}}{{if .ID}}{{$nav = true}}{{end}}{{end}}
{{- if $nav}}
<nav aria-label="Contents"><ol>
{{- range .Sections}}{{if .ID}}
<li><a href="{{anchor (printf "#%s" .ID)}}">{{t .Heading}}</a></li>
{{- end}}{{end}}
</ol></nav>
{{- end}}
{{- range .Sections}}
<section{{if .ID}} id="{{.ID}}"{{end}}>
<h2>{{t .Heading}}</h2>
{{- template "blocks" .Blocks}}
</section>
{{- end}}
</body>
</html>
{{define "blocks"}}{{range .}}{{$k := kind .}}
{{- if eq $k "heading"}}
{{hopen .}}{{t .Text}}{{hclose .}}
{{- else if eq $k "para"}}
<p>{{t .Text}}</p>
{{- else if eq $k "table"}}{{template "table" .}}
{{- else if eq $k "details"}}
<details{{if .Open}} open{{end}}>
<summary>{{t .Summary}}</summary>
{{- template "blocks" .Blocks}}
</details>
{{- else if eq $k "sql"}}
<figure class="sql-listing"{{if .ID}} id="{{.ID}}"{{end}}>
{{- if .Caption}}
<figcaption>{{t .Caption}}</figcaption>
{{- end}}
<pre class="sql"><code>
{{- range .Fragments}}<span class="frag"{{if .ID}} id="{{.ID}}"{{end}}>{{if .Name}}<span class="frag-name">-- {{t .Name}}</span>
{{end}}{{t .Text}}</span>{{end -}}
</code></pre>
</figure>
{{- else if eq $k "figure"}}{{with figure .}}
<figure id="{{.ID}}">
<figcaption>{{t .Title}}</figcaption>
{{.SVG}}
{{- template "table" .Table}}
</figure>
{{- end}}
{{- end}}
{{- end}}{{end}}
{{define "table"}}
<table{{if .ID}} id="{{.ID}}"{{end}}>
{{- if .Caption}}
<caption>{{t .Caption}}</caption>
{{- end}}
{{- if .Header}}
<thead><tr>{{range .Header}}<th scope="col">{{t .}}</th>{{end}}</tr></thead>
{{- end}}
<tbody>
{{- range .Rows}}
<tr>{{range .}}<td{{if .ID}} id="{{.ID}}"{{end}}{{if .Numeric}} class="num"{{end}}>{{if .Link}}<a href="{{anchor .Link}}">{{t .Text}}</a>{{else}}{{t .Text}}{{end}}</td>{{end}}</tr>
{{- end}}
</tbody>
</table>
{{- end}}
`))
