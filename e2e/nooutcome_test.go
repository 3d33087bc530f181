package e2e

// The no-outcome check end to end: eligible units with no row at all in
// any outcome source from their trigger up to the as-of time, per arm and
// per source, in the report's health section and in the early read. The
// expected counts are computed in the test from the planted rows, by the
// definition written out in noOutcomeTruth, never from the tool's output.

import (
	"encoding/json"
	"fmt"
	"math"
	"strings"
	"testing"
	"time"
)

// noOutcomeExtra adds a second outcome source, purchases, read by a
// secondary metric, so that "no row in any source" differs from "no row
// in events".
const noOutcomeExtra = `
[sources.purchases]
file = "purchases.parquet"
unit = "unit_id"
time = "bought_at"
columns = ["unit_id", "bought_at"]
`

const noOutcomeMetrics = metricVisits + `
[metrics.buys]
role = "secondary"
kind = "count"
source = "purchases"
window = ["0d", "14d"]
`

// noOutcomeAsOf is the as-of time of the fixture's reads: a week after the
// analysis end.
var noOutcomeAsOf = ts("2026-04-20 00:00:00")

// noOutcomeRows is a planted fixture: exposure rows (unit, variant, time),
// event rows and purchase rows (unit, time).
type noOutcomeRows struct {
	expo      [][3]any
	events    [][2]any
	purchases [][2]any
}

// noOutcomeFixture plants nPer units per arm triggered over the first 30
// days. A unit of arm a is silent (no outcome row after its trigger) with
// probability silent[a]; a silent unit may still have rows that must not
// count: a row before its trigger, or at or after the as-of time. Other units have events, purchases or both, some only after every
// metric window (they count: the span ends at the as-of time). Crossovers
// (seen in both arms) without any row are planted too; they are excluded
// and must not count.
func noOutcomeFixture(t *testing.T, dir string, nPer int, silent [2]float64, seed uint64) noOutcomeRows {
	t.Helper()
	r := newRand(seed)
	var fx noOutcomeRows
	id := 0
	for a, arm := range []string{"control", "treatment"} {
		for range nPer {
			u := fmt.Sprintf("n%05d", id)
			id++
			trig := within(r, start3T, 30*day)
			fx.expo = append(fx.expo, [3]any{u, arm, trig})
			if r.Float64() < 0.3 { // a later exposure does not move the trigger
				fx.expo = append(fx.expo, [3]any{u, arm, trig.Add(within(r, time.Time{}, 3*day).Sub(time.Time{}))})
			}
			if r.Float64() < silent[a] {
				switch r.IntN(4) {
				case 0: // nothing at all
				case 1:
					fx.events = append(fx.events, [2]any{u, trig.Add(-time.Hour)})
				case 2:
					fx.purchases = append(fx.purchases, [2]any{u, noOutcomeAsOf.Add(time.Duration(r.IntN(48)) * time.Hour)})
				case 3: // exactly at the as-of time: outside the span
					fx.events = append(fx.events, [2]any{u, noOutcomeAsOf})
				}
				continue
			}
			switch r.IntN(5) {
			case 0: // purchases only
				fx.purchases = append(fx.purchases, [2]any{u, within(r, trig, week)})
			case 1: // events only, and one exactly at the trigger
				fx.events = append(fx.events, [2]any{u, trig})
			case 2: // only after every metric window, before the as-of time
				fx.events = append(fx.events, [2]any{u, trig.Add(15 * day)})
			default:
				for range 1 + poisson(r, 1) {
					fx.events = append(fx.events, [2]any{u, within(r, trig, 2*week)})
				}
				if r.Float64() < 0.5 {
					fx.purchases = append(fx.purchases, [2]any{u, within(r, trig, week)})
				}
			}
		}
	}
	for range 5 { // crossovers without any row (under 1% of exposed units: not a finding)
		u := fmt.Sprintf("n%05d", id)
		id++
		trig := within(r, start3T, 10*day)
		fx.expo = append(fx.expo, [3]any{u, "control", trig}, [3]any{u, "treatment", trig.Add(day)})
	}
	text := func(v any) string {
		if x, ok := v.(time.Time); ok {
			return tsText(x)
		}
		return v.(string)
	}
	var expo, ev, pu [][]string
	for _, x := range fx.expo {
		expo = append(expo, []string{text(x[0]), text(x[1]), text(x[2])})
	}
	for _, x := range fx.events {
		ev = append(ev, []string{text(x[0]), text(x[1])})
	}
	for _, x := range fx.purchases {
		pu = append(pu, []string{text(x[0]), text(x[1])})
	}
	writeBulk(t, dir, "exposures.parquet", []col3{{"unit_id", "VARCHAR"}, {"variant", "VARCHAR"}, {"exposed_at", "TIMESTAMP"}}, expo)
	writeBulk(t, dir, "events.parquet", []col3{{"unit_id", "VARCHAR"}, {"happened_at", "TIMESTAMP"}}, ev)
	writeBulk(t, dir, "purchases.parquet", []col3{{"unit_id", "VARCHAR"}, {"bought_at", "TIMESTAMP"}}, pu)
	return fx
}

// noOutcomeCount is one arm's expected count.
type noOutcomeCount struct{ eligible, noneAny, noneEvents, nonePurchases int64 }

// noOutcomeTruth applies the definition to the planted rows: a unit is
// eligible when all its exposure rows in [start, end) name one arm; its
// trigger is its first such row; it has outcome rows in a source when a
// row of that source has its id and a time t with trigger ≤ t < as-of.
func noOutcomeTruth(fx noOutcomeRows) map[string]*noOutcomeCount {
	arms := map[string]map[string]bool{}
	trig := map[string]time.Time{}
	for _, x := range fx.expo {
		u, v, at := x[0].(string), x[1].(string), x[2].(time.Time)
		if at.Before(start3T) || !at.Before(end3T) {
			continue
		}
		if arms[u] == nil {
			arms[u] = map[string]bool{}
		}
		arms[u][v] = true
		if tt, ok := trig[u]; !ok || at.Before(tt) {
			trig[u] = at
		}
	}
	seen := func(rows [][2]any) map[string]bool {
		out := map[string]bool{}
		for _, x := range rows {
			u, at := x[0].(string), x[1].(time.Time)
			tt, ok := trig[u]
			if ok && !at.Before(tt) && at.Before(noOutcomeAsOf) {
				out[u] = true
			}
		}
		return out
	}
	ev, pu := seen(fx.events), seen(fx.purchases)
	out := map[string]*noOutcomeCount{"control": {}, "treatment": {}}
	for u, vs := range arms {
		if len(vs) != 1 {
			continue
		}
		for v := range vs {
			c := out[v]
			c.eligible++
			if !ev[u] && !pu[u] {
				c.noneAny++
			}
			if !ev[u] {
				c.noneEvents++
			}
			if !pu[u] {
				c.nonePurchases++
			}
		}
	}
	return out
}

type noOutcomeArm3 struct {
	Variant  string `json:"variant"`
	Eligible int64  `json:"eligible_units"`
	Units    int64  `json:"units"`
	Share    num    `json:"share"`
}

type noOutcomes3 struct {
	Through  string          `json:"through"`
	Variants []noOutcomeArm3 `json:"variants"`
	Sources  []struct {
		Source   string          `json:"source"`
		Variants []noOutcomeArm3 `json:"variants"`
	} `json:"sources"`
	EqualShare struct {
		Statistic num    `json:"statistic"`
		DF        num    `json:"df"`
		PValue    num    `json:"p_value"`
		Reason    string `json:"reason"`
	} `json:"equal_share"`
}

// noOutcomeRead is the part of the early read's JSON this test reads.
type noOutcomeRead struct {
	FixFirst []string `json:"fix_first"`
	Checks   []struct {
		Area, Name, Status, Detail string
	} `json:"checks"`
	Report struct {
		Health struct {
			NoOutcomes *noOutcomes3 `json:"no_outcome_units"`
		} `json:"health"`
	} `json:"report"`
}

// homogeneityByHand is Pearson's X² for a k × 2 table of (none, some)
// counts, Σ (O − E)²/E with E = row total × column total / n, written out.
func homogeneityByHand(none, eligible []float64) float64 {
	var n, colNone float64
	for i := range none {
		n += eligible[i]
		colNone += none[i]
	}
	x := 0.0
	for i := range none {
		for _, c := range [][2]float64{{none[i], colNone}, {eligible[i] - none[i], n - colNone}} {
			e := eligible[i] * c[1] / n
			x += (c[0] - e) * (c[0] - e) / e
		}
	}
	return x
}

func TestNoOutcomeUnits(t *testing.T) {
	cases := []struct {
		name       string
		silent     [2]float64
		wantStatus string
		wantCode   int
	}{
		// 10% against 25% of 400 units: X² near 30, p near 1e-8.
		{"treatment units come back less", [2]float64{0.10, 0.25}, "watch", 0},
		{"similar shares", [2]float64{0.15, 0.15}, "ok", 0},
		{"treatment logging broken", [2]float64{0.10, 1}, "fix", 6},
	}
	for i, tc := range cases {
		t.Run(tc.name, func(t *testing.T) {
			dir := t.TempDir()
			fx := noOutcomeFixture(t, dir, 400, tc.silent, uint64(4200+i))
			want := noOutcomeTruth(fx)
			spec := writeText(t, dir, "spec.toml", spec3{Metrics: noOutcomeMetrics, Extra: noOutcomeExtra}.toml())
			code, out, errs := runCLI("rampcheck", "--format", "json", "--as-of", "2026-04-20T00:00:00Z", spec)
			var er noOutcomeRead
			if err := json.Unmarshal([]byte(out), &er); err != nil {
				t.Fatalf("exit %d: stdout is not JSON: %v\n%s\n%s", code, err, errs, out)
			}
			if code != tc.wantCode {
				t.Errorf("exit code: got %d, want %d; fix first %q", code, tc.wantCode, er.FixFirst)
			}
			n := er.Report.Health.NoOutcomes
			if n == nil {
				t.Fatalf("health.no_outcome_units: missing\n%s", errs)
			}
			if n.Through != "2026-04-20T00:00:00Z" {
				t.Errorf("through: got %s, want the as-of time 2026-04-20T00:00:00Z", n.Through)
			}
			var none, elig []float64
			for j, arm := range []string{"control", "treatment"} {
				w := want[arm]
				if j >= len(n.Variants) || n.Variants[j].Variant != arm {
					t.Fatalf("variants: got %+v, want control then treatment", n.Variants)
				}
				g := n.Variants[j]
				// Source: counted in noOutcomeTruth from the planted rows.
				if g.Eligible != w.eligible || g.Units != w.noneAny {
					t.Errorf("%s: got %d of %d eligible units without outcome rows, want %d of %d", arm, g.Units, g.Eligible, w.noneAny, w.eligible)
				}
				if share := float64(w.noneAny) / float64(w.eligible); math.Abs(f(g.Share)-share) > 1e-12 {
					t.Errorf("%s share: got %v, want %v", arm, f(g.Share), share)
				}
				none = append(none, float64(w.noneAny))
				elig = append(elig, float64(w.eligible))
				bySource := map[string]int64{"events": w.noneEvents, "purchases": w.nonePurchases}
				if len(n.Sources) != 2 {
					t.Fatalf("sources: got %d, want events and purchases", len(n.Sources))
				}
				for _, s := range n.Sources {
					if gs := s.Variants[j]; gs.Units != bySource[s.Source] || gs.Eligible != w.eligible {
						t.Errorf("%s without rows of %s: got %d of %d, want %d of %d", arm, s.Source, gs.Units, gs.Eligible, bySource[s.Source], w.eligible)
					}
				}
			}
			if tc.silent[1] < 1 {
				x2 := homogeneityByHand(none, elig) // Source: Pearson Σ(O−E)²/E by hand
				runChecks(t, []check3{
					{"equal-share statistic", f(n.EqualShare.Statistic), x2, 1e-9, "Σ(O−E)²/E over the 2 × 2 table of planted counts"},
					{"equal-share df", f(n.EqualShare.DF), 1, 0, "(2 − 1)(2 − 1)"},
					{"equal-share p", f(n.EqualShare.PValue), chiSqSurvival(x2, 1), 1e-9, "distuv.ChiSquared{K: 1} survival"},
				})
			}
			var status, detail string
			for _, c := range er.Checks {
				if c.Name == "units without outcome rows" {
					status, detail = c.Status, c.Detail
				}
			}
			if status != tc.wantStatus {
				t.Errorf("early read check: got %q (%s), want %q", status, detail, tc.wantStatus)
			}
			if tc.wantStatus == "fix" && !strings.Contains(strings.Join(er.FixFirst, "\n"), "Every eligible unit of treatment has no outcome row") {
				t.Errorf("fix first: got %q, want the broken treatment logging", er.FixFirst)
			}
			// The run's text report shows the same counts.
			_, text, _ := runCLI("run", "--as-of", "2026-04-20T00:00:00Z", spec)
			line := fmt.Sprintf("control %d of %d", want["control"].noneAny, want["control"].eligible)
			if !strings.Contains(text, "eligible units with no outcome rows from trigger to as-of: "+line) {
				t.Errorf("text report: no line with %q\n%s", line, text)
			}
		})
	}
}
