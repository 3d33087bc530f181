package metrics

import (
	"math"
	"time"
)

// The [planning] table. Before launch there are no exposure rows, so the
// spec names a stand-in trigger: the source and filter whose first row
// marks when a unit would have been exposed. `assay size` computes
// baselines and traffic over a pre-period with it and prints a block of
// the same keys to paste back (planned_end, planned_units), which every
// later run reports against.
//
//	[planning]
//	stand_in = { source = "visits", filter = "screen = 'home'" }
//	pre_start = 2026-01-05T00:00:00Z
//	pre_end = 2026-02-02T00:00:00Z
//	target_effect = 0.03          # +3% on the primary metric
//	target_scale = "relative"     # or "absolute" (the metric's own units)
//	power = 0.8
//	max_weeks = 8
//	planned_end = 2026-04-13T00:00:00Z
//	planned_units = 24000

// planningKeys are the keys of the [planning] table.
var planningKeys = []string{"stand_in", "pre_start", "pre_end", "target_effect", "target_scale", "power", "max_weeks", "planned_end", "planned_units"}

// Planning defaults.
const (
	DefaultPower    = 0.8 // (common practice)
	DefaultMaxWeeks = 8
	// MaxPlanWeeks bounds max_weeks: a plan longer than a year is not a plan.
	MaxPlanWeeks = 52
)

// planning reads the [planning] table; the experiment and sources are
// already read.
func (l *loader) planning(t *table, ref refFunc) {
	s := l.spec
	pl := &Planning{Power: DefaultPower, MaxWeeks: DefaultMaxWeeks, TargetRelative: true, At: l.rng(t.path, true)}
	s.Planning = pl
	if st := t.sub("stand_in", false, "source", "filter"); st != nil {
		si := &StandIn{At: l.rng(st.path, true)}
		si.Source = ref(st, "source")
		if si.Source != nil && !si.Source.IsEvent() {
			l.errAt(st.p("source"), CodeSource, "the stand-in trigger is a unit's first matching row in time: name an event source with a time column", "stand-in source `%s` has no time column", si.Source.Name)
			si.Source = nil
		}
		si.Filter = l.expression(st, "filter", si.Source, true)
		if si.Source != nil {
			pl.StandIn = si
		}
	} else if !t.has("stand_in") {
		t.missing("stand_in", "the source (and filter) whose first row marks when a unit would have been exposed, e.g. stand_in = { source = \"visits\", filter = \"screen = 'home'\" }")
	}
	var okS, okE bool
	pl.PreStart, okS = l.timestamp(t, "pre_start", false)
	pl.PreEnd, okE = l.timestamp(t, "pre_end", false)
	switch {
	case t.has("pre_start") != t.has("pre_end"):
		missing := "pre_end"
		if !t.has("pre_start") {
			missing = "pre_start"
		}
		t.missing(missing, "give the pre-period as pre_start and pre_end, or neither (and pass it on the command line)")
	case okS && okE:
		if !pl.PreEnd.After(pl.PreStart) {
			l.errAt(t.p("pre_end"), CodeTime, "", "pre-period end %s is not after its start %s", utc(pl.PreEnd), utc(pl.PreStart))
		} else if !s.Start.IsZero() && pl.PreEnd.After(s.Start) {
			l.errAt(t.p("pre_end"), CodeTime, "the pre-period must end at or before the experiment's start, so no treated unit is read as a baseline", "pre-period end %s overlaps the experiment, which starts %s", utc(pl.PreEnd), utc(s.Start))
		}
	}
	if v, ok := t.num("target_effect"); ok {
		if v <= 0 {
			l.errAt(t.p("target_effect"), CodeValue, "the smallest effect worth detecting, as a positive size (0.03 is 3% with target_scale = \"relative\")", "target_effect must be positive, got %v", v)
		} else {
			pl.Target = v
		}
	}
	pl.TargetRelative = t.enum("target_scale", false, "relative", "relative", "absolute") == "relative"
	if t.has("target_scale") && !t.has("target_effect") {
		l.errKey(t.p("target_scale"), CodeValue, "set target_effect too, or drop target_scale", "target_scale without target_effect")
	}
	if v, ok := t.num("power"); ok {
		if v <= 0 || v >= 1 {
			l.errAt(t.p("power"), CodeValue, "write it as a fraction, e.g. 0.8", "power must be between 0 and 1 (exclusive), got %v", v)
		} else {
			pl.Power = v
		}
	}
	if v, ok := t.num("max_weeks"); ok {
		if v < 1 || v > MaxPlanWeeks || v != math.Trunc(v) {
			l.errAt(t.p("max_weeks"), CodeValue, "", "max_weeks must be a whole number from 1 to %d, got %v", MaxPlanWeeks, v)
		} else {
			pl.MaxWeeks = int(v)
		}
	}
	if end, ok := l.timestamp(t, "planned_end", false); ok {
		if !s.Start.IsZero() && !end.After(s.Start) {
			l.errAt(t.p("planned_end"), CodeTime, "", "planned end %s is not after the experiment's start %s", utc(end), utc(s.Start))
		} else {
			pl.PlannedEnd = end
		}
	}
	if v, ok := t.num("planned_units"); ok {
		if v < 2 || v != math.Trunc(v) {
			l.errAt(t.p("planned_units"), CodeValue, "the eligible units (all arms together) the plan expects by planned_end", "planned_units must be a whole number of at least 2, got %v", v)
		} else {
			pl.PlannedUnits = v
		}
	}
}

func utc(t time.Time) string { return t.UTC().Format(time.RFC3339) }
