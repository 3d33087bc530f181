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
