package html

import (
	"math"
	"strconv"
	"strings"
)

// Line is a line plot with an interval band, for a cumulative effect by day:
// the estimate is a line with a marker per day, the interval a shaded band
// edged with dashed lines, against a zero line. Values are fractions drawn
// as percentages, or plain numbers when Absolute is set.
type Line struct {
	ID     string
	Title  string
	Desc   string
	YLabel string // axis title; default "cumulative relative effect (%)" or "cumulative effect"
	// XLabel names the x axis and the first column of the table; default
	// "day".
	XLabel   string
	Absolute bool
	Points   []LinePoint
}

// LinePoint is one day. Label (a date, say) replaces the day number in the
// table when set. A point whose Low or High is not finite leaves a gap in
// the band; a NaN Estimate leaves a gap in the line.
type LinePoint struct {
	Day                 int
	Label               string
	Estimate, Low, High float64
}

func (l Line) id() string             { return l.ID }
func (l Line) withID(id string) Block { l.ID = id; return l }

const (
	lineW    = 760.0
	lineH    = 320.0
	lineL    = 70.0
	lineR    = 740.0
	lineT    = 34.0
	lineB    = 260.0
	bandFill = "#56B4E9"
)

// SVG returns the plot as an inline <svg> element.
func (l Line) SVG() string {
	id := l.ID
	if id == "" {
		id = "line"
	}
	var b strings.Builder
	desc := l.Desc
	if desc == "" {
		desc = "Line plot of the cumulative effect over " + strconv.Itoa(len(l.Points)) + " days with its interval as a shaded band and a zero line. The numbers are in the table below."
	}
	svgOpen(&b, id, l.Title, desc, lineW, lineH)
	lo, hi := 0.0, 0.0
	dlo, dhi := math.Inf(1), math.Inf(-1)
	for _, p := range l.Points {
		for _, v := range []float64{p.Estimate, p.Low, p.High} {
			if finite(v) {
				u := unit(v, l.Absolute)
				lo, hi = math.Min(lo, u), math.Max(hi, u)
			}
		}
		dlo, dhi = math.Min(dlo, float64(p.Day)), math.Max(dhi, float64(p.Day))
	}
	yt := NiceTicks(lo, hi, 6)
	if len(l.Points) == 0 {
		dlo, dhi = 0, 1
	}
	xt := NiceTicks(dlo, dhi, 8)
	if xt.Step < 1 {
		xt = Ticks{Min: math.Floor(dlo), Max: math.Ceil(dhi), Step: 1}
		if xt.Max == xt.Min {
			xt.Max++
		}
	}
	x := func(d int) float64 { return scale(xt, float64(d), lineL, lineR) }
	y := func(v float64) float64 { return scale(yt, unit(v, l.Absolute), lineB, lineT) }

	// Legend.
	b.WriteString(`<rect x="8" y="6" width="22" height="12" fill="` + bandFill + `" fill-opacity="0.35" stroke="#0072B2" stroke-dasharray="3 2"/>` + "\n")
	text(&b, 36, 16, "", "", "interval")
	line(&b, 110, 12, 134, 12, "#0072B2", 2.5, "")
	b.WriteString(`<circle cx="122" cy="12" r="3.5" fill="#0072B2" stroke="#ffffff" stroke-width="1"/>` + "\n")
	text(&b, 140, 16, "", "", "estimate")

	for _, v := range yt.Values() {
		yv := scale(yt, v, lineB, lineT)
		line(&b, lineL, yv, lineR, yv, gridColour, 1, "")
		lab := yt.Label(v)
		if v > 0 {
			lab = "+" + lab
		}
		if !l.Absolute {
			lab += "%"
		}
		text(&b, lineL-6, yv+4, "end", "", lab)
	}
	for _, v := range xt.Values() {
		xv := scale(xt, v, lineL, lineR)
		line(&b, xv, lineB, xv, lineB+5, axisColour, 1, "")
		text(&b, xv, lineB+18, "middle", "", strconv.FormatFloat(v, 'f', 0, 64))
	}
	line(&b, lineL, lineB, lineR, lineB, axisColour, 1, "")
	line(&b, lineL, lineT, lineL, lineB, axisColour, 1, "")
	text(&b, (lineL+lineR)/2, lineB+38, "middle", "axis-title", l.xLabel())
	ylab := l.YLabel
	if ylab == "" {
		ylab = "cumulative relative effect (%)"
		if l.Absolute {
			ylab = "cumulative effect"
		}
	}
	b.WriteString(`<text x="16" y="` + f1((lineT+lineB)/2) + `" text-anchor="middle" font-weight="600" fill="` + inkColour + `" transform="rotate(-90 16 ` + f1((lineT+lineB)/2) + `)">` + esc(ylab) + "</text>\n")

	// Band: one polygon per run of points with finite bounds.
	var run []LinePoint
	flush := func() {
		if len(run) > 0 {
			var pts, upper, lower []string
			for _, p := range run {
				upper = append(upper, f1(x(p.Day))+","+f1(y(p.High)))
			}
			for i := len(run) - 1; i >= 0; i-- {
				lower = append(lower, f1(x(run[i].Day))+","+f1(y(run[i].Low)))
			}
			pts = append(upper, lower...)
			b.WriteString(`<polygon points="` + strings.Join(pts, " ") + `" fill="` + bandFill + `" fill-opacity="0.35" stroke="none"/>` + "\n")
			b.WriteString(`<polyline points="` + strings.Join(upper, " ") + `" fill="none" stroke="#0072B2" stroke-width="1" stroke-dasharray="3 2"/>` + "\n")
			b.WriteString(`<polyline points="` + strings.Join(lower, " ") + `" fill="none" stroke="#0072B2" stroke-width="1" stroke-dasharray="3 2"/>` + "\n")
		}
		run = run[:0]
	}
	for _, p := range l.Points {
		if finite(p.Low) && finite(p.High) {
			run = append(run, p)
		} else {
			flush()
		}
	}
	flush()
	zy := scale(yt, 0, lineB, lineT)
	line(&b, lineL, zy, lineR, zy, inkColour, 1.5, "")

	// Estimate line, broken at NaN.
	var seg []string
	flushSeg := func() {
		if len(seg) > 1 {
			b.WriteString(`<polyline points="` + strings.Join(seg, " ") + `" fill="none" stroke="#0072B2" stroke-width="2.5"/>` + "\n")
		}
		seg = seg[:0]
	}
	for _, p := range l.Points {
		if finite(p.Estimate) {
			seg = append(seg, f1(x(p.Day))+","+f1(y(p.Estimate)))
		} else {
			flushSeg()
		}
	}
	flushSeg()
	for _, p := range l.Points {
		if finite(p.Estimate) {
			b.WriteString(`<circle cx="` + f1(x(p.Day)) + `" cy="` + f1(y(p.Estimate)) + `" r="3.5" fill="#0072B2" stroke="#ffffff" stroke-width="1"><title>` +
				esc(l.xLabel()+" "+strconv.Itoa(p.Day)+": "+fmtValue(p.Estimate, l.Absolute)+" ["+fmtValue(p.Low, l.Absolute)+", "+fmtValue(p.High, l.Absolute)+"]") + "</title></circle>\n")
		}
	}
	if len(l.Points) > 0 {
		last := l.Points[len(l.Points)-1]
		if finite(last.Estimate) {
			text(&b, math.Min(x(last.Day)+6, lineR-4), y(last.Estimate)-8, "end", "", fmtValue(last.Estimate, l.Absolute))
		}
	} else {
		text(&b, (lineL+lineR)/2, (lineT+lineB)/2, "middle", "muted", "no points")
	}
	b.WriteString("</svg>")
	return b.String()
}

func (l Line) xLabel() string {
	if l.XLabel == "" {
		return "day"
	}
	return l.XLabel
}

// Table returns the numbers the plot draws, one row per day.
func (l Line) Table() Table {
	id := l.ID
	if id == "" {
		id = "line"
	}
	t := Table{
		ID:      id + "-table",
		Caption: "Numbers plotted in: " + l.Title,
		Header:  []string{strings.ToUpper(l.xLabel()[:1]) + l.xLabel()[1:], "Estimate", "Interval low", "Interval high"},
	}
	for _, p := range l.Points {
		d := strconv.Itoa(p.Day)
		if p.Label != "" {
			d = p.Label
		}
		t.Rows = append(t.Rows, []Cell{
			{Text: d},
			{Text: fmtValue(p.Estimate, l.Absolute), Numeric: true},
			{Text: fmtValue(p.Low, l.Absolute), Numeric: true},
			{Text: fmtValue(p.High, l.Absolute), Numeric: true},
		})
	}
	return t
}
