package report

import (
	"fmt"
	"strings"
	"text/tabwriter"
)

// The shared view. Every human-readable format is a renderer over one
// document built from the report (Report.document): the text for a
// terminal and the Markdown for a review comment hold the same headings,
// sentences, tables and numbers, spelled once, so they cannot disagree.
// Only the layout differs: Markdown folds long detail (segments) into
// collapsible sections.

type blockKind int

const (
	kHeading blockKind = iota // text at level 1–3
	kPara                     // a sentence or two
	kList                     // bulleted items
	kTable                    // a table of text cells
	kAlarm                    // a line that must not be missed
	kOpen                     // start of a collapsible section titled text
	kClose                    // its end
	kCode                     // preformatted lines; hook for assay size's TOML block (planning.go)
)

type block struct {
	kind  blockKind
	level int
	text  string
	items []string
	table *table
}

// table is a grid of already formatted cells; the first left columns are
// labels (left-aligned), the rest numbers (right-aligned).
type table struct {
	head []string
	rows [][]string
	left int
}

type document struct{ blocks []block }

func (d *document) heading(level int, format string, args ...any) {
	d.blocks = append(d.blocks, block{kind: kHeading, level: level, text: fmt.Sprintf(format, args...)})
}

func (d *document) para(format string, args ...any) {
	d.blocks = append(d.blocks, block{kind: kPara, text: fmt.Sprintf(format, args...)})
}

func (d *document) list(items []string) {
	if len(items) > 0 {
		d.blocks = append(d.blocks, block{kind: kList, items: items})
	}
}

func (d *document) alarm(text string) { d.blocks = append(d.blocks, block{kind: kAlarm, text: text}) }

func (d *document) tab(t *table) { d.blocks = append(d.blocks, block{kind: kTable, table: t}) }

func (d *document) open(format string, args ...any) {
	d.blocks = append(d.blocks, block{kind: kOpen, text: fmt.Sprintf(format, args...)})
}

func (d *document) close() { d.blocks = append(d.blocks, block{kind: kClose}) }

// code adds preformatted text in language lang (a Markdown fence label).
func (d *document) code(lang, text string) {
	d.blocks = append(d.blocks, block{kind: kCode, text: text, items: []string{lang}})
}

// text renders d for a terminal: headings flush left, their content
// indented, tables aligned with spaces.
func (d *document) text() string {
	var b strings.Builder
	indent := ""
	for i, bl := range d.blocks {
		switch bl.kind {
		case kHeading, kOpen:
			level := bl.level
			if bl.kind == kOpen {
				level = 2
			}
			if i > 0 && level <= 2 {
				b.WriteByte('\n')
			}
			pad := strings.Repeat("  ", max(level-2, 0))
			b.WriteString(pad + bl.text + "\n")
			indent = pad + "  "
			if level == 1 {
				indent = ""
			}
		case kPara:
			b.WriteString(indent + bl.text + "\n")
		case kList:
			for _, it := range bl.items {
				b.WriteString(indent + "- " + it + "\n")
			}
		case kAlarm:
			b.WriteString(indent + "!! " + bl.text + "\n")
		case kCode:
			for _, line := range strings.Split(strings.TrimRight(bl.text, "\n"), "\n") {
				b.WriteString(indent + "  " + line + "\n")
			}
		case kTable:
			tw := tabwriter.NewWriter(&b, 0, 0, 2, ' ', 0)
			row := func(cells []string) {
				fmt.Fprint(tw, indent)
				for _, c := range cells {
					fmt.Fprint(tw, c+"\t")
				}
				fmt.Fprintln(tw)
			}
			row(bl.table.head)
			for _, r := range bl.table.rows {
				row(r)
			}
			tw.Flush()
		}
	}
	return b.String()
}

// markdown renders d for a pull request, a review comment or a wiki page.
func (d *document) markdown() string {
	var b strings.Builder
	for _, bl := range d.blocks {
		switch bl.kind {
		case kHeading:
			fmt.Fprintf(&b, "%s %s\n\n", strings.Repeat("#", bl.level), mdEscape(bl.text))
		case kPara:
			b.WriteString(mdEscape(bl.text) + "\n\n")
		case kList:
			for _, it := range bl.items {
				b.WriteString("- " + mdEscape(it) + "\n")
			}
			b.WriteByte('\n')
		case kAlarm:
			b.WriteString("> **" + mdEscape(bl.text) + "**\n\n")
		case kCode:
			body := strings.TrimRight(strings.ReplaceAll(bl.text, "```", "'''"), "\n")
			b.WriteString("```" + bl.items[0] + "\n" + body + "\n```\n\n")
		case kOpen:
			fmt.Fprintf(&b, "<details>\n<summary>%s</summary>\n\n", mdEscape(bl.text))
		case kClose:
			b.WriteString("</details>\n\n")
		case kTable:
			t := bl.table
			cells := func(cs []string) {
				b.WriteString("|")
				for _, c := range cs {
					b.WriteString(" " + mdEscape(c) + " |")
				}
				b.WriteByte('\n')
			}
			cells(t.head)
			b.WriteString("|")
			for i := range t.head {
				if i < t.left {
					b.WriteString("---|")
				} else {
					b.WriteString("---:|")
				}
			}
			b.WriteByte('\n')
			for _, r := range t.rows {
				cells(r)
			}
			b.WriteByte('\n')
		}
	}
	return b.String()
}

// mdEscape keeps user text from changing the Markdown's structure.
func mdEscape(s string) string {
	r := strings.NewReplacer("|", `\|`, "\n", " ", "<", "&lt;", ">", "&gt;")
	return r.Replace(s)
}
