package compiler

import (
	"fmt"
	"sort"
	"strings"

	"github.com/assay-dev/assay/dialects"
	"github.com/assay-dev/assay/metrics"
	"github.com/assay-dev/assay/metrics/expr"
)

// The outcome passes: one scan per outcome source computing every
// per-unit aggregate that reads it, and unit_values, one row per eligible
// unit.

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
