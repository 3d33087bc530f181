package compiler

import (
	"strings"

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
		b.WriteString(" WHEN " + col + " >= " + us(steps[i].Start.UnixMicro()) + " THEN " + pr.d.String(steps[i].Name))
	}
	b.WriteString(" ELSE " + pr.d.String(steps[0].Name) + " END")
	return b.String()
}
