package report

import (
	"fmt"
	"math"
	"sort"
	"strings"
	"time"
)

// Summary is the one-screen reading of a report, computed from the report
// itself (Report.Summarize): the hypothesis, whether the mechanism and the
// primary metric moved, the guard verdicts (alarming first), the health
// checks, whether the look is interim or final, and what the evidence
// cannot say. It never gives a ship or no-ship verdict: many good decisions
// rest on things no metric measures, and the summary leaves room for them.
type Summary struct {
	Hypothesis string `json:"hypothesis"`
	// Look is "final" (as-of at or after the planned end) or "interim".
	Look string `json:"look"`
	// Monitoring is "sequential" when the report carries always-valid
	// intervals, else "fixed".
	Monitoring string `json:"monitoring"`
	// Alpha is 1 − confidence: an effect "moved" when its p-value (adjusted
	// where its family is adjusted; always-valid under sequential
	// monitoring) is below it.
	Alpha     float64         `json:"alpha"`
	Mechanism []SummaryEffect `json:"mechanism"`
	Primary   []SummaryEffect `json:"primary"`
	// Target is the plan's target effect on the primary metric; nil when
	// the spec has no plan.
	Target *SummaryTarget `json:"target,omitempty"`
	Guards []SummaryGuard `json:"guards"`
	Health SummaryHealth  `json:"health"`
	// CannotSay lists what this evidence does not show, in plain sentences.
	CannotSay []string `json:"cannot_say"`
}

// SummaryEffect is one metric's comparison of one treatment arm against the
// baseline, with the movement read from it.
type SummaryEffect struct {
	Metric  string `json:"metric"`
	Variant string `json:"variant"`
	// Moved is "up", "down", "no clear change" or "not estimable".
	Moved          string `json:"moved"`
	Difference     Num    `json:"difference"`
	CILow          Num    `json:"ci_low"`
	CIHigh         Num    `json:"ci_high"`
	Relative       Num    `json:"relative"`
	RelativeCILow  Num    `json:"relative_ci_low"`
	RelativeCIHigh Num    `json:"relative_ci_high"`
	// PValue is the p-value the movement is read from (see Summary.Alpha).
	PValue Num `json:"p_value"`
	// PValueKind names it: "unadjusted", "adjusted" or "always-valid".
	PValueKind string `json:"p_value_kind"`
	Reason     string `json:"reason,omitempty"`
	// AgainstTarget places the interval against the plan's target effect
	// (primary metric with a plan only): "above the target", "below the
	// target" or "includes the target".
	AgainstTarget string `json:"against_target,omitempty"`
}

// SummaryTarget is the smallest effect on the primary metric the plan set
// out to detect, as an absolute difference and relative to the baseline.
type SummaryTarget struct {
	Absolute Num `json:"absolute"`
	Relative Num `json:"relative"`
}

// targetOf returns the plan's target effect on the primary metric (from
// the [planning] table, read by AgainstPlan), or nil when there is none.
func targetOf(r *Report) *SummaryTarget {
	if r.Plan == nil || !r.Plan.TargetAbsolute.OK() {
		return nil
	}
	return &SummaryTarget{Absolute: r.Plan.TargetAbsolute, Relative: r.Plan.TargetRelative}
}

// againstTarget reads each primary interval against the target: wholly
// beyond it, wholly short of it (an effect as large as the target is then
// ruled out at this level), or containing it. A negative target means a
// decrease is sought.
func (s *Summary) againstTarget() {
	t := s.Target
	if t == nil || !t.Absolute.OK() || float64(t.Absolute) == 0 {
		return
	}
	for i := range s.Primary {
		e := &s.Primary[i]
		lo, hi, tg := float64(e.CILow), float64(e.CIHigh), float64(t.Absolute)
		if !e.CILow.OK() || !e.CIHigh.OK() {
			continue
		}
		if tg < 0 {
			lo, hi, tg = -hi, -lo, -tg
		}
		switch {
		case lo >= tg:
			e.AgainstTarget = "above the target"
		case hi < tg:
			e.AgainstTarget = "below the target"
		default:
			e.AgainstTarget = "includes the target"
		}
	}
}

// targetLines place each primary interval against the plan's target.
func targetLines(s Summary) []string {
	t := s.Target
	if t == nil {
		return nil
	}
	var items []string
	for _, e := range s.Primary {
		if e.AgainstTarget != "" {
			verb := "lies " + e.AgainstTarget
			if e.AgainstTarget == "includes the target" {
				verb = e.AgainstTarget
			}
			items = append(items, fmt.Sprintf("%s in %s: the interval [%s, %s] %s effect of the plan, %s (%s relative)", e.Metric, e.Variant, signed(e.CILow), signed(e.CIHigh),
				verb, signed(t.Absolute), pct(float64(t.Relative))))
		}
	}
	return items
}

// SummaryGuard is one guard comparison's verdict.
type SummaryGuard struct {
	Metric   string `json:"metric"`
	Variant  string `json:"variant"`
	Verdict  string `json:"verdict"`
	Alarming bool   `json:"alarming"`
	Relative Num    `json:"relative"`
	Margin   Num    `json:"margin"`
	Harmful  string `json:"harmful"`
}

// SummaryHealth is the health checks in brief.
type SummaryHealth struct {
	Available         bool    `json:"available"`
	SampleRatioPValue Num     `json:"sample_ratio_p_value"`
	SampleRatioAlarm  bool    `json:"sample_ratio_alarm"`
	AlarmDays         int     `json:"sample_ratio_alarm_days"`
	Triggered         int64   `json:"triggered_units"`
	Eligible          int64   `json:"eligible_units"`
	Excluded          int64   `json:"excluded_units"`
	ExcludedRate      Num     `json:"excluded_rate"`
	ImmatureUnits     int64   `json:"immature_units"`
	UnknownVariants   int     `json:"unknown_variant_values"`
	Alarms            int     `json:"alarms"`
	SRMAlpha          float64 `json:"sample_ratio_alpha"`
}

// Summarize computes the summary from the report.
func (r *Report) Summarize() Summary {
	e := r.Experiment
	s := Summary{Hypothesis: oneLine(e.Hypothesis), Look: "final", Monitoring: "fixed", Alpha: 1 - e.Confidence,
		Mechanism: []SummaryEffect{}, Primary: []SummaryEffect{}, Guards: []SummaryGuard{}, CannotSay: []string{}}
	// Round 1 − 0.95 to the digits a reader expects (0.05, not 0.050000000000000044).
	s.Alpha = math.Round(s.Alpha*1e9) / 1e9
	if asOf, err1 := time.Parse(time.RFC3339, e.AsOf); err1 == nil {
		if end, err2 := time.Parse(time.RFC3339, e.End); err2 == nil && asOf.Before(end) {
			s.Look = "interim"
		}
	}
	for _, m := range r.Metrics {
		for _, c := range m.Comparisons {
			if c.Sequential != nil {
				s.Monitoring = "sequential"
			}
		}
	}
	for _, m := range r.Metrics {
		for _, c := range m.Comparisons {
			switch m.Role {
			case "primary":
				s.Primary = append(s.Primary, s.effect(m, c, len(m.Comparisons) > 1))
			case "mechanism":
				s.Mechanism = append(s.Mechanism, s.effect(m, c, true))
			case "guard":
				if c.Guard == nil {
					continue
				}
				margin := math.NaN()
				if m.Margin != nil {
					margin = *m.Margin
				}
				s.Guards = append(s.Guards, SummaryGuard{Metric: m.Name, Variant: c.Variant, Verdict: c.Guard.Verdict, Alarming: c.Guard.Alarming,
					Relative: c.Relative, Margin: Num(margin), Harmful: m.Harmful})
			}
		}
	}
	s.Target = targetOf(r)
	s.againstTarget()
	sort.SliceStable(s.Guards, func(i, j int) bool { return s.Guards[i].Alarming && !s.Guards[j].Alarming })
	h := r.Health
	s.Health = SummaryHealth{Available: h.Available, SampleRatioPValue: h.SampleRatio.PValue, SampleRatioAlarm: h.SampleRatio.Alarm,
		AlarmDays: len(h.SampleRatioDaily.AlarmDays), Triggered: h.Triggered, Eligible: h.Eligible, ExcludedRate: Num(math.NaN()),
		UnknownVariants: len(h.UnknownVariants), Alarms: len(r.Alarms), SRMAlpha: h.SampleRatio.Alpha}
	for _, x := range h.Exclusions {
		if x.Reason == "any" {
			s.Health.Excluded, s.Health.ExcludedRate = x.Units, x.Rate
		}
	}
	for _, m := range r.Metrics {
		s.Health.ImmatureUnits = max(s.Health.ImmatureUnits, m.ImmatureUnits)
	}
	s.CannotSay = s.cannotSay(r)
	return s
}

// effect reads one comparison. adjusted says whether the comparison's
// family is adjusted for multiple testing (mechanism metrics; the primary
// metric with several treatment arms).
func (s *Summary) effect(m MetricInfo, c Compare, adjusted bool) SummaryEffect {
	se := SummaryEffect{Metric: m.Name, Variant: c.Variant, Difference: c.Difference, CILow: c.CILow, CIHigh: c.CIHigh,
		Relative: c.Relative, RelativeCILow: c.RelativeCILow, RelativeCIHigh: c.RelativeCIHigh, PValue: c.PValue, PValueKind: "unadjusted", Reason: c.Reason}
	if adjusted {
		se.PValue, se.PValueKind = c.PValueAdjusted, "adjusted"
	}
	if sq := c.Sequential; sq != nil {
		se.CILow, se.CIHigh, se.PValue, se.PValueKind = sq.CILow, sq.CIHigh, sq.PValue, "always-valid"
		// The relative interval beside it is fixed-horizon: not shown.
		se.RelativeCILow, se.RelativeCIHigh = Num(math.NaN()), Num(math.NaN())
		if adjusted {
			// The always-valid p-value is not adjusted across the family;
			// the larger of the two is the safe reading.
			se.PValue = Num(math.Max(float64(sq.PValue), float64(c.PValueAdjusted)))
			se.PValueKind = "always-valid, adjusted"
		}
	}
	switch {
	case !se.PValue.OK() || !se.Difference.OK():
		se.Moved = "not estimable"
	case float64(se.PValue) < s.Alpha && float64(se.Difference) > 0:
		se.Moved = "up"
	case float64(se.PValue) < s.Alpha && float64(se.Difference) < 0:
		se.Moved = "down"
	default:
		se.Moved = "no clear change"
	}
	return se
}

func (s *Summary) cannotSay(r *Report) []string {
	var out []string
	for _, p := range s.Primary {
		if p.Moved == "no clear change" {
			out = append(out, fmt.Sprintf("%s in %s: no clear change is not evidence of no effect; changes from %s to %s remain plausible.", p.Metric, p.Variant, signed(p.CILow), signed(p.CIHigh)))
		}
	}
	for _, p := range s.Primary {
		if p.AgainstTarget == "includes the target" && (p.Moved == "up" || p.Moved == "down") {
			out = append(out, fmt.Sprintf("%s in %s: the effect is clear, but whether it reaches the planned target is not.", p.Metric, p.Variant))
		}
	}
	if len(s.Mechanism) > 0 {
		primaryMoved, mechMoved := false, false
		for _, p := range s.Primary {
			primaryMoved = primaryMoved || p.Moved == "up" || p.Moved == "down"
		}
		for _, m := range s.Mechanism {
			mechMoved = mechMoved || m.Moved == "up" || m.Moved == "down"
		}
		if primaryMoved && !mechMoved {
			out = append(out, "The primary metric moved but the mechanism did not clearly move: the data do not show that the change worked the way the hypothesis says.")
		}
		if primaryMoved && mechMoved {
			out = append(out, "The mechanism and the primary metric both moved; that is consistent with the hypothesis, but does not prove that one caused the other.")
		}
	}
	inconclusive := 0
	for _, g := range s.Guards {
		if !g.Alarming && !strings.HasPrefix(g.Verdict, "no harm") && g.Verdict != "harm shown, within margin" {
			inconclusive++
		}
	}
	if inconclusive > 0 {
		out = append(out, "Inconclusive guards: the data neither show harm nor rule out harm beyond the margin; more units, or a judgement on the risk, are needed.")
	}
	if s.Look == "interim" && s.Monitoring == "fixed" {
		out = append(out, "This is an interim look at a fixed-horizon design: its p-values are valid only at the planned end.")
	}
	if !s.Health.Available {
		out = append(out, "Without the health result, exposure, trigger and exclusion counts are unknown.")
	}
	var windows []string
	seen := map[string]bool{}
	for _, m := range r.Metrics {
		if w := m.Window[1]; !seen[w] {
			seen[w] = true
			windows = append(windows, w)
		}
	}
	out = append(out,
		fmt.Sprintf("Effects after the metric windows (up to %s after the trigger), and on units that were not eligible, are not measured.", strings.Join(windows, ", ")),
		"Much that matters is not measured by any metric here (friction removed, a better experience, a pain point solved, cost, strategy): the decision, ship or not, is a judgement for the people who own the product, with this evidence as one input.")
	return out
}

// summaryDoc adds the summary to the shared document.
func (r *Report) summaryDoc(d *document) {
	s := r.Summarize()
	d.heading(2, "Summary")
	d.para("Hypothesis: %s", s.Hypothesis)
	look := lookSentence(s, r.Experiment)
	d.para("%s", look)
	effects := func(title string, es []SummaryEffect) {
		if len(es) == 0 {
			return
		}
		var items []string
		for _, e := range es {
			items = append(items, effectLine(e))
		}
		d.para("%s", title)
		d.list(items)
	}
	effects("Did the mechanism move (the first link of the hypothesis)?", s.Mechanism)
	effects("Did the primary metric move?", s.Primary)
	d.list(targetLines(s))
	if len(s.Guards) > 0 {
		var items []string
		for _, g := range s.Guards {
			line := fmt.Sprintf("%s in %s: %s (relative %s; %s harmful, margin %s)", g.Metric, g.Variant, g.Verdict, pct(float64(g.Relative)), g.Harmful, pctAbs(float64(g.Margin)))
			if g.Alarming {
				line = "!! " + line
			}
			items = append(items, line)
		}
		d.para("Guards (alarming first):")
		d.list(items)
	}
	h := s.Health
	var items []string
	if h.SampleRatioAlarm {
		items = append(items, fmt.Sprintf("!! sample ratio mismatch: %s (alarm below %g)", pEquals(float64(h.SampleRatioPValue)), h.SRMAlpha))
	} else if h.SampleRatioPValue.OK() {
		items = append(items, fmt.Sprintf("sample ratio: ok, %s (alarm below %g)", pEquals(float64(h.SampleRatioPValue)), h.SRMAlpha))
	} else {
		items = append(items, "sample ratio: not tested")
	}
	if h.AlarmDays > 0 {
		items = append(items, fmt.Sprintf("!! sample ratio mismatch on %d day(s)", h.AlarmDays))
	}
	if h.Available {
		items = append(items, fmt.Sprintf("exclusions: %d of %d triggered units (%s); %d eligible", h.Excluded, h.Triggered, pctAbs(float64(h.ExcludedRate)), h.Eligible))
	} else {
		items = append(items, "exclusions: unknown (no health result)")
	}
	if h.ImmatureUnits > 0 {
		items = append(items, fmt.Sprintf("immature: up to %d eligible units per metric left out (window not elapsed)", h.ImmatureUnits))
	}
	if h.UnknownVariants > 0 {
		items = append(items, fmt.Sprintf("!! %d undeclared variant value(s) seen", h.UnknownVariants))
	}
	if h.Alarms > 0 {
		items = append(items, fmt.Sprintf("!! %d alarm(s): read them below before any effect", h.Alarms))
	}
	d.para("Health:")
	d.list(items)
	d.para("What this evidence cannot say:")
	d.list(s.CannotSay)
}

// lookSentence says whether the look is interim or final, the monitoring
// mode, and the threshold an effect is read against.
func lookSentence(s Summary, e Experiment) string {
	look := "Final look: outcomes counted to the planned end (" + e.End + ")."
	if s.Look == "interim" {
		look = "Interim look: outcomes counted to " + e.AsOf + ", before the planned end " + e.End + "."
	}
	if s.Monitoring == "sequential" {
		look += " Monitoring is sequential: the always-valid intervals and p-values are read."
	} else {
		look += " Monitoring is fixed-horizon."
	}
	return look + fmt.Sprintf(" An effect counts as moved when its p-value is below %g (adjusted for multiple testing where its family is).", s.Alpha)
}

// effectLine is one effect in a sentence: the movement, the difference with
// its interval, the relative change and the p-value it was read from.
func effectLine(e SummaryEffect) string {
	if e.Moved == "not estimable" {
		why := e.Reason
		if why == "" {
			why = "too little data"
		}
		return fmt.Sprintf("%s in %s: not estimable (%s)", e.Metric, e.Variant, why)
	}
	rel := ""
	switch {
	case e.Relative.OK() && e.RelativeCILow.OK() && e.RelativeCIHigh.OK():
		rel = fmt.Sprintf(", relative %s [%s, %s]", pct(float64(e.Relative)), pct(float64(e.RelativeCILow)), pct(float64(e.RelativeCIHigh)))
	case e.Relative.OK():
		rel = fmt.Sprintf(", relative %s", pct(float64(e.Relative)))
	}
	return fmt.Sprintf("%s in %s: %s; difference %s [%s, %s]%s; %s (%s)", e.Metric, e.Variant, e.Moved,
		signed(e.Difference), signed(e.CILow), signed(e.CIHigh), rel, pEquals(float64(e.PValue)), e.PValueKind)
}
