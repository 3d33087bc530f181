package report

import (
	"fmt"
	"math"
	"sort"
	"strconv"
	"strings"
	"text/tabwriter"
)

// pct formats a fraction as a signed percentage.
func pct(f float64) string {
	if math.IsNaN(f) || math.IsInf(f, 0) {
		return "n/a"
	}
	return fmt.Sprintf("%+.2f%%", f*100)
}

// fmtP formats a p-value.
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
	if f.OK() && float64(f) >= 0 {
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
func (r *Report) Text() string {
	var b strings.Builder
	e := r.Experiment
	fmt.Fprintf(&b, "assay %s: experiment %s (spec %s)\n", r.ToolVersion, e.ID, e.SpecFingerprint)
	fmt.Fprintf(&b, "Hypothesis: %s\n", oneLine(e.Hypothesis))
	fmt.Fprintf(&b, "Exposures in [%s, %s), outcomes as of %s, time zone %s, %g%% intervals.\n", e.Start, e.End, e.AsOf, e.TimeZone, e.Confidence*100)
	b.WriteByte('\n')
	if len(r.Alarms) > 0 {
		for _, a := range r.Alarms {
			fmt.Fprintf(&b, "!! %s\n", a)
		}
		b.WriteByte('\n')
	}
	r.healthText(&b)
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
		fmt.Fprintf(&b, "\n%s\n", ro.title)
		for _, m := range ms {
			metricText(&b, m)
		}
	}
	for _, seg := range r.Segments {
		segmentText(&b, seg)
	}
	b.WriteString("\nCautions\n")
	for _, c := range r.Cautions {
		fmt.Fprintf(&b, "  - %s\n", c)
	}
	return b.String()
}

func oneLine(s string) string { return strings.Join(strings.Fields(s), " ") }

func (r *Report) healthText(b *strings.Builder) {
	h := r.Health
	b.WriteString("Health\n")
	tw := tabwriter.NewWriter(b, 0, 0, 2, ' ', 0)
	fmt.Fprintln(tw, "  variant\tplanned\ttriggered\teligible\teligible share\t")
	for _, v := range r.Experiment.Variants {
		name := v.Name
		if v.Baseline {
			name += " (baseline)"
		}
		fmt.Fprintf(tw, "  %s\t%.1f%%\t%d\t%d\t%s\t\n", name, v.PlannedWeight*100, v.TriggeredUnits, v.EligibleUnits, strings.TrimPrefix(pct(ratio(float64(v.EligibleUnits), float64(h.Eligible))), "+"))
	}
	tw.Flush()
	sr := h.SampleRatio
	verdict := "ok"
	if sr.Alarm {
		verdict = "ALARM"
	}
	if sr.Reason != "" {
		fmt.Fprintf(b, "  sample ratio: not tested (%s)\n", sr.Reason)
	} else {
		fmt.Fprintf(b, "  sample ratio: chi-square %s, df %g, p = %s (alarm below %g): %s\n", fmtNum(sr.Statistic), float64(sr.DF), fmtP(float64(sr.PValue)), sr.Alpha, verdict)
	}
	fmt.Fprintf(b, "  units: %d exposed, %d never triggered (no qualifying exposure), %d triggered, %d eligible\n", h.ExposedUnits, h.NeverTriggered, h.Triggered, h.Eligible)
	for _, e := range h.Exclusions {
		if e.Units == 0 && e.Reason != "any" {
			continue
		}
		fmt.Fprintf(b, "  excluded (%s): %d units, %s of triggered\n", e.Reason, e.Units, strings.TrimPrefix(pct(float64(e.Rate)), "+"))
	}
	ig := h.IgnoredRows
	fmt.Fprintf(b, "  ignored exposure rows: %d before start, %d at or after end, %d without unit, %d without time\n", ig["before_start"], ig["after_end"], ig["null_unit"], ig["null_time"])
	srcs := make([]string, 0, len(h.IgnoredOutcomeRows))
	for src := range h.IgnoredOutcomeRows {
		srcs = append(srcs, src)
	}
	sort.Strings(srcs)
	for _, src := range srcs {
		if o := h.IgnoredOutcomeRows[src]; o["null_unit"]+o["null_time"] > 0 {
			fmt.Fprintf(b, "  ignored rows of %s: %d without unit, %d without time\n", src, o["null_unit"], o["null_time"])
		}
	}
}

func metricText(b *strings.Builder, m MetricInfo) {
	title := m.Name
	if m.Label != "" {
		title += " — " + m.Label
	}
	fmt.Fprintf(b, "  %s [%s, window %s to %s]\n", title, m.Kind, m.Window[0], m.Window[1])
	tw := tabwriter.NewWriter(b, 0, 0, 2, ' ', tabwriter.AlignRight)
	fmt.Fprintln(tw, "    variant\tn\tvalue\tstd.err\tdifference\tinterval\trelative\tinterval\tp-value\tadj. p\t")
	cmp := map[string]Compare{}
	for _, c := range m.Comparisons {
		cmp[c.Variant] = c
	}
	var immature int64
	var notes []string
	for i, v := range m.Variants {
		immature += v.Immature
		if v.Reason != "" {
			notes = append(notes, fmt.Sprintf("%s: %s", v.Variant, v.Reason))
		}
		if i == 0 {
			fmt.Fprintf(tw, "    %s\t%d\t%s\t%s\t\t\t\t\t\t\t\n", v.Variant, v.N, shownValue(v), shownSE(v))
			continue
		}
		c := cmp[v.Variant]
		adj := fmtP(float64(c.PValueAdjusted))
		if c.Family == "guard" || (c.Family == "primary" && len(m.Comparisons) == 1) {
			adj = "-"
		}
		fmt.Fprintf(tw, "    %s\t%d\t%s\t%s\t%s\t[%s, %s]\t%s\t[%s, %s]\t%s\t%s\t\n", v.Variant, v.N, shownValue(v), shownSE(v),
			signed(c.Difference), signed(c.CILow), signed(c.CIHigh), pct(float64(c.Relative)), pct(float64(c.RelativeCILow)), pct(float64(c.RelativeCIHigh)), fmtP(float64(c.PValue)), adj)
		if c.Reason != "" {
			notes = append(notes, fmt.Sprintf("%s vs %s: %s", v.Variant, c.Baseline, c.Reason))
		} else if c.RelReason != "" {
			notes = append(notes, fmt.Sprintf("%s vs %s: relative change undefined: %s", v.Variant, c.Baseline, c.RelReason))
		}
	}
	tw.Flush()
	if len(m.Comparisons) > 0 {
		fmt.Fprintf(b, "    method: %s\n", m.Comparisons[0].Method)
	}
	if m.Covariate != nil {
		fmt.Fprintf(b, "    CUPED: values are adjusted for %s before the trigger (window %s to %s)\n", m.Covariate.Metric, m.Covariate.Window[0], m.Covariate.Window[1])
		for _, c := range m.Comparisons {
			if c.CUPED == nil {
				continue
			}
			u := c.CUPED.Unadjusted
			fmt.Fprintf(b, "      %s: theta %s, variance reduction %s; unadjusted difference %s [%s, %s], p = %s\n", c.Variant, fmtNum(c.CUPED.Theta),
				strings.TrimPrefix(pct(float64(c.CUPED.VarianceReduction)), "+"), signed(u.Difference), signed(u.CILow), signed(u.CIHigh), fmtP(float64(u.PValue)))
		}
	}
	for _, c := range m.Comparisons {
		if sq := c.Sequential; sq != nil {
			if sq.Reason != "" {
				fmt.Fprintf(b, "    always-valid (sequential) %s: undefined (%s)\n", c.Variant, sq.Reason)
			} else {
				fmt.Fprintf(b, "    always-valid (sequential) %s: difference interval [%s, %s], p = %s\n", c.Variant, signed(sq.CILow), signed(sq.CIHigh), fmtP(float64(sq.PValue)))
			}
		}
	}
	for _, c := range m.Comparisons {
		if c.Guard != nil {
			line := fmt.Sprintf("    guard (%s harmful, margin %s): %s: %s", m.Harmful, strings.TrimPrefix(pct(*m.Margin), "+"), c.Variant, c.Guard.Verdict)
			if c.Guard.Reason != "" {
				line += " (" + c.Guard.Reason + ")"
			} else {
				line += fmt.Sprintf(" (one-sided bound %s, non-inferiority p = %s)", pct(float64(c.Guard.Bound)), fmtP(float64(c.Guard.PValue)))
			}
			b.WriteString(line + "\n")
		}
	}
	if immature > 0 {
		fmt.Fprintf(b, "    left out: %d eligible units whose window had not elapsed\n", immature)
	}
	for _, n := range notes {
		fmt.Fprintf(b, "    note: %s\n", n)
	}
}

// shownValue is the adjusted value when CUPED applies, else the plain one.
func shownValue(v VariantVal) string {
	if v.AdjustedValue != nil {
		return fmtNum(*v.AdjustedValue) + "*"
	}
	return fmtNum(v.Value)
}

func shownSE(v VariantVal) string {
	if v.AdjustedStdError != nil {
		return fmtNum(*v.AdjustedStdError)
	}
	return fmtNum(v.StdError)
}

// Markdown renders the report for a pull request or a wiki page.
func (r *Report) Markdown() string {
	var b strings.Builder
	e := r.Experiment
	fmt.Fprintf(&b, "# Experiment `%s`\n\n", e.ID)
	fmt.Fprintf(&b, "> %s\n\n", oneLine(e.Hypothesis))
	fmt.Fprintf(&b, "Exposures in [%s, %s), outcomes as of %s, time zone %s, %g%% intervals. Spec fingerprint `%s`, assay %s.\n\n", e.Start, e.End, e.AsOf, e.TimeZone, e.Confidence*100, e.SpecFingerprint, r.ToolVersion)
	for _, a := range r.Alarms {
		fmt.Fprintf(&b, "**%s**\n\n", a)
	}
	b.WriteString("## Health\n\n| variant | planned | triggered | eligible |\n|---|---:|---:|---:|\n")
	for _, v := range r.Experiment.Variants {
		fmt.Fprintf(&b, "| %s | %.1f%% | %d | %d |\n", mdEscape(v.Name), v.PlannedWeight*100, v.TriggeredUnits, v.EligibleUnits)
	}
	sr := r.Health.SampleRatio
	fmt.Fprintf(&b, "\nSample ratio: chi-square %s, p = %s (alarm below %g).\n\n", fmtNum(sr.Statistic), fmtP(float64(sr.PValue)), sr.Alpha)
	for _, ex := range r.Health.Exclusions {
		if ex.Units > 0 {
			fmt.Fprintf(&b, "- excluded (%s): %d units\n", mdEscape(ex.Reason), ex.Units)
		}
	}
	for _, ro := range roleOrder {
		first := true
		for _, m := range r.Metrics {
			if m.Role != ro.role {
				continue
			}
			if first {
				fmt.Fprintf(&b, "\n## %s\n", ro.title)
				first = false
			}
			fmt.Fprintf(&b, "\n### `%s` %s\n\n%s, window %s to %s.\n\n", m.Name, mdEscape(m.Label), m.Kind, m.Window[0], m.Window[1])
			b.WriteString("| variant | n | value | std. err. | difference | interval | relative | interval | p-value |\n|---|---:|---:|---:|---:|---:|---:|---:|---:|\n")
			cmp := map[string]Compare{}
			for _, c := range m.Comparisons {
				cmp[c.Variant] = c
			}
			for i, v := range m.Variants {
				if i == 0 {
					fmt.Fprintf(&b, "| %s (baseline) | %d | %s | %s | | | | | |\n", mdEscape(v.Variant), v.N, fmtNum(v.Value), fmtNum(v.StdError))
					continue
				}
				c := cmp[v.Variant]
				fmt.Fprintf(&b, "| %s | %d | %s | %s | %s | [%s, %s] | %s | [%s, %s] | %s |\n", mdEscape(v.Variant), v.N, fmtNum(v.Value), fmtNum(v.StdError),
					signed(c.Difference), signed(c.CILow), signed(c.CIHigh), pct(float64(c.Relative)), pct(float64(c.RelativeCILow)), pct(float64(c.RelativeCIHigh)), fmtP(float64(c.PValue)))
			}
			for _, c := range m.Comparisons {
				if c.Guard != nil {
					fmt.Fprintf(&b, "\nGuard (%s harmful, margin %s), %s: **%s**.\n", m.Harmful, strings.TrimPrefix(pct(*m.Margin), "+"), mdEscape(c.Variant), c.Guard.Verdict)
				}
			}
		}
	}
	b.WriteString("\n## Cautions\n\n")
	for _, c := range r.Cautions {
		fmt.Fprintf(&b, "- %s\n", c)
	}
	return b.String()
}

func mdEscape(s string) string {
	r := strings.NewReplacer("|", `\|`, "\n", " ", "<", "&lt;", ">", "&gt;")
	return r.Replace(s)
}

func segmentText(b *strings.Builder, seg Segment) {
	fmt.Fprintf(b, "\nSegments by %s\n", seg.Name)
	mix := seg.VariantMix
	if mix.Reason != "" {
		fmt.Fprintf(b, "  variant mix across values: not tested (%s)\n", mix.Reason)
	} else {
		verdict := "ok"
		if mix.Alarm {
			verdict = "IMBALANCED"
		}
		fmt.Fprintf(b, "  variant mix across values: chi-square %s, df %g, p = %s: %s\n", fmtNum(mix.Statistic), float64(mix.DF), fmtP(float64(mix.PValue)), verdict)
	}
	for _, sm := range seg.Metrics {
		fmt.Fprintf(b, "  %s\n", sm.Metric)
		tw := tabwriter.NewWriter(b, 0, 0, 2, ' ', tabwriter.AlignRight)
		fmt.Fprintln(tw, "    value\tvariant\tn\tdifference\tinterval\trelative\tp-value\tadj. p\t")
		for _, row := range sm.Rows {
			n := map[string]int64{}
			for _, v := range row.Variants {
				n[v.Variant] = v.N
			}
			for _, c := range row.Comparisons {
				fmt.Fprintf(tw, "    %s\t%s\t%d/%d\t%s\t[%s, %s]\t%s\t%s\t%s\t\n", row.Value, c.Variant, n[c.Baseline], n[c.Variant],
					signed(c.Difference), signed(c.CILow), signed(c.CIHigh), pct(float64(c.Relative)), fmtP(float64(c.PValue)), fmtP(float64(c.PValueAdjusted)))
			}
		}
		tw.Flush()
		for _, chk := range sm.Checks {
			if chk.Reason == "" {
				fmt.Fprintf(b, "    heterogeneity (%s): Cochran's Q %s, df %g, p = %s, I² %s\n", chk.Variant, fmtNum(chk.Q), float64(chk.DF), fmtP(float64(chk.PValue)), strings.TrimPrefix(pct(float64(chk.I2)), "+"))
			}
		}
		for _, f := range sm.Flags {
			fmt.Fprintf(b, "    !! %s\n", f)
		}
	}
}
