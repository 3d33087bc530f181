package compiler

import (
	"fmt"
	"sort"
	"strconv"
	"strings"
	"time"

	"github.com/assay-dev/assay/dialects"
	"github.com/assay-dev/assay/metrics"
	"github.com/assay-dev/assay/metrics/expr"
)

// Queries is the SQL text of one experiment.
//
// With a dialect that implements dialects.Stager, Setup stores the cohort
// in a temporary table, Main and Health read it, and Cleanup drops it: the
// four run in that order on one connection (engine.Query does this). With
// any other dialect Setup and Cleanup are empty and Main and Health each
// compute the cohort themselves.
type Queries struct {
	Setup string // creates the cohort table; empty when the dialect does not stage
	Main  string // one row per variant (and breakdown key) with sufficient statistics
	// Breakdowns holds, for dialects without GROUP BY GROUPING SETS
	// (dialects.NoGroupingSets), one query per breakdown key; Main then
	// returns the overall rows only. All of them return the same columns
	// (Plan.Columns), so their rows are read as one result. Elsewhere it is
	// empty: Main returns every grouping.
	Breakdowns []string
	Health     string // exposure and exclusion counts
	Cleanup    string // drops the cohort table; empty when Setup is
}

// Script is the statements of q that a run executes, in order, each ended
// by a semicolon: Setup, the named queries (main, health or both), Cleanup.
func (q Queries) Script(main, health bool) string {
	var parts []string
	add := func(s string) {
		if s != "" {
			// The semicolon goes on a line of its own, so that no
			// trailing comment can swallow it.
			parts = append(parts, strings.TrimRight(s, "\n")+"\n;\n")
		}
	}
	add(q.Setup)
	if main {
		add(q.Main)
		for _, b := range q.Breakdowns {
			add(b)
		}
	}
	if health {
		add(q.Health)
	}
	add(q.Cleanup)
	return strings.Join(parts, "\n")
}

// StagedTable is the name of the temporary cohort table of a staged run.
const StagedTable = "assay_cohort"

// Print renders the queries of p in dialect d.
func Print(p *Plan, d dialects.Dialect) (Queries, error) {
	pr := &printer{p: p, d: d}
	var q Queries
	if st, ok := d.(dialects.Stager); ok {
		pr.stage = st
		setup, err := pr.setup()
		if err != nil {
			return Queries{}, err
		}
		q.Setup, q.Cleanup = setup, st.DropTemp(StagedTable)+"\n"
	}
	var main string
	var err error
	if _, union := d.(dialects.NoGroupingSets); union && len(p.GroupBy) > 0 {
		if main, err = pr.main(overallOnly); err != nil {
			return Queries{}, err
		}
		for i := range p.GroupBy {
			b, err := pr.main(i)
			if err != nil {
				return Queries{}, err
			}
			q.Breakdowns = append(q.Breakdowns, b)
		}
	} else if main, err = pr.main(allGroupings); err != nil {
		return Queries{}, err
	}
	health, err := pr.health()
	if err != nil {
		return Queries{}, err
	}
	q.Main, q.Health = main, health
	return q, nil
}

type printer struct {
	p   *Plan
	d   dialects.Dialect
	b   strings.Builder
	err error
	// stage is set when the cohort is computed once, by Setup, into a
	// temporary table.
	stage dialects.Stager
}

func (pr *printer) line(indent int, format string, args ...any) {
	pr.b.WriteString(strings.Repeat("  ", indent))
	fmt.Fprintf(&pr.b, format, args...)
	pr.b.WriteByte('\n')
}

func (pr *printer) id(s string) string { return pr.d.Ident(s) }

func us(v int64) string { return strconv.FormatInt(v, 10) }

func stamp(v int64) string { return time.UnixMicro(v).UTC().Format(time.RFC3339Nano) }

// plusUS renders "x + offset" with the sign folded in.
func plusUS(x string, off int64) string {
	if off < 0 {
		return x + " - " + us(-off)
	}
	return x + " + " + us(off)
}

func (pr *printer) from(src *metrics.Source) string {
	if src.File != "" {
		f, err := pr.d.File(src.File)
		if err != nil && pr.err == nil {
			pr.err = fmt.Errorf("source %s: %w", src.Name, err)
		}
		return f
	}
	return pr.d.Table(src.TableParts)
}

func (pr *printer) col(alias string) func(string) string {
	return func(name string) string { return alias + "." + pr.id(name) }
}

func (pr *printer) expr(e *metrics.Expr, alias string) string {
	return pr.d.Expr(e.Node, pr.col(alias))
}

// time renders a source's time column as microseconds.
func (pr *printer) time(src *metrics.Source, alias string) string {
	return dialects.TimeMicros(pr.d, alias+"."+pr.id(src.Time), src.TimeFormat, pr.p.TZ)
}

func (pr *printer) header(what string) {
	s := pr.p.Spec
	pr.line(0, "-- assay %s %s query for experiment %s (spec fingerprint %s)", Version, what, oneLine(s.ID), s.Fingerprint)
	pr.line(0, "-- Times are compared as integer microseconds since 1970-01-01 UTC; timestamps without a zone are read as %s.", pr.p.TZ)
	pr.line(0, "-- Exposures are read in [%s, %s); outcome windows must have ended by %s.", stamp(pr.p.StartUS), stamp(pr.p.EndUS), stamp(pr.p.AsOfUS))
	files := false
	for _, src := range s.Sources {
		files = files || src.File != ""
	}
	if files {
		pr.line(0, "-- File paths are relative to the spec's directory.")
	}
	pr.standInNote() // planning.go
}

// oneLine keeps a user string inside a single SQL comment line.
func oneLine(s string) string {
	s = strings.Map(func(r rune) rune {
		if r < 0x20 || r == 0x7f || r == 0x2028 || r == 0x2029 {
			return ' '
		}
		return r
	}, s)
	return strings.ReplaceAll(s, "*/", "* /")
}

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

func notIf(b bool) string {
	if b {
		return ""
	}
	return "NOT "
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

func commaIf(b bool) string {
	if b {
		return ","
	}
	return ""
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

func listSuffix(cols []string) string {
	if len(cols) == 0 {
		return ""
	}
	return strings.Join(cols, ", ") + ", "
}

func listPrefix(cols []string) string {
	if len(cols) == 0 {
		return ""
	}
	return ", " + strings.Join(cols, ", ")
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

func signed(d metrics.Duration) string {
	if d.Micros < 0 {
		return "- " + durationName(-d.Micros)
	}
	return "+ " + durationName(d.Micros)
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
		conds = append(conds, "NOT c."+pr.id(x.Flag))
	}
	pr.line(0, "-- Eligible units: one variant only, a declared variant, and every eligibility rule met at the trigger.")
	pr.line(0, "eligible AS (")
	pr.line(1, "SELECT c.unit_id, c.variant, c.trigger_us, c.trigger_day%s", segCols(pr, p.Segments, "c"))
	pr.line(1, "FROM cohort AS c")
	pr.line(1, "WHERE %s", strings.Join(conds, "\n    AND "))
	pr.line(0, "),")
}

// outcomeSources lists the event sources other than the exposure source
// that metrics or history rules read, in plan order.
func (pr *printer) outcomeSources() []*metrics.Source {
	seen := map[*metrics.Source]bool{pr.p.Spec.Exposure.Source: true}
	var out []*metrics.Source
	add := func(s *metrics.Source) {
		if s != nil && s.IsEvent() && !seen[s] {
			seen[s] = true
			out = append(out, s)
		}
	}
	for _, sp := range pr.p.Sources {
		add(sp.Source)
	}
	for _, r := range pr.p.Rules {
		if r.Kind == metrics.RuleHistory {
			add(r.Source)
		}
	}
	return out
}

// rowCond renders the test a pass row r must pass to count for aggregate
// a: its offset from the unit's trigger (r.dt_us) inside the aggregate's
// window, and its filter.
func (pr *printer) rowCond(a *AggPlan) string {
	cond := fmt.Sprintf("r.dt_us >= %s AND r.dt_us < %s", us(a.From.Micros), us(a.To.Micros))
	if a.Agg.Filter != nil {
		cond += " AND " + paren(pr.passExpr(a.Agg.Filter))
	}
	return cond
}

// passExpr renders a user expression over a pass's row r, whose source
// columns are renamed c_<name> so that they cannot collide with the
// pass's own unit_id and dt_us.
func (pr *printer) passExpr(e *metrics.Expr) string {
	return pr.d.Expr(e.Node, func(name string) string { return "r." + pr.id("c_"+name) })
}

// passColumns lists the source columns a pass's expressions read, sorted.
func passColumns(sp *SourcePass) []string {
	seen := map[string]bool{}
	for _, a := range sp.Aggs {
		for _, e := range []*metrics.Expr{a.Agg.Filter, a.Agg.Value} {
			if e == nil {
				continue
			}
			for _, c := range expr.Columns(e.Node) {
				seen[c] = true
			}
		}
	}
	out := make([]string, 0, len(seen))
	for c := range seen {
		out = append(out, c)
	}
	sort.Strings(out)
	return out
}

func (pr *printer) aggExpr(a *AggPlan) string {
	cond := pr.rowCond(a)
	switch a.Agg.Func {
	case metrics.AggSum:
		// NaN and ±Inf would poison every mean and variance: x - x = 0 holds
		// only for finite x (and is NULL for NULL), on every engine. The
		// sum itself is exact, over values fixed to 10 decimal places: a
		// floating-point sum depends on the order in which a parallel
		// engine adds the rows, and a total that is exactly a proportion's
		// threshold (250.3 + 349.7 against 600) would otherwise fall on
		// either side of it from one run to the next.
		v := pr.d.Double(pr.passExpr(a.Agg.Value))
		return pr.d.Double(fmt.Sprintf("sum(CASE WHEN %s AND %s - %s = 0 THEN %s END)", cond, v, v, pr.d.Fixed(v)))
	case metrics.AggCountDistinct:
		return fmt.Sprintf("count(DISTINCT CASE WHEN %s THEN %s END)", cond, pr.passExpr(a.Agg.Value))
	default:
		return fmt.Sprintf("count(CASE WHEN %s THEN 1 END)", cond)
	}
}

func paren(s string) string { return "(" + s + ")" }

// slack widens the static prefilter ranges by two days on each side, more
// than any time-zone offset, so the prefilter is correct whether the
// column holds naive wall-clock times in any zone or zoned instants, and
// whatever the session's time zone.
const slack = 2 * 86400e6

// prefilter renders a static range test on src's time column that every
// row the exact test can accept passes, or "" when the dialect cannot
// write timestamp literals. from and to are offsets from the analysis
// window's start and end.
func (pr *printer) prefilter(src *metrics.Source, alias string, from, to int64) string {
	tl, ok := pr.d.(dialects.TimeLiterals)
	if !ok || src.TimeFormat.Text != "" { // stored as text or epoch numbers: no timestamp literal compares
		return ""
	}
	col := alias + "." + pr.id(src.Time)
	return fmt.Sprintf("%s >= %s AND %s < %s", col, tl.TimeLiteral(pr.p.StartUS+from-slack), col, tl.TimeLiteral(pr.p.EndUS+to+slack))
}

func (pr *printer) nonFiniteExpr(a *AggPlan) string {
	cond := pr.rowCond(a)
	v := pr.d.Double(pr.passExpr(a.Agg.Value))
	return fmt.Sprintf("count(CASE WHEN %s AND NOT (%s - %s = 0) THEN 1 END)", cond, v, v)
}

func aggRule(a *AggPlan) string {
	var what string
	switch a.Agg.Func {
	case metrics.AggSum:
		what = "sum of " + oneLine(a.Agg.Value.Text)
	case metrics.AggCountDistinct:
		what = "distinct values of " + oneLine(a.Agg.Value.Text)
	default:
		what = "count of rows"
	}
	if a.Agg.Filter != nil {
		what += " where " + oneLine(a.Agg.Filter.Text)
	}
	return what
}

// passes prints one CTE per outcome source with every per-unit aggregate
// that reads it.
func (pr *printer) passes() {
	for _, sp := range pr.p.Sources {
		src := sp.Source
		names := make([]string, 0, len(sp.Aggs))
		for _, a := range sp.Aggs {
			names = append(names, a.Col)
		}
		pr.line(0, "-- One pass over %s for: %s.", oneLine(src.Name), oneLine(strings.Join(names, ", ")))
		pr.line(0, "%s AS (", pr.id("pass_"+src.Name))
		// Aggregates the plan found identical are computed once; the
		// duplicates are read from the first in unit_values.
		var lines [][2]string // comment, aggregate
		for _, a := range sp.Aggs {
			if a.SameAs != nil {
				lines = append(lines, [2]string{fmt.Sprintf("-- %s: %s in [trigger %s, trigger %s): the same as %s", oneLine(a.Col), aggRule(a), signed(a.From), signed(a.To), oneLine(a.SameAs.Col)), ""})
				continue
			}
			lines = append(lines, [2]string{fmt.Sprintf("-- %s: %s in [trigger %s, trigger %s)", oneLine(a.Col), aggRule(a), signed(a.From), signed(a.To)), pr.aggExpr(a) + " AS " + pr.id(a.Col)})
			if a.NonFinite {
				lines = append(lines, [2]string{"", pr.nonFiniteExpr(a) + " AS " + pr.id(a.Col+"__nonfinite")})
			}
		}
		last := 0
		for i, l := range lines {
			if l[1] != "" {
				last = i
			}
		}
		pr.line(1, "SELECT")
		pr.line(2, "r.unit_id,")
		for i, l := range lines {
			if l[0] != "" {
				pr.line(2, "%s", l[0])
			}
			if l[1] != "" {
				pr.line(2, "%s%s", l[1], commaIf(i < last))
			}
		}
		// Each joined row's time is converted and offset from the trigger
		// once (dt_us, microseconds after it); every window test is then a
		// comparison with a constant.
		cols := ""
		for _, c := range passColumns(sp) {
			cols += fmt.Sprintf(", s.%s AS %s", pr.id(c), pr.id("c_"+c))
		}
		pr.line(1, "FROM (")
		pr.line(2, "SELECT e.unit_id, %s - e.trigger_us AS dt_us%s", pr.time(src, "s"), cols)
		pr.line(2, "FROM eligible AS e")
		pr.line(2, "JOIN %s AS s ON s.%s = e.unit_id", pr.from(src), pr.id(src.Unit))
		if pf := pr.prefilter(src, "s", sp.From, sp.To); pf != "" {
			pr.line(2, "-- static range (widened by two days) so the engine can skip data early")
			pr.line(2, "WHERE %s", pf)
		}
		pr.line(1, ") AS r")
		pr.line(1, "WHERE r.dt_us >= %s AND r.dt_us < %s", us(sp.From), us(sp.To))
		pr.line(1, "GROUP BY r.unit_id")
		pr.line(0, "),")
	}
}

// units prints one row per eligible unit with every per-unit value; units
// without outcome rows get zero.
func (pr *printer) units(more bool) {
	p := pr.p
	pr.line(0, "-- One row per eligible unit; a unit without outcome rows counts as zero.")
	pr.line(0, "unit_values AS (")
	pr.line(1, "SELECT")
	pr.line(2, "e.unit_id,")
	pr.line(2, "e.variant,")
	pr.line(2, "e.trigger_day,")
	if p.StepKey() >= 0 {
		pr.line(2, "e.trigger_us,") // the rollout step's key (rollout.go)
	}
	for _, seg := range p.Segments {
		pr.line(2, "e.%s,", pr.id("seg_"+seg.Name))
	}
	for _, end := range p.MatureEnds {
		pr.line(2, "(%s <= %s) AS %s,", plusUS("e.trigger_us", end), us(p.AsOfUS), matureCol(end))
	}
	var cols []string
	for i, sp := range p.Sources {
		for _, a := range sp.Aggs {
			from := a.Source().Col
			cols = append(cols, fmt.Sprintf("coalesce(p%d.%s, 0) AS %s", i+1, pr.id(from), pr.id(a.Col)))
			if a.NonFinite {
				cols = append(cols, fmt.Sprintf("coalesce(p%d.%s, 0) AS %s", i+1, pr.id(from+"__nonfinite"), pr.id(a.Col+"__nonfinite")))
			}
		}
	}
	for i, c := range cols {
		pr.line(2, "%s%s", c, commaIf(i < len(cols)-1))
	}
	pr.line(1, "FROM eligible AS e")
	for i, sp := range p.Sources {
		pr.line(1, "LEFT JOIN %s AS p%d ON p%d.unit_id = e.unit_id", pr.id("pass_"+sp.Source.Name), i+1, i+1)
	}
	pr.line(0, ")%s", commaIf(more))
}

func (pr *printer) capCol(a *AggPlan) string { return "cap_" + strings.TrimPrefix(a.Col, "m_") }

// value renders a unit's (possibly capped) value of aggregate a, NULL when
// the unit is not mature for the metric.
func (pr *printer) value(mp *MetricPlan, a *AggPlan) string {
	v := "u." + pr.id(a.Col)
	switch {
	case a.Agg.HasCap:
		v = pr.d.Least(v, strconv.FormatFloat(a.Agg.Cap, 'g', -1, 64))
	case a.Agg.CapQuantile > 0:
		v = pr.d.Least(v, "k."+pr.id(pr.capCol(a)))
	}
	return "CASE WHEN u." + mp.Mature + " THEN " + pr.d.Double(v) + " END"
}

// Centring. Each value in Plan.Centres is shifted by its mean over the
// units of its group (per variant; pooled in calibration, whose groups mix
// the original variants) before the variance and covariance aggregates.
// Shifting by a constant leaves variances and covariances unchanged,
// Var(x − c) = Var(x), and keeps the engine's partial sums small, so the
// result does not depend on how the engine splits and merges the work
// (Chan, Golub & LeVeque 1983, "Algorithms for computing the sample
// variance: analysis and recommendations", The American Statistician 37,
// on shifted data). Centring within each variant keeps one arm's magnitude
// from costing another arm its precision.

// rawValue is a's per-unit value as aggregated, before centring.
func (pr *printer) rawValue(mp *MetricPlan, a *AggPlan) string {
	if a == mp.Cov {
		return pr.covValue(mp)
	}
	return pr.value(mp, a)
}

// centred renders a's value minus its pooled centre (or the 0/1
// indicator of a proportion covariate, which is not centred).
func (pr *printer) centred(a *AggPlan) string {
	mp := a.Metric
	if a.Centre == "" {
		return pr.rawValue(mp, a)
	}
	return "(" + pr.rawValue(mp, a) + " - c0." + pr.id(a.Centre) + ")"
}

// mean renders the mean of a's value as centre + mean of the centred
// value; a group whose values are all equal gets that value exactly (so an
// all-zero baseline is exactly zero).
func (pr *printer) mean(a *AggPlan) string {
	mp := a.Metric
	if a.Centre == "" {
		return "avg(" + pr.rawValue(mp, a) + ")"
	}
	raw := pr.rawValue(mp, a)
	return "CASE WHEN min(" + raw + ") = max(" + raw + ") THEN min(" + raw + ") ELSE min(c0." + pr.id(a.Centre) + ") + avg(" + pr.centred(a) + ") END"
}

// covValue renders a unit's covariate, NULL when the unit is not mature for
// the metric (so Y and X are aggregated over the same units).
func (pr *printer) covValue(mp *MetricPlan) string {
	c := mp.M.Covariate
	v := "u." + pr.id(mp.Cov.Col)
	if c.Indicator {
		return fmt.Sprintf("CASE WHEN u.%s THEN %s END", mp.Mature, pr.d.OneZero(v+" > "+strconv.FormatFloat(c.Above, 'g', -1, 64)))
	}
	return "CASE WHEN u." + mp.Mature + " THEN " + pr.d.Double(v) + " END"
}

func covRule(mp *MetricPlan) string {
	c := mp.M.Covariate
	what := aggRule(mp.Cov)
	if c.Indicator {
		what = fmt.Sprintf("whether %s is above %v", what, c.Above)
	}
	return fmt.Sprintf("%s (definition of %s) in [trigger %s, trigger %s), before the trigger", what, c.Of.Name, signed(c.From), signed(c.To))
}

func (pr *printer) indicator(mp *MetricPlan) string {
	return fmt.Sprintf("CASE WHEN u.%s THEN %s END", mp.Mature, pr.d.OneZero("u."+pr.id(mp.Value.Col)+" > "+strconv.FormatFloat(mp.M.Above, 'g', -1, 64)))
}

// Groupings a main query returns: every grouping (GROUPING SETS), the
// overall rows only, or (a GroupBy index) one breakdown only.
const (
	allGroupings = -2
	overallOnly  = -1
)

// main prints a main query returning grouping (allGroupings, overallOnly
// or the index of one breakdown).
func (pr *printer) main(grouping int) (string, error) {
	p := pr.p
	pr.b.Reset()
	switch {
	case grouping >= 0:
		pr.header("per-variant statistics by " + p.GroupBy[grouping].Label())
		pr.line(0, "-- This engine has no GROUPING SETS: each breakdown is a query of its own, with the same columns.")
	case grouping == overallOnly && len(p.GroupBy) > 0:
		pr.header("per-variant statistics (overall)")
		pr.line(0, "-- This engine has no GROUPING SETS: each breakdown is a query of its own, with the same columns.")
	default:
		pr.header("per-variant statistics")
	}
	if pr.stage != nil {
		pr.line(0, "-- Reads the cohort table of the setup statement.")
		pr.line(0, "WITH")
		pr.stagedCohort()
	} else {
		pr.cohort()
	}
	pr.eligible()
	pr.passes()
	var segKeys []GroupKey
	for i, g := range p.GroupBy {
		if g.Segment != nil && (grouping == allGroupings || grouping == i) {
			segKeys = append(segKeys, g)
		}
	}
	cents := len(p.Centres) > 0
	pr.units(p.HasCapQuant || len(segKeys) > 0 || cents)
	if p.HasCapQuant {
		pr.line(0, "-- Winsorising caps: pooled quantiles over mature units of all variants.")
		pr.line(0, "caps AS (")
		pr.line(1, "SELECT")
		var cs []string
		for _, mp := range p.Metrics {
			for _, a := range []*AggPlan{mp.Value, mp.Num, mp.Den} {
				if a != nil && a.Agg.CapQuantile > 0 {
					cs = append(cs, fmt.Sprintf("%s AS %s", pr.d.Quantile("CASE WHEN u."+mp.Mature+" THEN "+pr.d.Double("u."+pr.id(a.Col))+" END", a.Agg.CapQuantile), pr.id(pr.capCol(a))))
				}
			}
		}
		for i, c := range cs {
			pr.line(2, "%s%s", c, commaIf(i < len(cs)-1))
		}
		pr.line(1, "FROM unit_values AS u")
		pr.line(0, ")%s", commaIf(len(segKeys) > 0 || cents))
	}
	keyExpr := map[string]string{}
	for _, g := range segKeys {
		col := "u." + pr.id(g.Name)
		txt := pr.d.Text(col)
		pr.line(0, "-- Segment %s: the %d values with the most eligible units; the rest are grouped as '(other)'.", oneLine(g.Segment.Name), g.Segment.TopK)
		pr.line(0, "%s AS (", pr.id("top_"+g.Segment.Name))
		pr.line(1, "SELECT g.value, row_number() OVER (ORDER BY g.units DESC, g.value) AS value_rank")
		pr.line(1, "FROM (")
		pr.line(2, "SELECT %s AS value, count(*) AS units", txt)
		pr.line(2, "FROM unit_values AS u")
		pr.line(2, "WHERE %s IS NOT NULL", col)
		pr.line(2, "GROUP BY %s", txt)
		pr.line(1, ") AS g")
		pr.line(0, "),")
		keyExpr[g.Name] = "u." + pr.id("key_"+g.Name)
	}
	from := "unit_values"
	if len(segKeys) > 0 {
		// The grouping keys are plain columns of their own CTE, so engines
		// that insist on grouping by selected columns accept the query.
		from = "keyed_units"
		pr.line(0, "-- Each unit's segment keys: one of the top values, '(other)' for the rest, '(null)' when missing.")
		pr.line(0, "keyed_units AS (")
		pr.line(1, "SELECT")
		pr.line(2, "u.*,")
		for i, g := range segKeys {
			col := "u." + pr.id(g.Name)
			alias := fmt.Sprintf("k%d", i+1)
			pr.line(2, "CASE WHEN %s IS NULL THEN %s WHEN %s.value_rank <= %d THEN %s.value ELSE %s END AS %s%s", col, pr.d.Literal("(null)"), alias, g.Segment.TopK, alias, pr.d.Literal("(other)"), pr.id("key_"+g.Name), commaIf(i < len(segKeys)-1))
		}
		pr.line(1, "FROM unit_values AS u")
		for i, g := range segKeys {
			alias := fmt.Sprintf("k%d", i+1)
			pr.line(1, "LEFT JOIN %s AS %s ON %s.value = %s", pr.id("top_"+g.Segment.Name), alias, alias, pr.d.Text("u."+pr.id(g.Name)))
		}
		pr.line(0, ")%s", commaIf(cents))
	}
	if cents {
		if p.CentrePerGroup {
			pr.line(0, "-- Centres: each variant's means, subtracted before the variance and covariance aggregates so")
			pr.line(0, "-- their partial sums stay small (numerically stable whatever the engine's merge order).")
		} else {
			pr.line(0, "-- Centres: pooled means (calibration groups mix the variants), subtracted before the variance")
			pr.line(0, "-- and covariance aggregates so their partial sums stay small.")
		}
		pr.line(0, "centres AS (")
		pr.line(1, "SELECT")
		if p.CentrePerGroup {
			pr.line(2, "u.variant,")
		}
		for i, a := range p.Centres {
			pr.line(2, "avg(%s) AS %s%s", pr.rawValue(a.Metric, a), pr.id(a.Centre), commaIf(i < len(p.Centres)-1))
		}
		pr.line(1, "FROM unit_values AS u")
		if p.HasCapQuant {
			pr.line(1, "CROSS JOIN caps AS k")
		}
		if p.CentrePerGroup {
			pr.line(1, "GROUP BY u.variant")
		}
		pr.line(0, ")")
	}

	variantExpr := "u.variant"
	keys := []string{"u.variant"}
	if p.Splits > 0 {
		rs, ok := pr.d.(dialects.Resplitter)
		if !ok {
			return "", fmt.Errorf("dialect %s cannot re-split units for calibration", pr.d.Name())
		}
		h := rs.Uniform("u.unit_id", "z.split", p.Salt)
		var b strings.Builder
		b.WriteString("CASE")
		cum := 0.0
		for i, v := range p.Variants {
			cum += p.Weights[i]
			if i == len(p.Variants)-1 {
				fmt.Fprintf(&b, " ELSE %s END", pr.d.Literal(v))
				break
			}
			fmt.Fprintf(&b, " WHEN %s < %s THEN %s", h, strconv.FormatFloat(cum, 'g', -1, 64), pr.d.Literal(v))
		}
		variantExpr = b.String()
		keys = []string{"z.split", variantExpr}
	}
	groupExpr := map[string]string{}
	for _, g := range p.GroupBy {
		if g.Day {
			groupExpr[g.Name] = "u.trigger_day"
		} else if g.Step {
			groupExpr[g.Name] = pr.stepCase("u.trigger_us") // rollout.go
		} else {
			groupExpr[g.Name] = keyExpr[g.Name]
		}
	}
	// selectList prints the SELECT list and FROM clause. Key columns hold
	// their expression when only is "*" (GROUPING SETS: the engine NULLs the
	// keys outside each grouping) or the key's name, and NULL otherwise.
	selectList := func(only string) {
		for _, c := range p.Columns {
			switch c.Role {
			case RoleSpecFingerprint:
				pr.line(1, "%s AS %s,", pr.d.Literal(p.Spec.Fingerprint), pr.id(c.Name))
			case RoleOptions:
				pr.line(1, "%s AS %s,", pr.d.Literal(p.Options.Text()), pr.id(c.Name))
			case RoleSplit:
				pr.line(1, "-- Calibration: each eligible unit is re-assigned at random in each of %d splits (salt %d), with the planned weights.", p.Splits, p.Salt)
				pr.line(1, "z.split AS %s,", pr.id(c.Name))
			case RoleVariant:
				pr.line(1, "%s AS %s,", variantExpr, pr.id(c.Name))
			case RoleKey:
				e := groupExpr[c.Name]
				if only != "*" && only != c.Name {
					e = "NULL"
				}
				pr.line(1, "%s AS %s,", e, pr.id(c.Name))
			case RoleUnits:
				pr.line(1, "count(*) AS %s%s", pr.id(c.Name), commaIf(len(p.Metrics) > 0))
			}
		}
		for i, mp := range p.Metrics {
			pr.metricStats(mp, i == len(p.Metrics)-1)
		}
		pr.line(0, "FROM %s AS u", from)
		if p.HasCapQuant {
			pr.line(0, "CROSS JOIN caps AS k")
		}
		if cents {
			if p.CentrePerGroup {
				pr.line(0, "JOIN centres AS c0 ON c0.variant = u.variant")
			} else {
				pr.line(0, "CROSS JOIN centres AS c0")
			}
		}
		if p.Splits > 0 {
			pr.line(0, "CROSS JOIN %s", pr.d.(dialects.Resplitter).Splits(p.Splits))
		}
	}
	order := []string{pr.id(ColVariant)}
	if p.Splits > 0 {
		order = []string{pr.id(ColSplit), pr.id(ColVariant)}
	}
	for _, g := range p.GroupBy {
		order = append(order, pr.id(g.Name))
	}
	switch {
	case grouping == allGroupings && len(p.GroupBy) > 0:
		pr.line(0, "-- The overall rows and one set of rows per breakdown, from one pass over the units: in each")
		pr.line(0, "-- grouping the keys it does not use are NULL.")
		pr.line(0, "SELECT")
		selectList("*")
		sets := []string{"(" + strings.Join(keys, ", ") + ")"}
		for _, g := range p.GroupBy {
			sets = append(sets, "("+strings.Join(append(append([]string{}, keys...), groupExpr[g.Name]), ", ")+")")
		}
		pr.line(0, "GROUP BY GROUPING SETS (%s)", strings.Join(sets, ", "))
	case grouping >= 0:
		g := p.GroupBy[grouping]
		pr.line(0, "SELECT")
		selectList(g.Name)
		pr.line(0, "GROUP BY %s", strings.Join(append(append([]string{}, keys...), groupExpr[g.Name]), ", "))
	default:
		pr.line(0, "SELECT")
		selectList("")
		pr.line(0, "GROUP BY %s", strings.Join(keys, ", "))
	}
	pr.line(0, "ORDER BY %s", strings.Join(order, ", "))
	return pr.b.String(), pr.err
}

// metricStats prints the statistics columns of mp, in the order of
// mp.Stats.
func (pr *printer) metricStats(mp *MetricPlan, last bool) {
	m := mp.M
	pr.line(1, "-- %s (%s, %s): %s", oneLine(m.Name), m.Role, m.Kind, mp.Rule)
	var y, num, den, x string
	switch m.Kind {
	case metrics.KindRatio:
		num, den = pr.centred(mp.Num), pr.centred(mp.Den)
	case metrics.KindProportion:
		y = pr.indicator(mp)
	default:
		y = pr.centred(mp.Value)
	}
	if mp.Cov != nil {
		x = pr.centred(mp.Cov)
	}
	for j, st := range mp.Stats {
		var e string
		switch st {
		case StatN:
			e = "count(CASE WHEN u." + mp.Mature + " THEN 1 END)"
		case StatNumMean:
			e = pr.mean(mp.Num)
		case StatDenMean:
			e = pr.mean(mp.Den)
		case StatNumVar:
			e = pr.d.VarSamp(num)
		case StatDenVar:
			e = pr.d.VarSamp(den)
		case StatCov:
			e = pr.d.CovarSamp(num, den)
		case StatNonFinite:
			var bad []string
			for _, a := range mp.NonFinite {
				bad = append(bad, "u."+pr.id(a.Col+"__nonfinite"))
			}
			e = "sum(" + strings.Join(bad, " + ") + ")"
		case StatMean:
			if m.Kind == metrics.KindProportion {
				e = "avg(" + y + ")"
			} else {
				e = pr.mean(mp.Value)
			}
		case StatVar:
			e = pr.d.VarSamp(y)
		case StatXMean:
			pr.line(1, "-- %s covariate: %s", oneLine(m.Name), mp.CovRule)
			e = pr.mean(mp.Cov)
		case StatXVar:
			e = pr.d.VarSamp(x)
		case StatYXCov:
			e = pr.d.CovarSamp(y, x)
		case StatNumXCov:
			e = pr.d.CovarSamp(num, x)
		case StatDenXCov:
			e = pr.d.CovarSamp(den, x)
		default:
			pr.fail(fmt.Errorf("compiler: no SQL for statistic %s", st))
		}
		pr.line(1, "%s AS %s%s", e, pr.id(mp.Column(st)), commaIf(j < len(mp.Stats)-1 || !last))
	}
}

func (pr *printer) fail(err error) {
	if pr.err == nil {
		pr.err = err
	}
}

func metricRule(mp *MetricPlan) string {
	m := mp.M
	win := fmt.Sprintf("window [trigger %s, trigger %s), mature units only", signed(m.From), signed(m.To))
	capNote := func(a *AggPlan) string {
		switch {
		case a.Agg.HasCap:
			return fmt.Sprintf(", capped at %v", a.Agg.Cap)
		case a.Agg.CapQuantile > 0:
			return fmt.Sprintf(", capped at the pooled %v quantile", a.Agg.CapQuantile)
		}
		return ""
	}
	switch m.Kind {
	case metrics.KindRatio:
		return fmt.Sprintf("per-unit %s%s over per-unit %s%s; %s", aggRule(mp.Num), capNote(mp.Num), aggRule(mp.Den), capNote(mp.Den), win)
	case metrics.KindProportion:
		return fmt.Sprintf("share of units whose %s is above %v; %s", aggRule(mp.Value), m.Above, win)
	}
	return fmt.Sprintf("mean per unit of %s%s; %s", aggRule(mp.Value), capNote(mp.Value), win)
}

// health prints the exposure and exclusion counts query. Its rows and
// columns are the plan's health contract (HealthColumns, HealthKind).
func (pr *printer) health() (string, error) {
	pr.b.Reset()
	p := pr.p
	src := p.Spec.Exposure.Source
	pr.header("health")
	neverFrom := "exposed_units AS u"
	if pr.stage != nil {
		pr.line(0, "-- Reads the cohort table of the setup statement.")
		pr.line(0, "WITH")
		pr.exposureRows()
		pr.stagedCohort()
		neverFrom = pr.stage.TempRef(StagedTable) + " AS u"
	} else {
		pr.cohort()
	}
	pr.line(0, "-- Exposure rows outside the analysis window, or without a unit or time.")
	pr.line(0, "ignored_rows AS (")
	pr.line(1, "SELECT")
	pr.line(2, "count(CASE WHEN x.%s IS NULL THEN 1 END) AS %s,", pr.id(src.Unit), IgnoredNullUnit)
	pr.line(2, "count(CASE WHEN x.%s IS NULL THEN 1 END) AS %s,", pr.id(src.Time), IgnoredNullTime)
	t := pr.time(src, "x")
	pr.line(2, "count(CASE WHEN %s < %s THEN 1 END) AS %s,", t, us(p.StartUS), IgnoredBeforeStart)
	pr.line(2, "count(CASE WHEN %s >= %s THEN 1 END) AS %s", t, us(p.EndUS), IgnoredAfterEnd)
	pr.line(1, "FROM %s AS x", pr.from(src))
	pr.line(0, "),")
	pr.line(0, "-- Exposure rows in the window without a variant: they count for the trigger time only.")
	pr.line(0, "variantless_rows AS (")
	pr.line(1, "SELECT count(*) - count(variant) AS %s FROM exposure_rows", IgnoredNullVariant)
	pr.line(0, "),")
	pr.line(0, "-- Undeclared variant values of triggered units, the %d with the most units.", UnknownVariantValues)
	pr.line(0, "unknown_values AS (")
	pr.line(1, "SELECT v.variant, v.units FROM (")
	pr.line(2, "SELECT c.variant, count(*) AS units,")
	pr.line(3, "row_number() OVER (ORDER BY count(*) DESC, c.variant) AS value_rank")
	pr.line(2, "FROM cohort AS c")
	pr.line(2, "WHERE c.is_unknown_variant AND c.variant IS NOT NULL AND NOT c.is_crossover")
	pr.line(2, "GROUP BY c.variant")
	pr.line(1, ") AS v")
	pr.line(1, "WHERE v.value_rank <= %d", UnknownVariantValues)
	outcome := pr.outcomeSources()
	pr.line(0, ")%s", commaIf(len(outcome) > 0))
	for i, o := range outcome {
		pr.line(0, "-- Rows of %s that no metric or rule can use: no unit or no time.", oneLine(o.Name))
		pr.line(0, "nulls_%d AS (", i+1)
		// count(*) - count(x) rather than a CASE per row: an engine that
		// keeps NULL statistics per block (DuckDB does) answers it without
		// reading a column that holds no NULLs.
		pr.line(1, "SELECT count(*) - count(s.%s) AS %s, count(*) - count(s.%s) AS %s", pr.id(o.Unit), IgnoredNullUnit, pr.id(o.Time), IgnoredNullTime)
		pr.line(1, "FROM %s AS s", pr.from(o))
		pr.line(0, ")%s", commaIf(i < len(outcome)-1))
	}
	hc := make([]string, len(HealthColumns))
	for i, c := range HealthColumns {
		hc[i] = "h." + c
	}
	pr.line(0, "SELECT %s FROM (", strings.Join(hc, ", "))
	first := true
	sel := func(kind HealthKind, reason, source, variant, day, rows, units, from, where, group string) {
		if !first {
			pr.line(1, "UNION ALL")
		}
		first = false
		pr.line(1, "SELECT %s AS %s, %s AS %s, %s AS %s, %s AS %s, %s AS %s, %s AS %s, %s AS %s", pr.d.Literal(string(kind)), HColKind, reason, HColReason, source, HColSource, variant, HColVariant, day, HColDay, rows, HColRows, units, HColUnits)
		pr.line(1, "FROM %s", from)
		if where != "" {
			pr.line(1, "WHERE %s", where)
		}
		if group != "" {
			pr.line(1, "GROUP BY %s", group)
		}
	}
	q := pr.d.Literal
	day := pr.d.Day("ts_us", p.TZ)
	sel(HealthExposures, "NULL", "NULL", "variant", day, "count(*)", "count(DISTINCT unit_id)", "exposure_rows", "", "variant, "+day)
	sel(HealthTriggers, "NULL", "NULL", "variant", "trigger_day", "count(*)", "count(*)", "cohort", "", "variant, trigger_day")
	sel(HealthNeverTriggered, "NULL", "NULL", "NULL", "NULL", "count(*)", "count(*)", neverFrom, "u.trigger_us IS NULL", "")
	var all []string
	for _, x := range p.Exclusions {
		sel(HealthExcluded, q(x.Reason), "NULL", "variant", "NULL", "count(*)", "count(*)", "cohort", pr.id(x.Flag), "variant")
		all = append(all, pr.id(x.Flag))
	}
	sel(HealthExcluded, q(ExcludedAny), "NULL", "variant", "NULL", "count(*)", "count(*)", "cohort", strings.Join(all, " OR "), "variant")
	for _, ig := range IgnoredExposureReasons {
		from := "ignored_rows"
		if ig == IgnoredNullVariant {
			from = "variantless_rows"
		}
		sel(HealthIgnoredRows, q(ig), "NULL", "NULL", "NULL", ig, "NULL", from, "", "")
	}
	for i, o := range outcome {
		for _, ig := range IgnoredOutcomeReasons {
			sel(HealthOutcomeRows, q(ig), q(o.Name), "NULL", "NULL", ig, "NULL", fmt.Sprintf("nulls_%d", i+1), "", "")
		}
	}
	sel(HealthUnknownVariant, "NULL", "NULL", "variant", "NULL", "units", "units", "unknown_values", "", "")
	pr.line(0, ") AS h")
	pr.line(0, "ORDER BY h.%s, h.%s, h.%s, h.%s, h.%s", HColKind, HColReason, HColSource, HColVariant, HColDay)
	return pr.b.String(), pr.err
}
