package e2e

import (
	"math"
	"testing"
)

// TestDemo runs the bundled demo and checks it against the generator's own
// ground truth, testdata/demo/data/TRUTH.md (an independent computation:
// the generator tallies the rows it wrote).
func TestDemo(t *testing.T) {
	r := runReport(t, "../testdata/demo/reorder.toml") // exit code 0: no SRM alarm

	t.Run("planted effects inside the relative intervals", func(t *testing.T) {
		// Source: TRUTH.md, "Planted effects": orders ×1.08, basket value ×0.98.
		for _, tc := range []struct {
			metric  string
			planted float64
		}{
			{"orders_14d", 0.08},
			{"basket_value", -0.02},
		} {
			c := r.metric(t, tc.metric).comparison(t, "shelf")
			lo, hi := f(c.RelativeCILow), f(c.RelativeCIHigh)
			if !(lo <= tc.planted && tc.planted <= hi) {
				t.Errorf("%s: got relative interval [%v, %v], want it to contain the planted %v", tc.metric, lo, hi, tc.planted)
			}
		}
	})

	t.Run("mature eligible single-variant units", func(t *testing.T) {
		// Source: TRUTH.md, Counts, "eligible, mature, single variant":
		// control 6162, shelf 6169. Every metric has a 14-day window.
		want := map[string]int64{"control": 6162, "shelf": 6169}
		for _, m := range r.Metrics {
			for v, n := range want {
				if got := m.variant(t, v).N; got != n {
					t.Errorf("%s/%s n: got %v, want %v", m.Name, v, got, n)
				}
			}
		}
	})

	t.Run("realized values", func(t *testing.T) {
		// Source: TRUTH.md, "Realized in this draw", rounded as printed
		// there, so the tolerance is half a unit in the last place.
		cases := []struct {
			metric, variant string
			want, tol       float64
		}{
			{"orders_14d", "control", 1.3749, 5e-5},
			{"orders_14d", "shelf", 1.4771, 5e-5},
			{"basket_value", "control", 51.78, 5e-3},
			{"basket_value", "shelf", 50.59, 5e-3},
			{"support_contacts", "control", 0.0482, 5e-5},
			{"support_contacts", "shelf", 0.0519, 5e-5},
			{"shelf_taps", "control", 0, 5e-4},
			{"shelf_taps", "shelf", 3.005, 5e-4},
		}
		for _, tc := range cases {
			if got := r.metric(t, tc.metric).variant(t, tc.variant).Value; !(math.Abs(got-tc.want) <= tc.tol) {
				t.Errorf("%s/%s value: got %v, want %v ± %v", tc.metric, tc.variant, got, tc.want, tc.tol)
			}
		}
		for _, tc := range []struct {
			metric    string
			want, tol float64
		}{
			{"orders_14d", 0.0743, 5e-5},
			{"basket_value", -0.0229, 5e-5},
		} {
			// TRUTH.md's relative is the ratio of the raw means, so compare
			// it with the unadjusted comparison (the headline one may be
			// CUPED-adjusted for a pre-trigger covariate).
			if got := f(r.metric(t, tc.metric).comparison(t, "shelf").raw().Relative); !(math.Abs(got-tc.want) <= tc.tol) {
				t.Errorf("%s relative: got %v, want %v ± %v", tc.metric, got, tc.want, tc.tol)
			}
		}
	})
}
