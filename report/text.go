package report

import (
	"fmt"
	"math"
	"sort"
	"strconv"
	"strings"
)

// pct formats a change as a signed percentage.
func pct(f float64) string {
	if math.IsNaN(f) || math.IsInf(f, 0) {
		return "n/a"
	}
	return fmt.Sprintf("%+.2f%%", f*100)
}

// pctAbs formats a share or a margin: a percentage without a sign.
func pctAbs(f float64) string {
	if math.IsNaN(f) || math.IsInf(f, 0) {
		return "n/a"
	}
	return fmt.Sprintf("%.2f%%", f*100)
}

// fmtP formats a p-value as a number (for table cells).
func fmtP(p float64) string {
	switch {
	case math.IsNaN(p):
		return "n/a"
	case p == 0:
		return "< 1e-300"
	case p < 1e-4:
		return fmt.Sprintf("%.1e", p)
	}
	return strconv.FormatFloat(p, 'f', 4, 64)
}

// pEquals formats a p-value for a sentence: "p = 0.0123" or "p < 1e-300".
func pEquals(p float64) string {
	if p == 0 {
		return "p < 1e-300"
	}
	return "p = " + fmtP(p)
}

// fmtNum formats a statistic with 4 significant decimals.
func fmtNum(f Num) string {
	v := float64(f)
	if !f.OK() {
		return "n/a"
	}
	a := math.Abs(v)
	switch {
	case a == 0:
		return "0"
	case a >= 1e6 || a < 1e-4:
		return strconv.FormatFloat(v, 'e', 3, 64)
	case a >= 100:
		return strconv.FormatFloat(v, 'f', 2, 64)
	}
	return strconv.FormatFloat(v, 'f', 4, 64)
}

func signed(f Num) string {
	s := fmtNum(f)
	if f.OK() && float64(f) > 0 {
		return "+" + s
	}
	return s
}

// roleOrder is the reading order: health checks (guards among them) before
// any effect, then the primary metric, the mechanism, the secondaries.
var roleOrder = []struct{ role, title string }{
	{"guard", "Guard metrics (is anything harmed?)"},
	{"primary", "Primary metric"},
	{"mechanism", "Mechanism metrics (should move first, if the hypothesis holds)"},
	{"secondary", "Secondary metrics"},
}

// Text renders the report for a terminal.
func (r *Report) Text() string { return r.document().text() }

// Markdown renders the report for a pull request or a wiki page: it holds
// everything Text does, with detail folded (MarkdownCapped), up to
// MarkdownLimit bytes.
func (r *Report) Markdown() string { return r.MarkdownCapped(MarkdownLimit) }

func oneLine(s string) string { return strings.Join(strings.Fields(s), " ") }

// document builds the shared view of the report.
func (r *Report) document() *document {
	d := &document{}
	e := r.Experiment
	d.heading(1, "assay %s: experiment %s", r.ToolVersion, e.ID)
	d.para("Exposures in [%s, %s), outcomes as of %s, time zone %s, %g%% intervals.", e.Start, e.End, e.AsOf, e.TimeZone, e.Confidence*100)
	opts := e.CompileOptions
	d.para("Spec fingerprint %s; compile options %s; result fingerprint %s.", e.SpecFingerprint, opts, e.Fingerprint)
	r.summaryDoc(d)
	r.planDoc(d) // planning.go
	for _, a := range r.Alarms {
		d.alarm(a)
	}
	r.healthDoc(d)
	r.rolloutDoc(d) // rollout.go
	r.timingDoc(d)  // timing.go
	for _, ro := range roleOrder {
		var ms []MetricInfo
		for _, m := range r.Metrics {
			if m.Role == ro.role {
				ms = append(ms, m)
			}
		}
		if len(ms) == 0 {
			continue
		}
		d.heading(2, "%s", ro.title)
		for _, m := range ms {
			metricDoc(d, m)
		}
	}
	r.priorApartDoc(d) // prior.go
	for _, seg := range r.Segments {
		segmentDoc(d, seg)
	}
	d.heading(2, "Cautions")
	d.list(r.Cautions)
	return d
}

func (r *Report) healthDoc(d *document) {
	h := r.Health
	d.heading(2, "Health")
	if !h.Available {
		d.para("Health counts: not available (no health result was given); sample ratio, exclusions and ignored rows are unknown, not zero.")
	}
	t := &table{head: []string{"variant", "planned", "triggered", "eligible", "eligible share"}, left: 1}
	for _, v := range r.Experiment.Variants {
		name := v.Name
		if v.Baseline {
			name += " (baseline)"
		}
		trig := strconv.FormatInt(v.TriggeredUnits, 10)
		if !h.Available {
			trig = "n/a"
		}
		t.rows = append(t.rows, []string{name, pctAbs(v.PlannedWeight), trig, strconv.FormatInt(v.EligibleUnits, 10), pctAbs(float64(v.EligibleShare))})
	}
	d.tab(t)
	sr := h.SampleRatio
	verdict := "ok"
	if sr.Alarm {
		verdict = "ALARM"
	}
	if sr.Reason != "" {
		d.para("Sample ratio (eligible units): not tested (%s).", sr.Reason)
	} else {
		d.para("Sample ratio (eligible units): chi-square %s, df %g, %s (alarm below %g): %s.", fmtNum(sr.Statistic), float64(sr.DF), pEquals(float64(sr.PValue)), sr.Alpha, verdict)
	}
	if !h.Available {
		return
	}
	d.para("Units: %d exposed, %d never triggered (no qualifying exposure), %d triggered, %d eligible.", h.ExposedUnits, h.NeverTriggered, h.Triggered, h.Eligible)
	var items []string
	for _, e := range h.Exclusions {
		if e.Units == 0 && e.Reason != "any" {
			continue
		}
		items = append(items, fmt.Sprintf("excluded (%s): %d units, %s of triggered", e.Reason, e.Units, pctAbs(float64(e.Rate))))
	}
	ig := h.IgnoredRows
	items = append(items, fmt.Sprintf("ignored exposure rows: %d before start, %d at or after end, %d without unit, %d without time", ig["before_start"], ig["after_end"], ig["null_unit"], ig["null_time"]))
	if n := ig["null_variant"]; n > 0 {
		items = append(items, fmt.Sprintf("exposure rows without a variant: %d (they count for the trigger time, never for the variant)", n))
	}
	srcs := make([]string, 0, len(h.IgnoredOutcomeRows))
	for src := range h.IgnoredOutcomeRows {
		srcs = append(srcs, src)
	}
	sort.Strings(srcs)
	for _, src := range srcs {
		if o := h.IgnoredOutcomeRows[src]; o["null_unit"]+o["null_time"] > 0 {
			items = append(items, fmt.Sprintf("ignored rows of %s: %d without unit, %d without time", src, o["null_unit"], o["null_time"]))
		}
	}
	items = append(items, h.NoOutcomes.healthItems()...)
	d.list(items)
	if len(h.UnknownVariants) > 0 {
		var vs []string
		for _, u := range h.UnknownVariants {
			s := fmt.Sprintf("%q: %d units", u.Value, u.Units)
			if u.Suggests != "" {
				s += fmt.Sprintf(" (did you mean %q?)", u.Suggests)
			}
			vs = append(vs, s)
		}
		d.para("Undeclared variant values on triggered units (excluded), most frequent first:")
		d.list(vs)
	}
}

func metricDoc(d *document, m MetricInfo) {
	title := m.Name
	if m.Label != "" {
		title += " — " + m.Label
	}
	d.heading(3, "%s [%s, window %s to %s]", title, m.Kind, m.Window[0], m.Window[1])
	if m.Rule != "" {
		d.para("Definition: %s.", m.Rule)
	}
	cuped := m.Covariate != nil
	diffHead := "difference"
	if cuped {
		diffHead = "difference (CUPED)"
	}
	t := &table{head: []string{"variant", "n", "value", "std.err", diffHead, "interval", "relative", "interval", "p-value", "adj. p"}, left: 1}
	cmp := map[string]Compare{}
	for _, c := range m.Comparisons {
		cmp[c.Variant] = c
	}
	var notes []string
	for i, v := range m.Variants {
		if v.Reason != "" {
			notes = append(notes, fmt.Sprintf("%s: %s", v.Variant, v.Reason))
		}
		n := strconv.FormatInt(v.N, 10)
		if i == 0 {
			t.rows = append(t.rows, []string{v.Variant + " (baseline)", n, fmtNum(v.Value), fmtNum(v.StdError), "", "", "", "", "", ""})
			continue
		}
		c := cmp[v.Variant]
		adj := fmtP(float64(c.PValueAdjusted))
		if c.Family == FamilyGuard || (c.Family == FamilyPrimary && len(m.Comparisons) == 1) {
			adj = "-"
		}
		t.rows = append(t.rows, []string{v.Variant, n, fmtNum(v.Value), fmtNum(v.StdError), signed(c.Difference),
			"[" + signed(c.CILow) + ", " + signed(c.CIHigh) + "]", pct(float64(c.Relative)),
			"[" + pct(float64(c.RelativeCILow)) + ", " + pct(float64(c.RelativeCIHigh)) + "]", fmtP(float64(c.PValue)), adj})
		if c.Reason != "" {
			notes = append(notes, fmt.Sprintf("%s vs %s: %s", v.Variant, c.Baseline, c.Reason))
		} else if c.RelReason != "" {
			notes = append(notes, fmt.Sprintf("%s vs %s: relative change undefined: %s", v.Variant, c.Baseline, c.RelReason))
		}
	}
	d.tab(t)
	var lines []string
	if len(m.Comparisons) > 0 {
		lines = append(lines, "method: "+m.Comparisons[0].Method)
	}
	if cuped {
		lines = append(lines, fmt.Sprintf("CUPED: the difference is adjusted for %s (%s); the value column is unadjusted", m.Covariate.Metric, m.Covariate.Rule))
		for _, c := range m.Comparisons {
			if c.CUPED == nil {
				continue
			}
			if c.CUPED.NotApplied != "" {
				lines = append(lines, fmt.Sprintf("CUPED %s vs %s: not applied (%s); the difference shown is unadjusted", c.Variant, c.Baseline, c.CUPED.NotApplied))
				continue
			}
			u := c.CUPED.Unadjusted
			theta := "theta " + fmtNum(c.CUPED.Theta)
			if len(c.CUPED.StepThetas) > 0 {
				var ts []string
				for _, th := range c.CUPED.StepThetas {
					ts = append(ts, fmtNum(th))
				}
				theta = "theta by rollout step " + strings.Join(ts, ", ")
			}
			lines = append(lines, fmt.Sprintf("CUPED %s vs %s: adjusted values %s %s (std.err %s) and %s %s (std.err %s); %s, variance reduction %s; unadjusted difference %s [%s, %s], %s",
				c.Variant, c.Baseline, c.Baseline, fmtNum(c.CUPED.BaselineValue), fmtNum(c.CUPED.BaselineStdError), c.Variant, fmtNum(c.CUPED.VariantValue), fmtNum(c.CUPED.VariantStdError),
				theta, pctAbs(float64(c.CUPED.VarianceReduction)), signed(u.Difference), signed(u.CILow), signed(u.CIHigh), pEquals(float64(u.PValue))))
		}
	}
	for _, c := range m.Comparisons {
		if sq := c.Sequential; sq != nil {
			if sq.Reason != "" {
				lines = append(lines, fmt.Sprintf("always-valid (sequential) %s: undefined (%s)", c.Variant, sq.Reason))
			} else {
				lines = append(lines, fmt.Sprintf("always-valid (sequential) %s: difference interval [%s, %s], %s", c.Variant, signed(sq.CILow), signed(sq.CIHigh), pEquals(float64(sq.PValue))))
			}
		}
	}
	for _, c := range m.Comparisons {
		if c.Guard != nil {
			g := c.Guard
			line := fmt.Sprintf("guard (%s harmful, margin %s): %s: %s", m.Harmful, pctAbs(*m.Margin), c.Variant, g.Verdict)
			if g.Alarming {
				line = "!! " + line
			}
			if g.Reason != "" {
				line += " (" + g.Reason + ")"
			} else {
				line += fmt.Sprintf(" (one-sided %g%% bounds of the relative change %s to %s; harm %s, non-inferiority %s)", g.Level*100, pct(float64(g.Lower)), pct(float64(g.Upper)), pEquals(float64(g.HarmPValue)), pEquals(float64(g.PValue)))
			}
			lines = append(lines, line)
		}
	}
	if m.ImmatureUnits > 0 {
		lines = append(lines, fmt.Sprintf("left out: %d eligible units whose window had not elapsed", m.ImmatureUnits))
	}
	if m.NonFiniteRows > 0 {
		lines = append(lines, fmt.Sprintf("left out of the sums: %d outcome rows whose value was not a finite number", m.NonFiniteRows))
	}
	for _, n := range notes {
		lines = append(lines, "note: "+n)
	}
	d.list(lines)
}

func segmentDoc(d *document, seg Segment) {
	d.open("Breakdown by %s", seg.Name)
	mix := seg.VariantMix
	if mix.Reason != "" {
		d.para("Variant mix across values: not tested (%s).", mix.Reason)
	} else {
		verdict := "ok"
		if mix.Alarm {
			verdict = "IMBALANCED"
		}
		d.para("Variant mix across values: chi-square %s, df %g, %s: %s.", fmtNum(mix.Statistic), float64(mix.DF), pEquals(float64(mix.PValue)), verdict)
	}
	for _, sm := range seg.Metrics {
		d.heading(3, "%s by %s", sm.Metric, seg.Name)
		t := &table{head: []string{"value", "variant", "n (baseline)", "n (variant)", "difference", "interval", "relative", "p-value", "adj. p"}, left: 2}
		for _, row := range sm.Rows {
			n := map[string]int64{}
			for _, v := range row.Variants {
				n[v.Variant] = v.N
			}
			for _, c := range row.Comparisons {
				t.rows = append(t.rows, []string{row.Value, c.Variant, strconv.FormatInt(n[c.Baseline], 10), strconv.FormatInt(n[c.Variant], 10),
					signed(c.Difference), "[" + signed(c.CILow) + ", " + signed(c.CIHigh) + "]", pct(float64(c.Relative)), fmtP(float64(c.PValue)), fmtP(float64(c.PValueAdjusted))})
			}
		}
		d.tab(t)
		var lines []string
		for _, chk := range sm.Checks {
			if chk.Reason == "" {
				lines = append(lines, fmt.Sprintf("heterogeneity (%s): Cochran's Q %s, df %g, %s, I² %s", chk.Variant, fmtNum(chk.Q), float64(chk.DF), pEquals(float64(chk.PValue)), pctAbs(float64(chk.I2))))
			}
		}
		d.list(lines)
		for _, f := range sm.Flags {
			d.alarm(f)
		}
	}
	d.close()
}
