package e2e

import (
	"bytes"
	"encoding/json"
	"math"
	"strings"
	"testing"
)

// TestDemo runs the bundled demo and checks it against the generator's own
// ground truth, testdata/demo/data/TRUTH.md (an independent computation:
// the generator tallies the rows it wrote and knows the effects it
// planted). The demo launched in steps (test 5%, ramp 25%, full 50/50), so
// the primary metric is read by step; the other metrics pool the steps.
func TestDemo(t *testing.T) {
	r := runReport(t, demoSpec) // exit code 0: no SRM alarm

	t.Run("planted basket effect inside the relative interval", func(t *testing.T) {
		// Source: TRUTH.md, "Planted effects": basket value ×0.98. The sale
		// raises orders in both arms alike, so the per-order value keeps
		// its planted change even when the steps are pooled.
		c := r.metric(t, "basket_value").comparison(t, "shelf")
		lo, hi := f(c.RelativeCILow), f(c.RelativeCIHigh)
		if !(lo <= -0.02 && -0.02 <= hi) {
			t.Errorf("basket_value: got relative interval [%v, %v], want it to contain the planted -0.02", lo, hi)
		}
	})

	t.Run("mature eligible single-variant units", func(t *testing.T) {
		// Source: TRUTH.md, Counts, "eligible, mature, single variant, not
		// in the dry run": control 8350, shelf 3840. Every metric has a
		// 14-day window.
		want := map[string]int64{"control": 8350, "shelf": 3840}
		for _, m := range r.Metrics {
			for v, n := range want {
				if got := m.variant(t, v).N; got != n {
					t.Errorf("%s/%s n: got %v, want %v", m.Name, v, got, n)
				}
			}
		}
	})

	t.Run("dry-run customers left out as previously exposed", func(t *testing.T) {
		// Source: TRUTH.md, Counts, "triggered after a dry-run home
		// exposure (prior run, left out)": control 152, shelf 68.
		n, by := r.exclusion("previously_exposed")
		if n != 220 || by["control"] != 152 || by["shelf"] != 68 {
			t.Errorf("previously_exposed: got %d %v, want 220 (control 152, shelf 68)", n, by)
		}
	})

	t.Run("realized values", func(t *testing.T) {
		// Source: TRUTH.md, "Realized in this draw" (every step pooled),
		// rounded as printed there, so the tolerance is half a unit in the
		// last place. orders_14d is read by step: see TestDemoRollout.
		cases := []struct {
			metric, variant string
			want, tol       float64
		}{
			{"basket_value", "control", 51.59, 5e-3},
			{"basket_value", "shelf", 51.04, 5e-3},
			{"support_contacts", "control", 0.0481, 5e-5},
			{"support_contacts", "shelf", 0.0536, 5e-5},
			{"shelf_taps", "control", 0, 5e-4},
			{"shelf_taps", "shelf", 2.999, 5e-4},
		}
		for _, tc := range cases {
			if got := r.metric(t, tc.metric).variant(t, tc.variant).Value; !(math.Abs(got-tc.want) <= tc.tol) {
				t.Errorf("%s/%s value: got %v, want %v ± %v", tc.metric, tc.variant, got, tc.want, tc.tol)
			}
		}
		// TRUTH.md's relative is the ratio of the raw means, so compare it
		// with the unadjusted comparison (the headline one is
		// CUPED-adjusted for a pre-trigger covariate).
		if got := f(r.metric(t, "basket_value").comparison(t, "shelf").raw().Relative); !(math.Abs(got - -0.0106) <= 5e-5) {
			t.Errorf("basket_value relative: got %v, want -0.0106 ± 5e-5", got)
		}
	})
}

// demoSpec is the README's demo experiment.
const demoSpec = "../testdata/demo/reorder.toml"

// demoRollout is the part of the demo's JSON report that
// TestDemoRollout reads.
type demoRollout struct {
	Metrics []struct {
		Name     string `json:"name"`
		Variants []struct {
			Variant string `json:"variant"`
			Value   num    `json:"value"`
		} `json:"variants"`
		Comparisons []comparisonJSON `json:"comparisons"`
	} `json:"metrics"`
	Rollout *struct {
		Estimate string `json:"estimate"`
		Method   string `json:"method"`
		Steps    []struct {
			Name        string           `json:"name"`
			Eligible    map[string]int64 `json:"eligible_by_variant"`
			SampleRatio struct {
				Alarm bool `json:"alarm"`
			} `json:"sample_ratio"`
		} `json:"steps"`
		Effects []struct {
			Metric     string `json:"metric"`
			Variant    string `json:"variant"`
			Difference num    `json:"difference"`
			Pooled     num    `json:"pooled_difference"`
			Strata     []struct {
				Step       string `json:"step"`
				Weight     num    `json:"weight"`
				Difference num    `json:"difference"`
			} `json:"strata"`
		} `json:"effects"`
	} `json:"rollout"`
	Timing *struct {
		Events []struct {
			Name     string   `json:"name"`
			From     string   `json:"from"`
			Until    string   `json:"until"`
			File     string   `json:"file"`
			Overlaps []string `json:"overlaps"`
		} `json:"events"`
	} `json:"timing"`
}

// TestDemoRollout checks the demo's launch in steps against TRUTH.md: the
// report reads orders_14d by step and says so, the by-step estimate
// covers the planted effect and equals the realized by-step difference,
// the pooled difference (which mixes the steps in each arm's own
// proportions while the spring sale inflated early orders) is shown
// beside it, each step's units match, the sale is named, and the early
// read of the test step finds nothing to fix.
func TestDemoRollout(t *testing.T) {
	code, out, errs := runCLI("run", "--format", "json", demoSpec)
	if code != 0 {
		t.Fatalf("assay run: exit %d\n%s", code, errs)
	}
	var r demoRollout
	if err := json.NewDecoder(bytes.NewReader([]byte(out))).Decode(&r); err != nil {
		t.Fatal(err)
	}
	if r.Rollout == nil || r.Rollout.Estimate != "by_step" || len(r.Rollout.Steps) != 3 {
		t.Fatalf("rollout section: got %+v, want by_step with three steps", r.Rollout)
	}

	// Source: TRUTH.md, "Realized in this draw", per-step table (weight,
	// control, shelf, difference, planted difference per step) and the
	// summary table (pooled +0.0890, by step +0.1264, planted by step
	// +0.1279), all rounded to 4 decimals.
	type stepTruth struct {
		name                                  string
		weight, control, shelf, diff, planted float64
		kept                                  [2]int64 // TRUTH.md, Counts by step, "kept control/shelf"
	}
	truth := []stepTruth{
		{"test", 0.2771, 1.6924, 1.6626, -0.0298, 0.1354, [2]int64{3215, 163}},
		{"ramp", 0.2504, 1.6121, 1.9102, 0.2981, 0.1316, [2]int64{2261, 791}},
		{"full", 0.4725, 1.5160, 1.6431, 0.1271, 0.1215, [2]int64{3058, 3088}},
	}
	const pooledTruth, byStepTruth, plantedTruth = 0.0890, 0.1264, 0.1279

	t.Run("primary read by step, covering the planted effect", func(t *testing.T) {
		for _, m := range r.Metrics {
			if m.Name != "orders_14d" {
				continue
			}
			c := m.Comparisons[0]
			if !strings.HasPrefix(c.Method, "by-step") {
				t.Errorf("orders_14d method: got %q, want the by-step estimate", c.Method)
			}
			if !strings.Contains(r.Rollout.Method, "stratified by the rollout step") {
				t.Errorf("rollout method: got %q, want it to say the primary comparison is stratified by step", r.Rollout.Method)
			}
			lo, hi := f(c.CILow), f(c.CIHigh)
			if !(lo <= plantedTruth && plantedTruth <= hi) {
				t.Errorf("orders_14d by step: got interval [%v, %v], want it to contain the planted %v", lo, hi, plantedTruth)
			}
			// The primary comparison is CUPED within each step; its
			// unadjusted by-step difference is the realized by-step
			// difference up to TRUTH.md's rounding.
			if !strings.Contains(c.Method, "cuped") || c.CUPED == nil {
				t.Errorf("orders_14d method: got %q, want CUPED within steps", c.Method)
			}
			if got := f(c.raw().Difference); math.Abs(got-byStepTruth) > 5e-5 {
				t.Errorf("orders_14d by step, unadjusted: got %v, want %v ± 5e-5", got, byStepTruth)
			}
			// Each arm's value is its by-step mean Σ_k w_k·ȳ_k, computed
			// here from TRUTH.md's per-step rows (each rounded to 1e-4).
			want := map[string]float64{}
			for _, s := range truth {
				want["control"] += s.weight * s.control
				want["shelf"] += s.weight * s.shelf
			}
			for _, v := range m.Variants {
				if got := f(v.Value); math.Abs(got-want[v.Variant]) > 2e-4 {
					t.Errorf("orders_14d %s by-step value: got %v, want %v ± 2e-4", v.Variant, got, want[v.Variant])
				}
			}
		}
	})

	t.Run("by-step and pooled differences beside each other", func(t *testing.T) {
		found := false
		for _, e := range r.Rollout.Effects {
			if e.Metric != "orders_14d" || e.Variant != "shelf" {
				continue
			}
			found = true
			if got := f(e.Pooled); math.Abs(got-pooledTruth) > 5e-5 {
				t.Errorf("pooled difference: got %v, want %v ± 5e-5", got, pooledTruth)
			}
			if got := f(e.Difference); math.Abs(got-byStepTruth) > 5e-5 {
				t.Errorf("by-step difference: got %v, want %v ± 5e-5", got, byStepTruth)
			}
			if len(e.Strata) != len(truth) {
				t.Fatalf("strata: got %d, want %d", len(e.Strata), len(truth))
			}
			for i, s := range e.Strata {
				w := truth[i]
				if s.Step != w.name || math.Abs(f(s.Weight)-w.weight) > 5e-5 || math.Abs(f(s.Difference)-w.diff) > 5e-5 {
					t.Errorf("stratum %d: got %s weight %v difference %v, want %s %v %v (± 5e-5)", i, s.Step, f(s.Weight), f(s.Difference), w.name, w.weight, w.diff)
				}
			}
		}
		if !found {
			t.Fatal("no by-step effect of orders_14d in the rollout section")
		}
	})

	t.Run("units and sample ratio per step", func(t *testing.T) {
		for i, s := range r.Rollout.Steps {
			w := truth[i]
			if s.Name != w.name || s.Eligible["control"] != w.kept[0] || s.Eligible["shelf"] != w.kept[1] {
				t.Errorf("step %d: got %s %v, want %s control %d shelf %d", i, s.Name, s.Eligible, w.name, w.kept[0], w.kept[1])
			}
			if s.SampleRatio.Alarm {
				t.Errorf("step %s: sample-ratio alarm, want none (assignment followed the step's weights)", s.Name)
			}
		}
	})

	t.Run("calendar event named", func(t *testing.T) {
		// Source: TRUTH.md, "Calendar": the spring pantry sale in
		// [2026-03-13, 2026-03-16), declared in the shared calendar file.
		if r.Timing == nil || len(r.Timing.Events) != 1 {
			t.Fatalf("timing events: got %+v, want the pantry sale", r.Timing)
		}
		e := r.Timing.Events[0]
		if e.Name != "spring_pantry_sale" || e.From != "2026-03-13T00:00:00Z" || e.Until != "2026-03-16T00:00:00Z" ||
			e.File != "../library/grocery-calendar.toml" || len(e.Overlaps) == 0 || e.Overlaps[0] != "analysis period" {
			t.Errorf("event: got %+v, want spring_pantry_sale [2026-03-13, 2026-03-16) from the shared calendar, overlapping the analysis period", e)
		}
	})

	t.Run("early read of the test step", func(t *testing.T) {
		// The test step's assignment followed its 95/5 weights (TRUTH.md,
		// "Launch schedule") and every exposure row names a variant, so
		// there is nothing to fix: exit code 0, not 6.
		code, out, errs := runCLI("rampcheck", demoSpec)
		if code != 0 {
			t.Fatalf("assay rampcheck: exit %d, want 0\n%s\n%s", code, out, errs)
		}
		if !strings.Contains(out, "rollout step test") || !strings.Contains(out, "Nothing found to fix") {
			t.Errorf("rampcheck: want a read of step test with nothing to fix, got\n%s", out)
		}
	})
}
