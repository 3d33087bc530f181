package metrics_test

import (
	"fmt"
	"strings"
	"testing"
	"time"

	"github.com/assay-dev/assay/metrics"
)

// planBase is a valid spec without a [planning] table; each case appends
// one. Its last line is line 37, so the [planning] header is line 38 and
// the first key inside it line 39.
const planBase = `[experiment]
id = "plan-test"
hypothesis = "A larger checkout button makes more visitors finish checkout within a week."
start = 2026-05-01T00:00:00Z
end = 2026-05-29T00:00:00Z

[variants]
control = 0.5
big_button = 0.5

[sources.assignments]
table = "analytics.assignments"
unit = "visitor_id"
time = "assigned_at"
columns = ["visitor_id", "arm", "assigned_at"]

[sources.visits]
table = "analytics.visits"
unit = "visitor_id"
time = "visited_at"
columns = ["visitor_id", "visited_at", "page"]

[sources.profiles]
table = "analytics.profiles"
unit = "visitor_id"
static = true
columns = ["visitor_id", "country"]

[exposure]
source = "assignments"
variant = "arm"

[metrics.visits_7d]
role = "primary"
kind = "count"
source = "visits"
window = ["0d", "7d"]
`

func TestPlanningKeys(t *testing.T) {
	if got := strings.Count(planBase, "\n"); got != 37 {
		t.Fatalf("planBase has %d lines, the cases below assume 37", got)
	}
	good := "[planning]\nstand_in = { source = \"visits\", filter = \"page = 'checkout'\" }\n"
	cases := []struct {
		name  string
		table string
		// want is "line:col code substring" for each error, in order; empty
		// for a valid table.
		want  []string
		check func(t *testing.T, p *metrics.Planning)
	}{
		{name: "defaults", table: good, check: func(t *testing.T, p *metrics.Planning) {
			if p.StandIn == nil || p.StandIn.Source.Name != "visits" || p.StandIn.Filter.Text != "page = 'checkout'" {
				t.Errorf("stand-in %+v", p.StandIn)
			}
			if p.Power != 0.8 || p.MaxWeeks != 8 || !p.TargetRelative || p.Target != 0 || !p.PreStart.IsZero() {
				t.Errorf("defaults: %+v", p)
			}
		}},
		{name: "everything", table: good + `pre_start = 2026-03-02T00:00:00Z
pre_end = 2026-04-27T00:00:00Z
target_effect = 0.5
target_scale = "absolute"
power = 0.9
max_weeks = 6
planned_end = 2026-05-29T00:00:00Z
planned_units = 24000
`, check: func(t *testing.T, p *metrics.Planning) {
			if !p.PreStart.Equal(time.Date(2026, 3, 2, 0, 0, 0, 0, time.UTC)) || !p.PreEnd.Equal(time.Date(2026, 4, 27, 0, 0, 0, 0, time.UTC)) {
				t.Errorf("pre-period %v %v", p.PreStart, p.PreEnd)
			}
			if p.Target != 0.5 || p.TargetRelative || p.Power != 0.9 || p.MaxWeeks != 6 || p.PlannedUnits != 24000 || !p.PlannedEnd.Equal(time.Date(2026, 5, 29, 0, 0, 0, 0, time.UTC)) {
				t.Errorf("values %+v", p)
			}
		}},
		{name: "subtable form", table: "[planning.stand_in]\nsource = \"visits\"\n", check: func(t *testing.T, p *metrics.Planning) {
			if p.StandIn == nil || p.StandIn.Filter != nil {
				t.Errorf("stand-in %+v", p.StandIn)
			}
		}},
		{name: "unknown key", table: good + "powr = 0.8\n", want: []string{"40:1 unknown-key did you mean `power`"}},
		{name: "missing stand-in", table: "[planning]\npower = 0.8\n", want: []string{"38:1 missing-key needs `stand_in`"}},
		{name: "stand-in undeclared source", table: "[planning]\nstand_in = { source = \"vists\" }\n", want: []string{"39:23 undefined-source did you mean `visits`"}},
		{name: "stand-in static source", table: "[planning]\nstand_in = { source = \"profiles\" }\n", want: []string{"39:23 source has no time column"}},
		{name: "stand-in unknown column", table: "[planning]\nstand_in = { source = \"visits\", filter = \"pag = 'x'\" }\n", want: []string{"39:43 unknown-column"}},
		{name: "stand-in unknown key", table: "[planning]\nstand_in = { source = \"visits\", where = \"x\" }\n", want: []string{"39:33 unknown-key"}},
		{name: "pre-period overlaps", table: good + "pre_start = 2026-04-01T00:00:00Z\npre_end = 2026-05-08T00:00:00Z\n", want: []string{"41:11 time overlaps the experiment"}},
		{name: "pre-period reversed", table: good + "pre_start = 2026-04-01T00:00:00Z\npre_end = 2026-03-01T00:00:00Z\n", want: []string{"41:11 time is not after its start"}},
		{name: "pre-period half", table: good + "pre_start = 2026-04-01T00:00:00Z\n", want: []string{"38:1 missing-key needs `pre_end`"}},
		{name: "target zero", table: good + "target_effect = 0\n", want: []string{"40:17 bad-value must be positive"}},
		{name: "target negative", table: good + "target_effect = -0.02\n", want: []string{"40:17 bad-value must be positive"}},
		{name: "target scale alone", table: good + "target_scale = \"absolute\"\n", want: []string{"40:1 bad-value without target_effect"}},
		{name: "target scale bad", table: good + "target_effect = 1\ntarget_scale = \"percent\"\n", want: []string{"41:16 bad-value cannot be"}},
		{name: "power one", table: good + "power = 1\n", want: []string{"40:9 bad-value power must be between 0 and 1"}},
		{name: "power zero", table: good + "power = 0.0\n", want: []string{"40:9 bad-value power must be between 0 and 1"}},
		{name: "power text", table: good + "power = \"80%\"\n", want: []string{"40:9 wrong-type must be a number"}},
		{name: "max weeks fraction", table: good + "max_weeks = 2.5\n", want: []string{"40:13 bad-value whole number from 1 to 52"}},
		{name: "max weeks zero", table: good + "max_weeks = 0\n", want: []string{"40:13 bad-value whole number"}},
		{name: "planned end before start", table: good + "planned_end = 2026-04-01T00:00:00Z\n", want: []string{"40:15 time planned end"}},
		{name: "planned units", table: good + "planned_units = 1.5\n", want: []string{"40:17 bad-value planned_units must be a whole number"}},
		{name: "stand-in not a table", table: "[planning]\nstand_in = \"visits\"\n", want: []string{"39:12 wrong-type must be a table"}},
	}
	for _, tc := range cases {
		t.Run(tc.name, func(t *testing.T) {
			src := planBase + tc.table
			s, ds := metrics.Load("spec.toml", []byte(src))
			var errs []metrics.Diagnostic
			for _, d := range ds {
				if d.Severity == metrics.Error {
					errs = append(errs, d)
				}
			}
			if len(errs) != len(tc.want) {
				t.Fatalf("got %d errors, want %d:\n%v", len(errs), len(tc.want), metrics.Diagnostics(errs).Error())
			}
			for i, w := range tc.want {
				pos, rest, _ := strings.Cut(w, " ")
				code, sub, _ := strings.Cut(rest, " ")
				d := errs[i]
				if got := fmt.Sprintf("%d:%d", d.Subject.Start.Line, d.Subject.Start.Column); got != pos {
					t.Errorf("error %d at %s, want %s: %s", i, got, pos, d.Short())
				}
				if d.Code != code || !strings.Contains(d.Summary, sub) {
					t.Errorf("error %d = %s, want code %s and %q", i, d.Short(), code, sub)
				}
			}
			if tc.check != nil {
				if s == nil || s.Planning == nil {
					t.Fatal("no planning table read")
				}
				tc.check(t, s.Planning)
			}
		})
	}
	// A spec without [planning] has no plan.
	s, ds := metrics.Load("spec.toml", []byte(planBase))
	if ds.HasErrors() || s.Planning != nil {
		t.Fatalf("base spec: %v, planning %v", ds, s.Planning)
	}
}
