// Tests of the HTML renderer.
//
// Layout: testdata/page.golden.html is the rendered demo page (demo_test.go,
// an invented scenario); testdata/page.numbers.txt lists, one per line,
// numbers that must appear in it, written by hand from the demo's inputs
// (percentages by shifting the decimal point; funnel shares such as
// 9875/15944 = 61.9% from python3 -c "print(9875/15944)"), never from the
// code under test. scripts/browser-check reads the same file to check the
// DOM a browser renders.
// Refresh the golden file with
//
//	go test ./report/html/ -update
//
// and read the diff before committing it.
package html

import (
	"bytes"
	"flag"
	"html"
	"html/template"
	"math"
	"os"
	"path/filepath"
	"regexp"
	"strings"
	"testing"
)

var update = flag.Bool("update", false, "rewrite testdata/page.golden.html")

func render(t *testing.T, p Page) string {
	t.Helper()
	var b bytes.Buffer
	if err := Render(&b, p); err != nil {
		t.Fatalf("Render: %v", err)
	}
	return b.String()
}

func TestGolden(t *testing.T) {
	got := render(t, demoPage())
	path := filepath.Join("testdata", "page.golden.html")
	if *update {
		if err := os.WriteFile(path, []byte(got), 0o644); err != nil {
			t.Fatal(err)
		}
	}
	want, err := os.ReadFile(path)
	if err != nil {
		t.Fatalf("%v (run go test ./report/html/ -update)", err)
	}
	if got != string(want) {
		gl, wl := strings.Split(got, "\n"), strings.Split(string(want), "\n")
		for i := 0; i < len(gl) || i < len(wl); i++ {
			var g, w string
			if i < len(gl) {
				g = gl[i]
			}
			if i < len(wl) {
				w = wl[i]
			}
			if g != w {
				t.Fatalf("golden mismatch at line %d (-want +got):\n-%s\n+%s\n(run go test ./report/html/ -update and review the diff)", i+1, w, g)
			}
		}
	}
	if again := render(t, demoPage()); again != got {
		t.Errorf("two renders of the same page differ")
	}
}

// TestSelfContained checks that nothing in the page would make a browser
// fetch or run anything.
func TestSelfContained(t *testing.T) {
	out := render(t, demoPage())
	low := strings.ToLower(out)
	for _, bad := range []string{"<script", "http://", "https://", "xmlns", "<link", "<img", "<iframe", "<object", "<embed", "@import", " src=", "srcset", "javascript:", "href=\"//"} {
		if strings.Contains(low, bad) {
			t.Errorf("page contains %q", bad)
		}
	}
	for _, m := range regexp.MustCompile(`url\(([^)]*)\)`).FindAllStringSubmatch(out, -1) {
		if !strings.HasPrefix(m[1], "#") {
			t.Errorf("url(%s) is not an in-page reference", m[1])
		}
	}
	for _, m := range regexp.MustCompile(`href="([^"]*)"`).FindAllStringSubmatch(out, -1) {
		if !strings.HasPrefix(m[1], "#") {
			t.Errorf("href %q is not an in-page anchor", m[1])
		}
	}
	for _, want := range []string{"<style>", "@media print", `http-equiv="Content-Security-Policy"`} {
		if !strings.Contains(out, want) {
			t.Errorf("page lacks %q", want)
		}
	}
}

// tables lists every table of a page, the ones behind plots included.
func tables(p Page) []Table {
	var out []Table
	var walk func([]Block)
	walk = func(bs []Block) {
		for _, b := range bs {
			switch v := b.(type) {
			case Table:
				out = append(out, v)
			case Details:
				walk(v.Blocks)
			case plot:
				out = append(out, v.Table())
			}
		}
	}
	for _, s := range p.Sections {
		walk(s.Blocks)
	}
	return out
}

// TestNumbersAppear checks that every cell of every table, and every line
// of the hand-written numbers file, is in the page.
func TestNumbersAppear(t *testing.T) {
	p := demoPage()
	out := render(t, p)
	n := 0
	for _, tb := range tables(p) {
		for _, r := range tb.Rows {
			for _, c := range r {
				n++
				if !strings.Contains(out, ">"+template.HTMLEscapeString(c.Text)+"<") {
					t.Errorf("table %q: cell %q is not in the page", tb.ID, c.Text)
				}
			}
		}
	}
	if n < 100 {
		t.Errorf("got %d cells, want the demo's 100 or more", n)
	}
	raw, err := os.ReadFile(filepath.Join("testdata", "page.numbers.txt"))
	if err != nil {
		t.Fatal(err)
	}
	text := html.UnescapeString(out)
	lines := 0
	for _, l := range strings.Split(strings.TrimSpace(string(raw)), "\n") {
		lines++
		if !strings.Contains(text, l) {
			t.Errorf("numbers file line %q is not in the page", l)
		}
	}
	if lines < 20 {
		t.Errorf("numbers file has %d lines, want at least 20", lines)
	}
}

// TestFormats checks the fixed number formats against hand-computed strings
// (decimal shifts and rounding done by hand).
func TestFormats(t *testing.T) {
	cases := []struct {
		name string
		got  string
		want string
	}{
		{"pct positive", fmtPct(0.0123), "+1.23%"},
		{"pct negative", fmtPct(-0.005), "-0.50%"},
		{"pct zero", fmtPct(0), "0.00%"},
		{"pct tiny negative keeps its sign", fmtPct(-0.00001), "0.00%"},
		{"pct +inf", fmtPct(math.Inf(1)), "+∞"},
		{"pct -inf", fmtPct(math.Inf(-1)), "-∞"},
		{"pct NaN", fmtPct(math.NaN()), "n/a"},
		{"absolute", fmtValue(-0.01234, true), "-0.0123"},
		{"count", fmtCount(15944), "15944"},
		{"count fraction", fmtCount(12.345), "12.35"},
		{"share", fmtShare(9875, 15944), "61.9%"},
		{"share of zero", fmtShare(1, 0), "n/a"},
		{"coordinate", f1(-0.04), "0.0"},
	}
	for _, tc := range cases {
		t.Run(tc.name, func(t *testing.T) {
			if tc.got != tc.want {
				t.Errorf("got %q, want %q", tc.got, tc.want)
			}
		})
	}
}

func TestRenderErrors(t *testing.T) {
	cell := func(c Cell) Page {
		return Page{Title: "x", Sections: []Section{{ID: "s", Heading: "s", Blocks: []Block{Table{Rows: [][]Cell{{c}}}}}}}
	}
	cases := []struct {
		name string
		page Page
		want string
	}{
		{"external link", cell(Cell{Text: "1", Link: "https://example.org/"}), "only in-page anchors"},
		{"relative link", cell(Cell{Text: "1", Link: "other.html"}), "only in-page anchors"},
		{"dangling anchor", cell(Cell{Text: "1", Link: "#cte-missing"}), "no target"},
		{"duplicate id", cell(Cell{Text: "1", ID: "s"}), "used twice"},
		{"bad id", cell(Cell{Text: "1", ID: `a"b`}), "only ASCII"},
		{"plot id clash", Page{Sections: []Section{{ID: "f-table", Blocks: []Block{Forest{ID: "f"}}}}}, "used twice"},
	}
	for _, tc := range cases {
		t.Run(tc.name, func(t *testing.T) {
			var b bytes.Buffer
			err := Render(&b, tc.page)
			if err == nil || !strings.Contains(err.Error(), tc.want) {
				t.Fatalf("got error %v, want one containing %q", err, tc.want)
			}
			if b.Len() != 0 {
				t.Errorf("got %d bytes written on error, want none", b.Len())
			}
		})
	}
}

// TestAccessibility checks each plot's accessible name and description and
// that series differ by more than colour.
func TestAccessibility(t *testing.T) {
	out := render(t, demoPage())
	svgs := regexp.MustCompile(`<svg [^>]*>`).FindAllString(out, -1)
	if len(svgs) != 4 {
		t.Fatalf("got %d svg elements, want 4", len(svgs))
	}
	for _, s := range svgs {
		for _, attr := range []string{`role="img"`, `aria-label="`, `aria-describedby="`} {
			if !strings.Contains(s, attr) {
				t.Errorf("%s lacks %s", s, attr)
			}
		}
	}
	if got := strings.Count(out, "<title>"); got < 5 {
		t.Errorf("got %d title elements, want one per plot and the page", got)
	}
	if got := strings.Count(out, "<desc id="); got != 4 {
		t.Errorf("got %d desc elements, want 4", got)
	}
	f := Forest{ID: "f", Rows: []ForestRow{
		{Label: "a", Estimate: 0.01, Low: 0, High: 0.02, Marker: MarkerPrimary},
		{Label: "b", Estimate: 0.01, Low: 0, High: 0.02, Marker: MarkerSecondary},
		{Label: "c", Estimate: 0.01, Low: math.Inf(-1), High: 0.02, Marker: MarkerGuard},
	}}.SVG()
	for _, shape := range []string{"<circle", "<rect", " Z\""} {
		if !strings.Contains(f, shape) {
			t.Errorf("forest plot lacks a %s marker", shape)
		}
	}
	for _, kind := range []string{">primary<", ">secondary<", ">guard<"} {
		if !strings.Contains(f, kind) {
			t.Errorf("forest plot does not name the kind %s in text", kind)
		}
	}
	// Distinct patterns per series: each pattern body differs.
	bars := Bars{ID: "b", Groups: []string{"d1"}, Series: []Series{{Name: "a", Values: []float64{1}}, {Name: "b", Values: []float64{2}}, {Name: "c", Values: []float64{3}}}}.SVG()
	pats := regexp.MustCompile(`<pattern id="b-pat-\d"[^>]*>(.*?)</pattern>`).FindAllStringSubmatch(bars, -1)
	if len(pats) != 3 {
		t.Fatalf("got %d patterns, want 3", len(pats))
	}
	seen := map[string]bool{}
	for _, p := range pats {
		body := regexp.MustCompile(`fill="#[0-9A-Fa-f]{6}"`).ReplaceAllString(p[1], "")
		if seen[body] {
			t.Errorf("two series share a pattern shape: %s", p[1])
		}
		seen[body] = true
	}
}

// TestEdgeCases renders empty and degenerate plots without panicking and
// checks that their tables say n/a where there is no number.
func TestEdgeCases(t *testing.T) {
	nan := math.NaN()
	page := Page{Title: "edge", Sections: []Section{{Heading: "e", Blocks: []Block{
		Forest{}, Line{}, Bars{}, Funnel{},
		&Forest{Rows: []ForestRow{{Label: "x", Estimate: nan, Low: nan, High: nan}}},
		Line{Points: []LinePoint{{Day: 3, Estimate: nan, Low: math.Inf(-1), High: 1}}},
		Bars{Groups: []string{"a", "b"}, Series: []Series{{Name: "s", Values: []float64{nan}}}},
		Funnel{Stages: []string{"exposed", "mature"}, Series: []Series{{Name: "s", Values: []float64{0, 5}}}},
		(*Table)(nil),
	}}}}
	out := render(t, page)
	for _, want := range []string{"no rows", "no points", "no groups", "no stages", ">n/a<", "fig-8"} {
		if !strings.Contains(out, want) {
			t.Errorf("page lacks %q", want)
		}
	}
	if strings.Contains(out, "NaN") || strings.Contains(out, "Inf") {
		t.Errorf("page prints NaN or Inf")
	}
}

// TestEscaping checks that text is escaped exactly once in every context.
func TestEscaping(t *testing.T) {
	s := `a<b> & "c" 'd'`
	want := `a&lt;b&gt; &amp; &#34;c&#34; &#39;d&#39;`
	out := render(t, Page{Title: s, Sections: []Section{{ID: "s", Heading: s, Blocks: []Block{
		Paragraph{Text: s},
		Table{Caption: s, Header: []string{s}, Rows: [][]Cell{{{Text: s, Link: "#s"}}}},
		Details{Summary: s},
		SQL{Caption: s, Fragments: []SQLFragment{{Name: s, Text: s}}},
		Forest{Title: s, Rows: []ForestRow{{Label: s, Estimate: 0.1, Low: 0, High: 0.2, Marker: s, Note: s}}},
	}}}})
	// Title, h1, nav, h2, p, caption, th, td, summary, SQL caption, fragment
	// name and text, figure caption, svg aria-label, svg title, row title,
	// row label, kind, table caption (prefixed), cells for label, kind, note.
	if got := strings.Count(out, want); got < 20 {
		t.Errorf("got %d escaped copies of the text, want at least 20", got)
	}
	for _, bad := range []string{"<b>", "&amp;lt;", "&amp;#"} {
		if strings.Contains(out, bad) {
			t.Errorf("page contains %q: text escaped zero or two times", bad)
		}
	}
}

// TestAnchors checks that numbers link to the SQL fragments that produced
// them and that every fragment with a name has its CTEID anchor.
func TestAnchors(t *testing.T) {
	out := render(t, demoPage())
	for _, want := range []string{
		`<span class="frag" id="cte-cohort">`,
		`<span class="frag" id="cte-per_unit">`,
		`<span class="frag" id="final-select">`,
		`<a href="#cte-per_unit">0.1184</a>`,
		`<a href="#cte-latency">812.40</a>`,
		`<td id="eff-signups" class="num">+1.98%</td>`,
		`<a href="#health">Exposure and health</a>`,
	} {
		if !strings.Contains(out, want) {
			t.Errorf("page lacks %s", want)
		}
	}
	if got, want := CTEID("daily users"), "cte-daily-users"; got != want {
		t.Errorf("CTEID: got %q, want %q", got, want)
	}
}
