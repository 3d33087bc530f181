package report

import (
	"math"
	"strconv"
	"strings"
	"testing"

	"github.com/assay-dev/assay/compiler"
	"github.com/assay-dev/assay/metrics"
	"github.com/assay-dev/assay/results"
)

// TestNoOutcomeEqualShare checks the equal-share test of the no-outcome
// check against scipy. Each table row is one arm: (units without outcome
// rows, units with).
func TestNoOutcomeEqualShare(t *testing.T) {
	cases := []struct {
		name    string
		table   [][2]int64
		x2, df  float64
		p       float64
		wantWhy bool
	}{
		// Source: scipy 1.10.1, scipy.stats.chi2_contingency([[20,480],[60,440]], correction=False)
		{"2 arms, differing", [][2]int64{{20, 480}, {60, 440}}, 21.73913043478261, 1, 3.123545840041752e-06, false},
		// Source: scipy 1.10.1, scipy.stats.chi2_contingency([[20,480],[25,475]], correction=False)
		{"2 arms, similar", [][2]int64{{20, 480}, {25, 475}}, 0.5817335660267597, 1, 0.4456336195332167, false},
		// Source: scipy 1.10.1, scipy.stats.chi2_contingency([[30,970],[45,955],[38,962]], correction=False)
		{"3 arms", [][2]int64{{30, 970}, {45, 955}, {38, 962}}, 3.108226992529834, 2, 0.21137668582771293, false},
		// Source: scipy 1.10.1, scipy.stats.chi2_contingency([[0,300],[4,296]], correction=False)
		{"a zero cell", [][2]int64{{0, 300}, {4, 296}}, 4.026845637583893, 1, 0.04478159618793707, false},
		// No unit without outcome rows: the column is empty and the test
		// undefined (stats.ChiSquareIndependence drops empty columns).
		{"no silent unit", [][2]int64{{0, 300}, {0, 296}}, math.NaN(), math.NaN(), math.NaN(), true},
	}
	for _, tc := range cases {
		t.Run(tc.name, func(t *testing.T) {
			var arms []NoOutcomeArm
			for _, r := range tc.table {
				arms = append(arms, NoOutcomeArm{Units: r[0], Eligible: r[0] + r[1]})
			}
			got := equalShare(arms)
			if tc.wantWhy {
				if got.Reason == "" || got.PValue.OK() {
					t.Errorf("got p %v, reason %q; want no p-value and a reason", float64(got.PValue), got.Reason)
				}
				return
			}
			for _, c := range []struct {
				what      string
				got, want float64
			}{{"statistic", float64(got.Statistic), tc.x2}, {"df", float64(got.DF), tc.df}, {"p-value", float64(got.PValue), tc.p}} {
				if math.Abs(c.got-c.want) > 1e-9*math.Max(1, math.Abs(c.want)) {
					t.Errorf("%s: got %.15g, want %.15g", c.what, c.got, c.want)
				}
			}
		})
	}
}

// TestReadEarlyNoOutcomes checks the early read's statuses for units
// without outcome rows, on hand-made health rows: "fix" when an arm with
// eligible units has none with an outcome row, or when no unit of any arm
// has one; "watch" when the equal-share test gives p < 0.001; "ok"
// otherwise. The rules are the ones stated in nooutcome.go.
func TestReadEarlyNoOutcomes(t *testing.T) {
	s, ds := metrics.Load("weeks.toml", []byte(weeksSpec))
	if ds.HasErrors() {
		t.Fatal(ds)
	}
	p, ds := compiler.Compile(s, compiler.Options{})
	if ds.HasErrors() {
		t.Fatal(ds)
	}
	cases := []struct {
		name   string
		counts map[string][2]int64 // variant -> {eligible, without outcome rows}
		want   string
		detail string // a substring of the detail
	}{
		{"treatment silent", map[string][2]int64{"control": {500, 20}, "treatment": {500, 500}}, StatusFix, "Every eligible unit of treatment has no outcome row"},
		{"every unit silent", map[string][2]int64{"control": {500, 500}, "treatment": {500, 500}}, StatusFix, "None of the 1000 eligible units"},
		// No metric window has elapsed: silence may be too little time.
		{"every unit silent, too early", map[string][2]int64{"control": {500, 500}, "treatment": {500, 500}}, StatusNotYet, "no metric window has elapsed"},
		// A 10-unit arm all silent beside a control with 80% silent units:
		// 0.8^10 = 0.107 (by hand), not implausible.
		{"small arm silent", map[string][2]int64{"control": {500, 400}, "treatment": {10, 10}}, StatusWatch, "chance treatment: 0.1074"},
		// p = 3.1e-06 (scipy, in TestNoOutcomeEqualShare).
		{"shares differ", map[string][2]int64{"control": {500, 20}, "treatment": {500, 60}}, StatusWatch, "A treatment can change whether units come back"},
		// p = 0.4456 (scipy, in TestNoOutcomeEqualShare).
		{"shares similar", map[string][2]int64{"control": {500, 20}, "treatment": {500, 25}}, StatusOK, "p = 0.4456"},
		{"no silent unit", map[string][2]int64{"control": {500, 0}, "treatment": {500, 0}}, StatusOK, "control 0 of 500 (0.00%)"},
	}
	for _, tc := range cases {
		t.Run(tc.name, func(t *testing.T) {
			set := &results.Set{SpecFingerprint: s.Fingerprint, Options: p.Options.Text()}
			for _, v := range p.Variants {
				st := map[string]float64{}
				if !strings.Contains(tc.name, "too early") {
					// Some units' windows have elapsed.
					for _, mp := range p.Metrics {
						st[mp.Column(compiler.StatN)], st[mp.Column(compiler.StatMean)], st[mp.Column(compiler.StatVar)] = 100, 1, 1
					}
				}
				set.Rows = append(set.Rows, results.Row{Variant: v, Group: -1, Units: 500, Stats: st})
				set.Health = append(set.Health,
					results.HealthRow{Kind: compiler.HealthTriggers, Variant: v, Day: "2026-03-02", Rows: 500, Units: 500},
					results.HealthRow{Kind: compiler.HealthNoOutcomes, Variant: v, Rows: tc.counts[v][0], Units: tc.counts[v][1]})
			}
			rep, err := Analyze(p, set, Options{})
			if err != nil {
				t.Fatal(err)
			}
			er := ReadEarly(p, set, rep, Options{}.withDefaults())
			var got *EarlyCheck
			for i, c := range er.Checks {
				if c.Name == NoOutcomeCheck {
					got = &er.Checks[i]
				}
			}
			if got == nil {
				t.Fatalf("no check %q among %+v", NoOutcomeCheck, er.Checks)
			}
			if got.Area != "logging" || got.Status != tc.want || !strings.Contains(got.Detail, tc.detail) {
				t.Errorf("got %s/%s: %s\nwant logging/%s with %q", got.Area, got.Status, got.Detail, tc.want, tc.detail)
			}
			inFix := false
			for _, f := range er.FixFirst {
				inFix = inFix || f == got.Detail
			}
			if inFix != (tc.want == StatusFix) {
				t.Errorf("in fix-first list: got %v, want %v", inFix, tc.want == StatusFix)
			}
			// The report's health section says the same counts.
			c := tc.counts["control"]
			if txt := rep.Text(); !strings.Contains(txt, "eligible units with no outcome rows from trigger to as-of: control "+strconv.FormatInt(c[1], 10)+" of "+strconv.FormatInt(c[0], 10)) {
				t.Errorf("text report lacks the control count:\n%s", txt)
			}
		})
	}
	// A health result without the rows (an older export) gives no check.
	set := &results.Set{SpecFingerprint: s.Fingerprint, Options: p.Options.Text(), Health: []results.HealthRow{}}
	rep, err := Analyze(p, set, Options{})
	if err != nil {
		t.Fatal(err)
	}
	if rep.Health.NoOutcomes != nil {
		t.Errorf("no_outcome_units: got %+v, want absent without health rows of that kind", rep.Health.NoOutcomes)
	}
	for _, c := range ReadEarly(p, set, rep, Options{}.withDefaults()).Checks {
		if c.Name == NoOutcomeCheck {
			t.Errorf("got check %+v without its health rows, want none", c)
		}
	}
}
