package e2e

// Segment breakdowns through the whole path: a planted Simpson's reversal
// (the treatment helps inside every segment, but got far more of the
// low-baseline segment, so the pooled difference is negative), the
// variant-mix chi-square, Cochran's Q and I² from the per-segment rows,
// per-segment means against hand-written SQL, the segment family's
// adjusted p-values, and top-K capping with "(other)" and "(null)".

import (
	"fmt"
	"math"
	"strings"
	"testing"
)

// segmentFixture writes 2000 units, 1000 per variant. The exposure row
// carries tier: control has 800 "high" and 200 "low" units, treatment 200
// "high" and 800 "low". Events (14-day Poisson rates, control → treatment):
// etype "buy" 5 → 6 in high and 1 → 2 in low, so the treatment adds one
// buy in each tier while the pooled means are 4.2 and 2.8; etype "ping" 3
// → 4 in both tiers (no reversal). A static attribute source gives each
// unit a city: city_k (k = 0..14) holds 20 + 15k units and 125 units have
// NULL, shuffled over the units. It returns unit → city ("" for NULL).
func segmentFixture(t testing.TB, dir string, seed uint64) map[string]string {
	t.Helper()
	r := newRand(seed)
	var cities []string
	for k := range 15 {
		for range 20 + 15*k {
			cities = append(cities, fmt.Sprintf("city_%02d", k))
		}
	}
	for len(cities) < 2000 {
		cities = append(cities, "")
	}
	r.Shuffle(len(cities), func(i, j int) { cities[i], cities[j] = cities[j], cities[i] })
	var expo, ev, attrs [][]string
	cityOf := map[string]string{}
	for i := range 2000 {
		u := fmt.Sprintf("u%05d", i)
		variant, tier := "control", "high"
		treat := 0.0
		switch {
		case i < 800:
		case i < 1000:
			tier = "low"
		case i < 1200:
			variant, treat = "treatment", 1
		default:
			variant, tier, treat = "treatment", "low", 1
		}
		trig := within(r, start3T, 20*day)
		expo = append(expo, []string{u, variant, tsText(trig), tier})
		base := 5.0
		if tier == "low" {
			base = 1
		}
		for _, e := range []struct {
			etype string
			rate  float64
		}{{"buy", base + treat}, {"ping", 3 + treat}} {
			for range poisson(r, e.rate) {
				ev = append(ev, []string{u, tsText(within(r, trig, 14*day)), e.etype})
			}
		}
		attrs = append(attrs, []string{u, cities[i]})
		cityOf[u] = cities[i]
	}
	writeBulk(t, dir, "exposures.parquet", []col3{{"unit_id", "VARCHAR"}, {"variant", "VARCHAR"}, {"exposed_at", "TIMESTAMP"}, {"tier", "VARCHAR"}}, expo)
	writeBulk(t, dir, "events.parquet", []col3{{"unit_id", "VARCHAR"}, {"happened_at", "TIMESTAMP"}, {"etype", "VARCHAR"}}, ev)
	writeBulk(t, dir, "attrs.parquet", []col3{{"unit_id", "VARCHAR"}, {"city", "VARCHAR"}}, attrs)
	return cityOf
}

const segmentExtra = `
[sources.attrs]
file = "attrs.parquet"
unit = "unit_id"
static = true
columns = ["unit_id", "city"]

[segments.tier]
source = "exposures"
column = "tier"

[segments.city]
source = "attrs"
column = "city"
top = 3
`

// chiSqIndependence is Pearson's statistic for a contingency table,
// Σ (O − E)²/E with E = row total × column total / N, written out.
func chiSqIndependence(tab [][]float64) (x2, df float64) {
	rows, cols := make([]float64, len(tab)), make([]float64, len(tab[0]))
	n := 0.0
	for i, r := range tab {
		for j, o := range r {
			rows[i] += o
			cols[j] += o
			n += o
		}
	}
	for i, r := range tab {
		for j, o := range r {
			e := rows[i] * cols[j] / n
			x2 += (o - e) * (o - e) / e
		}
	}
	return x2, float64((len(tab) - 1) * (len(tab[0]) - 1))
}

func TestSegments(t *testing.T) {
	dir := t.TempDir()
	cityOf := segmentFixture(t, dir, 424242)
	ms := countMetric("buys", "primary", "buy", "") + countMetric("pings", "secondary", "ping", "")
	spec := writeText(t, dir, "spec.toml", spec3{ExpoCols: []string{"tier"}, EventCols: []string{"etype"}, Extra: segmentExtra, Metrics: ms}.toml())
	rep := mustRun3(t, spec)
	tier := rep.segment(t, "tier")
	city := rep.segment(t, "city")

	t.Run("reversal", func(t *testing.T) {
		pooled := f(rep.metric(t, "buys").cmp(t, "treatment").Difference)
		if !(pooled < 0) {
			t.Fatalf("fixture: pooled buys difference %v, want negative (planted 2.8 − 4.2)", pooled)
		}
		sm := tier.metric(t, "buys")
		for _, row := range sm.Rows {
			if d := f(row.Comparisons[0].Difference); !(d > 0) {
				t.Errorf("tier %s buys difference: got %v, want positive (planted +1)", row.Value, d)
			}
		}
		chk := sm.Checks[0]
		if !chk.Reversal {
			t.Errorf("buys reversal: got false, want true (mix gap p %v at flag level %v)", f(chk.MixGapPValue), chk.FlagAlpha)
		}
		// The stratified difference weights each tier's difference by its
		// share of units (Cochran 1977, §5.3): Σ (N_k/N)·d_k, by hand here
		// from the per-tier rows and tier sizes.
		var strat, total float64
		for _, row := range sm.Rows {
			n := float64(tier.value(row.Value).Units)
			strat += n * f(row.Comparisons[0].Difference)
			total += n
		}
		strat /= total
		runChecks(t, []check3{
			{"stratified difference", f(chk.Stratified), strat, 1e-9, "Σ (N_k/N)·d_k over the tier rows (Cochran 1977, §5.3)"},
			{"pooled difference (unadjusted)", f(chk.Pooled), pooled, 1e-9, "the report's pooled buys difference"},
		})
		if !(strat > 0) {
			t.Errorf("stratified difference %v, want positive (planted +1 in each tier)", strat)
		}
		// Both tiers (all 2000 units) have the opposite sign (Source: fixture).
		if got := f(chk.OppositeShare); got != 1 {
			t.Errorf("opposite_share: got %v, want 1", got)
		}
		found := false
		for _, fl := range sm.Flags {
			found = found || strings.Contains(strings.ToLower(fl), "reversal")
		}
		if !found {
			t.Errorf("buys flags: got %q, want a sentence mentioning reversal", sm.Flags)
		}
		// No reversal where the pooled and per-tier effects agree.
		pm := tier.metric(t, "pings")
		if pm.Checks[0].Reversal {
			t.Errorf("pings reversal: got true, want false (every effect positive)")
		}
		for _, fl := range pm.Flags {
			if strings.Contains(strings.ToLower(fl), "reversal") {
				t.Errorf("pings flags: got %q, want no reversal sentence", fl)
			}
		}
	})

	t.Run("variant mix", func(t *testing.T) {
		// Rows are tiers, columns control/treatment (Source: fixture counts).
		x2, df := chiSqIndependence([][]float64{{800, 200}, {200, 800}})
		mix := tier.VariantMix
		runChecks(t, []check3{
			{"statistic", f(mix.Statistic), x2, 1e-9, "Σ(O−E)²/E over the 2×2 table by hand (= 720)"},
			{"df", f(mix.DF), df, 0, "(r − 1)(c − 1)"},
		})
		if !mix.Alarm {
			t.Errorf("variant_mix.alarm: got false, want true (p %v)", f(mix.PValue))
		}
		found := false
		for _, a := range rep.Alarms {
			found = found || strings.HasPrefix(a, "VARIANT MIX")
		}
		if !found {
			t.Errorf("alarms: got %q, want a VARIANT MIX alarm", rep.Alarms)
		}
		for _, w := range []struct {
			value string
			by    map[string]int64
		}{{"high", map[string]int64{"control": 800, "treatment": 200}}, {"low", map[string]int64{"control": 200, "treatment": 800}}} {
			v := tier.value(w.value)
			if v == nil || v.Units != 1000 || v.ByVariant["control"] != w.by["control"] || v.ByVariant["treatment"] != w.by["treatment"] {
				t.Errorf("tier %s: got %+v, want 1000 units split %v", w.value, v, w.by)
			}
		}
	})

	t.Run("per-segment means", func(t *testing.T) {
		// Source: hand-written SQL over the fixture files.
		db := dirDB(t, dir)
		q := `WITH u AS (SELECT unit_id, variant, tier, exposed_at AS t FROM read_parquet('exposures.parquet'))
			SELECT u.tier, u.variant, avg(coalesce(c.n, 0)) AS mean, count(*) AS n
			FROM u LEFT JOIN (
			  SELECT e.unit_id, count(*) AS n FROM read_parquet('events.parquet') AS e
			  JOIN u ON u.unit_id = e.unit_id
			  WHERE e.etype = 'buy' AND e.happened_at >= u.t AND e.happened_at < u.t + INTERVAL 14 DAY
			  GROUP BY e.unit_id) AS c ON c.unit_id = u.unit_id
			GROUP BY u.tier, u.variant ORDER BY 1, 2`
		rows := queryMaps(t, db, q)
		if len(rows) != 4 {
			t.Fatalf("hand SQL: %d rows, want 4", len(rows))
		}
		sm := tier.metric(t, "buys")
		for _, hr := range rows {
			tv, vv := hr["tier"].(string), hr["variant"].(string)
			var row *segRow3
			for i := range sm.Rows {
				if sm.Rows[i].Value == tv {
					row = &sm.Rows[i]
				}
			}
			if row == nil {
				t.Errorf("tier %s missing from buys rows", tv)
				continue
			}
			v := variantOf(t, row.Variants, vv)
			if got, want := f(v.Value), toFloat(t, hr["mean"]); !near(got, want, 1e-9) {
				t.Errorf("tier %s %s mean: got %v, want %v", tv, vv, got, want)
			}
			if got, want := v.N, int64(toFloat(t, hr["n"])); got != want {
				t.Errorf("tier %s %s n: got %v, want %v", tv, vv, got, want)
			}
		}
	})

	t.Run("heterogeneity", func(t *testing.T) {
		for _, seg := range []*segment3{tier, city} {
			for _, sm := range seg.Metrics {
				t.Run(seg.Name+"/"+sm.Metric, func(t *testing.T) {
					// Source: Cochran 1954, Q = Σ w_i (d_i − d̄_w)², w_i = 1/SE_i², from the
					// per-segment rows; Higgins & Thompson 2002, I² = max(0, (Q − df)/Q).
					var sw, swd float64
					var ds, ws []float64
					for _, row := range sm.Rows {
						c := row.Comparisons[0]
						d, se := f(c.Difference), f(c.StdError)
						w := 1 / (se * se)
						ds, ws = append(ds, d), append(ws, w)
						sw += w
						swd += w * d
					}
					dbar := swd / sw
					q := 0.0
					for i := range ds {
						q += ws[i] * (ds[i] - dbar) * (ds[i] - dbar)
					}
					df := float64(len(ds) - 1)
					chk := sm.Checks[0]
					runChecks(t, []check3{
						{"cochran_q", f(chk.Q), q, 1e-9, "Cochran 1954 by hand"},
						{"df", f(chk.DF), df, 0, "segments − 1"},
						{"i2", f(chk.I2), math.Max(0, (q-df)/q), 1e-9, "Higgins & Thompson 2002 by hand"},
						{"p_value", f(chk.PValue), chiSqSurvival(q, df), 1e-9, "distuv.ChiSquared survival"},
					})
					// The segment comparisons of one metric form one family (Holm by default).
					var raw []float64
					for _, row := range sm.Rows {
						raw = append(raw, f(row.Comparisons[0].PValue))
					}
					want := holmByHand(raw)
					for i, row := range sm.Rows {
						if got := f(row.Comparisons[0].PValueAdjusted); !near(got, want[i], 1e-9) {
							t.Errorf("%s p_value_adjusted: got %v, want %v (Source: Holm 1979 by hand over the segment family)", row.Value, got, want[i])
						}
					}
				})
			}
		}
	})

	t.Run("top-K, other and null", func(t *testing.T) {
		// Count by hand from the fixture's city assignment.
		count := map[string]map[string]int64{}
		unitVariant := func(u string) string {
			var i int
			fmt.Sscanf(u, "u%05d", &i)
			if i < 1000 {
				return "control"
			}
			return "treatment"
		}
		for u, c := range cityOf {
			if c == "" {
				c = "(null)"
			}
			if count[c] == nil {
				count[c] = map[string]int64{}
			}
			count[c][unitVariant(u)]++
		}
		// city_14, city_13, city_12 are the three largest (230, 215, 200).
		top := []string{"city_14", "city_13", "city_12"}
		want := map[string]map[string]int64{"(other)": {}, "(null)": count["(null)"]}
		for c, by := range count {
			if c == "(null)" {
				continue
			}
			if c == "city_14" || c == "city_13" || c == "city_12" {
				want[c] = by
				continue
			}
			for v, n := range by {
				want["(other)"][v] += n
			}
		}
		if len(city.Values) != 5 {
			t.Errorf("city values: got %d (%v), want 5: 3 named, (other), (null)", len(city.Values), valueNames(city.Values))
		}
		for _, name := range append(top, "(other)", "(null)") {
			v := city.value(name)
			if v == nil {
				t.Errorf("city value %s: missing (got %v)", name, valueNames(city.Values))
				continue
			}
			wantUnits := want[name]["control"] + want[name]["treatment"]
			if v.Units != wantUnits || v.ByVariant["control"] != want[name]["control"] || v.ByVariant["treatment"] != want[name]["treatment"] {
				t.Errorf("city %s: got %v units %v, want %v units %v", name, v.Units, v.ByVariant, wantUnits, want[name])
			}
		}
		if u := want["(other)"]["control"] + want["(other)"]["treatment"]; u != 1230 {
			t.Errorf("fixture: (other) holds %d units, want 1230 (1875 named − 230 − 215 − 200)", u)
		}
	})
}

func valueNames(vs []segValue3) []string {
	var out []string
	for _, v := range vs {
		out = append(out, v.Value)
	}
	return out
}
