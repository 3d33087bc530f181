package report

import (
	"fmt"
	"math"
	"strconv"
	"strings"

	"github.com/assay-dev/assay/compiler"
	"github.com/assay-dev/assay/report/html"
	"github.com/assay-dev/assay/results"
	"github.com/assay-dev/assay/stats"
)

// The no-outcome check: eligible units with no row at all in any outcome
// source from their trigger up to the as-of time (the health rows of kind
// compiler.HealthNoOutcomes). An arm where every unit is silent points at
// broken logging; a share that differs between arms is worth a look, but
// a treatment can itself change whether units come back, so a difference
// alone is no proof of a logging fault.

// NoOutcomeAlpha is the level below which the equal-share test of the
// no-outcome check asks for a look ("watch") in an early read: the same
// strict level as the sample-ratio alarm, because with thousands of units
// small, harmless differences are easily significant (common practice).
const NoOutcomeAlpha = 0.001

// NoOutcomeCheck is the name of the early read's check.
const NoOutcomeCheck = "units without outcome rows"

// NoOutcomes is the count of eligible units without any outcome row.
type NoOutcomes struct {
	// Through is the end of the span read after each unit's trigger: the
	// as-of time (not the end of the longest metric window; see
	// compiler.HealthNoOutcomes).
	Through string `json:"through"`
	// Variants holds one entry per declared variant, in spec order: the
	// units without a row in any outcome source.
	Variants []NoOutcomeArm `json:"variants"`
	// Sources holds, when the metrics read two or more outcome sources,
	// the units without a row in each one.
	Sources []NoOutcomeSource `json:"sources"`
	// EqualShare tests that the no-outcome share is the same in every arm.
	EqualShare ShareTest `json:"equal_share"`
}

// NoOutcomeArm is one arm's count of eligible units without outcome rows.
type NoOutcomeArm struct {
	Variant  string `json:"variant"`
	Eligible int64  `json:"eligible_units"`
	Units    int64  `json:"units"` // eligible units without any row
	Share    Num    `json:"share"` // Units / Eligible
}

// NoOutcomeSource is the per-arm count of eligible units without a row in
// one outcome source.
type NoOutcomeSource struct {
	Source   string         `json:"source"`
	Variants []NoOutcomeArm `json:"variants"`
}

// ShareTest is Pearson's chi-square test that a share is the same in
// every arm: independence of arm and the two outcomes (with and without)
// in the k × 2 table, without continuity correction
// (stats.ChiSquareIndependence). Reason says why it was not computed.
type ShareTest struct {
	Statistic Num    `json:"statistic"`
	DF        Num    `json:"df"`
	PValue    Num    `json:"p_value"`
	Reason    string `json:"reason,omitempty"`
}

// noOutcomes builds the no-outcome check from the health rows, or returns
// nil when they hold none (a plan without outcome sources, a planning
// query, or a health result exported by an earlier version).
func noOutcomes(p *compiler.Plan, rows []results.HealthRow) *NoOutcomes {
	type key struct{ source, variant string }
	got := map[key]results.HealthRow{}
	for _, r := range rows {
		if r.Kind == compiler.HealthNoOutcomes {
			k := key{r.Source, r.Variant}
			g := got[k]
			g.Rows += r.Rows
			g.Units += r.Units
			got[k] = g
		}
	}
	if len(got) == 0 {
		return nil
	}
	arms := func(source string) []NoOutcomeArm {
		out := make([]NoOutcomeArm, 0, len(p.Spec.Variants))
		for _, v := range p.Spec.Variants {
			g := got[key{source, v.Name}]
			out = append(out, NoOutcomeArm{Variant: v.Name, Eligible: g.Rows, Units: g.Units, Share: Num(ratio(float64(g.Units), float64(g.Rows)))})
		}
		return out
	}
	n := &NoOutcomes{Through: stamp(p.AsOfUS), Variants: arms(""), Sources: []NoOutcomeSource{}}
	if srcs := p.OutcomeSources(); len(srcs) > 1 {
		for _, s := range srcs {
			n.Sources = append(n.Sources, NoOutcomeSource{Source: s.Name, Variants: arms(s.Name)})
		}
	}
	n.EqualShare = equalShare(n.Variants)
	return n
}

// equalShare tests that the no-outcome share is equal across arms.
func equalShare(arms []NoOutcomeArm) ShareTest {
	table := make([][]float64, 0, len(arms))
	for _, a := range arms {
		table = append(table, []float64{float64(a.Units), float64(a.Eligible - a.Units)})
	}
	c := stats.ChiSquareIndependence(table)
	return ShareTest{Statistic: Num(c.Statistic), DF: Num(c.DF), PValue: Num(c.PValue), Reason: c.Reason}
}

// noOutcomeList formats "control 12 of 500 (2.40%), treatment ..." for the
// report and the early read.
func noOutcomeList(arms []NoOutcomeArm) string {
	parts := make([]string, len(arms))
	for i, a := range arms {
		parts[i] = fmt.Sprintf("%s %d of %d (%s)", a.Variant, a.Units, a.Eligible, pctAbs(float64(a.Share)))
	}
	return strings.Join(parts, ", ")
}

// text formats the equal-share test for a sentence.
func (t ShareTest) text() string {
	if t.Reason != "" {
		return "equal shares not tested (" + t.Reason + ")"
	}
	return fmt.Sprintf("equal shares across arms: chi-square %s, df %g, %s", fmtNum(t.Statistic), float64(t.DF), pEquals(float64(t.PValue)))
}

// healthItems lists the check for the report's Health section.
func (n *NoOutcomes) healthItems() []string {
	if n == nil {
		return nil
	}
	items := []string{fmt.Sprintf("eligible units with no outcome rows from trigger to as-of: %s; %s", noOutcomeList(n.Variants), n.EqualShare.text())}
	for _, s := range n.Sources {
		items = append(items, fmt.Sprintf("eligible units with no rows of %s: %s", s.Source, noOutcomeList(s.Variants)))
	}
	return items
}

// earlyCheck returns the status and detail of the early read's logging
// check on units without outcome rows. anyMature says some unit's metric
// window has elapsed: before that, no outcome row at all may just mean
// too little time has passed.
//
// An arm whose every unit is silent is a logging fault ("fix") only when
// that is implausible from the other arms: with p̂ their pooled share of
// silent units, P(all n silent) = p̂ⁿ (units independent, a binomial
// model) must be below NoOutcomeAlpha; otherwise a small arm (a 5% test
// step) may be silent by chance, and the check says "watch".
func (n *NoOutcomes) earlyCheck(anyMature bool) (status, detail string) {
	var dead []NoOutcomeArm
	var eligible, none int64
	for _, a := range n.Variants {
		eligible += a.Eligible
		none += a.Units
		if a.Eligible > 0 && a.Units == a.Eligible {
			dead = append(dead, a)
		}
	}
	switch {
	case eligible == 0:
		return StatusUnknown, "no eligible units: units without outcome rows cannot be counted"
	case none == eligible && !anyMature:
		return StatusNotYet, fmt.Sprintf("none of the %d eligible units has an outcome row yet (up to %s), and no metric window has elapsed: read again later", eligible, n.Through)
	case none == eligible:
		return StatusFix, fmt.Sprintf("None of the %d eligible units has an outcome row after its trigger (up to %s): outcome logging is not reaching the sources the metrics read.", eligible, n.Through)
	case len(dead) > 0:
		var names, odds []string
		fix := false
		for _, a := range dead {
			otherN, otherNone := eligible-a.Eligible, none-a.Units
			p := math.Pow(float64(otherNone)/float64(otherN), float64(a.Eligible))
			names = append(names, a.Variant)
			odds = append(odds, fmt.Sprintf("%s: %s", a.Variant, fmtP(p)))
			fix = fix || p < NoOutcomeAlpha
		}
		if fix {
			return StatusFix, fmt.Sprintf("Every eligible unit of %s has no outcome row after its trigger (%s; chance of that at the other arms' share of silent units %s): outcome logging is broken for that arm, unless the metrics count only something that arm cannot do.", strings.Join(names, ", "), noOutcomeList(n.Variants), strings.Join(odds, ", "))
		}
		return StatusWatch, fmt.Sprintf("Every eligible unit of %s has no outcome row after its trigger (%s), but with so few units that is not unlikely at the other arms' share of silent units (chance %s): read again when the arm has more units.", strings.Join(names, ", "), noOutcomeList(n.Variants), strings.Join(odds, ", "))
	case none == 0:
		return StatusOK, fmt.Sprintf("every eligible unit has an outcome row after its trigger (%s)", noOutcomeList(n.Variants))
	}
	t := n.EqualShare
	switch {
	case t.Reason != "":
		return StatusOK, fmt.Sprintf("units without outcome rows: %s; %s", noOutcomeList(n.Variants), t.text())
	case float64(t.PValue) < NoOutcomeAlpha:
		return StatusWatch, fmt.Sprintf("The share of eligible units without any outcome row differs between arms (%s; %s, look below %g). A treatment can change whether units come back, so this is worth a look rather than proof of a logging fault: check that every arm logs the same events.", noOutcomeList(n.Variants), t.text(), NoOutcomeAlpha)
	}
	return StatusOK, fmt.Sprintf("units without outcome rows: %s; %s", noOutcomeList(n.Variants), t.text())
}

// noOutcomeBlocks is the check in the HTML page's health section: a table
// per arm (with a column per outcome source when there are several), each
// count linked to its health query row, and the equal-share test.
func (b *htmlBuilder) noOutcomeBlocks(n *NoOutcomes) []html.Block {
	if n == nil {
		return nil
	}
	head := []string{"arm", "eligible", "no outcome rows", "share"}
	for _, s := range n.Sources {
		head = append(head, "no rows of "+s.Source)
	}
	t := html.Table{ID: "table-no-outcomes", Caption: "Eligible units with no outcome rows from trigger to as-of", Header: head}
	for i, a := range n.Variants {
		row := []html.Cell{txt(a.Variant), num(strconv.FormatInt(a.Eligible, 10), ""), num(strconv.FormatInt(a.Units, 10), b.link("health-"+string(compiler.HealthNoOutcomes))), num(pctAbs(float64(a.Share)), "")}
		for _, s := range n.Sources {
			sa := s.Variants[i]
			row = append(row, num(fmt.Sprintf("%d (%s)", sa.Units, pctAbs(float64(sa.Share))), b.link("health-"+string(compiler.HealthNoOutcomes)+"-"+slugID(s.Source))))
		}
		t.Rows = append(t.Rows, row)
	}
	return []html.Block{t, html.Paragraph{Text: "Units without outcome rows: " + n.EqualShare.text() + ". A treatment can change whether units come back, so a difference is worth a look, not proof of a logging fault."}}
}
