package report

import (
	"strings"
	"testing"

	"github.com/assay-dev/assay/compiler"
	"github.com/assay-dev/assay/metrics"
	"github.com/assay-dev/assay/results"
)

// TestReadEarly checks the statuses of the early read on hand-made
// aggregates: a metric that is zero for every unit (and so a source with
// no usable rows), a metric whose windows have not elapsed, exposure rows
// without a variant, and the order of the fix-first list (logging before
// metrics). Expected texts follow the rules in earlyread.go's comment.
func TestReadEarly(t *testing.T) {
	s, ds := metrics.Load("weeks.toml", []byte(weeksSpec))
	if ds.HasErrors() {
		t.Fatal(ds)
	}
	p, ds := compiler.Compile(s, compiler.Options{})
	if ds.HasErrors() {
		t.Fatal(ds)
	}
	set := &results.Set{SpecFingerprint: s.Fingerprint, Options: p.Options.Text()}
	for _, v := range p.Variants {
		st := map[string]float64{}
		for _, mp := range p.Metrics {
			switch mp.M.Name {
			case "amount": // zero for every unit
				st[mp.Column(compiler.StatN)], st[mp.Column(compiler.StatMean)], st[mp.Column(compiler.StatVar)] = 500, 0, 0
			case "slow": // no unit mature yet
				st[mp.Column(compiler.StatN)] = 0
			}
		}
		set.Rows = append(set.Rows, results.Row{Variant: v, Group: -1, Units: 500, Stats: st})
		set.Health = append(set.Health, results.HealthRow{Kind: compiler.HealthTriggers, Variant: v, Day: "2026-03-02", Rows: 500, Units: 500})
	}
	set.Health = append(set.Health, results.HealthRow{Kind: compiler.HealthIgnoredRows, Reason: compiler.IgnoredNullVariant, Rows: 7})
	rep, err := Analyze(p, set, Options{})
	if err != nil {
		t.Fatal(err)
	}
	er := ReadEarly(p, set, rep, Options{}.withDefaults())
	status := map[string]string{}
	for _, c := range er.Checks {
		status[c.Name] = c.Status
	}
	for name, want := range map[string]string{
		"sample ratio":                    StatusOK,
		"exposure rows without a variant": StatusFix,
		"amount":                          StatusFix,
		"slow":                            StatusNotYet,
	} {
		if status[name] != want {
			t.Errorf("check %q: got %q, want %q", name, status[name], want)
		}
	}
	// Only one of the two metrics on trials is zero (the other is not yet
	// readable), so the source is not called empty.
	if _, ok := status["source trials"]; ok {
		t.Errorf("source trials: got a check, want none (one metric is merely not readable yet)")
	}
	if len(er.FixFirst) != 2 || !strings.Contains(er.FixFirst[0], "7 exposure rows") || !strings.Contains(er.FixFirst[1], "amount is zero for every unit") {
		t.Errorf("fix first: got %q, want the variantless rows, then the zero metric", er.FixFirst)
	}
	if !er.Blocked() {
		t.Errorf("Blocked: got false, want true")
	}
}
