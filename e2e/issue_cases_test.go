package e2e

// Cases where an earlier version printed a misleading figure without
// saying so, each named after what it protects.

import (
	"math"
	"strings"
	"testing"
)

// TestHugeValueInOneArmKeepsOtherArmsExact: one treatment unit with a
// value of 1e16 must not cost the control arm its precision. Values are
// centred per variant, so the control mean of 2.25, 3.5 and 0.1 is 1.95
// (by hand: 5.85/3), and a treatment mean computed from 1e16 and two
// zeros is 1e16/3. An arm whose values are all 0 has a mean of exactly 0.
func TestHugeValueInOneArmKeepsOtherArmsExact(t *testing.T) {
	dir := t.TempDir()
	start := ts("2026-03-02 00:00:00")
	var expo, ev []row
	add := func(id, variant string, w float64) {
		trig := start.Add(3 * 24 * 3600e9)
		expo = append(expo, row{id, variant, trig, "home"})
		ev = append(ev, row{id, trig.Add(3600e9), w})
	}
	add("c1", "control", 2.25)
	add("c2", "control", 3.5)
	add("c3", "control", 0.1)
	add("t1", "treatment", 1e16)
	add("t2", "treatment", 0)
	add("t3", "treatment", 0)
	writeParquet(t, dir, "exposures.parquet", exposureCols, expo)
	writeParquet(t, dir, "events.parquet", eventCols, ev)
	spec := writeText(t, dir, "spec.toml", specParts{Metrics: metricSumW}.toml())
	rep := runReport(t, spec, "--threads", "1")
	m := rep.metric(t, "w14")
	if got := m.variant(t, "control").Value; math.Abs(got-1.95) > 1e-12 {
		t.Errorf("control mean: got %.17g, want 1.95 (by hand: (2.25 + 3.5 + 0.1)/3)", got)
	}
	if got, want := m.variant(t, "treatment").Value, 1e16/3; math.Abs(got-want) > 1e-9*want {
		t.Errorf("treatment mean: got %.17g, want %.17g", got, want)
	}
}

// TestUndeclaredVariantsNamedWithSuggestion: rows whose variant is not
// declared are counted, and the text report names the values seen, the
// most frequent first, and suggests the declared name that differs only
// in case or spacing; they are not called crossovers.
func TestUndeclaredVariantsNamedWithSuggestion(t *testing.T) {
	dir := t.TempDir()
	start := ts("2026-03-02 00:00:00")
	var expo, ev []row
	add := func(id, variant string) {
		trig := start.Add(24 * 3600e9)
		expo = append(expo, row{id, variant, trig, "home"})
		ev = append(ev, row{id, trig.Add(3600e9), 1.0})
	}
	for i := range 6 {
		add("c"+string(rune('a'+i)), "control")
		add("t"+string(rune('a'+i)), "treatment")
	}
	for i := range 3 {
		add("x"+string(rune('a'+i)), "Treatment ")
	}
	add("y1", "legacy")
	writeParquet(t, dir, "exposures.parquet", exposureCols, expo)
	writeParquet(t, dir, "events.parquet", eventCols, ev)
	spec := writeText(t, dir, "spec.toml", specParts{Metrics: metricSumW}.toml())
	code, out, errs := runCLI("run", spec)
	if code != 0 && code != 4 {
		t.Fatalf("exit %d: %s", code, errs)
	}
	for _, want := range []string{`"Treatment ": 3 units (did you mean "treatment"?)`, `"legacy": 1 units`} {
		if !strings.Contains(out, want) {
			t.Errorf("text report lacks %q:\n%s", want, out)
		}
	}
	if strings.Index(out, `"Treatment "`) > strings.Index(out, `"legacy"`) {
		t.Errorf("undeclared values not listed most frequent first:\n%s", out)
	}
	if strings.Contains(out, "excluded (crossover)") {
		t.Errorf("undeclared variants reported as crossovers:\n%s", out)
	}
}

// TestEmptyOutcomeSourceReadAsZeros: an outcome source whose file has only
// a header is analysed as zeros, with a caution naming it, instead of a
// warning that every metric will be zero followed by a refusal of the
// file's column types.
func TestEmptyOutcomeSourceReadAsZeros(t *testing.T) {
	dir := t.TempDir()
	start := ts("2026-03-02 00:00:00")
	var expo, ev []row
	for i, v := range []string{"control", "treatment", "control", "treatment"} {
		id := "u" + string(rune('a'+i))
		trig := start.Add(24 * 3600e9)
		expo = append(expo, row{id, v, trig, "home"})
		ev = append(ev, row{id, trig.Add(3600e9), float64(i + 1)})
	}
	writeParquet(t, dir, "exposures.parquet", exposureCols, expo)
	writeParquet(t, dir, "events.parquet", eventCols, ev)
	writeText(t, dir, "taps.csv", "unit_id,tapped_at\n")
	extra := `
[sources.taps]
file = "taps.csv"
unit = "unit_id"
time = "tapped_at"
columns = ["unit_id", "tapped_at"]
`
	metrics := metricSumW + `
[metrics.taps]
role = "secondary"
kind = "count"
source = "taps"
window = ["0d", "14d"]
`
	spec := writeText(t, dir, "spec.toml", specParts{Extra: extra, Metrics: metrics}.toml())
	code, out, errs := runCLI("run", "--format", "json", spec)
	if code != 0 {
		t.Fatalf("exit %d, want 0; stderr:\n%s", code, errs)
	}
	if !strings.Contains(errs, "taps.csv") {
		t.Errorf("stderr does not name the empty file:\n%s", errs)
	}
	rep := decodeReport(t, []byte(out))
	m := rep.metric(t, "taps")
	for _, v := range []string{"control", "treatment"} {
		if got := m.variant(t, v).Value; got != 0 {
			t.Errorf("taps %s: got %v, want 0 (its source has no rows)", v, got)
		}
	}
	found := false
	for _, c := range rep.Cautions {
		found = found || strings.Contains(c, "Source taps has no rows")
	}
	if !found {
		t.Errorf("cautions do not name the empty source: %q", rep.Cautions)
	}
}
