// Package results holds what a run brings back from the engine: the main
// query's rows (per variant, per breakdown key and, in calibration, per
// split) and the health query's rows, decoded by the plan's result
// contract. Rows read from a database and rows read from an exported file
// go through the same decoder, so `assay run` and `assay analyze` see the
// same values. The package has no cgo dependency.
package results

import (
	"errors"
	"fmt"
	"math"
	"math/big"
	"regexp"
	"sort"
	"strconv"
	"strings"
	"time"

	"github.com/assay-dev/assay/compiler"
)

// Row is one row of the main query: a variant (in a breakdown group, in a
// calibration split) with its statistics by the plan's column names. A
// NULL statistic is NaN.
type Row struct {
	Split   int
	Variant string
	// Group is the index of the breakdown key in Plan.GroupBy, or -1 for the
	// overall rows; Key is the key's value.
	Group int
	Key   string
	Units int64
	Stats map[string]float64
}

// Stat returns statistic st of metric mp, NaN when absent.
func (r *Row) Stat(mp *compiler.MetricPlan, st compiler.Stat) float64 {
	if v, ok := r.Stats[mp.Column(st)]; ok {
		return v
	}
	return math.NaN()
}

// HealthRow is one row of the health query.
type HealthRow struct {
	Kind                         compiler.HealthKind
	Reason, Source, Variant, Day string
	Rows, Units                  int64
}

// Set is the decoded result of one run.
type Set struct {
	// SpecFingerprint and Options are what the main query's rows carry: the
	// spec's fingerprint and the compile options' text.
	SpecFingerprint string
	Options         string
	Rows            []Row
	// Health is nil when the health result is not available (assay analyze
	// without --health).
	Health []HealthRow
}

// Overall returns the rows of the overall grouping.
func (s *Set) Overall() []Row { return s.Group(-1) }

// Group returns the rows of breakdown g (-1 for the overall rows).
func (s *Set) Group(g int) []Row {
	var out []Row
	for _, r := range s.Rows {
		if r.Group == g {
			out = append(out, r)
		}
	}
	return out
}

// Main decodes the main query's result: cols are the result's column
// names, in any case, and rows its values (string, []byte, numbers,
// time.Time or nil). Every column of the plan's contract must be present;
// columns the plan does not know are an error, so that a result of another
// spec or other options is not half-read.
func Main(p *compiler.Plan, cols []string, rows [][]any) (*Set, error) {
	ix := p.Index()
	at := make([]*compiler.Column, len(cols))
	seen := map[*compiler.Column]bool{}
	var unknown []string
	for i, c := range cols {
		col := ix.Lookup(c)
		if col == nil {
			unknown = append(unknown, c)
			continue
		}
		if seen[col] {
			return nil, fmt.Errorf("the result has column %s twice (names are matched ignoring case)", col.Name)
		}
		seen[col] = true
		at[i] = col
	}
	var missing []string
	for i := range p.Columns {
		if !seen[&p.Columns[i]] {
			missing = append(missing, p.Columns[i].Name)
		}
	}
	if len(missing) > 0 || len(unknown) > 0 {
		var parts []string
		if len(missing) > 0 {
			parts = append(parts, "lacks "+list(missing))
		}
		if len(unknown) > 0 {
			parts = append(parts, "has columns this plan does not return: "+list(unknown))
		}
		return nil, fmt.Errorf("the main result %s; was it compiled from this spec with the same options (breakdowns, calibration)?", strings.Join(parts, " and "))
	}
	group := map[*compiler.Column]int{} // key column → its index in p.GroupBy
	for i := range p.Columns {
		if c := &p.Columns[i]; c.Role == compiler.RoleKey {
			for g := range p.GroupBy {
				if &p.GroupBy[g] == c.Key {
					group[c] = g
				}
			}
		}
	}
	set := &Set{}
	for ri, vals := range rows {
		r := Row{Group: -1, Stats: map[string]float64{}}
		keys := 0
		for i, col := range at {
			v := value(vals, i)
			switch col.Role {
			case compiler.RoleSpecFingerprint, compiler.RoleOptions:
				t := Text(v)
				dst := &set.SpecFingerprint
				if col.Role == compiler.RoleOptions {
					dst = &set.Options
				}
				if ri == 0 {
					*dst = t
				} else if *dst != t {
					return nil, fmt.Errorf("rows %d and 1 of the main result differ in %s (%q, %q): the result mixes runs", ri+1, col.Name, t, *dst)
				}
			case compiler.RoleSplit:
				r.Split = int(Number(v))
			case compiler.RoleVariant:
				r.Variant = Text(v)
			case compiler.RoleKey:
				if v == nil {
					continue
				}
				keys++
				r.Key = Text(v)
				if col.Key.Day && dayPrefix.MatchString(r.Key) {
					r.Key = r.Key[:10]
				}
				r.Group = group[col]
			case compiler.RoleUnits:
				if n := Number(v); !math.IsNaN(n) {
					r.Units = int64(n)
				}
			case compiler.RoleStat:
				r.Stats[col.Name] = Number(v)
			}
		}
		if keys > 1 {
			return nil, fmt.Errorf("row %d of the main result has more than one breakdown key set", ri+1)
		}
		set.Rows = append(set.Rows, r)
	}
	sortRows(p, set.Rows)
	return set, nil
}

// sortRows puts rows in a fixed order: split, overall before breakdowns,
// key value, then variants in declared order (undeclared ones after, by
// name). Engines disagree on where NULLs sort.
func sortRows(p *compiler.Plan, rows []Row) {
	rank := map[string]int{}
	for i, v := range p.Variants {
		rank[v] = i
	}
	vr := func(v string) int {
		if r, ok := rank[v]; ok {
			return r
		}
		return len(rank)
	}
	sort.SliceStable(rows, func(i, j int) bool {
		a, b := rows[i], rows[j]
		switch {
		case a.Split != b.Split:
			return a.Split < b.Split
		case a.Group != b.Group:
			return a.Group < b.Group
		case a.Key != b.Key:
			return a.Key < b.Key
		case vr(a.Variant) != vr(b.Variant):
			return vr(a.Variant) < vr(b.Variant)
		}
		return a.Variant < b.Variant
	})
}

// Health decodes the health query's result (columns in any case and order).
func Health(cols []string, rows [][]any) ([]HealthRow, error) {
	col := map[string]int{}
	for i, c := range cols {
		col[strings.ToLower(c)] = i
	}
	var missing []string
	for _, need := range compiler.HealthColumns {
		if _, ok := col[need]; !ok {
			missing = append(missing, need)
		}
	}
	if len(missing) > 0 {
		return nil, fmt.Errorf("the result lacks %s (columns: %s): is it the health query's result?", list(missing), strings.Join(cols, ", "))
	}
	var out []HealthRow
	for _, vals := range rows {
		get := func(name string) any { return value(vals, col[name]) }
		r := HealthRow{Kind: compiler.HealthKind(Text(get(compiler.HColKind))), Reason: Text(get(compiler.HColReason)), Source: Text(get(compiler.HColSource)), Variant: Text(get(compiler.HColVariant)), Day: Text(get(compiler.HColDay))}
		if dayPrefix.MatchString(r.Day) {
			r.Day = r.Day[:10]
		}
		if v := Number(get(compiler.HColRows)); !math.IsNaN(v) {
			r.Rows = int64(v)
		}
		if v := Number(get(compiler.HColUnits)); !math.IsNaN(v) {
			r.Units = int64(v)
		}
		out = append(out, r)
	}
	sortHealth(out)
	return out, nil
}

var dayPrefix = regexp.MustCompile(`^\d{4}-\d{2}-\d{2}([T ]|$)`)

func list(names []string) string {
	if len(names) > 8 {
		return strings.Join(names[:8], ", ") + fmt.Sprintf(" and %d more", len(names)-8)
	}
	return strings.Join(names, ", ")
}

// sortHealth puts health rows in a fixed order: the engines disagree on
// where NULLs sort.
func sortHealth(out []HealthRow) {
	sort.SliceStable(out, func(i, j int) bool {
		a, b := out[i], out[j]
		switch {
		case a.Kind != b.Kind:
			return a.Kind < b.Kind
		case a.Reason != b.Reason:
			return a.Reason < b.Reason
		case a.Source != b.Source:
			return a.Source < b.Source
		case a.Variant != b.Variant:
			return a.Variant < b.Variant
		}
		return a.Day < b.Day
	})
}

// Text converts a scanned or exported value to text; NULL is "".
func Text(v any) string {
	switch x := v.(type) {
	case nil:
		return ""
	case string:
		return x
	case []byte:
		return string(x)
	case time.Time:
		return x.UTC().Format("2006-01-02")
	case fmt.Stringer:
		return x.String()
	}
	return fmt.Sprint(v)
}

// Number converts a scanned or exported value to float64; NULL and text
// that is not a number are NaN. It is the one numeric converter of the
// engine's readers and analyze's file readers.
func Number(v any) float64 {
	switch x := v.(type) {
	case nil:
		return math.NaN()
	case float64:
		return x
	case float32:
		return float64(x)
	case int64:
		return float64(x)
	case int32:
		return float64(x)
	case int:
		return float64(x)
	case uint64:
		return float64(x)
	case *big.Int:
		f, _ := new(big.Float).SetInt(x).Float64()
		return f
	case []byte:
		return parseNumber(string(x))
	case string:
		return parseNumber(x)
	case fmt.Stringer: // json.Number, decimal types
		return parseNumber(x.String())
	}
	return math.NaN()
}

func parseNumber(s string) float64 {
	f, err := strconv.ParseFloat(strings.TrimSpace(s), 64)
	if err != nil && !errors.Is(err, strconv.ErrRange) {
		return math.NaN()
	}
	return f
}
