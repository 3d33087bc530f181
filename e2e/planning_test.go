package e2e

// assay size end to end: an invented pre-period whose traffic, exclusions
// and per-unit values the test plants, so that every number of the plan
// is checked against an independent computation: baselines with
// gonum/stat on the per-unit data, cumulative units by a hand count, MDEs
// by the textbook formulas written out here with gonum's normal quantile
// (each anchored to an R value), and the duration for a target effect.

import (
	"bytes"
	"encoding/json"
	"fmt"
	"math"
	"math/rand/v2"
	"strconv"
	"strings"
	"testing"
	"time"

	"gonum.org/v1/gonum/stat"
	"gonum.org/v1/gonum/stat/distuv"

	"github.com/assay-dev/assay/metrics"
	asreport "github.com/assay-dev/assay/report"
)

// planUnit is one planted unit of the pre-period.
type planUnit struct {
	id       string
	trigger  time.Time
	day      int
	eligible bool
	// Per-unit values as the metrics define them.
	y, cnt, x float64 // sum of w and events in [0d, 7d); sum of w in [-14d, 0d)
}

var planStart = time.Date(2026, 1, 5, 0, 0, 0, 0, time.UTC) // pre-period: 3 whole weeks

// planNew is the number of units whose first checkout visit falls on day
// d of the pre-period.
func planNew(d int) int { return 30 + 5*(d%7) + d }

// planFixture writes visits, events and profiles (no exposures: the
// experiment has not started) and returns the planted units.
func planFixture(t testing.TB, dir string, seed uint64) []planUnit {
	t.Helper()
	rng := rand.New(rand.NewPCG(seed, 7))
	var units []planUnit
	var visits, events, profiles [][]string
	poisson := func(lambda float64) int { // Knuth's method; small lambda only
		l, k, p := math.Exp(-lambda), 0, 1.0
		for {
			p *= rng.Float64()
			if p <= l {
				return k
			}
			k++
		}
	}
	w := func() float64 { return math.Round(100*(1+9*rng.Float64())) / 100 }
	n := 0
	for d := 0; d < 21; d++ {
		for j := 0; j < planNew(d); j++ {
			n++
			u := planUnit{id: fmt.Sprintf("u%05d", n), day: d, eligible: n%10 != 0}
			u.trigger = planStart.Add(time.Duration(d)*day + time.Duration(1+rng.IntN(22))*time.Hour + time.Duration(rng.IntN(60))*time.Minute)
			visits = append(visits, []string{u.id, tsText(u.trigger), "checkout"})
			// A home visit before the trigger and returning checkout
			// visits after it do not trigger again.
			visits = append(visits, []string{u.id, tsText(u.trigger.Add(-2 * time.Hour)), "home"})
			for r := 1; r <= rng.IntN(4); r++ {
				visits = append(visits, []string{u.id, tsText(u.trigger.Add(time.Duration(r) * 30 * time.Hour)), "checkout"})
			}
			age := "30"
			if !u.eligible {
				age = "15"
			}
			profiles = append(profiles, []string{u.id, age})
			lambda := 0.3 + 2.5*rng.Float64()
			for k := poisson(2 * lambda); k > 0; k-- { // before the trigger
				v := w()
				off := -14*day + time.Hour + time.Duration(rng.Int64N(int64(14*day-2*time.Hour)))
				events = append(events, []string{u.id, tsText(u.trigger.Add(off)), strconv.FormatFloat(v, 'f', 2, 64)})
				u.x += v
			}
			for k := poisson(lambda); k > 0; k-- { // in the outcome window
				v := w()
				off := time.Hour + time.Duration(rng.Int64N(int64(7*day-2*time.Hour)))
				events = append(events, []string{u.id, tsText(u.trigger.Add(off)), strconv.FormatFloat(v, 'f', 2, 64)})
				u.y += v
				u.cnt++
			}
			if rng.IntN(3) == 0 { // after the window: read by no metric
				events = append(events, []string{u.id, tsText(u.trigger.Add(8 * day)), "5.00"})
			}
			units = append(units, u)
		}
	}
	for i := 0; i < 40; i++ { // visitors who never reach the checkout page
		visits = append(visits, []string{fmt.Sprintf("h%03d", i), tsText(planStart.Add(time.Duration(i) * 11 * time.Hour)), "home"})
	}
	writeBulk(t, dir, "visits.parquet", []col3{{"unit_id", "VARCHAR"}, {"visited_at", "TIMESTAMP"}, {"page", "VARCHAR"}}, visits)
	writeBulk(t, dir, "events.parquet", []col3{{"unit_id", "VARCHAR"}, {"happened_at", "TIMESTAMP"}, {"w", "DOUBLE"}}, events)
	writeBulk(t, dir, "profiles.parquet", []col3{{"unit_id", "VARCHAR"}, {"age", "INTEGER"}}, profiles)
	return units
}

const planSpec = `[experiment]
id = "plan-e2e"
hypothesis = "An invented checkout change makes visitors who reach checkout spend more in the week after."
unit = "visitor"
start = 2026-03-02T00:00:00Z
end = 2026-04-13T00:00:00Z
confidence = 0.95

[variants]
control = 0.5
treatment = 0.5

[sources.exposures]
file = "exposures.parquet"
unit = "unit_id"
time = "exposed_at"
columns = ["unit_id", "variant", "exposed_at"]

[sources.visits]
file = "visits.parquet"
unit = "unit_id"
time = "visited_at"
columns = ["unit_id", "visited_at", "page"]

[sources.events]
file = "events.parquet"
unit = "unit_id"
time = "happened_at"
columns = ["unit_id", "happened_at", "w"]

[sources.profiles]
file = "profiles.parquet"
unit = "unit_id"
static = true
columns = ["unit_id", "age"]

[exposure]
source = "exposures"
variant = "variant"

[eligibility.adult]
kind = "attribute"
source = "profiles"
filter = "age >= 18"

[metrics.w7]
role = "primary"
kind = "sum"
source = "events"
value = "w"
window = ["0d", "7d"]
covariate = { window = ["-14d", "0d"] }

[metrics.active7]
role = "secondary"
kind = "proportion"
source = "events"
window = ["0d", "7d"]

[metrics.w_per_event]
role = "secondary"
kind = "ratio"
window = ["0d", "7d"]
numerator = { source = "events", kind = "sum", value = "w" }
denominator = { source = "events", kind = "count" }

[metrics.events7]
role = "guard"
kind = "count"
source = "events"
window = ["0d", "7d"]
harmful = "increase"
margin = 0.05
`

const planTable = `
[planning]
stand_in = { source = "visits", filter = "page = 'checkout'" }
pre_start = 2026-01-05T00:00:00Z
pre_end = 2026-01-26T00:00:00Z
max_weeks = 5
`

// Normal quantiles from gonum, independent of package stats.
func zq(p float64) float64 { return distuv.UnitNormal.Quantile(p) }

// refMDE is the two-sided normal MDE of a difference in means with n1 and
// n2 units and per-unit variance v (Bloom 1995): (z_{1−α/2} + z_power)·SE.
func refMDE(v, n1, n2, alpha, power float64) float64 {
	return (zq(1-alpha/2) + zq(power)) * math.Sqrt(v/n1+v/n2)
}

// refPropPower is R's power.prop.test power (strict = FALSE), written out
// from its source: Fleiss, Levin & Paik (2003) §4.2 without continuity
// correction.
func refPropPower(n, p1, p2, alpha float64) float64 {
	qu := zq(1 - alpha/2)
	return distuv.UnitNormal.CDF((math.Sqrt(n)*math.Abs(p1-p2) - qu*math.Sqrt((p1+p2)*(1-(p1+p2)/2))) / math.Sqrt(p1*(1-p1)+p2*(1-p2)))
}

// refPropMDE solves refPropPower for p2 > p1 by bisection.
func refPropMDE(n, p1, alpha, power float64) float64 {
	lo, hi := p1, 1.0
	for i := 0; i < 200; i++ {
		mid := (lo + hi) / 2
		if refPropPower(n, p1, mid, alpha) < power {
			lo = mid
		} else {
			hi = mid
		}
	}
	return (lo+hi)/2 - p1
}

// TestPlanReferenceFormulas anchors the reference formulas above to R.
func TestPlanReferenceFormulas(t *testing.T) {
	cases := []struct {
		name      string
		got, want float64
		tol       float64 // relative
	}{
		// Source: R 4.2 power.t.test(n=5000, sd=1, power=0.8, sig.level=0.05)$delta = 0.056022699707.
		// The normal formula approximates the noncentral t test; at n = 5000 per
		// arm they differ by a few parts in 10⁴.
		{"mean n=5000 alpha=.05", refMDE(1, 5000, 5000, 0.05, 0.8), 0.056022699707, 1e-3},
		// Source: R 4.2 power.t.test(n=5000, sd=1, power=0.8, sig.level=0.025)$delta = 0.0616826959147.
		{"mean n=5000 alpha=.025", refMDE(1, 5000, 5000, 0.025, 0.8), 0.0616826959147, 1e-3},
		// Source: R 4.2 power.prop.test(n=2000, p1=0.3, p2=0.34)$power = 0.774082270542 (closed form).
		{"proportion power n=2000", refPropPower(2000, 0.3, 0.34, 0.05), 0.774082270542, 1e-9},
		// Source: R 4.2 power.prop.test(n=800, p1=0.6, p2=0.66, sig.level=0.025)$power = 0.596597130802.
		{"proportion power n=800", refPropPower(800, 0.6, 0.66, 0.025), 0.596597130802, 1e-9},
		// Source: R 4.2 power.prop.test(n=2000, p1=0.3, power=0.8)$p2 = 0.341345141082; R solves
		// with uniroot at its default tolerance (~1e-4), so compare to that precision.
		{"proportion MDE n=2000", 0.3 + refPropMDE(2000, 0.3, 0.05, 0.8), 0.341345141082, 1e-4},
		// Lehr's rule (common practice): n ≈ 16σ²/δ² per arm at 80% power, 5% two-sided;
		// R power.t.test(power=0.8, delta=0.1, sd=1)$n = 1570.736888.
		{"Lehr", 16 / (0.1 * 0.1), 1570.736888, 0.02},
	}
	for _, tc := range cases {
		if math.Abs(tc.got-tc.want) > tc.tol*math.Abs(tc.want) {
			t.Errorf("%s: got %.10g, want %.10g (rel tol %g)", tc.name, tc.got, tc.want, tc.tol)
		}
	}
}

func runSize(t *testing.T, spec string, args ...string) (*asreport.Sizing, string) {
	t.Helper()
	full := append(append([]string{"size", "--format", "json"}, args...), spec)
	code, out, errs := runCLI(full...)
	if code != 0 {
		t.Fatalf("assay %s: exit %d\n%s", strings.Join(full, " "), code, errs)
	}
	var z asreport.Sizing
	if err := json.NewDecoder(bytes.NewReader([]byte(out))).Decode(&z); err != nil {
		t.Fatalf("decode: %v\n%s", err, out)
	}
	return &z, out
}

func relClose(got, want, tol float64) bool {
	return math.Abs(got-want) <= tol*math.Max(math.Abs(want), 1e-12)
}

func TestSizeCommand(t *testing.T) {
	dir := t.TempDir()
	units := planFixture(t, dir, 42)
	spec := writeText(t, dir, "plan.toml", planSpec+planTable)
	z, _ := runSize(t, spec)

	// Traffic: a hand count of the planted first checkout visits of
	// eligible units, by whole week; weeks 4 and 5 extrapolate the third.
	var cum [4]int64
	var triggered, eligible int64
	for _, u := range units {
		triggered++
		if u.eligible {
			eligible++
			for k := u.day/7 + 1; k <= 3; k++ {
				cum[k]++
			}
		}
	}
	if z.TriggeredUnits != triggered || z.EligibleUnits != eligible {
		t.Errorf("triggered %d eligible %d, want %d and %d", z.TriggeredUnits, z.EligibleUnits, triggered, eligible)
	}
	if want := float64(triggered-eligible) / float64(triggered); !relClose(float64(z.ExcludedShare), want, 1e-12) {
		t.Errorf("excluded share %v, want %v", z.ExcludedShare, want)
	}
	wantUnits := []int64{cum[1], cum[2], cum[3], cum[3] + (cum[3] - cum[2]), cum[3] + 2*(cum[3]-cum[2])}
	if len(z.Weeks) != 5 {
		t.Fatalf("%d weeks, want 5", len(z.Weeks))
	}
	for i, w := range z.Weeks {
		if w.Units != wantUnits[i] || z.Traffic[i].Extrapolated != (i >= 3) {
			t.Errorf("week %d: %d units (extrapolated %v), want %d", i+1, w.Units, z.Traffic[i].Extrapolated, wantUnits[i])
		}
		if w.UnitsPerArm[0] != float64(w.Units)/2 {
			t.Errorf("week %d: units per arm %v", i+1, w.UnitsPerArm)
		}
	}
	// The first day's units arrive at 30 + 0 + 0; the hand count above must
	// not be trivially equal to days × a constant.
	if cum[2] == 2*cum[1] {
		t.Fatalf("fixture traffic is linear; the test would not see returning units")
	}

	// Baselines over mature eligible units: trigger + 7d by the pre-period's end.
	end := planStart.Add(21 * day)
	var y, cnt, x, act, lin []float64
	for _, u := range units {
		if u.eligible && !u.trigger.Add(7*day).After(end) {
			y, cnt, x = append(y, u.y), append(cnt, u.cnt), append(x, u.x)
			a := 0.0
			if u.cnt > 0 {
				a = 1
			}
			act = append(act, a)
		}
	}
	meanY, varY := stat.MeanVariance(y, nil)
	meanC, varC := stat.MeanVariance(cnt, nil)
	meanA := stat.Mean(act, nil)
	rho := stat.Correlation(y, x, nil)
	// Ratio: the variance of l_i = (num_i − R·den_i)/mean(den) (Deng, Knoblich & Lu 2018).
	R := meanY / meanC
	for i := range y {
		lin = append(lin, (y[i]-R*cnt[i])/meanC)
	}
	varL := stat.Variance(lin, nil)
	want := map[string][3]float64{ // mean, variance, rho² (NaN: none)
		"w7":          {meanY, varY, rho * rho},
		"active7":     {meanA, meanA * (1 - meanA), math.NaN()},
		"w_per_event": {R, varL, math.NaN()},
		"events7":     {meanC, varC, math.NaN()},
	}
	for _, b := range z.Baselines {
		w := want[b.Metric]
		if b.N != int64(len(y)) || !relClose(float64(b.Mean), w[0], 1e-9) || !relClose(float64(b.Variance), w[1], 1e-9) {
			t.Errorf("%s: n %d mean %v var %v, want %d %v %v", b.Metric, b.N, b.Mean, b.Variance, len(y), w[0], w[1])
		}
		if !math.IsNaN(w[2]) && !relClose(float64(b.CUPEDRho2), w[2], 1e-9) {
			t.Errorf("%s: rho² %v, want %v", b.Metric, b.CUPEDRho2, w[2])
		}
	}

	// MDEs: primary at 5% two-sided (one treatment arm), the two secondary
	// metrics at 5%/2 (Holm's first step), the guard one-sided at 5%
	// against its margin.
	for i, wk := range z.Weeks {
		n := float64(wk.Units) / 2
		for j, m := range wk.MDE {
			b := z.Baselines[j]
			var abs, cupedAbs float64
			switch b.Metric {
			case "w7":
				abs = refMDE(varY, n, n, 0.05, 0.8)
				cupedAbs = refMDE(varY*(1-rho*rho), n, n, 0.05, 0.8)
			case "active7":
				abs = refPropMDE(n, meanA, 0.025, 0.8)
			case "w_per_event":
				abs = refMDE(varL, n, n, 0.025, 0.8)
			case "events7":
				// Largest true relative harm that still clears the 5% margin:
				// margin − (z_{0.95} + z_{0.8})·SE/mean (Chow, Shao & Wang 2008, §3.2.2).
				rel := 0.05 - (zq(0.95)+zq(0.8))*math.Sqrt(varC/n+varC/n)/meanC
				if !relClose(float64(m.Relative), rel, 1e-6) {
					t.Errorf("week %d guard: tolerable harm %v, want %v", i+1, m.Relative, rel)
				}
				continue
			}
			if !relClose(float64(m.Absolute), abs, 1e-6) || !relClose(float64(m.Relative), abs/float64(b.Mean), 1e-6) {
				t.Errorf("week %d %s: MDE %v (%v), want %v (%v)", i+1, b.Metric, m.Absolute, m.Relative, abs, abs/float64(b.Mean))
			}
			if cupedAbs > 0 && !relClose(float64(m.CUPEDAbsolute), cupedAbs, 1e-6) {
				t.Errorf("week %d %s: CUPED MDE %v, want %v", i+1, b.Metric, m.CUPEDAbsolute, cupedAbs)
			}
		}
	}

	// A target that the third week reaches and the second does not:
	// slightly above the CUPED MDE at week 3.
	vAdj := varY * (1 - rho*rho)
	target := 1.02 * refMDE(vAdj, float64(wantUnits[2])/2, float64(wantUnits[2])/2, 0.05, 0.8) / meanY
	zt, _ := runSize(t, spec, "--target", strconv.FormatFloat(target, 'g', 17, 64))
	tg := zt.Target
	if tg == nil {
		t.Fatal("no target in the plan")
	}
	// Required units per arm: (z_{1−α/2} + z_power)²·2σ²/δ² (Chow, Shao & Wang 2008, §3.2.1).
	perArm := math.Pow(zq(0.975)+zq(0.8), 2) * 2 * vAdj / math.Pow(target*meanY, 2)
	if !tg.UsesCUPED || !relClose(float64(tg.Units), math.Ceil(2*perArm), 1e-6) || tg.Weeks != 3 {
		t.Errorf("target: units %v weeks %d cuped %v, want %v and 3", tg.Units, tg.Weeks, tg.UsesCUPED, math.Ceil(2*perArm))
	}
	if tg.PlannedEnd != "2026-03-23T00:00:00Z" || tg.ReadFrom != "2026-03-30T00:00:00Z" {
		t.Errorf("planned end %s, read from %s", tg.PlannedEnd, tg.ReadFrom)
	}
	// The TOML block is a valid [planning] table carrying the plan.
	s, ds := metrics.Load("pasted.toml", []byte(planSpec+"\n"+zt.TOML))
	if ds.HasErrors() {
		t.Fatalf("pasted TOML: %v\n%s", ds, zt.TOML)
	}
	if s.Planning.PlannedUnits != math.Ceil(2*perArm) || !s.Planning.PlannedEnd.Equal(time.Date(2026, 3, 23, 0, 0, 0, 0, time.UTC)) ||
		!relClose(s.Planning.Target, target, 1e-15) || s.Planning.StandIn.Filter.Text != "page = 'checkout'" {
		t.Errorf("pasted plan %+v", s.Planning)
	}

	// No duration reaches a tiny target: say so, with what the maximum can detect.
	zn, _ := runSize(t, spec, "--target", "0.001")
	if zn.Target.Weeks != 0 || !strings.Contains(zn.Target.Statement, "No duration up to 5 weeks") {
		t.Errorf("tiny target: weeks %d, statement %q", zn.Target.Weeks, zn.Target.Statement)
	}
	last := float64(wantUnits[4]) / 2
	if atMax := refMDE(vAdj, last, last, 0.05, 0.8) / meanY; !relClose(float64(zn.Target.AtMaxRelative), atMax, 1e-6) {
		t.Errorf("effect at the maximum %v, want %v", zn.Target.AtMaxRelative, atMax)
	}
	if strings.Contains(zn.TOML, "planned_end =") {
		t.Errorf("the TOML block of an unreachable target has a planned end:\n%s", zn.TOML)
	}

	// Text and Markdown carry the same plan.
	for _, f := range []string{"text", "markdown"} {
		code, out, errs := runCLI("size", "--format", f, "--target", "0.001", spec)
		if testing.Verbose() {
			t.Log(out)
		}
		if code != 0 || !strings.Contains(out, "No duration up to 5 weeks") || !strings.Contains(out, "[planning]") {
			t.Errorf("--format %s: exit %d\n%s\n%s", f, code, out, errs)
		}
	}
}

func TestSizeBadInput(t *testing.T) {
	dir := t.TempDir()
	planFixture(t, dir, 3)
	cases := []struct {
		name, spec string
		args       []string
		code       int
		stderr     string
	}{
		{"no planning table", planSpec, nil, 1, "no [planning] table"},
		{"empty pre-period", planSpec + strings.Replace(strings.Replace(planTable, "2026-01-05", "2025-06-02", 1), "2026-01-26", "2025-06-23", 1), nil, 1, "no eligible units"},
		{"overlap from the command line", planSpec + planTable, []string{"--start", "2026-02-23T00:00:00Z", "--end", "2026-03-09T00:00:00Z"}, 1, "overlaps the experiment"},
		{"power", planSpec + planTable, []string{"--power", "1"}, 1, "--power"},
		{"target", planSpec + planTable, []string{"--target", "-0.1"}, 1, "--target must be positive"},
		{"bad spec key", planSpec + planTable + "powr = 0.9\n", nil, 1, "did you mean `power`"},
	}
	for _, tc := range cases {
		t.Run(tc.name, func(t *testing.T) {
			spec := writeText(t, dir, "bad.toml", tc.spec)
			args := append(append([]string{"size"}, tc.args...), spec)
			code, _, errs := runCLI(args...)
			if code != tc.code || !strings.Contains(errs, tc.stderr) {
				t.Errorf("exit %d, want %d; stderr %q, want %q", code, tc.code, errs, tc.stderr)
			}
		})
	}
}

// TestRunAgainstPlan runs an experiment whose spec carries a plan and
// checks the stage, the units reached and the effect the sample can detect
// against the target, at three as-of times; and a spec without a plan.
func TestRunAgainstPlan(t *testing.T) {
	dir := t.TempDir()
	planFixture(t, dir, 5) // pre-period data; the run reads the experiment's own rows below
	rng := rand.New(rand.NewPCG(11, 13))
	var exposures, events [][]string
	start := time.Date(2026, 3, 2, 0, 0, 0, 0, time.UTC)
	const n = 400
	for i := 0; i < n; i++ {
		id := fmt.Sprintf("u%05d", i+1)
		if (i+1)%10 == 0 {
			id = fmt.Sprintf("x%05d", i) // not in profiles: excluded
		}
		at := start.Add(time.Duration(i%7)*day + time.Duration(1+rng.IntN(20))*time.Hour)
		exposures = append(exposures, []string{id, []string{"control", "treatment"}[i%2], tsText(at)})
		for k := rng.IntN(4); k > 0; k-- {
			events = append(events, []string{id, tsText(at.Add(time.Duration(1+rng.IntN(100)) * time.Hour)), strconv.FormatFloat(float64(1+rng.IntN(900))/100, 'f', 2, 64)})
		}
	}
	writeBulk(t, dir, "exposures.parquet", []col3{{"unit_id", "VARCHAR"}, {"variant", "VARCHAR"}, {"exposed_at", "TIMESTAMP"}}, exposures)
	writeBulk(t, dir, "events.parquet", []col3{{"unit_id", "VARCHAR"}, {"happened_at", "TIMESTAMP"}, {"w", "DOUBLE"}}, events)
	planned := planTable + "target_effect = 0.05\npower = 0.9\nplanned_end = 2026-03-23T00:00:00Z\nplanned_units = 1000\n"
	withPlan := writeText(t, dir, "planned.toml", planSpec+planned)
	noPlan := writeText(t, dir, "unplanned.toml", planSpec)

	type planJSON struct {
		Plan struct {
			Fixed              bool    `json:"fixed"`
			Stage              string  `json:"stage"`
			PlannedUnits       int64   `json:"planned_units"`
			Units              int64   `json:"units"`
			UnitsShare         float64 `json:"units_share"`
			TargetRelative     float64 `json:"target_relative"`
			DetectableAbsolute float64 `json:"detectable_absolute"`
			Underpowered       bool    `json:"underpowered"`
			Statement          string  `json:"statement"`
			ReadFrom           string  `json:"read_from"`
		} `json:"plan"`
		Metrics []struct {
			Name        string `json:"name"`
			Comparisons []struct {
				StdError float64 `json:"std_error"`
			} `json:"comparisons"`
		} `json:"metrics"`
		Cautions []string `json:"cautions"`
	}
	run := func(spec string, args ...string) planJSON {
		t.Helper()
		full := append(append([]string{"run", "--format", "json"}, args...), spec)
		code, out, errs := runCLI(full...)
		if code != 0 {
			t.Fatalf("assay %s: exit %d\n%s", strings.Join(full, " "), code, errs)
		}
		var r planJSON
		if err := json.Unmarshal([]byte(out), &r); err != nil {
			t.Fatal(err)
		}
		return r
	}
	cases := []struct {
		asOf, stage string
		units       int64 // eligible units exposed before as-of
	}{
		{"2026-03-05T00:00:00Z", "interim", 0},
		{"2026-03-25T00:00:00Z", "awaiting outcomes", 360},
		{"", "final", 360},
	}
	for _, tc := range cases {
		var args []string
		if tc.asOf != "" {
			args = []string{"--as-of", tc.asOf}
		}
		r := run(withPlan, args...)
		p := r.Plan
		want := tc.units
		if tc.stage == "interim" {
			// Units exposed in [start, as-of): days 0..2 of the 7-day cycle.
			want = 0
			for i := 0; i < n; i++ {
				if (i+1)%10 != 0 && i%7 < 3 {
					want++
				}
			}
		}
		if !p.Fixed || p.Stage != tc.stage || p.Units != want || p.PlannedUnits != 1000 || !relClose(p.UnitsShare, float64(want)/1000, 1e-12) {
			t.Errorf("as of %q: plan %+v, want stage %s and %d units", tc.asOf, p, tc.stage, want)
		}
		// Detectable effect: (z_{1−α/2} + z_power)·SE of the primary comparison (Bloom 1995).
		var se float64
		for _, m := range r.Metrics {
			if m.Name == "w7" {
				se = m.Comparisons[0].StdError
			}
		}
		if d := (zq(0.975) + zq(0.9)) * se; !relClose(p.DetectableAbsolute, d, 1e-9) {
			t.Errorf("as of %q: detectable %v, want %v", tc.asOf, p.DetectableAbsolute, d)
		}
		// At the first as-of no unit's 7-day window has elapsed: nothing is
		// detectable yet, and the report does not claim otherwise.
		if se == 0 && (p.Underpowered || strings.Contains(p.Statement, "can detect")) {
			t.Errorf("as of %q: no mature units, but %+v", tc.asOf, p)
		}
		if se > 0 && (!p.Underpowered || !containsLine(r.Cautions, "Underpowered for the planned effect") || p.TargetRelative != 0.05) {
			t.Errorf("as of %q: underpowered %v, target %v, cautions %q", tc.asOf, p.Underpowered, p.TargetRelative, r.Cautions)
		}
		if (tc.stage != "final") != containsLine(r.Cautions, "This is not the planned final look") {
			t.Errorf("as of %q: interim caution %v for stage %s", tc.asOf, containsLine(r.Cautions, "not the planned final look"), tc.stage)
		}
	}
	if r := run(noPlan); r.Plan.Fixed || !strings.Contains(r.Plan.Statement, "No sample size or duration was planned") || !containsLine(r.Cautions, "No sample size or duration was planned") {
		t.Errorf("no plan: %+v", r.Plan)
	}
	code, out, _ := runCLI("run", withPlan)
	if code != 0 || !strings.Contains(out, "Plan: Final look at the planned end; 360 of 1000 planned eligible units") {
		t.Errorf("text report: exit %d\n%s", code, out)
	}
}

func containsLine(lines []string, sub string) bool {
	for _, l := range lines {
		if strings.Contains(l, sub) {
			return true
		}
	}
	return false
}

// TestCalibrateStandIn re-splits the pooled stand-in cohort of the
// pre-period (an A/A test before launch) and says why a metric whose
// outcome window cannot have elapsed in the pre-period is not tested.
func TestCalibrateStandIn(t *testing.T) {
	dir := t.TempDir()
	planFixture(t, dir, 21)
	late := "\n[metrics.events30]\nrole = \"secondary\"\nkind = \"count\"\nsource = \"events\"\nwindow = [\"0d\", \"30d\"]\n"
	spec := writeText(t, dir, "cal.toml", planSpec+late+planTable)
	code, out, errs := runCLI("calibrate", "--stand-in", "--splits", "100", "--format", "json", spec)
	if code != 0 {
		t.Fatalf("exit %d\n%s", code, errs)
	}
	var cal asreport.Calibration
	if err := json.Unmarshal([]byte(out), &cal); err != nil {
		t.Fatal(err)
	}
	if cal.Start != "2026-01-05T00:00:00Z" || cal.End != "2026-01-26T00:00:00Z" {
		t.Errorf("period [%s, %s), want the [planning] pre-period", cal.Start, cal.End)
	}
	for _, m := range cal.Metrics {
		switch m.Name {
		case "events30":
			// The pre-period lasts 21 days: no unit's 30-day window has elapsed.
			if m.Verdict != "not tested" || !strings.Contains(m.Reason, "outcome window had elapsed") {
				t.Errorf("events30: verdict %q, reason %q", m.Verdict, m.Reason)
			}
		default:
			// 100 splits of one comparison each: every one tested.
			if m.Tests != 100 || m.Verdict == "not tested" || m.Reason != "" {
				t.Errorf("%s: %d tests, verdict %q, reason %q", m.Name, m.Tests, m.Verdict, m.Reason)
			}
		}
	}
	code, out, _ = runCLI("calibrate", "--stand-in", "--splits", "20", spec)
	if code != 0 || !strings.Contains(out, "not tested: ") {
		t.Errorf("text: exit %d\n%s", code, out)
	}
	if testing.Verbose() {
		t.Log(out)
	}
}
