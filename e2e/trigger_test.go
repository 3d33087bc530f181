package e2e

import (
	"math"
	"testing"
	"time"
)

// Trigger and window semantics on hand-checkable fixtures. Outcome rows
// carry distinct powers of two in w, so the per-variant total (mean × n)
// of the sum metric names exactly which rows counted. Every expected value
// is worked out by hand in the comments (Source: hand-worked fixture).
//
// Analysis window unless stated: S = 2026-03-02 00:00, E = 2026-04-13
// 00:00 (UTC); metric w14 sums w over [trigger, trigger + 14d).

// metricW1d is a secondary 1-day sum of w, for per-metric maturity.
const metricW1d = `
[metrics.w1d]
role = "secondary"
kind = "sum"
source = "events"
value = "w"
window = ["0d", "1d"]
`

// thresholdMetrics are proportions of units whose 14-day sum of w is above
// 0.3 and above 0.6.
const thresholdMetrics = `
[metrics.over_03]
role = "secondary"
kind = "proportion"
source = "events"
value = "w"
above = 0.3
window = ["0d", "14d"]

[metrics.over_06]
role = "secondary"
kind = "proportion"
source = "events"
value = "w"
above = 0.6
window = ["0d", "14d"]
`

// metricCount14 counts event rows in [0d, 14d).
const metricCount14 = `
[metrics.events14]
role = "secondary"
kind = "count"
source = "events"
window = ["0d", "14d"]
`

const ordersSource = `
[sources.orders]
file = "orders.parquet"
unit = "unit_id"
time = "ordered_at"
columns = ["unit_id", "ordered_at", "status"]
`

// want is one expected per-variant result of a metric.
type want struct {
	metric, variant string
	n               int64
	total           float64 // value × n; ignored when n == 0 (value must be null)
	immature        int64
}

func checkWants(t *testing.T, r *report, ws []want) {
	t.Helper()
	for _, w := range ws {
		v := r.metric(t, w.metric).variant(t, w.variant)
		if v.N != w.n {
			t.Errorf("%s/%s n: got %v, want %v", w.metric, w.variant, v.N, w.n)
		}
		if v.Immature != w.immature {
			t.Errorf("%s/%s immature: got %v, want %v", w.metric, w.variant, v.Immature, w.immature)
		}
		if w.n == 0 {
			if !math.IsNaN(v.Value) {
				t.Errorf("%s/%s value: got %v, want null (no units)", w.metric, w.variant, v.Value)
			}
			continue
		}
		if got := v.Value * float64(v.N); !closeAbs(got, w.total, 1e-9) {
			t.Errorf("%s/%s total (value × n): got %v, want %v", w.metric, w.variant, got, w.total)
		}
	}
}

func checkExclusion(t *testing.T, r *report, reason string, units int64, byVariant map[string]int64) {
	t.Helper()
	got, by := r.exclusion(reason)
	if got != units {
		t.Errorf("exclusion %q units: got %v, want %v", reason, got, units)
	}
	for v, n := range byVariant {
		if by[v] != n {
			t.Errorf("exclusion %q by_variant[%s]: got %v, want %v", reason, v, by[v], n)
		}
	}
}

func checkUnits(t *testing.T, r *report, variant string, triggered, eligible int64) {
	t.Helper()
	tr, el := r.units(t, variant)
	if tr != triggered {
		t.Errorf("%s triggered_units: got %v, want %v", variant, tr, triggered)
	}
	if el != eligible {
		t.Errorf("%s eligible_units: got %v, want %v", variant, el, eligible)
	}
}

func TestTriggerSemantics(t *testing.T) {
	S, E := ts("2026-03-02 00:00:00"), ts("2026-04-13 00:00:00")
	T := ts("2026-03-20 00:00:00") // common trigger of the eligibility cases
	h := time.Hour

	type files map[string]struct {
		cols string
		rows []row
	}
	cases := []struct {
		name   string
		parts  specParts
		expo   []row
		events []row
		more   files
		flags  []string
		check  func(t *testing.T, r *report)
	}{
		{
			name:  "windows are half-open around the first exposure",
			parts: specParts{Metrics: metricSumW},
			expo: []row{
				{"a1", "control", ts("2026-03-03 00:00:00"), "home"},
				// a2 is exposed twice: the trigger is the first (03-04).
				{"a2", "control", ts("2026-03-04 00:00:00"), "home"},
				{"a2", "control", ts("2026-03-10 00:00:00"), "home"},
				{"b1", "treatment", ts("2026-03-03 00:00:00"), "home"},
			},
			events: []row{
				// a1, trigger 03-03 00:00, window [03-03 00:00, 03-17 00:00):
				{"a1", ts("2026-02-28 00:00:00"), 16.0}, // 3 days before: no
				{"a1", ts("2026-03-02 23:59:59"), 1.0},  // trigger − 1s: no
				{"a1", ts("2026-03-03 00:00:00"), 2.0},  // exactly at the trigger: yes
				{"a1", ts("2026-03-16 23:59:59"), 4.0},  // trigger + 14d − 1s: yes
				{"a1", ts("2026-03-17 00:00:00"), 8.0},  // trigger + 14d: no
				// a2, trigger 03-04, window ends 03-18 00:00:
				{"a2", ts("2026-03-05 00:00:00"), 32.0}, // yes
				{"a2", ts("2026-03-19 00:00:00"), 64.0}, // only inside a window from the later exposure: no
				{"b1", ts("2026-03-03 01:00:00"), 128.0},
			},
			check: func(t *testing.T, r *report) {
				// control: a1 = 2 + 4 = 6, a2 = 32 → n 2, total 38.
				checkWants(t, r, []want{
					{"w14", "control", 2, 38, 0},
					{"w14", "treatment", 1, 128, 0},
				})
			},
		},
		{
			name:  "the trigger is the first qualifying exposure",
			parts: specParts{ExposureFilter: "surface = 'home'", Metrics: metricSumW},
			expo: []row{
				// f1: first exposure on search (does not qualify), then home on 03-05.
				{"f1", "control", ts("2026-03-03 00:00:00"), "search"},
				{"f1", "control", ts("2026-03-05 00:00:00"), "home"},
				// f2: never on home: exposed, never triggered.
				{"f2", "control", ts("2026-03-04 00:00:00"), "search"},
				{"f3", "control", ts("2026-03-06 00:00:00"), "home"},
				{"g1", "treatment", ts("2026-03-03 00:00:00"), "home"},
			},
			events: []row{
				// f1, trigger 03-05 00:00, window ends 03-19 00:00:
				{"f1", ts("2026-03-04 00:00:00"), 1.0}, // after the search exposure, before the trigger: no
				{"f1", ts("2026-03-05 12:00:00"), 2.0}, // yes
				{"f1", ts("2026-03-18 12:00:00"), 4.0}, // yes (a window from 03-03 would end 03-17)
				{"f2", ts("2026-03-05 00:00:00"), 8.0}, // never triggered: no
				{"f3", ts("2026-03-06 01:00:00"), 16.0},
				{"g1", ts("2026-03-03 01:00:00"), 32.0},
			},
			check: func(t *testing.T, r *report) {
				// control: f1 = 2 + 4 = 6, f3 = 16 → n 2, total 22 (anchoring
				// f1 at its search exposure would give 1 + 2 = 3).
				checkWants(t, r, []want{
					{"w14", "control", 2, 22, 0},
					{"w14", "treatment", 1, 32, 0},
				})
				if r.Health.NeverTriggered != 1 {
					t.Errorf("never_triggered_units: got %v, want %v (f2)", r.Health.NeverTriggered, 1)
				}
				if r.Health.ExposedUnits != 4 {
					t.Errorf("exposed_units: got %v, want %v (f1, f2, f3, g1)", r.Health.ExposedUnits, 4)
				}
				checkUnits(t, r, "control", 2, 2)
			},
		},
		{
			name: "history rule require present",
			parts: specParts{Extra: ordersSource + `
[eligibility.recent]
kind = "history"
source = "orders"
window = ["-60d", "0d"]
filter = "status <> 'cancelled'"
require = "present"
`, Metrics: metricSumW},
			expo:   historyExposures(T),
			events: historyEvents(T),
			more:   files{"orders.parquet": {"unit_id, ordered_at, status", historyOrders(T)}},
			check: func(t *testing.T, r *report) {
				// Look-back [T − 60d, T) = [2026-01-19 00:00, 2026-03-20 00:00).
				// Eligible: c1 (T − 10d), c3 (exactly T − 60d), c6 (T − 1s)
				// → 1 + 4 + 32 = 37. Excluded: c2 (order exactly at T is not
				// before it), c4 (T − 60d − 1s), c5 (no orders), c7 (only a
				// cancelled order). Treatment: d1 eligible (64), d2 excluded.
				checkWants(t, r, []want{
					{"w14", "control", 3, 37, 0},
					{"w14", "treatment", 1, 64, 0},
				})
				checkExclusion(t, r, "rule:recent", 5, map[string]int64{"control": 4, "treatment": 1})
				checkUnits(t, r, "control", 7, 3)
			},
		},
		{
			name: "history rule require absent",
			parts: specParts{Extra: ordersSource + `
[eligibility.recent]
kind = "history"
source = "orders"
window = ["-60d", "0d"]
filter = "status <> 'cancelled'"
require = "absent"
`, Metrics: metricSumW},
			expo:   historyExposures(T),
			events: historyEvents(T),
			more:   files{"orders.parquet": {"unit_id, ordered_at, status", historyOrders(T)}},
			check: func(t *testing.T, r *report) {
				// The complement of the present case: c2, c4, c5, c7 →
				// 2 + 8 + 16 + 256 = 282; treatment d2 = 128.
				checkWants(t, r, []want{
					{"w14", "control", 4, 282, 0},
					{"w14", "treatment", 1, 128, 0},
				})
				checkExclusion(t, r, "rule:recent", 4, map[string]int64{"control": 3, "treatment": 1})
			},
		},
		{
			name: "attribute rule on a static source",
			parts: specParts{Extra: `
[sources.customers]
file = "customers.parquet"
unit = "customer_id"
static = true
columns = ["customer_id", "tier"]

[eligibility.gold]
kind = "attribute"
source = "customers"
filter = "tier = 'gold'"
`, Metrics: metricSumW},
			expo: []row{
				{"h1", "control", ts("2026-03-03 00:00:00"), "home"},
				{"h2", "control", ts("2026-03-04 00:00:00"), "home"},
				{"h3", "control", ts("2026-03-05 00:00:00"), "home"},
				{"h4", "control", ts("2026-03-06 00:00:00"), "home"},
				{"h5", "control", ts("2026-03-07 00:00:00"), "home"},
				{"k1", "treatment", ts("2026-03-03 00:00:00"), "home"},
				{"k2", "treatment", ts("2026-03-04 00:00:00"), "home"},
			},
			events: []row{
				{"h1", ts("2026-03-03 01:00:00"), 1.0},
				{"h2", ts("2026-03-04 01:00:00"), 2.0},
				{"h3", ts("2026-03-05 01:00:00"), 4.0},
				{"h4", ts("2026-03-06 01:00:00"), 8.0},
				{"h5", ts("2026-03-07 01:00:00"), 16.0},
				{"k1", ts("2026-03-03 01:00:00"), 32.0},
				{"k2", ts("2026-03-04 01:00:00"), 64.0},
			},
			more: files{"customers.parquet": {"customer_id, tier", []row{
				{"h1", "gold"}, {"h2", "silver"}, {"h4", nil}, {"h5", "gold"},
				{"k1", "gold"}, {"k2", "silver"},
			}}},
			check: func(t *testing.T, r *report) {
				// Eligible: h1, h5 (gold) → 17; excluded h2 (silver), h3 (no
				// row), h4 (NULL tier). Treatment: k1 → 32; k2 excluded.
				checkWants(t, r, []want{
					{"w14", "control", 2, 17, 0},
					{"w14", "treatment", 1, 32, 0},
				})
				checkExclusion(t, r, "rule:gold", 4, map[string]int64{"control": 3, "treatment": 1})
			},
		},
		{
			name:  "crossovers are excluded and counted",
			parts: specParts{Metrics: metricSumW},
			expo: []row{
				{"x1", "control", ts("2026-03-03 00:00:00"), "home"},
				{"x1", "treatment", ts("2026-03-04 00:00:00"), "home"}, // crossover, triggered in control
				{"x2", "control", ts("2026-03-03 00:00:00"), "home"},
				{"x3", "control", ts("2026-03-03 00:00:00"), "home"},
				{"x3", "control", ts("2026-03-08 00:00:00"), "home"}, // twice, same variant: not a crossover
				{"y1", "treatment", ts("2026-03-03 00:00:00"), "home"},
				{"y2", "treatment", ts("2026-03-03 00:00:00"), "home"},
				{"y2", "control", ts("2026-03-10 00:00:00"), "home"}, // crossover, triggered in treatment
			},
			events: []row{
				{"x1", ts("2026-03-03 01:00:00"), 1.0},
				{"x2", ts("2026-03-03 01:00:00"), 2.0},
				{"y1", ts("2026-03-03 01:00:00"), 4.0},
				{"x3", ts("2026-03-03 01:00:00"), 8.0},
				{"y2", ts("2026-03-03 01:00:00"), 16.0},
			},
			check: func(t *testing.T, r *report) {
				// control: x2 + x3 = 10; treatment: y1 = 4. Crossovers: x1
				// (control), y2 (treatment).
				checkWants(t, r, []want{
					{"w14", "control", 2, 10, 0},
					{"w14", "treatment", 1, 4, 0},
				})
				checkExclusion(t, r, "crossover", 2, map[string]int64{"control": 1, "treatment": 1})
				checkUnits(t, r, "control", 3, 2)
				checkUnits(t, r, "treatment", 2, 1)
			},
		},
		{
			name:  "the trigger variant under ties, missing variants and non-qualifying rows",
			parts: specParts{ExposureFilter: "surface = 'home'", Metrics: metricSumW},
			expo: []row{
				{"t1", "control", ts("2026-03-03 00:00:00"), "search"}, // does not qualify, but is seen
				{"t1", "treatment", ts("2026-03-04 00:00:00"), "home"}, // trigger: crossover in treatment
				{"t2", "treatment", ts("2026-03-05 00:00:00"), "home"},
				{"t2", "control", ts("2026-03-05 00:00:00"), "home"}, // same instant: the least variant, control
				{"t3", nil, ts("2026-03-03 00:00:00"), "home"},       // trigger without a variant
				{"t3", "control", ts("2026-03-06 00:00:00"), "home"}, // the only variant seen: control
				{"t5", "control", ts("2026-03-03 00:00:00"), "home"},
				{"t5", nil, ts("2026-03-04 00:00:00"), "home"}, // a later row without a variant: still control
				{"t6", nil, ts("2026-03-03 00:00:00"), "home"}, // never seen with a variant: unknown
				{"t4", "control", ts("2026-03-03 00:00:00"), "home"},
				{"t4", nil, ts("2026-03-03 00:00:00"), "home"}, // same instant as a control row: control
				{"u1", "treatment", ts("2026-03-03 00:00:00"), "home"},
				{"c1", "control", ts("2026-03-03 00:00:00"), "home"},
			},
			events: []row{
				{"t1", ts("2026-03-04 01:00:00"), 1.0},
				{"t2", ts("2026-03-05 01:00:00"), 2.0},
				{"t3", ts("2026-03-06 01:00:00"), 4.0},
				{"t4", ts("2026-03-03 01:00:00"), 8.0},
				{"u1", ts("2026-03-03 01:00:00"), 16.0},
				{"c1", ts("2026-03-03 01:00:00"), 32.0},
			},
			check: func(t *testing.T, r *report) {
				// One rule, whatever the order (README, "Triggers and
				// variants"): rows without a variant count for the trigger
				// time and never decide the variant. Eligible: control t3 +
				// t4 + t5 + c1 = 4 + 8 + 0 + 32 = 44; treatment u1 = 16.
				// Crossovers (seen in two variants, any surface): t1
				// (triggered in treatment), t2 (tie at its trigger, the least
				// variant: control). t6 was never seen with a variant: it is
				// excluded as an unknown variant, not silently dropped.
				checkWants(t, r, []want{
					{"w14", "control", 4, 44, 0},
					{"w14", "treatment", 1, 16, 0},
				})
				checkExclusion(t, r, "crossover", 2, map[string]int64{"control": 1, "treatment": 1})
				checkExclusion(t, r, "unknown_variant", 1, nil)
				checkExclusion(t, r, "any", 3, map[string]int64{"control": 1, "treatment": 1})
				checkUnits(t, r, "control", 5, 4)
				checkUnits(t, r, "treatment", 2, 1)
				if n := r.Health.IgnoredRows["null_variant"]; n != 4 {
					t.Errorf("exposure rows without a variant: got %d, want 4 (t3, t4, t5, t6)", n)
				}
			},
		},
		{
			// Source: exact decimal arithmetic, hand-worked. In binary
			// floating point 0.1 + 0.2 = 0.30000000000000004 > 0.3 and
			// 0.2 + 0.1 gives the same, but (0.1 + 0.2) + 0.3 and
			// 0.1 + (0.2 + 0.3) differ (0.6000000000000001 and 0.6), so a
			// double sum's side of a threshold can depend on the order in
			// which the engine adds rows (IEEE 754 double rounding, from
			// memory).
			name:  "per-unit sums are exact decimals, so a total equal to a threshold is not above it",
			parts: specParts{Metrics: metricSumW + thresholdMetrics},
			expo: []row{
				{"s1", "control", ts("2026-03-03 00:00:00"), "home"},
				{"s2", "control", ts("2026-03-03 00:00:00"), "home"},
				{"s3", "control", ts("2026-03-03 00:00:00"), "home"},
				{"s4", "treatment", ts("2026-03-03 00:00:00"), "home"},
			},
			events: []row{
				{"s1", ts("2026-03-03 01:00:00"), 0.1}, // s1: 0.1 + 0.2 = 0.3, not above 0.3
				{"s1", ts("2026-03-03 02:00:00"), 0.2},
				{"s2", ts("2026-03-03 01:00:00"), 0.1}, // s2: 0.1 + 0.2 + 0.3 = 0.6, not above 0.6
				{"s2", ts("2026-03-03 02:00:00"), 0.2},
				{"s2", ts("2026-03-03 03:00:00"), 0.3},
				{"s3", ts("2026-03-03 01:00:00"), 0.4}, // s3: 0.4, above 0.3, not above 0.6
				{"s4", ts("2026-03-03 01:00:00"), 0.7}, // s4: 0.7, above both
			},
			check: func(t *testing.T, r *report) {
				// over_03: s2 and s3 of control (2/3), not s1; over_06: none of
				// control (s2 is exactly 0.6).
				// w14 totals: control 0.3 + 0.6 + 0.4 = 1.3; treatment 0.7.
				checkWants(t, r, []want{
					{"over_03", "control", 3, 2, 0},
					{"over_06", "control", 3, 0, 0},
					{"over_03", "treatment", 1, 1, 0},
					{"w14", "control", 3, 1.3, 0},
				})
			},
		},
		{
			name:   "immature units are left out per metric",
			parts:  specParts{Metrics: metricSumW + metricW1d},
			expo:   immatureExposures(E),
			events: immatureEvents(E),
			check: func(t *testing.T, r *report) {
				// as-of = E. w14 mature iff trigger + 14d <= E: m2 (E − 14d,
				// exactly E) and m4; immature m1 (E − 10d), m3 (E − 14d + 1s)
				// → n 2, total 2 + 8 = 10, immature 2. w1d: all four mature →
				// 1 + 2 + 4 + 8 = 15.
				checkWants(t, r, []want{
					{"w14", "control", 2, 10, 2},
					{"w1d", "control", 4, 15, 0},
					{"w14", "treatment", 1, 16, 0},
				})
				checkUnits(t, r, "control", 4, 4)
			},
		},
		{
			name:   "as-of before the end makes more units immature",
			parts:  specParts{Metrics: metricSumW + metricW1d},
			expo:   immatureExposures(E),
			events: immatureEvents(E),
			flags:  []string{"--as-of", "2026-04-03T12:00:00Z"},
			check: func(t *testing.T, r *report) {
				// as-of A = 2026-04-03 12:00. All four control triggers are
				// before A. w14 mature iff trigger <= A − 14d = 03-20 12:00:
				// m4 only → n 1, total 8, immature 3. w1d mature iff trigger
				// <= 04-02 12:00: m2, m3, m4 → 14, immature 1 (m1, 04-03).
				checkWants(t, r, []want{
					{"w14", "control", 1, 8, 3},
					{"w1d", "control", 3, 14, 1},
					{"w14", "treatment", 1, 16, 0},
				})
				checkUnits(t, r, "control", 4, 4)
			},
		},
		{
			name:  "units without outcomes count as zero",
			parts: specParts{Metrics: metricSumW + metricCount14},
			expo: []row{
				{"z1", "control", ts("2026-03-03 00:00:00"), "home"},
				{"z2", "control", ts("2026-03-03 00:00:00"), "home"},
				{"z3", "control", ts("2026-03-03 00:00:00"), "home"},
				{"q1", "treatment", ts("2026-03-03 00:00:00"), "home"},
				{"q2", "treatment", ts("2026-03-03 00:00:00"), "home"},
			},
			events: []row{
				{"z1", ts("2026-03-03 01:00:00"), 3.0},
				// z2 has no rows; z3 only outside its window.
				{"z3", ts("2026-03-02 00:00:00"), 100.0},
				{"z3", ts("2026-03-17 00:00:00"), 100.0},
				{"q1", ts("2026-03-03 01:00:00"), 6.0},
			},
			check: func(t *testing.T, r *report) {
				// control values (3, 0, 0): mean 1, s² = (4 + 1 + 1)/2 = 3,
				// SE = √(3/3) = 1. treatment (6, 0): mean 3, s² = 18, SE = √(18/2) = 3.
				// Welch difference 2, SE √(1 + 9) = √10. events14: (1, 0, 0) → 1/3.
				checkWants(t, r, []want{
					{"w14", "control", 3, 3, 0},
					{"w14", "treatment", 2, 6, 0},
					{"events14", "control", 3, 1, 0},
				})
				m := r.metric(t, "w14")
				for _, ck := range []struct {
					name      string
					got, want float64
				}{
					{"control mean", m.variant(t, "control").Value, 1},
					{"control std_error", m.variant(t, "control").StdError, 1},
					{"treatment std_error", m.variant(t, "treatment").StdError, 3},
					{"difference", f(m.comparison(t, "treatment").Difference), 2},
					{"difference std_error", f(m.comparison(t, "treatment").StdError), math.Sqrt(10)},
				} {
					if !closeAbs(ck.got, ck.want, 1e-9) {
						t.Errorf("%s: got %v, want %v", ck.name, ck.got, ck.want)
					}
				}
			},
		},
		{
			name:  "exposures outside the analysis window are ignored and counted",
			parts: specParts{Metrics: metricSumW},
			expo: []row{
				{"i1", "control", S.Add(-time.Second), "home"}, // before start
				{"i1", "control", S.Add(day), "home"},          // trigger
				{"i2", "control", S, "home"},                   // exactly at start: counts
				{"i3", "control", E, "home"},                   // exactly at end: after end
				{"i4", "control", E.Add(-time.Second), "home"}, // last instant: counts (immature)
				{"i5", "control", S.Add(-5 * day), "home"},     // before start
				{nil, "control", S.Add(2 * day), "home"},       // no unit
				{"i6", "control", nil, "home"},                 // no time
				{"j1", "treatment", S.Add(day), "home"},
			},
			events: []row{
				{"i1", S.Add(h), 1.0},       // before i1's trigger (S + 1d): no
				{"i1", S.Add(day + h), 2.0}, // yes
				{"i2", S.Add(h), 4.0},       // yes
				{"i3", E.Add(h), 64.0},      // not triggered
				{"i5", S.Add(h), 128.0},     // not triggered
				{"j1", S.Add(day + h), 8.0},
			},
			check: func(t *testing.T, r *report) {
				// control: i1 (2) + i2 (4) = 6, i4 immature. Ignored rows:
				// before_start 2 (i1, i5), after_end 1 (i3), null_unit 1,
				// null_time 1. Exposed units: i1, i2, i4, j1.
				checkWants(t, r, []want{
					{"w14", "control", 2, 6, 1},
					{"w14", "treatment", 1, 8, 0},
				})
				for k, v := range map[string]int64{"before_start": 2, "after_end": 1, "null_unit": 1, "null_time": 1} {
					if got := r.Health.IgnoredRows[k]; got != v {
						t.Errorf("ignored_exposure_rows.%s: got %v, want %v", k, got, v)
					}
				}
				if r.Health.ExposedUnits != 4 {
					t.Errorf("exposed_units: got %v, want %v", r.Health.ExposedUnits, 4)
				}
				checkUnits(t, r, "control", 3, 3)
			},
		},
	}
	for _, tc := range cases {
		t.Run(tc.name, func(t *testing.T) {
			dir := t.TempDir()
			writeParquet(t, dir, "exposures.parquet", exposureCols, tc.expo)
			writeParquet(t, dir, "events.parquet", eventCols, tc.events)
			for name, fl := range tc.more {
				writeParquet(t, dir, name, fl.cols, fl.rows)
			}
			spec := writeText(t, dir, "spec.toml", tc.parts.toml())
			tc.check(t, runReport(t, spec, tc.flags...))
		})
	}
}

// History-rule fixture: every unit triggers at T; events at T + 1h.
func historyExposures(T time.Time) []row {
	var out []row
	for _, u := range []string{"c1", "c2", "c3", "c4", "c5", "c6", "c7"} {
		out = append(out, row{u, "control", T, "home"})
	}
	return append(out, row{"d1", "treatment", T, "home"}, row{"d2", "treatment", T, "home"})
}

func historyEvents(T time.Time) []row {
	w := map[string]float64{"c1": 1, "c2": 2, "c3": 4, "c4": 8, "c5": 16, "c6": 32, "c7": 256, "d1": 64, "d2": 128}
	var out []row
	for _, u := range []string{"c1", "c2", "c3", "c4", "c5", "c6", "c7", "d1", "d2"} {
		out = append(out, row{u, T.Add(time.Hour), w[u]})
	}
	return out
}

func historyOrders(T time.Time) []row {
	return []row{
		{"c1", T.Add(-10 * day), "delivered"},             // inside the look-back
		{"c2", T, "delivered"},                            // at the trigger: not before it
		{"c3", T.Add(-60 * day), "delivered"},             // 2026-01-19 00:00, first instant of the look-back
		{"c4", T.Add(-60*day - time.Second), "delivered"}, // one second too early
		{"c6", T.Add(-time.Second), "delivered"},          // last instant before the trigger
		{"c7", T.Add(-5 * day), "cancelled"},              // fails the rule's filter
		{"c5", T.Add(2 * day), "delivered"},               // after the trigger only
		{"d1", T.Add(-5 * day), "delivered"},
	}
}

// Maturity fixture: E is the analysis end; events at trigger + 1h.
func immatureExposures(E time.Time) []row {
	return []row{
		{"m1", "control", E.Add(-10 * day), "home"},             // 2026-04-03
		{"m2", "control", E.Add(-14 * day), "home"},             // 2026-03-30: window ends exactly at E
		{"m3", "control", E.Add(-14*day + time.Second), "home"}, // one second later
		{"m4", "control", ts("2026-03-10 00:00:00"), "home"},
		{"p1", "treatment", ts("2026-03-10 00:00:00"), "home"},
	}
}

func immatureEvents(E time.Time) []row {
	return []row{
		{"m1", E.Add(-10*day + time.Hour), 1.0},
		{"m2", E.Add(-14*day + time.Hour), 2.0},
		{"m3", E.Add(-14*day + time.Second + time.Hour), 4.0},
		{"m4", ts("2026-03-10 01:00:00"), 8.0},
		{"p1", ts("2026-03-10 01:00:00"), 16.0},
	}
}
