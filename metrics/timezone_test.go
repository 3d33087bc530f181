package metrics

import (
	"strings"
	"testing"

	"github.com/assay-dev/assay/metrics/expr"
	"github.com/assay-dev/assay/metrics/timefmt"
)

// zonedSpec is a small spec in a named zone whose outcome source has the
// given extra source keys and metric filter.
func zonedSpec(sourceKeys, filter string) string {
	return `[experiment]
id = "tz"
hypothesis = "Showing opening hours moves more orders into the staffed hours."
start = 2026-03-02T00:00:00
end = 2026-03-30T00:00:00
time_zone = "America/Chicago"

[variants]
control = 0.5
banner = 0.5

[sources.views]
table = "views"
unit = "u"
time = "t"
columns = ["u", "arm", "t"]

[sources.orders]
table = "orders"
unit = "u"
time = "at"
columns = ["u", "at", "paid_at", "total"]
` + sourceKeys + `

[exposure]
source = "views"
variant = "arm"

[metrics.orders]
role = "primary"
kind = "count"
source = "orders"
filter = "` + filter + `"
window = ["0d", "7d"]
`
}

// TestTimeCastRefusedWithPosition checks that a zone-dependent CAST in a
// filter is reported at its line and column with a snippet and a hint
// naming the local-time functions. Positions are counted by hand in
// zonedSpec (line 33 is the filter; the CAST starts after `filter = "`).
func TestTimeCastRefusedWithPosition(t *testing.T) {
	src := zonedSpec("", "CAST(paid_at AS DATE) = CAST('2026-03-03' AS DATE)")
	_, ds := Load("tz.toml", []byte(src))
	if len(ds) != 1 {
		t.Fatalf("got %d diagnostics, want 1: %v", len(ds), ds)
	}
	d := ds[0]
	if got, want := d.Short(), "tz.toml:33:11: CAST to DATE of a value that is not a literal depends on the engine's session time zone in filter `metrics.orders.filter` [expression]"; got != want {
		t.Errorf("got  %s\nwant %s", got, want)
	}
	long := d.Long([]byte(src))
	for _, want := range []string{"  33 | filter = \"CAST(paid_at AS DATE)", "|           ^^^^^^^^^^^^^^^^^^^^^\n", "hint: use local_date(col)"} {
		if !strings.Contains(long, want) {
			t.Errorf("long form lacks %q:\n%s", want, long)
		}
	}
}

// TestLocalFunctionsCarryZoneAndFormat checks that the loader records the
// spec's zone on every local-time call, and the source's time_format only
// on calls over its time column.
func TestLocalFunctionsCarryZoneAndFormat(t *testing.T) {
	src := zonedSpec(`time_format = "epoch_millis"`, "local_hour(at) < 12 AND local_date(paid_at) IS NOT NULL")
	s, ds := Load("tz.toml", []byte(src))
	if ds.HasErrors() {
		t.Fatal(ds)
	}
	got := map[string]*expr.TimeRead{}
	expr.Walk(s.Metrics[0].Value.Filter.Node, func(n expr.Node) bool {
		if f, ok := n.(*expr.Func); ok {
			got[f.Name] = f.Time
		}
		return true
	})
	if tr := got["local_hour"]; tr == nil || tr.Zone != "America/Chicago" || tr.Format.Kind != timefmt.EpochMillis {
		t.Errorf("local_hour(at): got %+v, want zone America/Chicago, epoch_millis", tr)
	}
	if tr := got["local_date"]; tr == nil || tr.Zone != "America/Chicago" || tr.Format.Kind != timefmt.Native {
		t.Errorf("local_date(paid_at): got %+v, want zone America/Chicago, native", tr)
	}
	if k := s.Sources[1].TimeFormat.Kind; k != timefmt.EpochMillis {
		t.Errorf("source time format: got %v, want epoch_millis", k)
	}
}

// TestTimeFormatChecked checks the diagnostics for time_format values.
func TestTimeFormatChecked(t *testing.T) {
	tests := []struct {
		name, keys, want string
	}{
		{"unknown name", `time_format = "epoch_milis"`, "bad-value: unknown time format \"epoch_milis\"; did you mean \"epoch_millis\"?"},
		{"bad layout", `time_format = "%Y-%m-%d %I:%M"`, "bad-value: layout \"%Y-%m-%d %I:%M\": %I is not supported"},
		{"not a string", `time_format = 1000`, "wrong-type: `sources.orders.time_format` must be a string, not an integer"},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			_, ds := Load("tz.toml", []byte(zonedSpec(tc.keys, "total > 0")))
			var got []string
			for _, d := range ds {
				got = append(got, d.Code+": "+d.Summary)
				if d.Subject.Start.Line != 23 {
					t.Errorf("diagnostic on line %d, want 23 (the time_format line): %s", d.Subject.Start.Line, d.Short())
				}
			}
			if len(got) != 1 || got[0] != tc.want {
				t.Errorf("got %q, want [%q]", got, tc.want)
			}
		})
	}
	// A static source has no time column to describe.
	src := strings.Replace(zonedSpec("", "total > 0"), "[exposure]", "[sources.plans]\ntable = \"plans\"\nunit = \"u\"\nstatic = true\ntime_format = \"epoch_seconds\"\ncolumns = [\"u\"]\n\n[exposure]", 1)
	_, ds := Load("tz.toml", []byte(src))
	if len(ds) != 1 || ds[0].Summary != "source `plans` has a time_format but no time column" {
		t.Errorf("got %v, want one error about time_format without time", ds)
	}
}
