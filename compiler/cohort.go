package compiler

import (
	"fmt"
	"strings"

	"github.com/assay-dev/assay/dialects"
	"github.com/assay-dev/assay/metrics"
	"github.com/assay-dev/assay/metrics/expr"
)

// The cohort CTEs: exposure rows in the window, each unit's trigger and
// variant, attributes and eligibility rules at the trigger, the cohort
// with its exclusion flags, and the eligible units.

// cohort prints the CTEs that find the cohort: exposures in the window,
// triggers, eligibility rules and the cohort with one row per triggered
// unit. The setup statement prints them once when the dialect stages the
// cohort; otherwise both queries print them.
func (pr *printer) cohort() {
	pr.line(0, "WITH")
	pr.exposureRows()
	pr.cohortCTEs()
}

// setup prints the statement that stores the cohort in the temporary
// table: every triggered unit with its exclusion reasons, and every
// exposed unit that never triggered, with no trigger time.
func (pr *printer) setup() (string, error) {
	pr.b.Reset()
	pr.header("cohort table")
	pr.line(0, "-- Computed once per run; the per-variant and health queries read it.")
	pr.line(0, "%s", pr.stage.CreateTemp(StagedTable))
	pr.cohort()
	pr.line(0, "-- Exposed units without a qualifying exposure, kept with no trigger for the health counts.")
	pr.line(0, "never_triggered AS (")
	pr.line(1, "SELECT u.unit_id FROM exposed_units AS u WHERE u.trigger_us IS NULL")
	pr.line(0, ")")
	cols := pr.cohortCols()
	pr.line(0, "SELECT %s", strings.Join(cols, ", "))
	pr.line(0, "FROM cohort")
	pr.line(0, "UNION ALL")
	nulls := []string{"n.unit_id"}
	for _, c := range cols[1:] {
		nulls = append(nulls, "NULL AS "+c)
	}
	pr.line(0, "SELECT %s", strings.Join(nulls, ", "))
	pr.line(0, "FROM never_triggered AS n")
	return pr.b.String(), pr.err
}

// stagedCohort prints the cohort CTE of a staged query: the triggered
// units of the setup statement's table.
func (pr *printer) stagedCohort() {
	pr.line(0, "-- Every triggered unit with the reasons it may be excluded, from the cohort table.")
	pr.line(0, "cohort AS (")
	pr.line(1, "SELECT %s", strings.Join(pr.cohortCols(), ", "))
	pr.line(1, "FROM %s", pr.stage.TempRef(StagedTable))
	pr.line(1, "WHERE trigger_us IS NOT NULL")
	pr.line(0, "),")
}

// exposureRows prints the exposure_rows CTE.
func (pr *printer) exposureRows() {
	p, s := pr.p, pr.p.Spec
	ex := s.Exposure
	src := ex.Source
	segs := p.Segments

	pr.line(0, "-- Exposure rows of %s inside the analysis window; rows without a unit or time are ignored.", oneLine(src.Name))
	if in, ok := pr.d.(dialects.Inliner); ok {
		pr.line(0, "exposure_rows AS %s (", in.Inline())
	} else {
		pr.line(0, "exposure_rows AS (")
	}
	pr.line(1, "SELECT")
	pr.line(2, "x.%s AS unit_id,", pr.id(src.Unit))
	pr.line(2, "%s AS variant,", pr.exposureVariant())
	pr.line(2, "%s AS ts_us,", pr.time(src, "x"))
	if ex.Filter != nil {
		pr.line(2, "coalesce(%s, FALSE) AS qualifies%s", pr.expr(ex.Filter, "x"), commaIf(len(segsOn(segs, src)) > 0))
	} else {
		pr.line(2, "TRUE AS qualifies%s", commaIf(len(segsOn(segs, src)) > 0))
	}
	for i, seg := range segsOn(segs, src) {
		pr.line(2, "x.%s AS %s%s", pr.id(seg.Column), pr.id("seg_"+seg.Name), commaIf(i < len(segsOn(segs, src))-1))
	}
	pr.line(1, "FROM %s AS x", pr.from(src))
	pr.line(1, "WHERE x.%s IS NOT NULL AND x.%s IS NOT NULL", pr.id(src.Unit), pr.id(src.Time))
	pr.line(2, "AND %s >= %s AND %s < %s", pr.time(src, "x"), us(p.StartUS), pr.time(src, "x"), us(p.EndUS))
	if pf := pr.prefilter(src, "x", 0, 0); pf != "" {
		pr.line(2, "AND %s", pf)
	}
	pr.line(0, "),")
}

// cohortCols lists the cohort CTE's columns, as cohortCTEs prints them.
func (pr *printer) cohortCols() []string {
	cols := []string{"unit_id", "variant", "trigger_us", "trigger_day"}
	for _, seg := range pr.p.Segments {
		cols = append(cols, pr.id("seg_"+seg.Name))
	}
	for _, x := range pr.p.Exclusions {
		cols = append(cols, pr.id(x.Flag))
	}
	return cols
}

// cohortCTEs prints the CTEs from the trigger aggregate to the cohort.
func (pr *printer) cohortCTEs() {
	p, s, d := pr.p, pr.p.Spec, pr.d
	ex := s.Exposure
	src := ex.Source
	segs := p.Segments

	// The trigger and the crossover test come from one GROUP BY over the
	// exposure rows. Rows without a variant count for the trigger time but
	// never decide a unit's variant, whatever their order: a unit seen in
	// one declared-or-not variant takes it, a unit seen in two or more
	// crossed over, and a unit seen in none has an unknown variant. Only
	// crossovers (to report which variant they triggered in) and, with
	// segments read from the exposure row, every unit go back to their
	// rows at the trigger time.
	pr.line(0, "-- One row per exposed unit: its first qualifying exposure (the trigger) and the least and")
	pr.line(0, "-- greatest variant it was seen in (when they differ, the unit crossed over). Rows without a")
	pr.line(0, "-- variant count for the trigger time but never decide the variant.")
	pr.line(0, "exposed_units AS (")
	pr.line(1, "SELECT")
	pr.line(2, "unit_id,")
	pr.line(2, "min(CASE WHEN qualifies THEN ts_us END) AS trigger_us,")
	pr.line(2, "min(variant) AS variant_lo,")
	pr.line(2, "max(variant) AS variant_hi")
	pr.line(1, "FROM exposure_rows")
	pr.line(1, "GROUP BY unit_id")
	pr.line(0, "),")

	exSegs := segsOn(segs, src)
	crossed := "coalesce(u.variant_lo <> u.variant_hi, FALSE)"
	atTrigger := "JOIN exposure_rows AS r ON r.unit_id = u.unit_id AND r.ts_us = u.trigger_us AND r.qualifies"
	pr.line(0, "-- Trigger: each unit's first qualifying exposure%s.", filterNote(ex.Filter))
	if len(exSegs) == 0 {
		pr.line(0, "-- A unit seen in one variant takes it; a crossover is reported under the least variant among")
		pr.line(0, "-- its qualifying rows at the trigger time.")
		pr.line(0, "triggers AS (")
		pr.line(1, "SELECT u.unit_id, u.variant_lo AS variant, u.trigger_us, FALSE AS is_crossover")
		pr.line(1, "FROM exposed_units AS u")
		pr.line(1, "WHERE u.trigger_us IS NOT NULL AND NOT %s", crossed)
		pr.line(1, "UNION ALL")
		pr.line(1, "SELECT u.unit_id, coalesce(min(r.variant), u.variant_lo) AS variant, u.trigger_us, TRUE AS is_crossover")
		pr.line(1, "FROM exposed_units AS u")
		pr.line(1, "%s", atTrigger)
		pr.line(1, "WHERE %s", crossed)
		pr.line(1, "GROUP BY u.unit_id, u.trigger_us, u.variant_lo")
		pr.line(0, "),")
	} else {
		order := "CASE WHEN r.variant IS NULL THEN 1 ELSE 0 END, r.variant"
		for _, seg := range exSegs {
			order += ", r." + pr.id("seg_"+seg.Name)
		}
		pr.line(0, "-- Segment values come from the unit's first qualifying row at the trigger time, ordered by")
		pr.line(0, "-- %s.", strings.ReplaceAll(order, "r.", ""))
		pr.line(0, "triggers AS (")
		pr.line(1, "SELECT q.unit_id, CASE WHEN q.is_crossover THEN coalesce(q.row_variant, q.variant_lo) ELSE q.variant_lo END AS variant,")
		pr.line(2, "q.trigger_us, q.is_crossover%s", segCols(pr, exSegs, "q"))
		pr.line(1, "FROM (")
		pr.line(2, "SELECT u.unit_id, u.variant_lo, r.variant AS row_variant, u.trigger_us, %s AS is_crossover%s,", crossed, segCols(pr, exSegs, "r"))
		pr.line(3, "row_number() OVER (PARTITION BY u.unit_id ORDER BY %s) AS rn", order)
		pr.line(2, "FROM exposed_units AS u")
		pr.line(2, "%s", atTrigger)
		pr.line(1, ") AS q")
		pr.line(1, "WHERE q.rn = 1")
		pr.line(0, "),")
	}

	for _, a := range p.Attrs {
		pr.attribute(a)
	}
	for i, r := range p.Rules {
		pr.rule(i, r)
	}
	pr.priorUnits() // rollout.go

	pr.line(0, "-- Every triggered unit with the reasons it may be excluded.")
	pr.line(0, "cohort AS (")
	pr.line(1, "SELECT")
	pr.line(2, "t.unit_id,")
	pr.line(2, "t.variant,")
	pr.line(2, "t.trigger_us,")
	pr.line(2, "%s AS trigger_day,", d.Day("t.trigger_us", p.TZ))
	for _, seg := range segs {
		alias := "t"
		if seg.Source != src {
			alias = attrAlias(p, seg.Source)
		}
		pr.line(2, "%s.%s AS %s,", alias, pr.id("seg_"+seg.Name), pr.id("seg_"+seg.Name))
	}
	vs := make([]string, len(pr.cohortVariants()))
	for i, v := range pr.cohortVariants() {
		vs[i] = d.Literal(v)
	}
	pr.line(2, "t.is_crossover,")
	prior := len(p.Spec.PriorRuns) > 0
	pr.line(2, "(t.variant IS NULL OR t.variant NOT IN (%s)) AS is_unknown_variant%s", strings.Join(vs, ", "), commaIf(len(p.Rules) > 0 || prior))
	for i, r := range p.Rules {
		pr.line(2, "(r%d.unit_id IS %sNULL) AS %s%s", i+1, notIf(!r.Absent), pr.id("fails_"+r.Name), commaIf(i < len(p.Rules)-1 || prior))
	}
	if prior {
		pr.line(2, "(pe.unit_id IS NOT NULL) AS %s", pr.id(FlagPrior))
	}
	pr.line(1, "FROM triggers AS t")
	for _, a := range p.Attrs {
		if segUses(segs, a) {
			al := attrAlias(p, a)
			pr.line(1, "LEFT JOIN %s AS %s ON %s.unit_id = t.unit_id", pr.id("attr_"+a.Name), al, al)
		}
	}
	for i := range p.Rules {
		pr.line(1, "LEFT JOIN rule_%d AS r%d ON r%d.unit_id = t.unit_id", i+1, i+1, i+1)
	}
	if prior {
		pr.line(1, "LEFT JOIN prior_units AS pe ON pe.unit_id = t.unit_id")
	}
	pr.line(0, "),")
}

func segUses(segs []*metrics.Segment, a *metrics.Source) bool {
	for _, s := range segs {
		if s.Source == a {
			return true
		}
	}
	return false
}

func attrAlias(p *Plan, src *metrics.Source) string {
	for i, a := range p.Attrs {
		if a == src {
			return fmt.Sprintf("a%d", i+1)
		}
	}
	return "a0"
}

func filterNote(f *metrics.Expr) string {
	if f == nil {
		return ""
	}
	return " (a row qualifies when: " + oneLine(f.Text) + ")"
}

func segsOn(segs []*metrics.Segment, src *metrics.Source) []*metrics.Segment {
	var out []*metrics.Segment
	for _, s := range segs {
		if s.Source == src {
			out = append(out, s)
		}
	}
	return out
}

func segCols(pr *printer, segs []*metrics.Segment, alias string) string {
	var b strings.Builder
	for _, s := range segs {
		b.WriteString(", " + alias + "." + pr.id("seg_"+s.Name))
	}
	return b.String()
}

// attribute prints the attribute rows of src that apply at each trigger:
// the latest row at or before the trigger for a time-versioned source, the
// unit's row for a static one.
func (pr *printer) attribute(src *metrics.Source) {
	p := pr.p
	segs := segsOn(p.Segments, src)
	var cols []string
	for _, seg := range segs {
		cols = append(cols, "a."+pr.id(seg.Column)+" AS "+pr.id("seg_"+seg.Name))
	}
	if src.Static {
		pr.line(0, "-- Attributes from %s (declared static: values do not change over time).", oneLine(src.Name))
	} else {
		pr.line(0, "-- Attributes from %s as of each trigger: the latest row at or before it.", oneLine(src.Name))
	}
	pr.line(0, "%s AS (", pr.id("attr_"+src.Name))
	var segNames []string
	for _, seg := range segs {
		segNames = append(segNames, "v."+pr.id("seg_"+seg.Name))
	}
	order := orderAll(pr, src, "a")
	if !src.Static {
		order = pr.time(src, "a") + " DESC, " + order
	}
	pr.line(1, "SELECT v.unit_id%s", listPrefix(segNames))
	pr.line(1, "FROM (")
	pr.line(2, "SELECT t.unit_id%s, row_number() OVER (PARTITION BY t.unit_id ORDER BY %s) AS rn", listPrefix(cols), order)
	pr.line(2, "FROM triggers AS t")
	pr.line(2, "JOIN %s AS a ON a.%s = t.unit_id", pr.from(src), pr.id(src.Unit))
	if !src.Static {
		pr.line(2, "WHERE %s <= t.trigger_us", pr.time(src, "a"))
	}
	pr.line(1, ") AS v")
	pr.line(1, "WHERE v.rn = 1")
	pr.line(0, "),")
}

func orderAll(pr *printer, src *metrics.Source, alias string) string {
	parts := make([]string, len(src.Columns))
	for i, c := range src.Columns {
		parts[i] = alias + "." + pr.id(c)
	}
	return strings.Join(parts, ", ")
}

// rule prints the set of triggered units that have a matching row.
func (pr *printer) rule(i int, r *metrics.Rule) {
	src := r.Source
	filter := "TRUE"
	if r.Filter != nil {
		filter = pr.expr(r.Filter, "s")
	}
	switch r.Kind {
	case metrics.RuleHistory:
		verb := "has"
		if r.Absent {
			verb = "has no"
		}
		pr.line(0, "-- Rule %s: eligible when the unit %s row in %s in [trigger %s, trigger %s)%s.", oneLine(r.Name), verb, oneLine(src.Name), signed(r.From), signed(r.To), whereNote(r.Filter))
		pr.line(0, "rule_%d AS (", i+1)
		pr.line(1, "SELECT DISTINCT t.unit_id")
		pr.line(1, "FROM triggers AS t")
		pr.line(1, "JOIN %s AS s ON s.%s = t.unit_id", pr.from(src), pr.id(src.Unit))
		pr.line(1, "WHERE %s >= %s", pr.time(src, "s"), plusUS("t.trigger_us", r.From.Micros))
		pr.line(2, "AND %s < %s", pr.time(src, "s"), plusUS("t.trigger_us", r.To.Micros))
		if pf := pr.prefilter(src, "s", r.From.Micros, r.To.Micros); pf != "" {
			pr.line(2, "AND %s", pf)
		}
		pr.line(2, "AND coalesce(%s, FALSE)", filter)
	case metrics.RuleAttribute:
		pr.line(0, "-- Rule %s: eligible when the unit's attributes in %s at the trigger satisfy: %s.", oneLine(r.Name), oneLine(src.Name), oneLine(r.Filter.Text))
		pr.line(0, "rule_%d AS (", i+1)
		pr.line(1, "SELECT DISTINCT t.unit_id")
		pr.line(1, "FROM triggers AS t")
		if src.Static {
			pr.line(1, "JOIN %s AS s ON s.%s = t.unit_id", pr.from(src), pr.id(src.Unit))
			pr.line(1, "WHERE coalesce(%s, FALSE)", filter)
		} else {
			// The latest attribute row at or before the trigger must pass.
			pr.line(1, "JOIN (")
			var need []string
			for _, c := range expr.Columns(r.Filter.Node) {
				need = append(need, "a."+pr.id(c))
			}
			pr.line(2, "SELECT %srow_number() OVER (PARTITION BY t2.unit_id ORDER BY %s DESC, %s) AS assay_rn, t2.unit_id AS assay_unit", listSuffix(need), pr.time(src, "a"), orderAll(pr, src, "a"))
			pr.line(2, "FROM triggers AS t2")
			pr.line(2, "JOIN %s AS a ON a.%s = t2.unit_id", pr.from(src), pr.id(src.Unit))
			pr.line(2, "WHERE %s <= t2.trigger_us", pr.time(src, "a"))
			pr.line(1, ") AS s ON s.assay_unit = t.unit_id AND s.assay_rn = 1")
			pr.line(1, "WHERE coalesce(%s, FALSE)", filter)
		}
	}
	pr.line(0, "),")
}

func whereNote(f *metrics.Expr) string {
	if f == nil {
		return ""
	}
	return " where " + oneLine(f.Text)
}

// eligible prints the eligible units with their maturity flags.
func (pr *printer) eligible() {
	p := pr.p
	var conds []string
	for _, x := range p.Exclusions {
		if p.PriorOnly && x.Flag == FlagPrior {
			conds = append(conds, "c."+pr.id(x.Flag))
			continue
		}
		conds = append(conds, "NOT c."+pr.id(x.Flag))
	}
	if p.PriorOnly {
		pr.line(0, "-- Units a prior run exposed, analysed apart: one variant only, a declared variant, every eligibility rule met.")
	} else {
		pr.line(0, "-- Eligible units: one variant only, a declared variant, and every eligibility rule met at the trigger.")
	}
	pr.line(0, "eligible AS (")
	pr.line(1, "SELECT c.unit_id, c.variant, c.trigger_us, c.trigger_day%s", segCols(pr, p.Segments, "c"))
	pr.line(1, "FROM cohort AS c")
	pr.line(1, "WHERE %s", strings.Join(conds, "\n    AND "))
	pr.line(0, "),")
}
