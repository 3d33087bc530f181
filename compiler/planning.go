package compiler

import (
	"time"

	"github.com/assay-dev/assay/metrics"
)

// Planning queries. Before launch there are no exposure rows, so a
// planning query (Options.StandIn) reads the spec's stand-in trigger
// ([planning] stand_in) in their place: every unit's first row of the
// stand-in source that passes its filter is its trigger, and the same
// eligibility rules, windows and maturity rules apply from there. There
// are no variants: every unit is in one pooled arm, PooledArm, so no unit
// can cross over or carry an undeclared variant. The period is
// Options.Start/End, defaulting to the [planning] pre-period.
//
// Grouped by KeyTriggerDay, the units column counts the eligible units
// whose trigger fell on each day; a unit triggers once, so their running
// sum is the number of distinct eligible units since the period began.
//
// With Splits > 0 as well, the pooled units are re-split at random into
// the spec's variants with the planned weights: a calibration (A/A test)
// over the pre-period.

// PooledArm is the variant name of every unit in a planning query.
const PooledArm = "all"

// standInSpec returns the spec a planning query compiles: a shallow copy
// whose exposure is the stand-in trigger, whose segments are those the
// stand-in can carry (read from the stand-in row or a static attribute
// source), and the period to read when opt gives none. s itself is never
// edited.
func standInSpec(s *metrics.Spec, opt *Options) (*metrics.Spec, metrics.Diagnostics) {
	var ds metrics.Diagnostics
	pl := s.Planning
	if pl == nil || pl.StandIn == nil {
		at := metrics.Range{File: s.File}
		if pl != nil {
			at = pl.At
		}
		ds = append(ds, metrics.Diagnostic{Code: metrics.CodeMissingKey, Subject: at,
			Summary: "a planning query needs a stand-in trigger: the spec has no [planning] stand_in",
			Hint:    "add [planning] with stand_in = { source = \"...\", filter = \"...\" }: the rows that mark when a unit would have been exposed"})
		return nil, ds
	}
	if opt.Start.IsZero() && opt.End.IsZero() {
		if pl.PreStart.IsZero() {
			ds = append(ds, metrics.Diagnostic{Code: metrics.CodeMissingKey, Subject: pl.At,
				Summary: "a planning query needs a pre-period: give its start and end, or set pre_start and pre_end in [planning]"})
			return nil, ds
		}
		opt.Start, opt.End = pl.PreStart, pl.PreEnd
	}
	if !opt.Start.IsZero() && !opt.End.IsZero() && opt.End.After(s.Start) {
		ds = append(ds, metrics.Diagnostic{Code: metrics.CodeTime, Subject: pl.At,
			Summary: "the pre-period [" + opt.Start.UTC().Format(time.RFC3339) + ", " + opt.End.UTC().Format(time.RFC3339) + ") overlaps the experiment, which starts " + s.Start.UTC().Format(time.RFC3339),
			Hint:    "end the pre-period at or before the experiment's start, so no treated unit is read as a baseline"})
	}
	c := *s
	c.Exposure = metrics.Exposure{Source: pl.StandIn.Source, Filter: pl.StandIn.Filter, At: pl.StandIn.At}
	c.Segments = nil
	for _, seg := range s.Segments {
		if seg.Source == pl.StandIn.Source || !seg.Source.IsEvent() {
			c.Segments = append(c.Segments, seg)
		}
	}
	return &c, ds
}

// exposureVariant renders the variant of an exposure row: the exposure's
// variant column, or the pooled arm in a planning query.
func (pr *printer) exposureVariant() string {
	if pr.p.Pooled {
		return pr.d.Text(pr.d.Literal(PooledArm))
	}
	return pr.d.Text("x." + pr.id(pr.p.Spec.Exposure.Variant))
}

// cohortVariants are the variant names a triggered unit may carry: the
// declared variants, or the pooled arm in a planning query (whose
// calibration re-splits into the declared variants later).
func (pr *printer) cohortVariants() []string {
	if pr.p.Pooled {
		return []string{PooledArm}
	}
	return pr.p.Variants
}

// standInNote explains a planning query in its header.
func (pr *printer) standInNote() {
	if !pr.p.Pooled {
		return
	}
	ex := pr.p.Spec.Exposure
	pr.line(0, "-- Planning query: no variants. The trigger is a stand-in, each unit's first row of %s%s;", oneLine(ex.Source.Name), filterNote(ex.Filter))
	pr.line(0, "-- every unit is pooled into one arm, %s.", PooledArm)
}
