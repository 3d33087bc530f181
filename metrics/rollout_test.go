package metrics

import (
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
