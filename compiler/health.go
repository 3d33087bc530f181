package compiler

import (
	"fmt"
	"strings"

	"github.com/assay-dev/assay/metrics"
)

// The health query: exposures, triggers, exclusions, ignored rows and
// undeclared variants, with the columns of HealthColumns.

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
	seen := p.OutcomeSources()
	pr.line(0, ")%s", commaIf(len(outcome) > 0 || len(seen) > 0))
	for i, o := range outcome {
		pr.line(0, "-- Rows of %s that no metric or rule can use: no unit or no time.", oneLine(o.Name))
		pr.line(0, "nulls_%d AS (", i+1)
		// count(*) - count(x) rather than a CASE per row: an engine that
		// keeps NULL statistics per block (DuckDB does) answers it without
		// reading a column that holds no NULLs.
		pr.line(1, "SELECT count(*) - count(s.%s) AS %s, count(*) - count(s.%s) AS %s", pr.id(o.Unit), IgnoredNullUnit, pr.id(o.Time), IgnoredNullTime)
		pr.line(1, "FROM %s AS s", pr.from(o))
		pr.line(0, ")%s", commaIf(i < len(outcome)-1 || len(seen) > 0))
	}
	pr.noOutcomes(seen)
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
	// Triggered units per variant and day (unit_count) and, as row_count,
	// those of them not exposed in a prior run: the daily sample ratio
	// reads the latter, since a prior run's units were assigned then.
	fresh := "count(*)"
	if len(p.Spec.PriorRuns) > 0 {
		fresh = "count(CASE WHEN NOT " + pr.id(FlagPrior) + " THEN 1 END)"
	}
	sel(HealthTriggers, "NULL", "NULL", "variant", "trigger_day", fresh, "count(*)", "cohort", "", "variant, trigger_day")
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
	if len(seen) > 0 {
		sel(HealthNoOutcomes, "NULL", "NULL", "variant", "NULL", "eligible_units", "none_any", "no_outcomes", "", "")
		for i, o := range seen {
			if len(seen) > 1 {
				sel(HealthNoOutcomes, "NULL", q(o.Name), "variant", "NULL", "eligible_units", fmt.Sprintf("none_%d", i+1), "no_outcomes", "", "")
			}
		}
	}
	pr.line(0, ") AS h")
	pr.line(0, "ORDER BY h.%s, h.%s, h.%s, h.%s, h.%s", HColKind, HColReason, HColSource, HColVariant, HColDay)
	return pr.b.String(), pr.err
}

// noOutcomes prints the CTEs of the no-outcome check (HealthNoOutcomes):
// the eligible units; per outcome source, each unit's latest row before
// the as-of time (a unit has a row in [trigger, as-of) exactly when that
// latest row is at or after its trigger); and per variant the eligible
// units and those without any row, by a LEFT JOIN anti-join. Aggregating
// each source by unit first, rather than joining every source row to the
// eligible units, keeps it one scan and one hash aggregate per source on
// every engine, and an indexed lookup on engines without hash joins
// (MariaDB). It prints nothing when srcs is empty.
func (pr *printer) noOutcomes(srcs []*metrics.Source) {
	if len(srcs) == 0 {
		return
	}
	p := pr.p
	pr.eligible()
	for i, o := range srcs {
		t := pr.time(o, "s")
		pr.line(0, "-- Each unit's latest row of %s in the analysis period before the as-of time.", oneLine(o.Name))
		pr.line(0, "last_%d AS (", i+1)
		pr.line(1, "SELECT s.%s AS unit_id, max(%s) AS last_us", pr.id(o.Unit), t)
		pr.line(1, "FROM %s AS s", pr.from(o))
		pr.line(1, "WHERE s.%s IS NOT NULL AND %s >= %s AND %s < %s", pr.id(o.Unit), t, us(p.StartUS), t, us(p.AsOfUS))
		if pf := pr.prefilter(o, "s", 0, p.AsOfUS-p.EndUS); pf != "" {
			pr.line(2, "AND %s", pf)
		}
		pr.line(1, "GROUP BY s.%s", pr.id(o.Unit))
		pr.line(0, "),")
	}
	none := make([]string, len(srcs))
	for i := range srcs {
		none[i] = fmt.Sprintf("(o%d.last_us IS NULL OR o%d.last_us < e.trigger_us)", i+1, i+1)
	}
	each := ""
	if len(srcs) > 1 {
		each = " (and in each)"
	}
	pr.line(0, "-- Per variant: eligible units, and those with no row from their trigger up to the as-of time in any")
	pr.line(0, "-- outcome source%s.", each)
	pr.line(0, "no_outcomes AS (")
	pr.line(1, "SELECT")
	pr.line(2, "e.variant,")
	pr.line(2, "count(*) AS eligible_units,")
	pr.line(2, "count(CASE WHEN %s THEN 1 END) AS none_any%s", strings.Join(none, " AND "), commaIf(len(srcs) > 1))
	if len(srcs) > 1 {
		for i := range srcs {
			pr.line(2, "count(CASE WHEN %s THEN 1 END) AS none_%d%s", none[i], i+1, commaIf(i < len(srcs)-1))
		}
	}
	pr.line(1, "FROM eligible AS e")
	for i := range srcs {
		pr.line(1, "LEFT JOIN last_%d AS o%d ON o%d.unit_id = e.unit_id", i+1, i+1, i+1)
	}
	pr.line(1, "GROUP BY e.variant")
	pr.line(0, ")")
}
