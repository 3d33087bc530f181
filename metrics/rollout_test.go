package metrics

import (
	"os"
	"path/filepath"
	"strings"
	"testing"
	"time"
)

// TestRolloutLoads checks a well-formed schedule: the first step takes the
// analysis start, weights are divided by their sum (5/95 written as
// ratios is 0.05/0.95, worked by hand), steps keep file order, and StepAt
// picks the step in force at an instant (a step applies from its start
// inclusive).
func TestRolloutLoads(t *testing.T) {
	src := append(specWithVariants("control = 0.5\nshelf = 0.5\n"), []byte(`
[rollout]
estimate = "last_step"

[rollout.steps.trial]
weights = { control = 95, shelf = 5 }

[rollout.steps.wide]
start = 2026-05-04T00:00:00Z
weights = { control = 1, shelf = 1 }
`)...)
	s, ds := Load("spec.toml", src)
	if ds.HasErrors() {
		t.Fatalf("unexpected diagnostics: %v", ds)
	}
	ro := s.Rollout
	if ro == nil || len(ro.Steps) != 2 {
		t.Fatalf("got rollout %+v, want two steps", ro)
	}
	if ro.Estimate != EstimateLastStep {
		t.Errorf("got estimate %q, want %q", ro.Estimate, EstimateLastStep)
	}
	start := time.Date(2026, 5, 1, 0, 0, 0, 0, time.UTC)
	wide := time.Date(2026, 5, 4, 0, 0, 0, 0, time.UTC)
	if !ro.Steps[0].Start.Equal(start) || !ro.Steps[1].Start.Equal(wide) {
		t.Errorf("got starts %v, %v; want %v, %v", ro.Steps[0].Start, ro.Steps[1].Start, start, wide)
	}
	want := [][]float64{{0.95, 0.05}, {0.5, 0.5}}
	for i, st := range ro.Steps {
		for j, w := range st.Weights {
			if d := w - want[i][j]; d > 1e-12 || d < -1e-12 {
				t.Errorf("step %s weight %d: got %v, want %v", st.Name, j, w, want[i][j])
			}
		}
	}
	for _, tc := range []struct {
		at   time.Time
		want int
	}{
		{start, 0},
		{wide.Add(-time.Microsecond), 0},
		{wide, 1},
		{wide.Add(48 * time.Hour), 1},
		{start.Add(-time.Hour), 0},
	} {
		if got := ro.StepAt(tc.at); got != tc.want {
			t.Errorf("StepAt(%v): got %d, want %d", tc.at, got, tc.want)
		}
	}
	if s.Ranges["rollout.steps.wide.start"].Start.Line == 0 {
		t.Errorf("no position recorded for rollout.steps.wide.start")
	}
}

// TestNoRollout checks that a spec without [rollout] has a nil schedule.
func TestNoRollout(t *testing.T) {
	s, ds := Load("spec.toml", specWithVariants("control = 0.5\nshelf = 0.5\n"))
	if ds.HasErrors() || s.Rollout != nil {
		t.Fatalf("got rollout %+v, diagnostics %v; want nil and none", s.Rollout, ds)
	}
}

// TestCalendar checks events from the spec and from a shared file: dates
// without a time are midnights in the experiment's time zone (Lisbon is
// UTC+1 in summer, so 2026-06-10 starts at 2026-06-09T23:00:00Z, by hand
// from the IANA rules), the shared files' events come before the spec's own, and a
// problem in the shared file is reported against that file.
func TestCalendar(t *testing.T) {
	dir := t.TempDir()
	shared := "[events.fiscal_year_end]\nfrom = 2026-06-30\nuntil = 2026-07-01\nkind = \"fiscal\"\n\n[events.broken]\nfrom = 2026-06-05\nuntil = 2026-06-01\n"
	if err := os.WriteFile(filepath.Join(dir, "calendar.toml"), []byte(shared), 0o644); err != nil {
		t.Fatal(err)
	}
	spec := strings.Replace(string(specWithVariants("control = 0.5\nshelf = 0.5\n")), "end = 2026-05-29T00:00:00Z", "end = 2026-05-29T00:00:00Z\ntime_zone = \"Europe/Lisbon\"", 1) + `
[calendar]
files = ["calendar.toml"]

[calendar.events.summer_sale]
from = 2026-06-10
until = 2026-06-13
kind = "sale"
`
	path := filepath.Join(dir, "spec.toml")
	if err := os.WriteFile(path, []byte(spec), 0o644); err != nil {
		t.Fatal(err)
	}
	s, _, ds := LoadFile(path)
	if len(ds) != 1 || ds[0].Code != CodeCalendar || !strings.HasSuffix(ds[0].Subject.File, "calendar.toml") || ds[0].Subject.Start.Line != 8 {
		t.Fatalf("got diagnostics %v, want one calendar error at calendar.toml line 8", ds)
	}
	if len(s.Events) != 2 {
		t.Fatalf("got %d events, want 2", len(s.Events))
	}
	want := []struct {
		name, from, file string
	}{
		{"fiscal_year_end", "2026-06-29T23:00:00Z", "calendar.toml"},
		{"summer_sale", "2026-06-09T23:00:00Z", ""},
	}
	for i, w := range want {
		e := s.Events[i]
		if e.Name != w.name || e.From.UTC().Format(time.RFC3339) != w.from || e.File != w.file {
			t.Errorf("event %d: got %s from %s (file %q), want %s from %s (file %q)", i, e.Name, e.From.UTC().Format(time.RFC3339), e.File, w.name, w.from, w.file)
		}
	}
}

// priorSpecText is a spec whose exposures are read from file; prior is
// its [prior_runs] table.
func priorSpecText(start, end, file, prior string) string {
	return `[experiment]
id = "p"
hypothesis = "A shelf of earlier purchases makes repeat orders quicker."
unit = "customer"
start = ` + start + `
end = ` + end + `

[variants]
control = 0.5
shelf = 0.5

[sources.exposures]
file = "` + file + `"
unit = "u"
time = "t"
columns = ["u", "arm", "t"]

[exposure]
source = "exposures"
variant = "arm"

[metrics.m]
role = "primary"
kind = "count"
source = "exposures"
window = ["0d", "7d"]
` + prior
}

// TestPriorRunSpec: a prior run named by its spec takes that spec's
// exposure source and period, with the file path rebased onto this spec's
// directory whether the path was given relative or absolute; two specs
// naming each other load (the earlier spec's own prior runs are not
// followed); a spec naming itself, even by an absolute path, is refused.
// Source: the rule of the [prior_runs] reference in README.md.
func TestPriorRunSpec(t *testing.T) {
	dir := t.TempDir()
	if err := os.MkdirAll(filepath.Join(dir, "old"), 0o755); err != nil {
		t.Fatal(err)
	}
	write := func(name, text string) string {
		p := filepath.Join(dir, name)
		if err := os.WriteFile(p, []byte(text), 0o644); err != nil {
			t.Fatal(err)
		}
		return p
	}
	absOld := filepath.Join(dir, "old", "first.toml")
	write("old/first.toml", priorSpecText("2026-04-01T00:00:00Z", "2026-04-15T00:00:00Z", "feb.parquet", "\n[prior_runs.back]\nspec = \"../spec.toml\"\n"))
	for _, ref := range []string{"old/first.toml", absOld} {
		path := write("spec.toml", priorSpecText("2026-05-01T00:00:00Z", "2026-05-29T00:00:00Z", "may.parquet", "\n[prior_runs.first]\nspec = \""+ref+"\"\n"))
		s, _, ds := LoadFile(path)
		if ds.HasErrors() {
			t.Fatalf("spec = %q: %v", ref, ds)
		}
		pr := s.PriorRuns[0]
		if pr.Source.File != filepath.Join("old", "feb.parquet") || !pr.From.Equal(time.Date(2026, 4, 1, 0, 0, 0, 0, time.UTC)) || !pr.Until.Equal(time.Date(2026, 4, 15, 0, 0, 0, 0, time.UTC)) {
			t.Errorf("spec = %q: source file %q, period %v to %v; want old/feb.parquet over the earlier spec's period", ref, pr.Source.File, pr.From, pr.Until)
		}
	}
	self := write("self.toml", priorSpecText("2026-05-01T00:00:00Z", "2026-05-29T00:00:00Z", "may.parquet", "\n[prior_runs.me]\nspec = \""+filepath.Join(dir, "self.toml")+"\"\n"))
	if _, _, ds := LoadFile(self); !ds.HasErrors() || !strings.Contains(ds.Error(), "names this spec itself") {
		t.Errorf("a spec naming itself by an absolute path: got %v, want it refused", ds)
	}
}
