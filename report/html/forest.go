package html

import (
	"math"
	"strconv"
	"strings"
)

// Marker kinds of forest rows. Each kind has its own shape and colour, and
// its name is printed under the row's label.
const (
	MarkerPrimary   = "primary"   // filled diamond, blue
	MarkerSecondary = "secondary" // filled circle, orange
	MarkerGuard     = "guard"     // filled square, vermillion
	// Any other kind is drawn as a black triangle.
)

// Forest is a forest plot: one row per metric or comparison, its estimate as
// a marker and its interval as a horizontal line, against a zero line.
// Values are fractions drawn and printed as percentages (0.012 → +1.20%),
// or plain numbers when Absolute is set.
type Forest struct {
	ID       string // anchor of the figure; Render assigns "fig-N" when empty
	Title    string // caption and accessible name
	Desc     string // longer description for screen readers; a default is written when empty
	Absolute bool
	Rows     []ForestRow
}

// ForestRow is one interval. Low = −Inf or High = +Inf marks a one-sided or
// unbounded interval, drawn with an arrow to the axis edge; NaN values are
// not drawn and print as "n/a". Margin, when set (typically for guards), is
// drawn as a dashed line across the row.
type ForestRow struct {
	Label     string
	Estimate  float64
	Low, High float64
	Marker    string
	Margin    *float64
	Note      string
}

func (f Forest) id() string             { return f.ID }
func (f Forest) withID(id string) Block { f.ID = id; return f }

const (
	forestW      = 760.0
	forestLabelW = 210.0
	forestPlotR  = 540.0
	forestRowH   = 36.0
	forestTop    = 34.0
	forestBottom = 50.0
)

// markerLook returns a kind's colour and shape name.
func markerLook(kind string) (fill, shape string) {
	switch kind {
	case MarkerPrimary:
		return "#0072B2", "diamond"
	case MarkerSecondary:
		return "#E69F00", "circle"
	case MarkerGuard:
		return "#D55E00", "square"
	}
	return "#1a1a1a", "triangle"
}

// marker draws shape centred at (x, y).
func marker(b *strings.Builder, kind string, x, y float64) {
	fill, shape := markerLook(kind)
	st := ` fill="` + fill + `" stroke="` + inkColour + `" stroke-width="1"`
	switch shape {
	case "diamond":
		b.WriteString(`<path d="M` + f1(x) + "," + f1(y-7) + " L" + f1(x+7) + "," + f1(y) + " L" + f1(x) + "," + f1(y+7) + " L" + f1(x-7) + "," + f1(y) + ` Z"` + st + "/>\n")
	case "circle":
		b.WriteString(`<circle cx="` + f1(x) + `" cy="` + f1(y) + `" r="5.5"` + st + "/>\n")
	case "square":
		b.WriteString(`<rect x="` + f1(x-5) + `" y="` + f1(y-5) + `" width="10" height="10"` + st + "/>\n")
	default:
		b.WriteString(`<path d="M` + f1(x) + "," + f1(y-6) + " L" + f1(x+6) + "," + f1(y+5) + " L" + f1(x-6) + "," + f1(y+5) + ` Z"` + st + "/>\n")
	}
}

// arrow draws an arrow head at (x, y) pointing left (dir −1) or right (+1).
func arrow(b *strings.Builder, x, y float64, dir float64, colour string) {
	b.WriteString(`<path d="M` + f1(x) + "," + f1(y) + " L" + f1(x-dir*8) + "," + f1(y-5) + " L" + f1(x-dir*8) + "," + f1(y+5) + ` Z" fill="` + colour + `"/>` + "\n")
}

// unit converts a value to axis units (percent unless absolute).
func unit(v float64, absolute bool) float64 {
	if absolute {
		return v
	}
	return v * 100
}

// forestTicks computes the axis over zero, every finite estimate, bound and
// margin.
func (f Forest) ticks() Ticks {
	lo, hi := 0.0, 0.0
	see := func(v float64) {
		if finite(v) {
			u := unit(v, f.Absolute)
			lo, hi = math.Min(lo, u), math.Max(hi, u)
		}
	}
	for _, r := range f.Rows {
		see(r.Estimate)
		see(r.Low)
		see(r.High)
		if r.Margin != nil {
			see(*r.Margin)
		}
	}
	return NiceTicks(lo, hi, 6)
}

// SVG returns the plot as an inline <svg> element.
func (f Forest) SVG() string {
	id := f.ID
	if id == "" {
		id = "forest"
	}
	n := len(f.Rows)
	h := forestTop + forestRowH*float64(max(n, 1)) + forestBottom
	var b strings.Builder
	desc := f.Desc
	if desc == "" {
		desc = "Forest plot of " + strconv.Itoa(n) + " intervals; each row shows its estimate as a marker and its interval as a horizontal line, relative to a zero line. The numbers are in the table below."
	}
	svgOpen(&b, id, f.Title, desc, forestW, h)
	t := f.ticks()
	x0, x1 := forestLabelW, forestPlotR
	y0, y1 := forestTop, forestTop+forestRowH*float64(max(n, 1))
	x := func(v float64) float64 { return scale(t, unit(v, f.Absolute), x0, x1) }

	// Legend: one sample per marker kind in use, and the margin line.
	lx := 8.0
	seen := map[string]bool{}
	hasMargin := false
	for _, r := range f.Rows {
		if r.Margin != nil {
			hasMargin = true
		}
		if seen[r.Marker] {
			continue
		}
		seen[r.Marker] = true
		marker(&b, r.Marker, lx+6, 14)
		name := r.Marker
		if name == "" {
			name = "other"
		}
		text(&b, lx+16, 18, "", "", name)
		lx += 34 + 7*float64(len([]rune(name)))
	}
	if hasMargin {
		line(&b, lx+6, 6, lx+6, 22, inkColour, 1.5, "4 3")
		text(&b, lx+14, 18, "", "", "margin")
	}

	// Grid and tick labels.
	for _, v := range t.Values() {
		xv := scale(t, v, x0, x1)
		line(&b, xv, y0, xv, y1, gridColour, 1, "")
		line(&b, xv, y1, xv, y1+5, axisColour, 1, "")
		lab := t.Label(v)
		if v > 0 {
			lab = "+" + lab
		}
		if !f.Absolute {
			lab += "%"
		}
		text(&b, xv, y1+18, "middle", "", lab)
	}
	line(&b, x0, y1, x1, y1, axisColour, 1, "")
	axis := "relative effect (%)"
	if f.Absolute {
		axis = "effect"
	}
	text(&b, (x0+x1)/2, y1+38, "middle", "axis-title", axis)
	// Zero line.
	zx := scale(t, 0, x0, x1)
	line(&b, zx, y0, zx, y1, inkColour, 1.5, "")

	for i, r := range f.Rows {
		cy := y0 + forestRowH*float64(i) + forestRowH/2
		b.WriteString(`<g>`)
		b.WriteString(`<title>` + esc(r.Label+": "+fmtValue(r.Estimate, f.Absolute)+" ["+fmtValue(r.Low, f.Absolute)+", "+fmtValue(r.High, f.Absolute)+"]") + "</title>\n")
		text(&b, 8, cy-2, "", "", shorten(r.Label, 30))
		kind := r.Marker
		if kind == "" {
			kind = "other"
		}
		text(&b, 8, cy+12, "", "muted", kind)
		colour, _ := markerLook(r.Marker)
		if r.Margin != nil && finite(*r.Margin) {
			mx := x(*r.Margin)
			line(&b, mx, cy-forestRowH/2+3, mx, cy+forestRowH/2-3, inkColour, 1.5, "4 3")
		}
		if !math.IsNaN(r.Low) && !math.IsNaN(r.High) {
			lo, hi := x0, x1
			if finite(r.Low) {
				lo = x(r.Low)
			}
			if finite(r.High) {
				hi = x(r.High)
			}
			line(&b, lo, cy, hi, cy, colour, 2.5, "")
			if finite(r.Low) {
				line(&b, lo, cy-5, lo, cy+5, colour, 2, "")
			} else {
				arrow(&b, lo, cy, -1, colour)
			}
			if finite(r.High) {
				line(&b, hi, cy-5, hi, cy+5, colour, 2, "")
			} else {
				arrow(&b, hi, cy, 1, colour)
			}
		}
		if finite(r.Estimate) {
			marker(&b, r.Marker, x(r.Estimate), cy)
		}
		text(&b, forestPlotR+14, cy+4, "", "", fmtValue(r.Estimate, f.Absolute)+" ["+fmtValue(r.Low, f.Absolute)+", "+fmtValue(r.High, f.Absolute)+"]")
		b.WriteString("</g>\n")
	}
	if n == 0 {
		text(&b, (x0+x1)/2, (y0+y1)/2, "middle", "muted", "no rows")
	}
	b.WriteString("</svg>")
	return b.String()
}

// Table returns the numbers the plot draws, one row per interval.
func (f Forest) Table() Table {
	id := f.ID
	if id == "" {
		id = "forest"
	}
	t := Table{
		ID:      id + "-table",
		Caption: "Numbers plotted in: " + f.Title,
		Header:  []string{"Metric", "Kind", "Estimate", "Interval low", "Interval high", "Margin", "Note"},
	}
	for _, r := range f.Rows {
		m := ""
		if r.Margin != nil {
			m = fmtValue(*r.Margin, f.Absolute)
		}
		t.Rows = append(t.Rows, []Cell{
			{Text: r.Label},
			{Text: r.Marker},
			{Text: fmtValue(r.Estimate, f.Absolute), Numeric: true},
			{Text: fmtValue(r.Low, f.Absolute), Numeric: true},
			{Text: fmtValue(r.High, f.Absolute), Numeric: true},
			{Text: m, Numeric: true},
			{Text: r.Note},
		})
	}
	return t
}
