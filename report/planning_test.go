package report_test

// Tests of the plan computed from a planning query's result, on results
// written by hand (no engine): the per-comparison level of several arms
// and secondary metrics, unequal arms, sequential monitoring, a metric
// without variance. Expected values come from the textbook formulas
// written out below with gonum's normal quantile, not from package stats.

import (
	"math"
	"strings"
	"testing"

	"gonum.org/v1/gonum/stat/distuv"

	"github.com/assay-dev/assay/compiler"
	"github.com/assay-dev/assay/metrics"
	"github.com/assay-dev/assay/report"
	"github.com/assay-dev/assay/results"
)

const sizeSpec = `[experiment]
id = "size-unit"
hypothesis = "An invented change to a sign-up page makes more visitors finish signing up within a week."
start = 2026-05-04T00:00:00Z
end = 2026-06-01T00:00:00Z
%MONITORING%

[variants]
control = 0.5
short_form = 0.25
no_form = 0.25

[sources.visits]
table = "visits"
unit = "visitor_id"
time = "at"
columns = ["visitor_id", "at", "page", "v"]

[exposure]
source = "visits"
variant = "page"

[metrics.spend]
role = "primary"
kind = "sum"
source = "visits"
value = "v"
window = ["0d", "7d"]

[metrics.signed]
role = "secondary"
kind = "proportion"
source = "visits"
window = ["0d", "7d"]

[metrics.flat]
role = "secondary"
kind = "count"
source = "visits"
window = ["0d", "7d"]

[metrics.errors]
role = "guard"
kind = "count"
source = "visits"
window = ["0d", "7d"]
harmful = "increase"
margin = 0.1

[planning]
stand_in = { source = "visits", filter = "page = 'signup'" }
pre_start = 2026-04-06T00:00:00Z
pre_end = 2026-04-20T00:00:00Z
max_weeks = 3
target_effect = 0.5
target_scale = "absolute"
power = 0.9
`

func zq(p float64) float64 { return distuv.UnitNormal.Quantile(p) }

// sizeSet is a planning query's result: n eligible units with complete
// windows, the given moments, and the daily new units.
func sizeSet(t *testing.T, p *compiler.Plan, days map[string]int64) *results.Set {
	t.Helper()
	var total int64
	for _, n := range days {
		total += n
	}
	st := map[string]float64{}
	set := func(m string, s compiler.Stat, v float64) { st[compiler.StatColumn(m, s)] = v }
	set("spend", compiler.StatN, 1000)
	set("spend", compiler.StatMean, 12)
	set("spend", compiler.StatVar, 36)
	set("signed", compiler.StatN, 1000)
	set("signed", compiler.StatMean, 0.2)
	set("signed", compiler.StatVar, 0.16016)
	set("flat", compiler.StatN, 1000)
	set("flat", compiler.StatMean, 1)
	set("flat", compiler.StatVar, 0)
	set("errors", compiler.StatN, 1000)
	set("errors", compiler.StatMean, 2)
	set("errors", compiler.StatVar, 4)
	s := &results.Set{SpecFingerprint: p.Spec.Fingerprint, Options: p.Options.Text()}
	s.Rows = append(s.Rows, results.Row{Variant: compiler.PooledArm, Group: -1, Units: total, Stats: st})
	for d, n := range days {
		s.Rows = append(s.Rows, results.Row{Variant: compiler.PooledArm, Group: 0, Key: d, Units: n})
	}
	s.Health = []results.HealthRow{
		{Kind: compiler.HealthTriggers, Variant: compiler.PooledArm, Units: total},
		{Kind: compiler.HealthExcluded, Reason: compiler.ExcludedAny, Variant: compiler.PooledArm},
	}
	return s
}

func TestSizeLevels(t *testing.T) {
	// New units by day: 100 a day in the first week, 60 a day in the second.
	days := map[string]int64{}
	for d := 0; d < 14; d++ {
		n := int64(100)
		if d >= 7 {
			n = 60
		}
		days["2026-04-"+twoDigits(6+d)] = n
	}
	weekUnits := []float64{700, 1120, 1540} // week 3 extrapolates the second week's 420
	for _, monitoring := range []string{"fixed", "sequential"} {
		t.Run(monitoring, func(t *testing.T) {
			src := strings.Replace(sizeSpec, "%MONITORING%", "monitoring = \""+monitoring+"\"", 1)
			s, ds := metrics.Load("size.toml", []byte(src))
			if ds.HasErrors() {
				t.Fatal(ds)
			}
			p, ds := compiler.Compile(s, compiler.Options{StandIn: true, Breakdowns: []string{compiler.KeyTriggerDay}})
			if ds.HasErrors() {
				t.Fatal(ds)
			}
			z, err := report.Size(p, sizeSet(t, p, days), report.SizeOptions{})
			if err != nil {
				t.Fatal(err)
			}
			// Levels as the run adjusts them (Holm's first step = α/m): the
			// primary across the 2 treatment arms, the 2 secondary metrics ×
			// 2 arms together, the guard unadjusted.
			wantAlpha := map[string]float64{"spend": 0.025, "signed": 0.0125, "flat": 0.0125, "errors": 0.05}
			for _, b := range z.Baselines {
				if math.Abs(b.Alpha-wantAlpha[b.Metric]) > 1e-15 {
					t.Errorf("%s: level %v, want %v", b.Metric, b.Alpha, wantAlpha[b.Metric])
				}
			}
			if z.Baselines[2].Reason == "" || !strings.Contains(z.Baselines[2].Reason, "zero variance") {
				t.Errorf("flat: reason %q", z.Baselines[2].Reason)
			}
			for i, w := range z.Weeks {
				if float64(w.Units) != weekUnits[i] {
					t.Fatalf("week %d: %d units, want %v", i+1, w.Units, weekUnits[i])
				}
				// The smallest arm (25%) against the baseline (50%).
				nb, nt := weekUnits[i]*0.5, weekUnits[i]*0.25
				se := math.Sqrt(36/nb + 36/nt)
				want := (zq(1-0.025/2) + zq(0.9)) * se // Bloom 1995
				if monitoring == "sequential" {
					// Normal-mixture boundary at the final look with ρ tuned to n
					// (Howard et al. 2021, eq. 3.11): v = nρ² = −2 log α + log(−2 log α + 1),
					// c = √(2(v+1)/v · log(√(v+1)/α)); MDE = (c + z_power)·SE.
					a := 0.025
					v := -2*math.Log(a) + math.Log(-2*math.Log(a)+1)
					c := math.Sqrt(2 * (v + 1) / v * math.Log(math.Sqrt(v+1)/a))
					want = (c + zq(0.9)) * se
				}
				if got := float64(w.MDE[0].Absolute); math.Abs(got-want) > 1e-9*want {
					t.Errorf("week %d spend: MDE %v, want %v", i+1, got, want)
				}
				if w.MDE[2].Absolute.OK() {
					t.Errorf("week %d flat: MDE %v for a metric without variance", i+1, w.MDE[2].Absolute)
				}
				// Guard: margin − (z_{0.95} + z_{0.9})·SE_rel (Chow, Shao & Wang 2008, §3.2.2).
				seRel := math.Sqrt(4/nb+4/nt) / 2
				if got, want := float64(w.MDE[3].Relative), 0.1-(zq(0.95)+zq(0.9))*seRel; math.Abs(got-want) > 1e-9 {
					t.Errorf("week %d errors: tolerable harm %v, want %v", i+1, got, want)
				}
			}
			if monitoring == "fixed" {
				// Target 0.5 absolute: n = (z_{1−α/2} + z_power)²·(σ²/w_b + σ²/w_t)/δ² over the
				// pair, whose shares are 2/3 and 1/3 (Chow, Shao & Wang 2008, §3.2.1).
				pair := math.Pow(zq(1-0.025/2)+zq(0.9), 2) * (36/(2.0/3) + 36/(1.0/3)) / 0.25
				units := math.Ceil(pair / 0.75)
				tg := z.Target
				if tg == nil || float64(tg.Units) != units || tg.UnitsPerArm[1] != math.Ceil(units*0.25) {
					t.Fatalf("target %+v, want %v units", tg, units)
				}
				wantWeeks := 0
				for i, u := range weekUnits {
					if u >= units && wantWeeks == 0 {
						wantWeeks = i + 1
					}
				}
				if tg.Weeks != wantWeeks {
					t.Errorf("target reached in week %d, want %d (%v units)", tg.Weeks, wantWeeks, units)
				}
			}
		})
	}
}

func twoDigits(n int) string {
	return string(rune('0'+n/10)) + string(rune('0'+n%10))
}
