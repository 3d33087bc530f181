package compiler

import (
	"fmt"
	"strconv"
	"strings"
	"time"

	"github.com/assay-dev/assay/dialects"
	"github.com/assay-dev/assay/metrics"
)

// The SQL printer. It spells a plan through a dialect and decides
// nothing: every choice is in the plan (plan.go, contract.go). The CTE
// families live in their own files: cohort.go (exposures, triggers,
// eligibility), passes.go (one pass per outcome source and the per-unit
// values), final.go (centring and the final aggregate with its groupings)
// and health.go (the health query); describe.go holds the plain-language
// descriptions the plan records for comments and reports.

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

func notIf(b bool) string {
	if b {
		return ""
	}
	return "NOT "
}

func commaIf(b bool) string {
	if b {
		return ","
	}
	return ""
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

func paren(s string) string { return "(" + s + ")" }

func (pr *printer) fail(err error) {
	if pr.err == nil {
		pr.err = err
	}
}
