package report

import (
	"fmt"
	"io"
	"math"
	"regexp"
	"sort"
	"strconv"
	"strings"

	"github.com/assay-dev/assay/compiler"
	"github.com/assay-dev/assay/metrics"
	"github.com/assay-dev/assay/report/html"
	"github.com/assay-dev/assay/stats"
)

// The HTML report is one self-contained page built from the report (the
// same numbers as the JSON contract, formatted as the text report formats
// them) and the compiled SQL:
//
//   - the summary (Summarize) and any alarms;
//   - a forest plot of the relative effect of every metric with its
//     interval, guards with their margin drawn on the harmful side, and a
//     table per metric whose numbers link to the SQL that produced them;
//   - the same forest per breakdown (segment);
//   - the cumulative effect of the primary metric by trigger day, computed
//     from the trigger_day breakdown when the run has one (assay run --by
//     …,trigger_day): units triggered up to each day are pooled from the
//     per-day moments (unadjusted for CUPED; ratio metrics are not drawn);
//   - the difference by time since the trigger of every metric whose window
//     is split into buckets, with the trend test (Timing.Elapsed);
//   - daily exposed units per arm with the sample-ratio results;
//   - the funnel of units per arm: triggered, eligible, mature (the primary
//     metric's window elapsed), with the exposed units of all arms beside it
//     (an arm is known only at a unit's trigger);
//   - the cautions, and the compiled SQL with one anchor per CTE, per result
//     column of the per-variant query and per row kind of the health query.
//
// Links: a per-variant value links to its result column in the final SELECT
// of the per-variant query (compiler.MetricPlan.Column), a difference or a
// relative change to the column of the mean it compares, an interval or a
// p-value to the column of the variance it rests on; the "per-unit values"
// cell links to the CTE that reads the metric's source (pass_<source>).
// Eligible units link to the units column, triggered units and exclusions
// to the health query's row for them.

// HTML writes the report as one self-contained HTML page. p is the plan the
// report was computed from, q its compiled SQL in dialect (q may be empty:
// the page then has no SQL section and no links).
func (r *Report) HTML(w io.Writer, p *compiler.Plan, q compiler.Queries, dialect string) error {
	return html.Render(w, r.HTMLPage(p, q, dialect))
}

// HTMLPage builds the page that HTML renders.
func (r *Report) HTMLPage(p *compiler.Plan, q compiler.Queries, dialect string) html.Page {
	b := &htmlBuilder{r: r, p: p, ids: map[string]bool{}}
	sqlSec := b.sqlSection(q, dialect)
	page := html.Page{Title: fmt.Sprintf("Experiment %s", r.Experiment.ID)}
	page.Sections = append(page.Sections, b.summarySection(), b.effectsSection())
	if s, ok := b.segmentsSection(); ok {
		page.Sections = append(page.Sections, s)
	}
	page.Sections = append(page.Sections, b.cumulativeSection())
	if s, ok := b.elapsedSection(); ok {
		page.Sections = append(page.Sections, s)
	}
	if s, ok := b.priorApartSection(); ok {
		page.Sections = append(page.Sections, s)
	}
	if s, ok := docSection("rollout", "Rollout steps", r.rolloutDoc); ok {
		page.Sections = append(page.Sections, s)
	}
	if s, ok := docSection("timing", "Weekdays, calendar and time", r.timingDoc); ok {
		page.Sections = append(page.Sections, s)
	}
	page.Sections = append(page.Sections, b.healthSection())
	page.Sections = append(page.Sections, html.Section{ID: "cautions", Heading: "Cautions", Blocks: paras(r.Cautions, "– ")})
	if sqlSec != nil {
		page.Sections = append(page.Sections, *sqlSec)
	}
	page.Sections = append(page.Sections, html.Section{ID: "about", Heading: "About this page", Blocks: []html.Block{
		html.Paragraph{Text: fmt.Sprintf("assay %s; spec fingerprint %s; compile options %s; result fingerprint %s. Exposures in [%s, %s), outcomes as of %s, time zone %s, %g%% intervals.",
			r.ToolVersion, r.Experiment.SpecFingerprint, r.Experiment.CompileOptions, r.Experiment.Fingerprint, r.Experiment.Start, r.Experiment.End, r.Experiment.AsOf, r.Experiment.TimeZone, r.Experiment.Confidence*100)},
		html.Paragraph{Text: "Every plot is followed by the table of its numbers. Markers differ in shape as well as colour (primary: diamond, secondary: circle, guard: square, mechanism: triangle); arms differ in fill pattern as well as colour. Numbers in the tables link to the SQL that produced them. The page fetches nothing and runs no script."},
	}})
	return page
}

type htmlBuilder struct {
	r   *Report
	p   *compiler.Plan
	ids map[string]bool // anchors of the SQL section
}

// link returns "#id" when the page has that anchor, else "".
func (b *htmlBuilder) link(id string) string {
	if b.ids[id] {
		return "#" + id
	}
	return ""
}

func colID(col string) string { return "col-" + slugID(col) }

func slugID(s string) string {
	return strings.Map(func(r rune) rune {
		if r >= 'a' && r <= 'z' || r >= 'A' && r <= 'Z' || r >= '0' && r <= '9' || r == '-' || r == '_' {
			return r
		}
		return '-'
	}, s)
}

func paras(items []string, prefix string) []html.Block {
	var out []html.Block
	for _, s := range items {
		out = append(out, html.Paragraph{Text: prefix + s})
	}
	return out
}

// num is a numeric cell linking to the SQL that produced it; a value that
// could not be computed ("n/a") links nowhere.
func num(text, link string) html.Cell {
	if !strings.ContainsAny(text, "0123456789") {
		link = ""
	}
	return html.Cell{Text: text, Link: link, Numeric: true}
}
func txt(text string) html.Cell { return html.Cell{Text: text} }

// metricCols returns the link targets of a metric's value, variance and
// per-unit values.
func (b *htmlBuilder) metricCols(name string) (n, mean, vr, pass string) {
	if b.p == nil {
		return
	}
	mp := b.p.MetricByName(name)
	if mp == nil {
		return
	}
	n = b.link(colID(mp.Column(compiler.StatN)))
	if mp.M.Kind == metrics.KindRatio {
		mean, vr = b.link(colID(mp.Column(compiler.StatNumMean))), b.link(colID(mp.Column(compiler.StatNumVar)))
	} else {
		mean, vr = b.link(colID(mp.Column(compiler.StatMean))), b.link(colID(mp.Column(compiler.StatVar)))
	}
	agg := mp.Value
	if agg == nil {
		agg = mp.Num
	}
	if agg != nil && agg.Agg != nil && agg.Agg.Source != nil {
		pass = b.link("cte-main-" + slugID("pass_"+agg.Agg.Source.Name))
	}
	return
}

func (b *htmlBuilder) summarySection() html.Section {
	r := b.r
	s := r.Summarize()
	var bl []html.Block
	for _, a := range r.Alarms {
		bl = append(bl, html.Paragraph{Text: "ALARM: " + a})
	}
	bl = append(bl, html.Paragraph{Text: "Hypothesis: " + s.Hypothesis})
	look := lookSentence(s, r.Experiment)
	bl = append(bl, html.Paragraph{Text: look})
	eff := html.Table{ID: "summary-effects", Caption: "Did the mechanism, then the primary metric, move?",
		Header: []string{"metric", "arm", "moved", "difference", "interval", "relative", "interval", "p-value"}}
	add := func(role string, es []SummaryEffect) {
		for _, e := range es {
			_, mean, vr, _ := b.metricCols(e.Metric)
			eff.Rows = append(eff.Rows, []html.Cell{txt(e.Metric + " (" + role + ")"), txt(e.Variant), txt(movedText(e.Moved)),
				num(signed(e.Difference), mean), num("["+signed(e.CILow)+", "+signed(e.CIHigh)+"]", vr),
				num(pct(float64(e.Relative)), mean), num("["+pct(float64(e.RelativeCILow))+", "+pct(float64(e.RelativeCIHigh))+"]", vr),
				num(fmtP(float64(e.PValue))+" ("+e.PValueKind+")", vr)})
		}
	}
	add("mechanism", s.Mechanism)
	add("primary", s.Primary)
	if len(eff.Rows) > 0 {
		bl = append(bl, eff)
	}
	bl = append(bl, paras(targetLines(s), "– ")...)
	if len(s.Guards) > 0 {
		g := html.Table{ID: "summary-guards", Caption: "Guards (alarming first)", Header: []string{"", "metric", "arm", "verdict", "relative", "harmful", "margin"}}
		for _, gv := range s.Guards {
			mark := "ok"
			if gv.Alarming {
				mark = "!! alarm"
			} else if gv.Verdict == string(stats.VerdictInconclusive) {
				mark = "? open"
			}
			_, mean, _, _ := b.metricCols(gv.Metric)
			g.Rows = append(g.Rows, []html.Cell{txt(mark), txt(gv.Metric), txt(gv.Variant), txt(gv.Verdict), num(pct(float64(gv.Relative)), mean), txt(gv.Harmful), num(pctAbs(float64(gv.Margin)), "")})
		}
		bl = append(bl, g)
	}
	h := s.Health
	ht := html.Table{ID: "summary-health", Caption: "Health", Header: []string{"check", "result"}}
	sr := "not tested"
	if h.SampleRatioPValue.OK() {
		sr = fmt.Sprintf("ok, %s (alarm below %g)", pEquals(float64(h.SampleRatioPValue)), h.SRMAlpha)
		if h.SampleRatioAlarm {
			sr = fmt.Sprintf("!! MISMATCH, %s (alarm below %g)", pEquals(float64(h.SampleRatioPValue)), h.SRMAlpha)
		}
	}
	ht.Rows = append(ht.Rows, []html.Cell{txt("sample ratio (eligible units)"), {Text: sr, Link: b.link(colID(compiler.ColUnits))}})
	if h.AlarmDays > 0 {
		ht.Rows = append(ht.Rows, []html.Cell{txt("sample ratio by day"), txt(fmt.Sprintf("!! mismatch on %d day(s)", h.AlarmDays))})
	}
	if h.Available {
		ht.Rows = append(ht.Rows, []html.Cell{txt("excluded of triggered"), num(fmt.Sprintf("%d of %d (%s)", h.Excluded, h.Triggered, pctAbs(float64(h.ExcludedRate))), b.link("health-excluded-any"))})
		ht.Rows = append(ht.Rows, []html.Cell{txt("eligible units"), num(strconv.FormatInt(h.Eligible, 10), b.link(colID(compiler.ColUnits)))})
	} else {
		ht.Rows = append(ht.Rows, []html.Cell{txt("exclusions"), txt("unknown (no health result)")})
	}
	ht.Rows = append(ht.Rows, []html.Cell{txt("immature units (largest per metric)"), num(strconv.FormatInt(h.ImmatureUnits, 10), "")})
	if h.UnknownVariants > 0 {
		ht.Rows = append(ht.Rows, []html.Cell{txt("undeclared variant values"), txt(fmt.Sprintf("!! %d", h.UnknownVariants))})
	}
	bl = append(bl, ht, html.Heading{Level: 3, Text: "What this evidence cannot say"})
	bl = append(bl, paras(s.CannotSay, "– ")...)
	return html.Section{ID: "summary", Heading: "Summary", Blocks: bl}
}

func movedText(m string) string {
	switch m {
	case "up":
		return "▲ up"
	case "down":
		return "▼ down"
	}
	return m
}

// forestRow is one comparison's relative effect; guards carry their margin
// on the harmful side.
func forestRow(label string, m MetricInfo, c Compare) html.ForestRow {
	row := html.ForestRow{Label: label, Estimate: float64(c.Relative), Low: float64(c.RelativeCILow), High: float64(c.RelativeCIHigh), Note: m.Role}
	switch m.Role {
	case "primary":
		row.Marker = html.MarkerPrimary
	case "guard":
		row.Marker = html.MarkerGuard
		if m.Margin != nil {
			mg := *m.Margin
			if m.Harmful == string(metrics.Decrease) {
				mg = -mg
			}
			row.Margin = &mg
			row.Note = "guard, " + m.Harmful + " harmful"
		}
	case "mechanism":
		row.Marker = "mechanism"
	default:
		row.Marker = html.MarkerSecondary
	}
	switch {
	case c.RelativeShape == "unbounded" && !c.RelativeCILow.OK() && !c.RelativeCIHigh.OK():
		row.Low, row.High = math.Inf(-1), math.Inf(1)
	case c.RelativeShape == "unbounded" && !c.RelativeCILow.OK():
		row.Low = math.Inf(-1)
	case c.RelativeShape == "unbounded" && !c.RelativeCIHigh.OK():
		row.High = math.Inf(1)
	}
	if !c.Relative.OK() {
		row.Estimate, row.Low, row.High = math.NaN(), math.NaN(), math.NaN()
		why := c.RelReason
		if why == "" {
			why = c.Reason
		}
		row.Note = m.Role + ": relative change undefined (" + why + ")"
	}
	return row
}

func (b *htmlBuilder) effectsSection() html.Section {
	r := b.r
	f := html.Forest{ID: "forest-overall", Title: fmt.Sprintf("Relative effect of each arm against %s, %g%% intervals (guards: margin dashed on the harmful side)", baselineName(r), r.Experiment.Confidence*100)}
	for _, ro := range roleOrder {
		for _, m := range r.Metrics {
			if m.Role != ro.role {
				continue
			}
			for _, c := range m.Comparisons {
				label := m.Name
				if len(m.Comparisons) > 1 {
					label += " (" + c.Variant + ")"
				}
				f.Rows = append(f.Rows, forestRow(label, m, c))
			}
		}
	}
	bl := []html.Block{f}
	for _, ro := range roleOrder {
		for _, m := range r.Metrics {
			if m.Role == ro.role {
				bl = append(bl, b.metricBlocks(m)...)
			}
		}
	}
	return html.Section{ID: "effects", Heading: "Effects", Blocks: bl}
}

func baselineName(r *Report) string {
	for _, v := range r.Experiment.Variants {
		if v.Baseline {
			return v.Name
		}
	}
	return "the baseline"
}

// metricBlocks is one metric's heading, definition, table and notes.
func (b *htmlBuilder) metricBlocks(m MetricInfo) []html.Block {
	title := m.Name
	if m.Label != "" {
		title += " — " + m.Label
	}
	bl := []html.Block{html.Heading{Level: 3, ID: "metric-" + slugID(m.Name), Text: fmt.Sprintf("%s (%s, %s)", title, m.Role, m.Kind)}}
	if m.Rule != "" {
		bl = append(bl, html.Paragraph{Text: "Definition: " + m.Rule + "."})
	}
	nCol, mean, vr, pass := b.metricCols(m.Name)
	diffHead := "difference"
	if m.Covariate != nil {
		diffHead = "difference (CUPED)"
	}
	t := html.Table{ID: "table-" + slugID(m.Name), Caption: m.Name + " per arm",
		Header: []string{"arm", "n", "value", "std.err", diffHead, "interval", "relative", "interval", "p-value", "adj. p", "per-unit values"}}
	cmp := map[string]Compare{}
	for _, c := range m.Comparisons {
		cmp[c.Variant] = c
	}
	passCell := html.Cell{}
	if pass != "" {
		passCell = html.Cell{Text: strings.TrimPrefix(pass, "#cte-main-"), Link: pass}
	}
	for i, v := range m.Variants {
		row := []html.Cell{txt(v.Variant), num(strconv.FormatInt(v.N, 10), nCol), num(fmtNum(v.Value), mean), num(fmtNum(v.StdError), vr)}
		if i == 0 {
			row[0].Text += " (baseline)"
			row = append(row, txt(""), txt(""), txt(""), txt(""), txt(""), txt(""), passCell)
		} else {
			c := cmp[v.Variant]
			adj := fmtP(float64(c.PValueAdjusted))
			if c.Family == FamilyGuard || (c.Family == FamilyPrimary && len(m.Comparisons) == 1) {
				adj = "-"
			}
			row = append(row, num(signed(c.Difference), mean), num("["+signed(c.CILow)+", "+signed(c.CIHigh)+"]", vr),
				num(pct(float64(c.Relative)), mean), num("["+pct(float64(c.RelativeCILow))+", "+pct(float64(c.RelativeCIHigh))+"]", vr),
				num(fmtP(float64(c.PValue)), vr), num(adj, vr), passCell)
		}
		t.Rows = append(t.Rows, row)
	}
	bl = append(bl, t)
	// The notes are the text report's, so the page says what it does.
	d := &document{}
	metricDoc(d, m)
	for _, blk := range d.blocks {
		if blk.kind == kList {
			bl = append(bl, paras(blk.items, "– ")...)
		}
	}
	return bl
}

func (b *htmlBuilder) segmentsSection() (html.Section, bool) {
	r := b.r
	var bl []html.Block
	for _, seg := range r.Segments {
		if seg.Name == compiler.KeyTriggerDay {
			continue
		}
		f, inner := b.segmentBlocks(seg)
		bl = append(bl, html.Heading{Level: 3, ID: "segment-" + slugID(seg.Name), Text: "By " + seg.Name}, f,
			html.Details{Summary: fmt.Sprintf("Tables by %s", seg.Name), Open: true, Blocks: inner})
	}
	if len(bl) == 0 {
		return html.Section{}, false
	}
	bl = append([]html.Block{html.Paragraph{Text: "Segment breakdowns are exploratory: with many segments some differ by chance (see the adjusted p-values); a segment effect is a lead for a new experiment, not a finding."}}, bl...)
	return html.Section{ID: "segments", Heading: "Effects by segment", Blocks: bl}, true
}

// segmentBlocks is one breakdown's forest of relative effects and its
// tables: the variant-mix test, one table per metric, the heterogeneity
// checks and the flags.
func (b *htmlBuilder) segmentBlocks(seg Segment) (html.Forest, []html.Block) {
	r := b.r
	byName := map[string]MetricInfo{}
	for _, m := range r.Metrics {
		byName[m.Name] = m
	}
	f := html.Forest{ID: "forest-" + slugID(seg.Name), Title: fmt.Sprintf("Relative effect by %s, %g%% intervals (exploratory)", seg.Name, r.Experiment.Confidence*100)}
	var inner []html.Block
	mix := seg.VariantMix
	if mix.Reason != "" {
		inner = append(inner, html.Paragraph{Text: fmt.Sprintf("Variant mix across values: not tested (%s).", mix.Reason)})
	} else {
		verdict := "ok"
		if mix.Alarm {
			verdict = "!! IMBALANCED"
		}
		inner = append(inner, html.Paragraph{Text: fmt.Sprintf("Variant mix across values: chi-square %s, df %g, %s: %s.", fmtNum(mix.Statistic), float64(mix.DF), pEquals(float64(mix.PValue)), verdict)})
	}
	for _, sm := range seg.Metrics {
		m := byName[sm.Metric]
		nCol, mean, vr, _ := b.metricCols(sm.Metric)
		t := html.Table{ID: "table-" + slugID(seg.Name) + "-" + slugID(sm.Metric), Caption: sm.Metric + " by " + seg.Name,
			Header: []string{"value", "arm", "n (baseline)", "n (arm)", "difference", "interval", "relative", "interval", "p-value", "adj. p"}}
		for _, row := range sm.Rows {
			n := map[string]int64{}
			for _, v := range row.Variants {
				n[v.Variant] = v.N
			}
			for _, c := range row.Comparisons {
				label := sm.Metric + " · " + row.Value
				if len(row.Comparisons) > 1 {
					label += " (" + c.Variant + ")"
				}
				f.Rows = append(f.Rows, forestRow(label, m, c))
				t.Rows = append(t.Rows, []html.Cell{txt(row.Value), txt(c.Variant), num(strconv.FormatInt(n[c.Baseline], 10), nCol), num(strconv.FormatInt(n[c.Variant], 10), nCol),
					num(signed(c.Difference), mean), num("["+signed(c.CILow)+", "+signed(c.CIHigh)+"]", vr), num(pct(float64(c.Relative)), mean),
					num("["+pct(float64(c.RelativeCILow))+", "+pct(float64(c.RelativeCIHigh))+"]", vr), num(fmtP(float64(c.PValue)), vr), num(fmtP(float64(c.PValueAdjusted)), vr)})
			}
		}
		inner = append(inner, t)
		for _, chk := range sm.Checks {
			if chk.Reason == "" {
				inner = append(inner, html.Paragraph{Text: fmt.Sprintf("– heterogeneity (%s): Cochran's Q %s, df %g, %s, I² %s", chk.Variant, fmtNum(chk.Q), float64(chk.DF), pEquals(float64(chk.PValue)), pctAbs(float64(chk.I2)))})
			}
		}
		for _, fl := range sm.Flags {
			inner = append(inner, html.Paragraph{Text: "!! " + fl})
		}
	}
	return f, inner
}

// docSection renders the part of the shared document that build adds (the
// rollout section, say) as a page section: its own level-2 heading is the
// section's, deeper headings, sentences, lists and tables follow as they
// are. ok is false when build adds nothing.
func docSection(id, heading string, build func(*document)) (html.Section, bool) {
	var d document
	build(&d)
	if len(d.blocks) == 0 {
		return html.Section{}, false
	}
	sec := html.Section{ID: id, Heading: heading}
	n := 0
	for _, bl := range d.blocks {
		switch bl.kind {
		case kHeading:
			if bl.level > 2 {
				sec.Blocks = append(sec.Blocks, html.Heading{Level: 3, Text: bl.text})
			}
		case kPara, kCode:
			sec.Blocks = append(sec.Blocks, html.Paragraph{Text: bl.text})
		case kAlarm:
			sec.Blocks = append(sec.Blocks, html.Paragraph{Text: "!! " + bl.text})
		case kList:
			sec.Blocks = append(sec.Blocks, paras(bl.items, "– ")...)
		case kTable:
			n++
			t := html.Table{ID: fmt.Sprintf("%s-table-%d", id, n), Header: bl.table.head}
			for _, row := range bl.table.rows {
				var cells []html.Cell
				for i, c := range row {
					if i < bl.table.left {
						cells = append(cells, txt(c))
					} else {
						cells = append(cells, num(c, ""))
					}
				}
				t.Rows = append(t.Rows, cells)
			}
			sec.Blocks = append(sec.Blocks, t)
		}
	}
	return sec, true
}

// priorApartSection lists the comparisons of the units a prior run
// exposed, analysed apart (Report.PriorApart).
func (b *htmlBuilder) priorApartSection() (html.Section, bool) {
	pa := b.r.PriorApart
	if pa == nil {
		return html.Section{}, false
	}
	sec := html.Section{ID: "prior-apart", Heading: "Previously exposed units, analysed apart"}
	var units []string
	for _, v := range b.r.Experiment.Variants {
		units = append(units, fmt.Sprintf("%s %d", v.Name, pa.Units[v.Name]))
	}
	sec.Blocks = append(sec.Blocks, html.Paragraph{Text: fmt.Sprintf("Prior runs %s; units analysed: %s. %s", strings.Join(pa.Runs, ", "), strings.Join(units, ", "), pa.Note)})
	t := html.Table{ID: "prior-apart-table", Caption: "Comparisons among previously exposed units only",
		Header: []string{"metric", "arm", "n (baseline)", "n (arm)", "baseline", "arm value", "difference", "interval", "relative", "p-value"}}
	for _, m := range pa.Metrics {
		for _, c := range m.Comparisons {
			var base, arm VariantVal
			for _, v := range m.Variants {
				switch v.Variant {
				case c.Baseline:
					base = v
				case c.Variant:
					arm = v
				}
			}
			t.Rows = append(t.Rows, []html.Cell{txt(m.Name), txt(c.Variant), num(fmt.Sprint(base.N), ""), num(fmt.Sprint(arm.N), ""),
				num(fmtNum(base.Value), ""), num(fmtNum(arm.Value), ""), num(signed(c.Difference), ""), num(ci(c.CILow, c.CIHigh), ""),
				num(pct(float64(c.Relative)), ""), num(pEquals(float64(c.PValue)), "")})
		}
	}
	sec.Blocks = append(sec.Blocks, t)
	return sec, true
}

// elapsedSection draws each bucketed metric's difference by time since
// the trigger (Timing.Elapsed), with the trend test below each plot.
func (b *htmlBuilder) elapsedSection() (html.Section, bool) {
	r := b.r
	if r.Timing == nil || len(r.Timing.Elapsed) == 0 {
		return html.Section{}, false
	}
	sec := html.Section{ID: "elapsed", Heading: "Effect by time since the trigger"}
	sec.Blocks = append(sec.Blocks, html.Paragraph{Text: "Each point is the difference between the arms in one part of the outcome window, counted from each unit's trigger, from the same units and the same pass over the data as the metric. A line that falls towards zero suggests the effect fades (novelty); one that rises, that it grows (learning). The arms' values per bucket are in the weekdays, calendar and time section. " + elapsedCaveat})
	for _, e := range r.Timing.Elapsed {
		var pts []html.LinePoint
		for i, bk := range e.Buckets {
			pts = append(pts, html.LinePoint{Day: i + 1, Label: bk.From + " to " + bk.To, Estimate: float64(bk.Difference), Low: float64(bk.CILow), High: float64(bk.CIHigh)})
		}
		sec.Blocks = append(sec.Blocks, html.Line{ID: "elapsed-" + slugID(e.Metric) + "-" + slugID(e.Variant), Absolute: true, XLabel: "bucket", YLabel: "difference in the bucket",
			Title:  fmt.Sprintf("%s: difference of %s by time since the trigger (%s buckets), %g%% intervals", e.Metric, e.Variant, e.BucketLength, r.Experiment.Confidence*100),
			Desc:   fmt.Sprintf("Line plot of the difference in each of %d buckets of %s after the trigger, with its interval as a shaded band and a zero line. The numbers are in the table below.", len(e.Buckets), e.BucketLength),
			Points: pts})
		text := fmt.Sprintf("Trend test (%s): not tested (%s).", e.Method, e.Reason)
		if e.Reason == "" {
			verdict := "not flagged"
			if e.Trend != "" {
				verdict = "flagged: the effect is " + e.Trend
			}
			text = fmt.Sprintf("Trend of the difference (%s): %s per bucket [%s, %s] (%s%% interval, the flag's level), %s; %s at %s.", e.Method, signed(e.Slope), signed(e.SlopeCILow), signed(e.SlopeCIHigh), trimP(100*e.SlopeLevel), pEquals(float64(e.PValue)), verdict, trimP(e.Alpha))
		}
		sec.Blocks = append(sec.Blocks, html.Paragraph{Text: text})
	}
	return sec, true
}

// cumulativeSection draws the primary metric's effect among units triggered
// up to each day, from the trigger_day breakdown.
func (b *htmlBuilder) cumulativeSection() html.Section {
	r := b.r
	sec := html.Section{ID: "cumulative", Heading: "Cumulative effect by trigger day"}
	var seg *Segment
	for i := range r.Segments {
		if r.Segments[i].Name == compiler.KeyTriggerDay {
			seg = &r.Segments[i]
		}
	}
	if seg == nil {
		sec.Blocks = []html.Block{html.Paragraph{Text: "Not drawn: the run has no trigger_day breakdown. Run with --by naming trigger_day (for example --by " + strings.Join(append(append([]string{}, r.Experiment.Breakdowns...), compiler.KeyTriggerDay), ",") + ") to see how the effect builds up as units are triggered."}}
		return sec
	}
	sec.Blocks = append(sec.Blocks, html.Paragraph{Text: "Each point pools the units triggered up to that day (from the per-day moments of the trigger_day breakdown) and compares the arms on them, without CUPED adjustment. A curve that settles suggests a stable effect; early points rest on few units, and their intervals are not corrected for looking every day."})
	for _, m := range r.Metrics {
		if m.Role != "primary" {
			continue
		}
		if m.Kind == "ratio" {
			sec.Blocks = append(sec.Blocks, html.Paragraph{Text: m.Name + ": not drawn for ratio metrics (the pooled moments need the per-day covariances)."})
			continue
		}
		var sm *SegmentMetrics
		for i := range seg.Metrics {
			if seg.Metrics[i].Metric == m.Name {
				sm = &seg.Metrics[i]
			}
		}
		if sm == nil || len(m.Variants) < 2 {
			continue
		}
		for ti := 1; ti < len(m.Variants); ti++ {
			arm := m.Variants[ti].Variant
			var pts []html.LinePoint
			var base, treat []stats.Moments
			for di, row := range sm.Rows {
				bm, tm := dayMoments(row, m.Variants[0].Variant), dayMoments(row, arm)
				base, treat = append(base, bm), append(treat, tm)
				pb, pt := poolMoments(base), poolMoments(treat)
				var c stats.Comparison
				if m.Kind == "proportion" {
					c = stats.TwoProportion(pb, pt, r.Experiment.Confidence)
				} else {
					c = stats.Welch(pb, pt, r.Experiment.Confidence)
				}
				pts = append(pts, html.LinePoint{Day: di + 1, Label: row.Value, Estimate: c.Relative, Low: c.RelCILow, High: c.RelCIHigh})
			}
			sec.Blocks = append(sec.Blocks, html.Line{ID: "cumulative-" + slugID(m.Name) + "-" + slugID(arm),
				Title: fmt.Sprintf("%s: cumulative relative effect of %s by trigger day, %g%% intervals", m.Name, arm, r.Experiment.Confidence*100), Points: pts})
		}
	}
	_, inner := b.segmentBlocks(*seg)
	sec.Blocks = append(sec.Blocks, html.Details{Summary: "Each trigger day on its own: every metric, units triggered that day", Blocks: inner})
	return sec
}

// dayMoments recovers a day's moments of one arm from its value and
// standard error (var = se²·n).
func dayMoments(row SegmentRow, variant string) stats.Moments {
	for _, v := range row.Variants {
		if v.Variant == variant {
			n, se := float64(v.N), float64(v.StdError)
			mv := stats.Moments{N: n, Mean: float64(v.Value), Var: se * se * n}
			if n == 0 {
				mv.Mean, mv.Var = 0, 0
			}
			return mv
		}
	}
	return stats.Moments{}
}

// poolMoments combines groups into the moments of their union: the mean
// weighted by size, and the variance from the within-group and
// between-group sums of squares (the parallel-variance formula of Chan,
// Golub and LeVeque, "Algorithms for computing the sample variance", The
// American Statistician 37(3), 1983).
func poolMoments(ms []stats.Moments) stats.Moments {
	var n, sum float64
	for _, m := range ms {
		if m.N > 0 && !math.IsNaN(m.Mean) {
			n += m.N
			sum += m.N * m.Mean
		}
	}
	if n == 0 {
		return stats.Moments{Mean: math.NaN(), Var: math.NaN()}
	}
	mean := sum / n
	var ss float64
	for _, m := range ms {
		if m.N > 0 && !math.IsNaN(m.Mean) {
			v := m.Var
			if math.IsNaN(v) {
				v = 0
			}
			ss += (m.N-1)*v + m.N*(m.Mean-mean)*(m.Mean-mean)
		}
	}
	vr := math.NaN()
	if n > 1 {
		vr = ss / (n - 1)
	}
	return stats.Moments{N: n, Mean: mean, Var: vr}
}

func (b *htmlBuilder) healthSection() html.Section {
	r := b.r
	h := r.Health
	var bl []html.Block
	vt := html.Table{ID: "table-arms", Caption: "Units per arm", Header: []string{"arm", "planned", "triggered", "eligible", "eligible share"}}
	for _, v := range r.Experiment.Variants {
		name := v.Name
		if v.Baseline {
			name += " (baseline)"
		}
		trig := num(strconv.FormatInt(v.TriggeredUnits, 10), b.link("health-triggers"))
		if !h.Available {
			trig = txt("n/a")
		}
		vt.Rows = append(vt.Rows, []html.Cell{txt(name), num(pctAbs(v.PlannedWeight), ""), trig, num(strconv.FormatInt(v.EligibleUnits, 10), b.link(colID(compiler.ColUnits))), num(pctAbs(float64(v.EligibleShare)), "")})
	}
	bl = append(bl, vt)
	sr := h.SampleRatio
	if sr.Reason != "" {
		bl = append(bl, html.Paragraph{Text: fmt.Sprintf("Sample ratio (eligible units): not tested (%s).", sr.Reason)})
	} else {
		verdict := "ok"
		if sr.Alarm {
			verdict = "!! ALARM: assignment or logging is likely broken"
		}
		bl = append(bl, html.Paragraph{Text: fmt.Sprintf("Sample ratio (eligible units): chi-square %s, df %g, %s (alarm below %g): %s.", fmtNum(sr.Statistic), float64(sr.DF), pEquals(float64(sr.PValue)), sr.Alpha, verdict)})
	}
	if st := h.SampleRatioTriggered; h.Available && st.Reason == "" {
		bl = append(bl, html.Paragraph{Text: fmt.Sprintf("Sample ratio (triggered units new to this run, before other exclusions): chi-square %s, %s.", fmtNum(st.Statistic), pEquals(float64(st.PValue)))})
	}
	if h.Available {
		bl = append(bl, html.Paragraph{Text: fmt.Sprintf("Units of all arms: %d exposed, %d never triggered (no qualifying exposure), %d triggered, %d eligible. A unit's arm is fixed at its trigger (it may have been exposed in several arms before), so exposed units are counted over all arms.", h.ExposedUnits, h.NeverTriggered, h.Triggered, h.Eligible)})
		et := html.Table{ID: "table-exclusions", Caption: "Exclusions (of triggered units)", Header: []string{"reason", "units", "rate"}}
		for _, e := range h.Exclusions {
			et.Rows = append(et.Rows, []html.Cell{txt(e.Reason), num(strconv.FormatInt(e.Units, 10), b.link("health-excluded-"+slugID(e.Reason))), num(pctAbs(float64(e.Rate)), "")})
		}
		bl = append(bl, et)
		bl = append(bl, b.noOutcomeBlocks(h.NoOutcomes)...) // nooutcome.go
		ig := h.IgnoredRows
		lines := []string{fmt.Sprintf("ignored exposure rows: %d before start, %d at or after end, %d without unit, %d without time, %d without a variant (they count for the trigger time only)", ig["before_start"], ig["after_end"], ig["null_unit"], ig["null_time"], ig["null_variant"])}
		srcs := make([]string, 0, len(h.IgnoredOutcomeRows))
		for src := range h.IgnoredOutcomeRows {
			srcs = append(srcs, src)
		}
		sort.Strings(srcs)
		for _, src := range srcs {
			o := h.IgnoredOutcomeRows[src]
			lines = append(lines, fmt.Sprintf("ignored rows of %s: %d without unit, %d without time", src, o["null_unit"], o["null_time"]))
		}
		for _, u := range h.UnknownVariants {
			line := fmt.Sprintf("!! undeclared variant value %q on %d triggered units (excluded)", u.Value, u.Units)
			if u.Suggests != "" {
				line += fmt.Sprintf("; did you mean %q?", u.Suggests)
			}
			lines = append(lines, line)
		}
		bl = append(bl, paras(lines, "– ")...)
	}
	// Funnel: triggered, eligible, mature (primary window) per arm.
	var prim *MetricInfo
	for i := range r.Metrics {
		if r.Metrics[i].Role == "primary" {
			prim = &r.Metrics[i]
			break
		}
	}
	stages := []string{"triggered", "eligible"}
	if prim != nil {
		stages = append(stages, "mature ("+prim.Name+")")
	}
	fn := html.Funnel{ID: "funnel", Title: "Units per stage and arm", Stages: stages}
	for _, v := range r.Experiment.Variants {
		trig := float64(v.TriggeredUnits)
		if !h.Available {
			trig = math.NaN()
		}
		vals := []float64{trig, float64(v.EligibleUnits)}
		if prim != nil {
			mature := math.NaN()
			for _, vv := range prim.Variants {
				if vv.Variant == v.Name {
					mature = float64(vv.N)
				}
			}
			vals = append(vals, mature)
		}
		fn.Series = append(fn.Series, html.Series{Name: v.Name, Values: vals})
	}
	bl = append(bl, fn)
	// Daily exposed units per arm.
	var days []string
	seen := map[string]bool{}
	per := map[[2]string]float64{}
	for _, d := range h.Daily {
		if !seen[d.Day] {
			seen[d.Day] = true
			days = append(days, d.Day)
		}
		per[[2]string{d.Day, d.Variant}] += float64(d.ExposedUnits)
	}
	sort.Strings(days)
	if len(days) > 0 {
		bars := html.Bars{ID: "daily-exposures", Title: "Exposed units per day and arm (exposures in the analysis window)", Groups: days, YLabel: "exposed units"}
		for _, v := range r.Experiment.Variants {
			s := html.Series{Name: v.Name}
			for _, d := range days {
				s.Values = append(s.Values, per[[2]string{d, v.Name}])
			}
			bars.Series = append(bars.Series, s)
		}
		bl = append(bl, bars)
		if l := b.link("health-exposures"); l != "" {
			bl = append(bl, html.Table{ID: "table-daily-source", Caption: "Source of the daily counts", Header: []string{"count", "health query row"},
				Rows: [][]html.Cell{{txt("exposed units per day and arm"), {Text: "exposures", Link: l}}, {txt("triggered units per day and arm"), {Text: "triggers", Link: b.link("health-triggers")}}}})
		}
	}
	if ds := h.SampleRatioDaily.Days; len(ds) > 0 {
		t := html.Table{ID: "table-daily-srm", Caption: "Sample ratio of each day's newly triggered units", Header: []string{"day", "triggered", "chi-square", "p-value", "check"}}
		for _, d := range ds {
			check := "ok"
			if d.Alarm {
				check = "!! ALARM"
			} else if d.Reason != "" {
				check = "not tested: " + d.Reason
			}
			t.Rows = append(t.Rows, []html.Cell{txt(d.Day), num(strconv.FormatInt(d.Units, 10), b.link("health-triggers")), num(fmtNum(d.Statistic), ""), num(fmtP(float64(d.PValue)), ""), txt(check)})
		}
		bl = append(bl, html.Details{Summary: fmt.Sprintf("Sample ratio by trigger day (%d days, %d alarm days)", len(ds), len(h.SampleRatioDaily.AlarmDays)), Blocks: []html.Block{t}})
	}
	return html.Section{ID: "health", Heading: "Health: exposures, sample ratio and units", Blocks: bl}
}

var (
	cteStart    = regexp.MustCompile("^[\"`]?([A-Za-z_][A-Za-z0-9_]*)[\"`]? AS (?:NOT MATERIALIZED |MATERIALIZED )?\\($")
	colLine     = regexp.MustCompile("AS [\"`]([A-Za-z_][A-Za-z0-9_]*)[\"`],?$")
	healthKind  = regexp.MustCompile(`^\s+SELECT '([a-z_]+)' AS kind, (?:'([^']*)'|NULL) AS reason, (?:'([^']*)'|NULL) AS source`)
	commentLine = regexp.MustCompile(`^--`)
)

// sqlSection splits each statement into fragments: the comments and text
// before the first CTE, one fragment per CTE (with the comments above it),
// and the final SELECT, whose result columns (per-variant query) or row
// kinds (health query) are fragments of their own.
func (b *htmlBuilder) sqlSection(q compiler.Queries, dialect string) *html.Section {
	if q.Main == "" {
		return nil
	}
	var bl []html.Block
	bl = append(bl, html.Paragraph{Text: fmt.Sprintf("The %s SQL that produced these numbers, as assay compile prints it. Numbers in the tables link here: a per-arm value to its result column, a CTE name to the CTE.", dialect)})
	stmts := []struct{ name, caption, text string }{
		{"setup", "Setup: the cohort table", q.Setup},
		{"main", "Per-variant statistics (the numbers of every metric table)", q.Main},
	}
	for i, bq := range q.Breakdowns {
		// Dialects without GROUPING SETS: one query per breakdown, with the
		// same columns as the main query (whose anchors the tables use).
		stmts = append(stmts, struct{ name, caption, text string }{fmt.Sprintf("breakdown%d", i+1), fmt.Sprintf("Breakdown query %d (same columns as the per-variant query)", i+1), bq})
	}
	stmts = append(stmts, struct{ name, caption, text string }{"health", "Health counts (exposures, triggers, exclusions)", q.Health})
	for _, st := range stmts {
		if st.text == "" {
			continue
		}
		bl = append(bl, html.SQL{ID: "sql-" + st.name, Caption: st.caption, Fragments: b.fragments(st.name, st.text)})
	}
	if q.Cleanup != "" {
		bl = append(bl, html.SQL{ID: "sql-cleanup", Caption: "Cleanup", Fragments: []html.SQLFragment{{Text: strings.TrimRight(q.Cleanup, "\n")}}})
	}
	return &html.Section{ID: "sql", Heading: "SQL", Blocks: bl}
}

func (b *htmlBuilder) fragments(stmt, text string) []html.SQLFragment {
	var out []html.SQLFragment
	cur := &html.SQLFragment{}
	var lines []string
	flush := func() {
		if len(lines) > 0 {
			cur.Text = strings.Join(lines, "\n")
			out = append(out, *cur)
		}
		cur, lines = &html.SQLFragment{}, nil
	}
	uniq := func(id string) string {
		base, k := id, 2
		for b.ids[id] {
			id = base + "-" + strconv.Itoa(k)
			k++
		}
		b.ids[id] = true
		return id
	}
	top := true       // between CTEs: a comment there starts the next fragment
	inSelect := false // inside the final SELECT
	pending := false  // cur holds only comments so far
	for _, ln := range strings.Split(strings.TrimRight(text, "\n"), "\n") {
		switch {
		case !inSelect && top && commentLine.MatchString(ln):
			if !pending {
				flush()
				pending = true
			}
		case !inSelect && cteStart.MatchString(ln):
			name := cteStart.FindStringSubmatch(ln)[1]
			if !pending {
				flush()
			}
			cur.Name, cur.ID = name, uniq("cte-"+stmt+"-"+slugID(name))
			pending, top = false, false
		case !inSelect && strings.HasPrefix(ln, "SELECT") && (top || pending):
			if !pending {
				flush()
			}
			cur.Name, cur.ID = "final SELECT", uniq("sql-"+stmt+"-select")
			pending, inSelect = false, true
		case inSelect && stmt == "main" && colLine.MatchString(ln) && !strings.HasPrefix(ln, "--") && !strings.HasPrefix(strings.TrimSpace(ln), "--"):
			flush()
			cur.ID = uniq(colID(colLine.FindStringSubmatch(ln)[1]))
			lines = append(lines, ln)
			flush()
			continue
		case inSelect && stmt == "health" && healthKind.MatchString(ln):
			flush()
			m := healthKind.FindStringSubmatch(ln)
			id := "health-" + m[1]
			if m[2] != "" {
				id += "-" + slugID(m[2])
			}
			if m[3] != "" {
				id += "-" + slugID(m[3])
			}
			cur.ID = uniq(id)
		case inSelect && stmt == "health" && strings.TrimSpace(ln) == "UNION ALL":
			flush()
		default:
			if strings.HasPrefix(ln, ")") {
				top = true
			}
			if ln == "WITH" {
				top = true
			}
			pending = false
		}
		lines = append(lines, ln)
	}
	flush()
	return out
}

// UnmarshalJSON implements json.Unmarshaler: null (how MarshalJSON writes
// NaN and infinities) reads back as NaN, so a report read from its JSON
// formats "n/a" where the original did.
func (n *Num) UnmarshalJSON(b []byte) error {
	if string(b) == "null" {
		*n = Num(math.NaN())
		return nil
	}
	f, err := strconv.ParseFloat(string(b), 64)
	if err != nil {
		return fmt.Errorf("report: number %s: %w", b, err)
	}
	*n = Num(f)
	return nil
}

// ExpectedNumbers lists the numbers of the report, formatted as the HTML
// page shows them, that a reader must find on the page: every arm's n,
// value and standard error; every comparison's difference, interval,
// relative change, relative interval and p-values, overall and per
// segment value (trigger days included); guard bounds and p-values; CUPED
// adjusted values, theta, variance reduction and the unadjusted
// comparison; always-valid intervals; immature units; variant-mix and
// heterogeneity tests; units per arm and stage, exclusions, ignored rows,
// the sample-ratio tests overall and by day, and the daily exposed units.
// Test statistics and degrees of freedom of the comparisons, which no
// format prints, are left out. scripts/browser-check looks for each in the
// rendered page.
func ExpectedNumbers(r *Report) []string {
	set := map[string]bool{}
	add := func(ss ...string) {
		for _, s := range ss {
			if s != "" && s != "n/a" && s != "-" && strings.ContainsAny(s, "0123456789") {
				set[s] = true
			}
		}
	}
	cmp := func(c Compare, withAdj bool) {
		add(signed(c.Difference), signed(c.CILow), signed(c.CIHigh), pct(float64(c.Relative)), fmtP(float64(c.PValue)))
		if c.RelativeCILow.OK() && c.RelativeCIHigh.OK() {
			add(pct(float64(c.RelativeCILow)), pct(float64(c.RelativeCIHigh)))
		}
		if withAdj {
			add(fmtP(float64(c.PValueAdjusted)))
		}
	}
	for _, m := range r.Metrics {
		for _, v := range m.Variants {
			add(strconv.FormatInt(v.N, 10), fmtNum(v.Value), fmtNum(v.StdError))
		}
		if m.ImmatureUnits > 0 {
			add(strconv.FormatInt(m.ImmatureUnits, 10))
		}
		for _, c := range m.Comparisons {
			cmp(c, !(c.Family == FamilyGuard || (c.Family == FamilyPrimary && len(m.Comparisons) == 1)))
			if g := c.Guard; g != nil && g.Reason == "" {
				add(pct(float64(g.Lower)), pct(float64(g.Upper)), fmtP(float64(g.HarmPValue)), fmtP(float64(g.PValue)))
			}
			if cu := c.CUPED; cu != nil && cu.NotApplied == "" {
				u := cu.Unadjusted
				add(fmtNum(cu.BaselineValue), fmtNum(cu.BaselineStdError), fmtNum(cu.VariantValue), fmtNum(cu.VariantStdError),
					fmtNum(cu.Theta), pctAbs(float64(cu.VarianceReduction)), signed(u.Difference), signed(u.CILow), signed(u.CIHigh), fmtP(float64(u.PValue)))
			}
			if sq := c.Sequential; sq != nil && sq.Reason == "" {
				add(signed(sq.CILow), signed(sq.CIHigh), fmtP(float64(sq.PValue)))
			}
		}
	}
	for _, seg := range r.Segments {
		if mix := seg.VariantMix; mix.Reason == "" {
			add(fmtNum(mix.Statistic), fmtP(float64(mix.PValue)))
		}
		for _, sm := range seg.Metrics {
			for _, row := range sm.Rows {
				for _, v := range row.Variants {
					add(strconv.FormatInt(v.N, 10))
				}
				for _, c := range row.Comparisons {
					cmp(c, true)
				}
			}
			for _, chk := range sm.Checks {
				if chk.Reason == "" {
					add(fmtNum(chk.Q), fmtP(float64(chk.PValue)), pctAbs(float64(chk.I2)))
				}
			}
		}
	}
	for _, v := range r.Experiment.Variants {
		add(strconv.FormatInt(v.EligibleUnits, 10), pctAbs(float64(v.EligibleShare)))
		if r.Health.Available {
			add(strconv.FormatInt(v.TriggeredUnits, 10))
		}
	}
	h := r.Health
	if h.SampleRatio.Reason == "" {
		add(fmtNum(h.SampleRatio.Statistic), fmtP(float64(h.SampleRatio.PValue)))
	}
	if h.Available {
		if st := h.SampleRatioTriggered; st.Reason == "" {
			add(fmtNum(st.Statistic), fmtP(float64(st.PValue)))
		}
		add(strconv.FormatInt(h.ExposedUnits, 10), strconv.FormatInt(h.Triggered, 10), strconv.FormatInt(h.Eligible, 10), strconv.FormatInt(h.NeverTriggered, 10))
		for _, e := range h.Exclusions {
			add(strconv.FormatInt(e.Units, 10), pctAbs(float64(e.Rate)))
		}
		for _, n := range h.IgnoredRows {
			add(strconv.FormatInt(n, 10))
		}
		for _, o := range h.IgnoredOutcomeRows {
			for _, n := range o {
				add(strconv.FormatInt(n, 10))
			}
		}
		for _, u := range h.UnknownVariants {
			add(strconv.FormatInt(u.Units, 10))
		}
		declared := map[string]bool{}
		for _, v := range r.Experiment.Variants {
			declared[v.Name] = true
		}
		for _, d := range h.Daily {
			if declared[d.Variant] {
				add(strconv.FormatInt(d.ExposedUnits, 10))
			}
		}
		for _, d := range h.SampleRatioDaily.Days {
			add(strconv.FormatInt(d.Units, 10), fmtNum(d.Statistic), fmtP(float64(d.PValue)))
		}
	}
	out := make([]string, 0, len(set))
	for s := range set {
		out = append(out, s)
	}
	sort.Strings(out)
	return out
}
