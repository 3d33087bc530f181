package report

import (
	"math"
	"math/rand/v2"
	"testing"
	"time"

	"gonum.org/v1/gonum/stat"
	"gonum.org/v1/gonum/stat/distuv"

	"github.com/assay-dev/assay/compiler"
	"github.com/assay-dev/assay/metrics"
	"github.com/assay-dev/assay/results"
	"github.com/assay-dev/assay/stats"
)

// weeksSpec runs six whole weeks with a mean primary metric, a CUPED
// covariate reading 28 days before each trigger, and two declared events:
// one inside the pre-period only, one inside the analysis period.
const weeksSpec = `[experiment]
id = "weeks"
hypothesis = "A clearer pricing page makes more visitors start a trial within a week."
start = 2026-03-02T00:00:00Z
end = 2026-04-13T00:00:00Z

[variants]
control = 0.5
treatment = 0.5

[sources.exposures]
table = "exposures"
unit = "user_id"
time = "ts"
columns = ["user_id", "arm", "ts"]

[sources.trials]
table = "trials"
unit = "user_id"
time = "started_at"
columns = ["user_id", "started_at", "amount"]

[exposure]
source = "exposures"
variant = "arm"

[metrics.amount]
role = "primary"
kind = "sum"
source = "trials"
value = "amount"
window = ["0d", "7d"]
covariate = { window = ["-28d", "0d"] }

[metrics.slow]
role = "secondary"
kind = "count"
source = "trials"
window = ["0d", "10d"]

[calendar.events.winter_sale]
from = 2026-02-10
until = 2026-02-12
kind = "sale"

[calendar.events.spring_holiday]
from = 2026-04-03
until = 2026-04-07
kind = "holiday"

[calendar.events.next_year]
from = 2027-01-01
until = 2027-01-02
`

func weeksPlan(t *testing.T) *compiler.Plan {
	t.Helper()
	s, ds := metrics.Load("weeks.toml", []byte(weeksSpec))
	if ds.HasErrors() {
		t.Fatal(ds)
	}
	p, ds := compiler.Compile(s, compiler.Options{Breakdowns: []string{compiler.KeyTriggerDay}})
	if ds.HasErrors() {
		t.Fatal(ds)
	}
	return p
}

// simWeeks draws n units per arm per day for 42 days, outcome
// Normal(1 + arm·effect(week), 1), and returns the trigger-day rows and
// the raw outcomes by week and arm.
func simWeeks(p *compiler.Plan, r *rand.Rand, n int, effect func(week int) float64) (*results.Set, [6][2][]float64) {
	var mp *compiler.MetricPlan
	for _, m := range p.Metrics {
		if m.M.Name == "amount" {
			mp = m
		}
	}
	set := &results.Set{}
	var raw [6][2][]float64
	start := time.Date(2026, 3, 2, 0, 0, 0, 0, time.UTC)
	for d := 0; d < 42; d++ {
		for arm, v := range p.Variants {
			ys := make([]float64, n)
			for i := range ys {
				ys[i] = 1 + float64(arm)*effect(d/7) + r.NormFloat64()
			}
			raw[d/7][arm] = append(raw[d/7][arm], ys...)
			m, vr := stat.MeanVariance(ys, nil)
			set.Rows = append(set.Rows, results.Row{Variant: v, Group: 0, Key: start.AddDate(0, 0, d).Format("2006-01-02"), Units: int64(n),
				Stats: map[string]float64{mp.Column(compiler.StatN): float64(n), mp.Column(compiler.StatMean): m, mp.Column(compiler.StatVar): vr}})
		}
	}
	return set, raw
}

// TestTriggerWeeksPooling checks each week's difference and standard
// error against Welch on the week's raw outcomes (gonum
// stat.MeanVariance), which the pooled day moments must reproduce exactly.
func TestTriggerWeeksPooling(t *testing.T) {
	p := weeksPlan(t)
	set, raw := simWeeks(p, rand.New(rand.NewPCG(7, 8)), 30, func(int) float64 { return 0.2 })
	we := triggerWeeks(p, set, nil)
	if we == nil || len(we.Weeks) != 6 {
		t.Fatalf("got %+v, want six weeks", we)
	}
	for w := range 6 {
		mb, vb := stat.MeanVariance(raw[w][0], nil)
		mt, vt := stat.MeanVariance(raw[w][1], nil)
		nb, nt := float64(len(raw[w][0])), float64(len(raw[w][1]))
		d, se := mt-mb, math.Sqrt(vb/nb+vt/nt)
		if got := float64(we.Weeks[w].Difference); math.Abs(got-d) > 1e-9 {
			t.Errorf("week %d difference: got %v, want %v (raw means)", w+1, got, d)
		}
		if got := float64(we.Weeks[w].StdError); math.Abs(got-se) > 1e-9 {
			t.Errorf("week %d std error: got %v, want %v (raw variances)", w+1, got, se)
		}
	}
}

// TestTriggerWeeksTrendCalibration simulates 400 experiments. With a
// constant effect the trend test flags (p < 0.05) no more often than the
// upper end of the 99.9% binomial range of 400 draws at 0.05; with an
// effect fading by 0.08 a week it flags at least as often as the lower
// end of the range at the test's power, computed here from the normal
// approximation: per week and arm n = 7·50 units of variance 1, so SE(d)
// = √(2/350) for every week and SE(slope) = SE(d)/√Σ(x − x̄)² with
// Σ(x − x̄)² = 17.5 for weeks 1–6.
func TestTriggerWeeksTrendCalibration(t *testing.T) {
	p := weeksPlan(t)
	const sims = 400
	seDiff := math.Sqrt(2.0 / 350)
	seSlope := seDiff / math.Sqrt(17.5)
	z := 0.08 / seSlope
	q := distuv.UnitNormal.Quantile(0.975)
	power := distuv.UnitNormal.CDF(-q+z) + distuv.UnitNormal.CDF(-q-z)
	cases := []struct {
		name   string
		effect func(int) float64
		p      float64
		upper  bool // the flag count must be at most the range's upper end
	}{
		{"constant effect", func(int) float64 { return 0.3 }, 0.05, true},
		{"fading effect", func(w int) float64 { return 0.5 - 0.08*float64(w) }, power, false},
	}
	for ci, tc := range cases {
		t.Run(tc.name, func(t *testing.T) {
			r := rand.New(rand.NewPCG(uint64(100+ci), 9))
			flags := 0
			for range sims {
				set, _ := simWeeks(p, r, 50, tc.effect)
				we := triggerWeeks(p, set, nil)
				if we.Reason == "" && float64(we.SlopePValue) < 0.05 {
					flags++
				}
			}
			lo, hi := stats.BinomialRange(sims, tc.p, 0.999)
			if tc.upper && flags > hi {
				t.Errorf("flagged %d of %d, want at most %d (binomial 99.9%% range at %v)", flags, sims, hi, tc.p)
			}
			if !tc.upper && flags < lo {
				t.Errorf("flagged %d of %d, want at least %d (binomial 99.9%% range at power %.4f)", flags, sims, lo, tc.p)
			}
		})
	}
}

// TestTimingSection checks the partial-week caution (the 10-day window,
// not the 7-day one or the six-week period), and which declared events are
// named: the winter sale lies in the 28-day pre-period before the first
// trigger (2026-02-02 to 2026-03-02) only, the spring holiday in the
// analysis period only, and next year's event in neither.
func TestTimingSection(t *testing.T) {
	p := weeksPlan(t)
	set, _ := simWeeks(p, rand.New(rand.NewPCG(1, 2)), 5, func(int) float64 { return 0 })
	r := &Report{Cautions: []string{"last"}, Health: Health{Available: false}}
	r.Metrics = nil
	r.timing(p, set)
	tm := r.Timing
	if len(tm.PartialWeeks) != 1 || tm.PartialWeeks[0] != "the window of metric slow (0d to 10d)" {
		t.Errorf("partial weeks: got %q, want only the slow metric's window", tm.PartialWeeks)
	}
	want := map[string]string{"winter_sale": "pre-period", "spring_holiday": "analysis period"}
	if len(tm.Events) != 2 {
		t.Fatalf("events: got %+v, want two", tm.Events)
	}
	for _, e := range tm.Events {
		if len(e.Overlaps) != 1 || e.Overlaps[0] != want[e.Name] {
			t.Errorf("event %s: got overlaps %q, want [%s]", e.Name, e.Overlaps, want[e.Name])
		}
	}
	if r.Cautions[len(r.Cautions)-1] != "last" {
		t.Errorf("cautions: got %q, want the closing caution kept last", r.Cautions)
	}
}

// TestWeekdayMix checks the weekday counts (2026-03-02 is a Monday) and
// the chi-square of independence written out by hand: E = row·column/n,
// X² = Σ(O − E)²/E, df = (2 − 1)(7 − 1), p from gonum's chi-square.
func TestWeekdayMix(t *testing.T) {
	p := weeksPlan(t)
	r := &Report{Cautions: []string{"last"}, Health: Health{Available: true}}
	obs := [2][7]float64{}
	for d := 0; d < 14; d++ {
		day := time.Date(2026, 3, 2+d, 0, 0, 0, 0, time.UTC).Format("2006-01-02")
		c, tr := int64(100+d), int64(100)
		if d%7 >= 5 {
			tr = 60 // fewer treatment triggers at weekends
		}
		r.Health.Daily = append(r.Health.Daily, Daily{Day: day, Variant: "control", TriggeredUnit: c, NewUnits: c}, Daily{Day: day, Variant: "treatment", TriggeredUnit: tr, NewUnits: tr})
		obs[0][d%7] += float64(c)
		obs[1][d%7] += float64(tr)
	}
	r.timing(p, &results.Set{})
	wm := r.Timing.WeekdayMix
	var rows [2]float64
	var cols [7]float64
	var n float64
	for i := range obs {
		for j := range obs[i] {
			rows[i] += obs[i][j]
			cols[j] += obs[i][j]
			n += obs[i][j]
		}
	}
	var x2 float64
	for i := range obs {
		for j := range obs[i] {
			e := rows[i] * cols[j] / n
			x2 += (obs[i][j] - e) * (obs[i][j] - e) / e
		}
	}
	if got := wm.Counts["treatment"]; got[5] != 120 || got[0] != 200 {
		t.Errorf("treatment counts: got %v, want Saturday 120 and Monday 200", got)
	}
	if math.Abs(float64(wm.Statistic)-x2) > 1e-9 || float64(wm.DF) != 6 {
		t.Errorf("chi-square: got %v df %v, want %v df 6 (by hand)", float64(wm.Statistic), float64(wm.DF), x2)
	}
	if want := (distuv.ChiSquared{K: 6}).Survival(x2); math.Abs(float64(wm.PValue)-want) > 1e-12 {
		t.Errorf("p: got %v, want %v (gonum ChiSquared{K: 6})", float64(wm.PValue), want)
	}
}

// TestRolloutDays checks the daily checks of the golden rollout spec,
// whose last step starts at noon on 2026-06-08 (Lisbon): that day gets no
// weights and a reason, the days before use the half step's 75/25, and the
// triggered-units check is not run because of the mixed day.
func TestRolloutDays(t *testing.T) {
	s, _, ds := metrics.LoadFile("../testdata/golden/rollout/spec.toml")
	if ds.HasErrors() {
		t.Fatal(ds)
	}
	p, ds := compiler.Compile(s, compiler.Options{})
	if ds.HasErrors() {
		t.Fatal(ds)
	}
	h := &Health{Available: true}
	for _, d := range []string{"2026-06-05", "2026-06-08", "2026-06-09"} {
		h.Daily = append(h.Daily, Daily{Day: d, Variant: "control", TriggeredUnit: 150, NewUnits: 150}, Daily{Day: d, Variant: "dated", TriggeredUnit: 50, NewUnits: 50})
	}
	rolloutDaily(p, h, SRMAlpha)
	days := h.SampleRatioDaily.Days
	if len(days) != 3 {
		t.Fatalf("got %d days, want 3", len(days))
	}
	if days[0].Reason != "" || float64(days[0].Statistic) != 0 {
		t.Errorf("2026-06-05 (half step, 150/50 = 75/25 exactly): got X² %v reason %q, want 0 and none", float64(days[0].Statistic), days[0].Reason)
	}
	if days[1].Reason == "" || days[1].Alarm {
		t.Errorf("2026-06-08 (step change at noon): got reason %q alarm %v, want a reason and no alarm", days[1].Reason, days[1].Alarm)
	}
	// 150/50 against 50/50: X² = (50² + 50²)/100 = 50, by hand.
	if math.Abs(float64(days[2].Statistic)-50) > 1e-9 || !days[2].Alarm {
		t.Errorf("2026-06-09 (wide step): got X² %v alarm %v, want 50 and an alarm", float64(days[2].Statistic), days[2].Alarm)
	}
	if h.SampleRatioTriggered.Reason == "" {
		t.Errorf("triggered-units check: got no reason, want one naming the mixed day")
	}
}

// TestCumulativeByDay checks the cumulative difference after two weeks
// against Welch on all raw outcomes of those weeks (gonum
// stat.MeanVariance and Student's t with Welch–Satterthwaite df).
func TestCumulativeByDay(t *testing.T) {
	p := weeksPlan(t)
	set, raw := simWeeks(p, rand.New(rand.NewPCG(3, 4)), 20, func(int) float64 { return 0.1 })
	cum := cumulativeByDay(p, set)
	if len(cum) != 42 {
		t.Fatalf("got %d days, want 42", len(cum))
	}
	b := append(append([]float64{}, raw[0][0]...), raw[1][0]...)
	tr := append(append([]float64{}, raw[0][1]...), raw[1][1]...)
	mb, vb := stat.MeanVariance(b, nil)
	mt, vt := stat.MeanVariance(tr, nil)
	nb, nt := float64(len(b)), float64(len(tr))
	a, c := vb/nb, vt/nt
	df := (a + c) * (a + c) / (a*a/(nb-1) + c*c/(nt-1))
	q := distuv.StudentsT{Mu: 0, Sigma: 1, Nu: df}.Quantile(0.975)
	d := mt - mb
	got := cum[13]
	if got.Day != "2026-03-15" || got.Units != 14*40 {
		t.Errorf("day 14: got %s with %d units, want 2026-03-15 with 560", got.Day, got.Units)
	}
	if math.Abs(float64(got.Difference)-d) > 1e-9 || math.Abs(float64(got.CILow)-(d-q*math.Sqrt(a+c))) > 1e-9 || math.Abs(float64(got.CIHigh)-(d+q*math.Sqrt(a+c))) > 1e-9 {
		t.Errorf("day 14: got %v [%v, %v], want %v ± %v", float64(got.Difference), float64(got.CILow), float64(got.CIHigh), d, q*math.Sqrt(a+c))
	}
}

// TestTriggerWeeksByStep: under the golden rollout schedule (trial 95/5
// from 06-01, half 75/25 from 06-04, wide 50/50 from noon on 06-08,
// Lisbon), each trigger week's difference pools days within a step and
// weights the steps by their units; the day on which a step began mid-day
// is a stratum of its own.
// Source: the post-stratified difference (Cochran 1977, §5A.9) written out
// here from the planted per-day moments.
func TestTriggerWeeksByStep(t *testing.T) {
	s, _, ds := metrics.LoadFile("../testdata/golden/rollout/spec.toml")
	if ds.HasErrors() {
		t.Fatal(ds)
	}
	p, ds := compiler.Compile(s, compiler.Options{Breakdowns: []string{compiler.KeyTriggerDay}})
	if ds.HasErrors() {
		t.Fatal(ds)
	}
	g := -1
	for i, k := range p.GroupBy {
		if k.Day {
			g = i
		}
	}
	mp := p.MetricByName("orders")
	// Per day: control n, mean; dated n, mean (variance 1 everywhere).
	type dayRow struct {
		day    string
		cell   int // the stratum the rule puts the day in
		nc, nt float64
		mc, mt float64
	}
	days := []dayRow{
		{"2026-06-01", 0, 190, 10, 3.0, 3.5}, {"2026-06-02", 0, 180, 9, 2.8, 3.1}, {"2026-06-03", 0, 170, 11, 2.9, 3.4},
		{"2026-06-04", 1, 150, 50, 2.0, 2.3}, {"2026-06-05", 1, 140, 45, 2.1, 2.2}, {"2026-06-06", 1, 160, 55, 1.9, 2.4}, {"2026-06-07", 1, 150, 52, 2.0, 2.1},
		{"2026-06-08", 3, 120, 80, 1.5, 1.9}, {"2026-06-09", 2, 100, 100, 1.2, 1.5},
	}
	set := &results.Set{}
	for _, d := range days {
		for _, a := range []struct {
			v    string
			n, m float64
		}{{"control", d.nc, d.mc}, {"dated", d.nt, d.mt}} {
			set.Rows = append(set.Rows, results.Row{Variant: a.v, Group: g, Key: d.day, Units: int64(a.n),
				Stats: map[string]float64{mp.Column(compiler.StatN): a.n, mp.Column(compiler.StatMean): a.m, mp.Column(compiler.StatVar): 1}})
		}
	}
	// By hand: per week, per cell, pooled means; weights by cell units.
	want := map[int]float64{}
	for _, wk := range []int{0, 1} {
		type acc struct{ nc, nt, sc, st float64 }
		cells := map[int]*acc{}
		var total float64
		for i, d := range days {
			if (i >= 7) != (wk == 1) {
				continue
			}
			c := cells[d.cell]
			if c == nil {
				c = &acc{}
				cells[d.cell] = c
			}
			c.nc, c.nt, c.sc, c.st = c.nc+d.nc, c.nt+d.nt, c.sc+d.nc*d.mc, c.st+d.nt*d.mt
			total += d.nc + d.nt
		}
		for _, c := range cells {
			want[wk] += (c.nc + c.nt) / total * (c.st/c.nt - c.sc/c.nc)
		}
	}
	we := triggerWeeks(p, set, nil)
	if we == nil || len(we.Weeks) != 2 {
		t.Fatalf("trigger weeks: got %+v, want two weeks", we)
	}
	for wk := range 2 {
		if got := float64(we.Weeks[wk].Difference); math.Abs(got-want[wk]) > 1e-12 {
			t.Errorf("week %d: got %v, want %v (post-stratified by step by hand)", wk+1, got, want[wk])
		}
	}
}
