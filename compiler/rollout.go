package compiler

import (
	"strings"
	"time"

	"github.com/assay-dev/assay/metrics"
)

// KeyRolloutStep groups results by the rollout step in force at each
// unit's trigger (the spec's [rollout] schedule): the strata of the
// by-step effect estimate and of the per-step sample-ratio checks. A spec
// with a schedule gets this breakdown even when it is not asked for
// (except in calibration, which is never broken down).
const KeyRolloutStep = "rollout_step"

// withRolloutStep returns breakdowns with KeyRolloutStep appended when s
// declares a rollout schedule and the key is not already there.
func withRolloutStep(s *metrics.Spec, breakdowns []string, splits int) []string {
	if s.Rollout == nil || len(s.Rollout.Steps) == 0 || splits > 0 {
		return breakdowns
	}
	for _, g := range breakdowns {
		if strings.TrimSpace(g) == KeyRolloutStep {
			return breakdowns
		}
	}
	return append(append([]string{}, breakdowns...), KeyRolloutStep)
}

// StepKey returns the index in GroupBy of the rollout-step breakdown, or
// -1 when the plan has none.
func (p *Plan) StepKey() int {
	for i, g := range p.GroupBy {
		if g.Step {
			return i
		}
	}
	return -1
}

// stepCase spells the rollout step of the unit whose trigger time (µs
// since the epoch) is in column col: the last step that began at or
// before the trigger, the first step for earlier triggers.
func (pr *printer) stepCase(col string) string {
	steps := pr.p.Spec.Rollout.Steps
	// Always a CASE on the trigger time, never a bare literal: PostgreSQL
	// refuses to group by a non-integer constant.
	low := 1
	if len(steps) == 1 {
		low = 0
	}
	var b strings.Builder
	b.WriteString("CASE")
	for i := len(steps) - 1; i >= low; i-- {
		b.WriteString(" WHEN " + col + " >= " + us(steps[i].Start.UnixMicro()) + " THEN " + pr.d.Literal(steps[i].Name))
	}
	b.WriteString(" ELSE " + pr.d.Literal(steps[0].Name) + " END")
	return b.String()
}

// ExcludedPrior is the exclusion reason of units exposed in a prior run
// (the spec's [prior_runs]) before the analysis start; FlagPrior is the
// cohort's column that marks them.
const (
	ExcludedPrior = "previously_exposed"
	FlagPrior     = "is_previously_exposed"
)

// priorExclusion appends the prior-run exclusion when the spec declares
// prior runs.
func priorExclusion(p *Plan, out []Exclusion) []Exclusion {
	if len(p.Spec.PriorRuns) == 0 {
		return out
	}
	return append(out, Exclusion{Reason: ExcludedPrior, Flag: FlagPrior})
}

// priorUnits prints the prior_units CTE: the units with a qualifying row
// of a prior run's source in its period, cut at the analysis start.
func (pr *printer) priorUnits() {
	p := pr.p
	runs := p.Spec.PriorRuns
	if len(runs) == 0 {
		return
	}
	pr.line(0, "-- Units exposed in a prior run before the analysis start: excluded as %s.", ExcludedPrior)
	pr.line(0, "prior_units AS (")
	for i, r := range runs {
		if i > 0 {
			pr.line(1, "UNION")
		}
		src := r.Source
		until := min(r.Until.UnixMicro(), p.StartUS)
		pr.line(1, "-- Prior run %s: %s in [%s, %s)%s.", oneLine(r.Name), oneLine(src.Name), r.From.UTC().Format(time.RFC3339), time.UnixMicro(until).UTC().Format(time.RFC3339), whereNote(r.Filter))
		pr.line(1, "SELECT x.%s AS unit_id", pr.id(src.Unit))
		pr.line(1, "FROM %s AS x", pr.from(src))
		pr.line(1, "WHERE x.%s IS NOT NULL", pr.id(src.Unit))
		pr.line(2, "AND %s >= %s AND %s < %s", pr.time(src, "x"), us(r.From.UnixMicro()), pr.time(src, "x"), us(until))
		if r.Filter != nil {
			pr.line(2, "AND coalesce(%s, FALSE)", pr.expr(r.Filter, "x"))
		}
	}
	pr.line(0, "),")
}
