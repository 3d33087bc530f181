package html

import (
	"math"
	"strconv"
	"strings"
)

// Series is one arm's values, one per group (Bars) or stage (Funnel).
// Missing values (a shorter slice) and NaN are not drawn and print "n/a".
// Six series have distinct colours and patterns; a seventh repeats the
// first's look (its name still tells it apart).
type Series struct {
	Name   string
	Values []float64
}

func (s Series) at(i int) float64 {
	if i < len(s.Values) {
		return s.Values[i]
	}
	return math.NaN()
}

// Bars is a grouped bar chart, for daily exposures per arm: one group per
// entry of Groups (a day), one bar per series (an arm) in each group. Arms
// differ in colour and in fill pattern, and are named in a legend.
type Bars struct {
	ID     string
	Title  string
	Desc   string
	XLabel string // default "day"
	YLabel string // default "units"
	Groups []string
	Series []Series
}

func (c Bars) id() string             { return c.ID }
func (c Bars) withID(id string) Block { c.ID = id; return c }

const (
	barsW = 760.0
	barsH = 320.0
	barsL = 70.0
	barsR = 740.0
	barsT = 34.0
	barsB = 260.0
)

func seriesNames(ss []Series) []string {
	out := make([]string, len(ss))
	for i, s := range ss {
		out[i] = s.Name
	}
	return out
}

func looks(ss []Series) string {
	var parts []string
	for i, s := range ss {
		parts = append(parts, s.Name+" ("+seriesLook(i)+")")
	}
	return strings.Join(parts, ", ")
}

// SVG returns the chart as an inline <svg> element.
func (c Bars) SVG() string {
	id := c.ID
	if id == "" {
		id = "bars"
	}
	var b strings.Builder
	desc := c.Desc
	if desc == "" {
		desc = "Grouped bar chart over " + strconv.Itoa(len(c.Groups)) + " groups; bars: " + looks(c.Series) + ". The numbers are in the table below."
	}
	svgOpen(&b, id, c.Title, desc, barsW, barsH)
	patternDefs(&b, id, len(c.Series))
	hi := 0.0
	for _, s := range c.Series {
		for _, v := range s.Values {
			if finite(v) {
				hi = math.Max(hi, v)
			}
		}
	}
	yt := NiceTicks(0, hi, 6)
	if hi == 0 {
		yt = NiceTicks(0, 1, 6)
	}
	y := func(v float64) float64 { return scale(yt, v, barsB, barsT) }
	legend(&b, id, seriesNames(c.Series), 8, 16)
	for _, v := range yt.Values() {
		yv := y(v)
		line(&b, barsL, yv, barsR, yv, gridColour, 1, "")
		text(&b, barsL-6, yv+4, "end", "", yt.Label(v))
	}
	ng, ns := len(c.Groups), max(len(c.Series), 1)
	gw := (barsR - barsL) / float64(max(ng, 1))
	bw := gw * 0.8 / float64(ns)
	every := int(math.Ceil(float64(ng) * 40 / (barsR - barsL))) // at most one label per 40 px
	for g, name := range c.Groups {
		gx := barsL + gw*float64(g) + gw*0.1
		for s, ser := range c.Series {
			v := ser.at(g)
			if !finite(v) {
				continue
			}
			bx := gx + bw*float64(s)
			b.WriteString(`<rect x="` + f1(bx) + `" y="` + f1(y(math.Max(v, 0))) + `" width="` + f1(bw) + `" height="` + f1(math.Abs(y(0)-y(v))) +
				`" fill="url(#` + esc(patternID(id, s)) + `)" stroke="` + inkColour + `" stroke-width="0.75"><title>` + esc(name+", "+ser.Name+": "+fmtCount(v)) + "</title></rect>\n")
		}
		if every < 1 || g%every == 0 {
			text(&b, barsL+gw*(float64(g)+0.5), barsB+18, "middle", "", shorten(name, 12))
		}
	}
	line(&b, barsL, barsB, barsR, barsB, axisColour, 1, "")
	line(&b, barsL, barsT, barsL, barsB, axisColour, 1, "")
	xl, yl := c.XLabel, c.YLabel
	if xl == "" {
		xl = "day"
	}
	if yl == "" {
		yl = "units"
	}
	text(&b, (barsL+barsR)/2, barsB+38, "middle", "axis-title", xl)
	b.WriteString(`<text x="16" y="` + f1((barsT+barsB)/2) + `" text-anchor="middle" font-weight="600" fill="` + inkColour + `" transform="rotate(-90 16 ` + f1((barsT+barsB)/2) + `)">` + esc(yl) + "</text>\n")
	if ng == 0 {
		text(&b, (barsL+barsR)/2, (barsT+barsB)/2, "middle", "muted", "no groups")
	}
	b.WriteString("</svg>")
	return b.String()
}

// Table returns the chart's numbers: one row per group, one column per
// series.
func (c Bars) Table() Table {
	id := c.ID
	if id == "" {
		id = "bars"
	}
	xl := c.XLabel
	if xl == "" {
		xl = "Day"
	}
	t := Table{ID: id + "-table", Caption: "Numbers plotted in: " + c.Title, Header: append([]string{xl}, seriesNames(c.Series)...)}
	for g, name := range c.Groups {
		row := []Cell{{Text: name}}
		for _, s := range c.Series {
			row = append(row, Cell{Text: fmtCount(s.at(g)), Numeric: true})
		}
		t.Rows = append(t.Rows, row)
	}
	return t
}

// Funnel shows units per stage per arm (exposed, triggered, eligible,
// mature, say): for each stage one horizontal bar per arm, labelled with its
// count and its share of the arm's first stage.
type Funnel struct {
	ID     string
	Title  string
	Desc   string
	Stages []string
	Series []Series
}

func (f Funnel) id() string             { return f.ID }
func (f Funnel) withID(id string) Block { f.ID = id; return f }

const (
	funnelW     = 760.0
	funnelL     = 130.0
	funnelR     = 620.0
	funnelTop   = 32.0
	funnelBarH  = 18.0
	funnelGap   = 14.0
	funnelLabel = 6.0
)

// SVG returns the funnel as an inline <svg> element.
func (f Funnel) SVG() string {
	id := f.ID
	if id == "" {
		id = "funnel"
	}
	ns := max(len(f.Series), 1)
	stageH := funnelBarH*float64(ns) + funnelGap
	h := funnelTop + stageH*float64(max(len(f.Stages), 1)) + 10
	var b strings.Builder
	desc := f.Desc
	if desc == "" {
		desc = "Funnel of units per stage (" + strings.Join(f.Stages, ", ") + ") per arm; bars: " + looks(f.Series) + ". Each bar is labelled with its count and its share of the arm's first stage. The numbers are in the table below."
	}
	svgOpen(&b, id, f.Title, desc, funnelW, h)
	patternDefs(&b, id, len(f.Series))
	legend(&b, id, seriesNames(f.Series), 8, 16)
	hi := 0.0
	for _, s := range f.Series {
		for _, v := range s.Values {
			if finite(v) {
				hi = math.Max(hi, v)
			}
		}
	}
	// Leave room right of the longest bar for the longest label (about
	// 6.8 px per character at 12 px).
	longest := 0
	for _, s := range f.Series {
		for st := range f.Stages {
			longest = max(longest, len([]rune(s.Name+" "+fmtCount(s.at(st))+" ("+fmtShare(s.at(st), s.at(0))+")")))
		}
	}
	right := math.Max(funnelL+200, math.Min(funnelR, funnelW-8-funnelLabel-6.8*float64(longest)))
	w := func(v float64) float64 {
		if !(hi > 0) || !(v > 0) {
			return 0
		}
		return v / hi * (right - funnelL)
	}
	for st, name := range f.Stages {
		top := funnelTop + stageH*float64(st)
		text(&b, 8, top+float64(ns)*funnelBarH/2+4, "", "axis-title", shorten(name, 16))
		for s, ser := range f.Series {
			v := ser.at(st)
			by := top + funnelBarH*float64(s)
			lab := fmtCount(v) + " (" + fmtShare(v, ser.at(0)) + ")"
			if finite(v) {
				b.WriteString(`<rect x="` + f1(funnelL) + `" y="` + f1(by+1) + `" width="` + f1(w(v)) + `" height="` + f1(funnelBarH-2) +
					`" fill="url(#` + esc(patternID(id, s)) + `)" stroke="` + inkColour + `" stroke-width="0.75"><title>` + esc(name+", "+ser.Name+": "+lab) + "</title></rect>\n")
			}
			text(&b, funnelL+w(v)+funnelLabel, by+funnelBarH/2+4, "", "", ser.Name+" "+lab)
		}
	}
	line(&b, funnelL, funnelTop-4, funnelL, h-10, axisColour, 1, "")
	if len(f.Stages) == 0 {
		text(&b, (funnelL+right)/2, funnelTop+20, "middle", "muted", "no stages")
	}
	b.WriteString("</svg>")
	return b.String()
}

// Table returns the funnel's numbers: one row per stage; for each series
// its count and its share of the series' first stage.
func (f Funnel) Table() Table {
	id := f.ID
	if id == "" {
		id = "funnel"
	}
	t := Table{ID: id + "-table", Caption: "Numbers plotted in: " + f.Title, Header: []string{"Stage"}}
	for _, s := range f.Series {
		t.Header = append(t.Header, s.Name+" units", s.Name+" share of first stage")
	}
	for st, name := range f.Stages {
		row := []Cell{{Text: name}}
		for _, s := range f.Series {
			row = append(row, Cell{Text: fmtCount(s.at(st)), Numeric: true}, Cell{Text: fmtShare(s.at(st), s.at(0)), Numeric: true})
		}
		t.Rows = append(t.Rows, row)
	}
	return t
}
