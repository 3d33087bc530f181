package html

import (
	"html/template"
	"math"
	"strconv"
	"strings"
)

// swatch is one palette entry: a fill colour, the ink drawn over it (hatching,
// text) and a name used in descriptions.
type swatch struct {
	Fill, Ink, Name string
}

// palette is the series palette, a subset of the Okabe–Ito colour-universal-
// design set (M. Okabe and K. Ito, "Color Universal Design (CUD): How to make
// figures and presentations that are friendly to colorblind people", 2008),
// chosen for being distinguishable under deuteranopia, protanopia and
// tritanopia. The order alternates dark and light entries so neighbouring
// series also differ in luminance (WCAG 2.1 relative luminance of the sRGB
// values: #0072B2 0.152, #E69F00 0.416, #009E73 0.257, #CC79A7 0.293,
// #56B4E9 0.405, #D55E00 0.222; computed with python3 from the WCAG 2.1
// definition, 0.2126R+0.7152G+0.0722B of linearised channels). Colour is
// never the only cue: every series also has its own fill pattern (see
// patternDefs) and its name in text.
var palette = []swatch{
	{"#0072B2", "#ffffff", "blue"},
	{"#E69F00", "#000000", "orange"},
	{"#009E73", "#ffffff", "bluish green"},
	{"#CC79A7", "#000000", "reddish purple"},
	{"#56B4E9", "#000000", "sky blue"},
	{"#D55E00", "#ffffff", "vermillion"},
}

// patternNames names the fill patterns in series order, for descriptions.
var patternNames = []string{"solid", "diagonal hatching", "dots", "cross-hatching", "horizontal lines", "vertical lines"}

const (
	fontFamily = "system-ui, -apple-system, Segoe UI, Helvetica, Arial, sans-serif"
	inkColour  = "#1a1a1a"
	gridColour = "#d9d9d9"
	axisColour = "#4d4d4d"
	minusSign  = "-"
)

// esc escapes text for an SVG or HTML text node or attribute value.
func esc(s string) string { return template.HTMLEscapeString(s) }

// f1 prints a coordinate with one decimal, the fixed precision of every
// coordinate in the output.
func f1(x float64) string {
	s := strconv.FormatFloat(x, 'f', 1, 64)
	if isNegZero(s) {
		s = s[1:]
	}
	return s
}

// fmtPct prints a fraction as a signed percentage with two decimals:
// 0.0123 → "+1.23%", −0.005 → "-0.50%", 0 → "0.00%". Infinite bounds print as
// "-∞"/"+∞" and NaN as "n/a".
func fmtPct(v float64) string { return fmtSigned(v*100, 2) + pctIfFinite(v) }

func pctIfFinite(v float64) string {
	if math.IsNaN(v) || math.IsInf(v, 0) {
		return ""
	}
	return "%"
}

// fmtSigned prints v with digits decimals and an explicit sign.
func fmtSigned(v float64, digits int) string {
	switch {
	case math.IsNaN(v):
		return "n/a"
	case math.IsInf(v, 1):
		return "+∞"
	case math.IsInf(v, -1):
		return minusSign + "∞"
	}
	s := strconv.FormatFloat(v, 'f', digits, 64)
	if isNegZero(s) || v == 0 {
		return strings.TrimPrefix(s, "-")
	}
	if v > 0 {
		return "+" + s
	}
	return s
}

// fmtValue prints an effect in the plot's unit: a signed percentage for
// relative effects, a signed number with four decimals for absolute ones.
func fmtValue(v float64, absolute bool) string {
	if absolute {
		return fmtSigned(v, 4)
	}
	return fmtPct(v)
}

// fmtCount prints a count: whole numbers without decimals or separators,
// others with two decimals; NaN and infinities as "n/a".
func fmtCount(v float64) string {
	if math.IsNaN(v) || math.IsInf(v, 0) {
		return "n/a"
	}
	if v == math.Trunc(v) && math.Abs(v) < 1e15 {
		return strconv.FormatFloat(v, 'f', 0, 64)
	}
	return strconv.FormatFloat(v, 'f', 2, 64)
}

// fmtShare prints part/whole as a percentage with one decimal ("84.2%"), or
// "n/a" when whole is not positive.
func fmtShare(part, whole float64) string {
	if !(whole > 0) || math.IsNaN(part) || math.IsInf(part, 0) || math.IsInf(whole, 0) {
		return "n/a"
	}
	return strconv.FormatFloat(part/whole*100, 'f', 1, 64) + "%"
}

// finite reports whether v is neither NaN nor infinite.
func finite(v float64) bool { return !math.IsNaN(v) && !math.IsInf(v, 0) }

// svgOpen writes the root element with its accessible name and description.
// The root has no xmlns attribute: inline SVG in HTML needs none.
func svgOpen(b *strings.Builder, id, title, desc string, w, h float64) {
	b.WriteString(`<svg id="` + esc(id) + `-svg" viewBox="0 0 ` + f1(w) + " " + f1(h) + `" width="` + f1(w) + `" height="` + f1(h) +
		`" role="img" aria-label="` + esc(title) + `" aria-describedby="` + esc(id) + `-desc" font-family="` + fontFamily + `" font-size="12">` + "\n")
	b.WriteString(`<title>` + esc(title) + "</title>\n")
	b.WriteString(`<desc id="` + esc(id) + `-desc">` + esc(desc) + "</desc>\n")
}

// text writes a text element; anchor is start, middle or end.
func text(b *strings.Builder, x, y float64, anchor, class, s string) {
	b.WriteString(`<text x="` + f1(x) + `" y="` + f1(y) + `"`)
	if anchor != "" && anchor != "start" {
		b.WriteString(` text-anchor="` + anchor + `"`)
	}
	if class != "" {
		b.WriteString(` class="` + class + `"`)
		switch class {
		case "muted":
			b.WriteString(` fill="#595959"`)
		case "axis-title":
			b.WriteString(` font-weight="600"`)
		}
	} else {
		b.WriteString(` fill="` + inkColour + `"`)
	}
	b.WriteString(`>` + esc(s) + "</text>\n")
}

func line(b *strings.Builder, x1, y1, x2, y2 float64, stroke string, width float64, dash string) {
	b.WriteString(`<line x1="` + f1(x1) + `" y1="` + f1(y1) + `" x2="` + f1(x2) + `" y2="` + f1(y2) +
		`" stroke="` + stroke + `" stroke-width="` + f1(width) + `"`)
	if dash != "" {
		b.WriteString(` stroke-dasharray="` + dash + `"`)
	}
	b.WriteString("/>\n")
}

// patternDefs writes the fill pattern of each of n series (ids from patternID):
// palette colour i with pattern i drawn in the palette entry's ink.
func patternDefs(b *strings.Builder, id string, n int) {
	if n == 0 {
		return
	}
	b.WriteString("<defs>\n")
	for i := range n {
		sw := palette[i%len(palette)]
		pid := patternID(id, i)
		b.WriteString(`<pattern id="` + esc(pid) + `" width="8" height="8" patternUnits="userSpaceOnUse">`)
		b.WriteString(`<rect width="8" height="8" fill="` + sw.Fill + `"/>`)
		ink := `stroke="` + sw.Ink + `" stroke-width="1.5"`
		switch i % len(patternNames) {
		case 1:
			b.WriteString(`<path d="M-2,2 l4,-4 M0,8 l8,-8 M6,10 l4,-4" ` + ink + `/>`)
		case 2:
			b.WriteString(`<circle cx="2" cy="2" r="1.5" fill="` + sw.Ink + `"/><circle cx="6" cy="6" r="1.5" fill="` + sw.Ink + `"/>`)
		case 3:
			b.WriteString(`<path d="M0,0 l8,8 M8,0 l-8,8" ` + ink + `/>`)
		case 4:
			b.WriteString(`<path d="M0,4 h8" ` + ink + `/>`)
		case 5:
			b.WriteString(`<path d="M4,0 v8" ` + ink + `/>`)
		}
		b.WriteString("</pattern>\n")
	}
	b.WriteString("</defs>\n")
}

func patternID(id string, i int) string { return id + "-pat-" + strconv.Itoa(i) }

// seriesLook describes series i's colour and pattern in words.
func seriesLook(i int) string {
	return palette[i%len(palette)].Name + ", " + patternNames[i%len(patternNames)]
}

// legend writes one swatch and name per series in a row starting at (x, y).
func legend(b *strings.Builder, id string, names []string, x, y float64) {
	for i, n := range names {
		b.WriteString(`<rect x="` + f1(x) + `" y="` + f1(y-10) + `" width="14" height="14" fill="url(#` + esc(patternID(id, i)) + `)" stroke="` + inkColour + `" stroke-width="1"/>` + "\n")
		text(b, x+19, y+1, "", "", n)
		x += 30 + 7*float64(len([]rune(n)))
	}
}

// shorten cuts s to at most n runes, marking a cut with an ellipsis.
func shorten(s string, n int) string {
	r := []rune(s)
	if len(r) <= n {
		return s
	}
	return string(r[:n-1]) + "…"
}

// scale maps v from [t.Min, t.Max] onto [a, b].
func scale(t Ticks, v, a, b float64) float64 {
	if t.Max == t.Min {
		return (a + b) / 2
	}
	return a + (v-t.Min)/(t.Max-t.Min)*(b-a)
}
