package report

import (
	"encoding/json"
	"fmt"
	"sort"
	"strings"

	"github.com/assay-dev/assay/compiler"
	"github.com/assay-dev/assay/metrics"
	"github.com/assay-dev/assay/results"
	"github.com/assay-dev/assay/stats"
)

// The early read of a test step answers one question before a rollout is
// widened: is the experiment running as designed? It checks the
// assignment (sample ratio), the logging (exposure rows without a variant
// or unit, undeclared variants, crossovers, outcome rows no metric can
// use, sources without rows, eligible units without any outcome row,
// metrics that are zero for every unit or not yet readable) and the guard
// metrics at a looser level than the final analysis, and lists what to fix first. It never judges whether the
// change is good: the effect estimates of a test step are too imprecise
// for that, and the decision belongs to the product's owners.

// EarlyGuardLevel is the one-sided confidence level of the guard verdicts
// in an early read: looser than the analysis's usual 95%, so a guard that
// is only starting to move already shows (common practice: an early
// warning trades false alarms for sensitivity).
const EarlyGuardLevel = 0.90

// Early-read check statuses.
const (
	StatusOK      = "ok"
	StatusFix     = "fix"     // must be fixed before widening the rollout
	StatusNotYet  = "not yet" // cannot be read yet (outcome windows not elapsed)
	StatusUnknown = "unknown" // the input to the check is not available
	StatusWatch   = "watch"   // not a blocker, worth a look
)

// EarlyRead is the result of an early read.
type EarlyRead struct {
	Question string `json:"question"`
	// Step is the rollout step read (the first step of the schedule), or
	// "" when the spec declares no schedule and the whole period is read.
	Step       string       `json:"step"`
	GuardLevel float64      `json:"guard_level"`
	Checks     []EarlyCheck `json:"checks"`
	// FixFirst lists what to fix before widening the rollout, most
	// fundamental first (assignment, then logging, then metrics, then
	// guards). Empty when nothing was found.
	FixFirst []string `json:"fix_first"`
	Closing  string   `json:"closing"`
	Report   *Report  `json:"report"`
}

// EarlyCheck is one check of an early read.
type EarlyCheck struct {
	Area   string `json:"area"` // assignment, logging, metrics, guards
	Name   string `json:"name"`
	Status string `json:"status"`
	Detail string `json:"detail"`
}

// Blocked reports whether the early read found something to fix first.
func (e *EarlyRead) Blocked() bool { return len(e.FixFirst) > 0 }

// ReadEarly builds the early read from the plan, the run's results and
// the report analysed from them (Analyze with the same options).
func ReadEarly(p *compiler.Plan, set *results.Set, rep *Report, opt Options) *EarlyRead {
	e := &EarlyRead{Question: "Is the experiment running as designed, so that it is safe to widen the rollout?", GuardLevel: EarlyGuardLevel,
		Checks: []EarlyCheck{}, FixFirst: []string{}, Report: rep,
		Closing: "This read checks that assignment, logging and guard metrics behave; it does not estimate whether the change is good, and whether to ship is a decision for the people who own the product."}
	if ro := p.Spec.Rollout; ro != nil && len(ro.Steps) > 0 {
		e.Step = ro.Steps[0].Name
	}
	add := func(area, name, status, detail string) {
		e.Checks = append(e.Checks, EarlyCheck{Area: area, Name: name, Status: status, Detail: detail})
		if status == StatusFix {
			e.FixFirst = append(e.FixFirst, detail)
		}
	}
	h := rep.Health
	// Assignment.
	sr := h.SampleRatio
	switch {
	case !h.Available:
		add("assignment", "sample ratio", StatusUnknown, "no health result: the sample ratio of triggered units is unknown")
	case sr.Reason != "":
		add("assignment", "sample ratio", StatusUnknown, "sample ratio not tested: "+sr.Reason)
	case sr.Alarm:
		add("assignment", "sample ratio", StatusFix, fmt.Sprintf("Sample ratio mismatch (%s): eligible units per variant do not match the weights in force; find the cause in assignment or exposure logging before anything else.", pEquals(float64(sr.PValue))))
	default:
		add("assignment", "sample ratio", StatusOK, fmt.Sprintf("eligible units match the weights in force (%s)", pEquals(float64(sr.PValue))))
	}
	if n := len(h.SampleRatioDaily.AlarmDays); n > 0 {
		add("assignment", "daily sample ratio", StatusFix, fmt.Sprintf("Sample ratio mismatch on %s: check what changed in assignment or logging on those days.", strings.Join(h.SampleRatioDaily.AlarmDays, ", ")))
	}
	if !h.Available {
		add("logging", "exposure rows", StatusUnknown, "no health result: exposure logging cannot be checked")
	} else {
		if n := h.IgnoredRows[compiler.IgnoredNullVariant]; n > 0 {
			add("logging", "exposure rows without a variant", StatusFix, fmt.Sprintf("%d exposure rows in the period have no variant: the exposure logging drops the assignment.", n))
		} else {
			add("logging", "exposure rows without a variant", StatusOK, "every exposure row in the period names a variant")
		}
		bad := h.IgnoredRows[compiler.IgnoredNullUnit] + h.IgnoredRows[compiler.IgnoredNullTime]
		if bad > 0 {
			add("logging", "exposure rows without a unit or time", StatusFix, fmt.Sprintf("%d exposure rows have no unit id or no time.", bad))
		}
		if len(h.UnknownVariants) > 0 {
			var vs []string
			for _, u := range h.UnknownVariants {
				vs = append(vs, fmt.Sprintf("%q (%d units)", u.Value, u.Units))
			}
			add("logging", "undeclared variants", StatusFix, "Triggered units carry variant values the spec does not declare: "+strings.Join(vs, ", ")+".")
		}
		if r := h.CrossoverRateExposed; r.OK() && float64(r) > 0.01 {
			add("logging", "crossovers", StatusFix, fmt.Sprintf("%s of exposed units were seen in more than one variant: check that assignment is sticky.", pctAbs(float64(r))))
		}
		srcs := make([]string, 0, len(h.IgnoredOutcomeRows))
		for s := range h.IgnoredOutcomeRows {
			srcs = append(srcs, s)
		}
		sort.Strings(srcs)
		for _, s := range srcs {
			var n int64
			for _, v := range h.IgnoredOutcomeRows[s] {
				n += v
			}
			if n > 0 {
				add("logging", "outcome rows of "+s, StatusFix, fmt.Sprintf("%d rows of source %s have no unit id or no time, so no metric can use them.", n, s))
			}
		}
		if h.NoOutcomes != nil {
			anyMature := false
			for _, m := range rep.Metrics {
				for _, v := range m.Variants {
					anyMature = anyMature || v.N > 0
				}
			}
			status, detail := h.NoOutcomes.earlyCheck(anyMature) // nooutcome.go
			add("logging", NoOutcomeCheck, status, detail)
		}
	}
	for _, s := range opt.EmptySources {
		add("logging", "source "+s, StatusFix, fmt.Sprintf("Source %s has no rows at all: its metrics are zero for every unit.", s))
	}
	// Metrics that are zero for every unit, or not readable yet; a source
	// all of whose metrics are zero has no rows after any trigger.
	zeroBySource := map[string][2]int{} // source -> {metrics, zero metrics}
	for i, mp := range p.Metrics {
		m := rep.Metrics[i]
		var n int64
		zero := true
		for _, v := range m.Variants {
			n += v.N
			if !(v.Value.OK() && float64(v.Value) == 0) {
				zero = false
			}
		}
		srcs := map[string]bool{}
		for _, a := range mp.M.Aggs() {
			if a != nil && a.Source != nil {
				srcs[a.Source.Name] = true
			}
		}
		for s := range srcs {
			z := zeroBySource[s]
			z[0]++
			if n > 0 && zero {
				z[1]++
			}
			zeroBySource[s] = z
		}
		switch {
		case n == 0 && m.ImmatureUnits > 0:
			add("metrics", m.Name, StatusNotYet, fmt.Sprintf("metric %s: no unit's outcome window (%s to %s) has elapsed yet", m.Name, m.Window[0], m.Window[1]))
		case n == 0:
			add("metrics", m.Name, StatusFix, fmt.Sprintf("Metric %s has no units: nothing was measured.", m.Name))
		case zero:
			add("metrics", m.Name, StatusFix, fmt.Sprintf("Metric %s is zero for every unit in every variant: check its source, filter and window.", m.Name))
		default:
			add("metrics", m.Name, StatusOK, fmt.Sprintf("metric %s has values on %d mature units", m.Name, n))
		}
	}
	var srcNames []string
	for s := range zeroBySource {
		srcNames = append(srcNames, s)
	}
	sort.Strings(srcNames)
	for _, s := range srcNames {
		z := zeroBySource[s]
		if z[0] > 0 && z[0] == z[1] && !contains(opt.EmptySources, s) {
			add("logging", "source "+s, StatusFix, fmt.Sprintf("Source %s has no usable rows in any unit's outcome window: every metric reading it is zero.", s))
		}
	}
	// Guards at the looser level.
	for _, mp := range p.Metrics {
		if mp.M.Role != metrics.Guard {
			continue
		}
		li := metricInfo(p, mp, rowsByVariant(set.Overall()), EarlyGuardLevel)
		for _, c := range li.Comparisons {
			if c.Guard == nil {
				continue
			}
			detail := fmt.Sprintf("guard %s, %s: %s at one-sided %g%% (relative %s)", mp.M.Name, c.Variant, c.Guard.Verdict, EarlyGuardLevel*100, pct(float64(c.Relative)))
			switch {
			case c.Guard.Alarming:
				add("guards", mp.M.Name+" "+c.Variant, StatusFix, fmt.Sprintf("Guard %s %s in %s (relative %s; one-sided %g%% bounds %s to %s; tolerated %s): find out why before widening.",
					mp.M.Name, pastTense(string(mp.M.Harmful)), c.Variant, pct(float64(c.Relative)), EarlyGuardLevel*100, pct(float64(c.Guard.Lower)), pct(float64(c.Guard.Upper)), pctAbs(mp.M.Margin)))
			case c.Guard.Verdict == "harm shown, within margin":
				add("guards", mp.M.Name+" "+c.Variant, StatusWatch, detail)
			case c.Guard.Verdict == string(stats.VerdictUndefined) && li.ImmatureUnits > 0:
				add("guards", mp.M.Name+" "+c.Variant, StatusNotYet, fmt.Sprintf("guard %s, %s: not readable yet (%d eligible units still inside the %s to %s window)", mp.M.Name, c.Variant, li.ImmatureUnits, li.Window[0], li.Window[1]))
			case c.Guard.Verdict == string(stats.VerdictUndefined):
				add("guards", mp.M.Name+" "+c.Variant, StatusUnknown, detail)
			default:
				add("guards", mp.M.Name+" "+c.Variant, StatusOK, detail)
			}
		}
	}
	return e
}

func contains(list []string, s string) bool {
	for _, x := range list {
		if x == s {
			return true
		}
	}
	return false
}

// JSON renders the early read as indented JSON.
func (e *EarlyRead) JSON() ([]byte, error) {
	b, err := json.MarshalIndent(e, "", "  ")
	if err != nil {
		return nil, err
	}
	return append(b, '\n'), nil
}

func (e *EarlyRead) document() *document {
	d := &document{}
	r := e.Report
	what := "the whole period"
	if e.Step != "" {
		what = "rollout step " + e.Step
	}
	d.heading(1, "assay %s: early read of experiment %s, %s", r.ToolVersion, r.Experiment.ID, what)
	d.para("%s", e.Question)
	d.para("Exposures in [%s, %s), outcomes as of %s; guard verdicts at one-sided %g%%.", r.Experiment.Start, r.Experiment.End, r.Experiment.AsOf, e.GuardLevel*100)
	d.heading(2, "Fix first (most fundamental first)")
	if len(e.FixFirst) == 0 {
		d.para("Nothing found to fix: assignment, logging and guards look as designed so far.")
	} else {
		d.list(e.FixFirst)
	}
	d.heading(2, "Checks")
	t := &table{head: []string{"area", "check", "status", "detail"}, left: 4}
	for _, c := range e.Checks {
		t.rows = append(t.rows, []string{c.Area, c.Name, c.Status, c.Detail})
	}
	d.tab(t)
	d.para("%s", e.Closing)
	return d
}

// Text renders the early read for a terminal.
func (e *EarlyRead) Text() string { return e.document().text() }

// Markdown renders the early read for a review comment.
func (e *EarlyRead) Markdown() string { return e.document().markdown() }
