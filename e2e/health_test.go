package e2e

// Health checks, guard verdicts and multiple-testing adjustment through
// the whole path: sample-ratio mismatch (overall, per day, the alpha flag
// and exit code 4), guard metrics (verdicts, the GUARD HARM alarm, exit
// code 5 with --fail-on-harm, the one-sided p-value), and adjusted
// p-values per family (Holm, Benjamini–Hochberg, Bonferroni, none), each
// against a formula written out in the test.

import (
	"fmt"
	"math"
	"strings"
	"testing"
	"time"

	"gonum.org/v1/gonum/stat/distuv"
)

// metricVisits is a primary count of events in [0d, 14d).
const metricVisits = `
[metrics.visits]
role = "primary"
kind = "count"
source = "events"
window = ["0d", "14d"]
`

// srmFixture writes units triggered on consecutive days from the start:
// perDay[d] = {control, treatment} units triggered on day d, plus
// crossovers units seen in both variants on day 0. Each unit has
// Poisson(1) events in its first week.
func srmFixture(t testing.TB, dir string, perDay [][2]int, crossovers int, seed uint64) {
	t.Helper()
	r := newRand(seed)
	var expo, ev [][]string
	id := 0
	add := func(variant string, d int) string {
		u := fmt.Sprintf("u%06d", id)
		id++
		trig := within(r, start3T.Add(time.Duration(d)*day), day)
		expo = append(expo, []string{u, variant, tsText(trig)})
		for range poisson(r, 1) {
			ev = append(ev, []string{u, tsText(within(r, trig, week))})
		}
		return u
	}
	for d, c := range perDay {
		for range c[0] {
			add("control", d)
		}
		for range c[1] {
			add("treatment", d)
		}
	}
	for range crossovers {
		u := add("control", 0)
		expo = append(expo, []string{u, "treatment", tsText(within(r, start3T.Add(day), day))})
	}
	ev = append(ev, []string{"u000000", tsText(start3T.Add(-day))}) // events must not be empty
	writeBulk(t, dir, "exposures.parquet", []col3{{"unit_id", "VARCHAR"}, {"variant", "VARCHAR"}, {"exposed_at", "TIMESTAMP"}}, expo)
	writeBulk(t, dir, "events.parquet", []col3{{"unit_id", "VARCHAR"}, {"happened_at", "TIMESTAMP"}}, ev)
}

// chiSqGOF is Pearson's goodness-of-fit statistic Σ(O−E)²/E with
// E_i = N·w_i, written out.
func chiSqGOF(obs []float64, w []float64) float64 {
	n := 0.0
	for _, o := range obs {
		n += o
	}
	x := 0.0
	for i, o := range obs {
		e := n * w[i]
		x += (o - e) * (o - e) / e
	}
	return x
}

func chiSqSurvival(x, df float64) float64 { return distuv.ChiSquared{K: df}.Survival(x) }

func even(days, c, tr int) [][2]int {
	out := make([][2]int, days)
	for i := range out {
		out[i] = [2]int{c, tr}
	}
	return out
}

func TestSampleRatio(t *testing.T) {
	broken := even(10, 100, 100)
	broken[4] = [2]int{150, 50} // day 5 (2026-03-06) has a broken split
	cases := []struct {
		name       string
		perDay     [][2]int
		crossovers int
		flags      []string
		alpha      float64
		wantAlarm  bool
		wantCode   int
		alarmDays  []string
	}{
		{"55/45 split of a 50/50 plan", even(10, 110, 90), 0, nil, 0.001, true, 4, []string{}},
		{"balanced with crossovers", even(10, 101, 99), 20, nil, 0.001, false, 0, []string{}},
		{"one broken day", broken, 0, nil, 0.001, false, -1, []string{"2026-03-06"}},
		{"mild imbalance at default alpha", even(10, 106, 94), 0, nil, 0.001, false, 0, []string{}},
		{"mild imbalance with --srm-alpha 0.01", even(10, 106, 94), 0, []string{"--srm-alpha", "0.01"}, 0.01, true, 4, []string{}},
	}
	for i, tc := range cases {
		t.Run(tc.name, func(t *testing.T) {
			dir := t.TempDir()
			srmFixture(t, dir, tc.perDay, tc.crossovers, uint64(100+i))
			spec := writeText(t, dir, "spec.toml", spec3{Metrics: metricVisits}.toml())
			code, rep := run3(t, spec, tc.flags...)

			var oc, ot float64
			for _, d := range tc.perDay {
				oc += float64(d[0])
				ot += float64(d[1])
			}
			x2 := chiSqGOF([]float64{oc, ot}, []float64{0.5, 0.5}) // Source: Pearson Σ(O−E)²/E by hand
			sr := rep.Health.SampleRatio
			runChecks(t, []check3{
				{"statistic", f(sr.Statistic), x2, 1e-9, "Σ(O−E)²/E over the fixture's eligible counts"},
				{"df", f(sr.DF), 1, 0, "k − 1 for two variants"},
				{"p_value", f(sr.PValue), chiSqSurvival(x2, 1), 1e-9, "distuv.ChiSquared{K: 1} survival"},
				{"alpha", f(sr.Alpha), tc.alpha, 0, "default 0.001 or --srm-alpha"},
			})
			if sr.Alarm != tc.wantAlarm {
				t.Errorf("alarm: got %v, want %v (p = %v, alpha %v)", sr.Alarm, tc.wantAlarm, f(sr.PValue), tc.alpha)
			}
			if tc.wantCode >= 0 && code != tc.wantCode {
				t.Errorf("exit code: got %v, want %v", code, tc.wantCode)
			}
			hasSRM := len(rep.Alarms) > 0 && strings.HasPrefix(rep.Alarms[0], "SAMPLE RATIO MISMATCH")
			if tc.wantAlarm && !hasSRM {
				t.Errorf("alarms: got %q, want the first to start with SAMPLE RATIO MISMATCH", rep.Alarms)
			}
			if !tc.wantAlarm && len(tc.alarmDays) == 0 && len(rep.Alarms) != 0 {
				t.Errorf("alarms: got %q, want none", rep.Alarms)
			}
			if got := rep.Health.SampleRatioDaily.AlarmDays; fmt.Sprint(got) != fmt.Sprint(tc.alarmDays) {
				t.Errorf("alarm_days: got %v, want %v", got, tc.alarmDays)
			}
			// Each day's statistic from that day's counts (Source: Σ(O−E)²/E by hand).
			days := rep.Health.SampleRatioDaily.Days
			if len(days) != len(tc.perDay) {
				t.Fatalf("sample_ratio_daily.days: got %d days, want %d", len(days), len(tc.perDay))
			}
			for d, c := range tc.perDay {
				want := chiSqGOF([]float64{float64(c[0]), float64(c[1])}, []float64{0.5, 0.5})
				if d == 0 {
					// Crossovers trigger on day 0 and are counted before exclusions.
					want = chiSqGOF([]float64{float64(c[0] + tc.crossovers), float64(c[1])}, []float64{0.5, 0.5})
				}
				wantDay := start3T.AddDate(0, 0, d).Format("2006-01-02")
				if days[d].Day != wantDay || !near(f(days[d].Statistic), want, 1e-9) {
					t.Errorf("day %d: got %s statistic %v, want %s statistic %v", d, days[d].Day, f(days[d].Statistic), wantDay, want)
				}
			}
			if len(tc.alarmDays) > 0 {
				found := false
				for _, a := range rep.Alarms {
					found = found || (strings.HasPrefix(a, "SAMPLE RATIO MISMATCH on 1 day") && strings.Contains(a, tc.alarmDays[0]))
				}
				if !found {
					t.Errorf("alarms: got %q, want a per-day SAMPLE RATIO MISMATCH naming %s", rep.Alarms, tc.alarmDays[0])
				}
			}
			if tc.crossovers > 0 {
				// Crossovers over all exposed units (Source: fixture counts).
				exposed := oc + ot + float64(tc.crossovers)
				if got, want := f(rep.Health.CrossoverRate), float64(tc.crossovers)/exposed; !near(got, want, 1e-12) {
					t.Errorf("crossover_rate_of_exposed: got %v, want %v", got, want)
				}
			}
		})
	}
}

// ---- guards ----

// guardFixture: n units per variant with one exposure each; events carry
// an etype, drawn per unit as Poisson in [0, 14d) with rates per type and
// variant.
func guardFixture(t testing.TB, dir string, variants []string, nPer []int, rates map[string][]float64, seed uint64) {
	t.Helper()
	r := newRand(seed)
	var expo, ev [][]string
	types := sortedKeys(rates)
	id := 0
	for vi, v := range variants {
		for range nPer[vi] {
			u := fmt.Sprintf("u%06d", id)
			id++
			trig := within(r, start3T, 20*day)
			expo = append(expo, []string{u, v, tsText(trig)})
			for _, et := range types {
				for range poisson(r, rates[et][vi]) {
					ev = append(ev, []string{u, tsText(within(r, trig, 14*day)), et})
				}
			}
		}
	}
	writeBulk(t, dir, "exposures.parquet", []col3{{"unit_id", "VARCHAR"}, {"variant", "VARCHAR"}, {"exposed_at", "TIMESTAMP"}}, expo)
	writeBulk(t, dir, "events.parquet", []col3{{"unit_id", "VARCHAR"}, {"happened_at", "TIMESTAMP"}, {"etype", "VARCHAR"}}, ev)
}

func countMetric(name, role, etype, extra string) string {
	return fmt.Sprintf(`
[metrics.%s]
role = %q
kind = "count"
source = "events"
filter = "etype = '%s'"
window = ["0d", "14d"]
%s`, name, role, etype, extra)
}

const z975 = 1.959964 // Source: standard normal table, upper 0.025 point (from memory, 7 digits)
const z95 = 1.644854  // Source: standard normal table, upper 0.05 point (from memory, 7 digits)

func TestGuards(t *testing.T) {
	dir := t.TempDir()
	// Rates per unit in 14 days, control then treatment. errors: +50%
	// (planted harm); crashes and views: no change, many events.
	guardFixture(t, dir, []string{"control", "treatment"}, []int{4000, 4000}, map[string][]float64{
		"visit": {2, 2}, "error": {1, 1.5}, "crash": {10, 10}, "view": {10, 10},
	}, 7)
	guards := countMetric("errors", "guard", "error", "harmful = \"increase\"\nmargin = 0.05\n") +
		countMetric("crashes", "guard", "crash", "harmful = \"increase\"\nmargin = 0.05\n") +
		countMetric("views", "guard", "view", "harmful = \"decrease\"\nmargin = 0.05\n")
	primary := countMetric("visits", "primary", "visit", "")
	withHarm := writeText(t, dir, "harm.toml", spec3{EventCols: []string{"etype"}, Metrics: primary + guards}.toml())
	noHarm := writeText(t, dir, "noharm.toml", spec3{EventCols: []string{"etype"}, Metrics: primary + countMetric("crashes", "guard", "crash", "harmful = \"increase\"\nmargin = 0.05\n")}.toml())

	t.Run("exit codes", func(t *testing.T) {
		for _, tc := range []struct {
			name  string
			spec  string
			flags []string
			code  int
		}{
			{"harm with --fail-on-harm", withHarm, []string{"--fail-on-harm"}, 5},
			{"harm without the flag", withHarm, nil, 0},
			{"no harm with --fail-on-harm", noHarm, []string{"--fail-on-harm"}, 0},
		} {
			t.Run(tc.name, func(t *testing.T) {
				if code, _ := run3(t, tc.spec, tc.flags...); code != tc.code {
					t.Errorf("exit code: got %v, want %v (Source: README exit codes)", code, tc.code)
				}
			})
		}
	})

	rep := mustRun3(t, withHarm)
	var harmAlarms []string
	for _, a := range rep.Alarms {
		if strings.HasPrefix(a, "GUARD HARM") {
			harmAlarms = append(harmAlarms, a)
		}
	}
	if len(harmAlarms) != 1 || !strings.Contains(harmAlarms[0], "errors") {
		t.Errorf("GUARD HARM alarms: got %q, want exactly one, naming errors", harmAlarms)
	}
	for _, tc := range []struct {
		metric, harmful, verdict string
	}{
		{"errors", "increase", "harm beyond margin"},     // planted +50% against a 5% margin
		{"crashes", "increase", "no harm beyond margin"}, // no change, relative SE about 0.007
		{"views", "decrease", "no harm beyond margin"},   // no change, relative SE about 0.007
	} {
		t.Run(tc.metric, func(t *testing.T) {
			m := rep.metric(t, tc.metric)
			c := m.cmp(t, "treatment")
			if c.Guard == nil {
				t.Fatal("no guard block")
			}
			if c.Guard.Verdict != tc.verdict {
				t.Errorf("verdict: got %q, want %q (relative %v, one-sided bounds %v to %v)", c.Guard.Verdict, tc.verdict, f(c.Relative), f(c.Guard.Lower), f(c.Guard.Upper))
			}
			const margin = 0.05
			// Fieller's bounds for ρ = μ_t/μ_b at one-sided 95% (Fieller
			// 1954): the roots of (b̄² − q²s_b²)ρ² − 2·t̄·b̄·ρ + (t̄² − q²s_t²) = 0,
			// q the t quantile 0.95 at the comparison's Welch df, minus 1.
			bv, tv := variantOf(t, m.Variants, "control"), variantOf(t, m.Variants, "treatment")
			mb, sb, mt, st := f(bv.Value), f(bv.StdError), f(tv.Value), f(tv.StdError)
			tdist := distuv.StudentsT{Mu: 0, Sigma: 1, Nu: f(c.DF)}
			q := tdist.Quantile(0.95)
			qa, qb, qc := mb*mb-q*q*sb*sb, -2*mt*mb, mt*mt-q*q*st*st
			disc := math.Sqrt(qb*qb - 4*qa*qc)
			lo, hi := (-qb-disc)/(2*qa)-1, (-qb+disc)/(2*qa)-1
			// Non-inferiority p-value: the Fieller pivot at ρ0 = 1 ± margin.
			rho0, sign := 1+margin, 1.0
			if tc.harmful == "decrease" {
				rho0, sign = 1-margin, -1
			}
			wantP := tdist.CDF(sign * (mt - rho0*mb) / math.Sqrt(st*st+rho0*rho0*sb*sb))
			wantBound := hi
			// The verdict rule, written out: harm is "increase" here, or
			// "decrease" mapped onto it by flipping signs.
			l, h := lo, hi
			if tc.harmful == "decrease" {
				wantBound, l, h = lo, -hi, -lo
			}
			verdict := "inconclusive"
			switch {
			case l > margin:
				verdict = "harm beyond margin"
			case l > 0 && h >= margin:
				verdict = "harm shown, margin not ruled out"
			case l > 0:
				verdict = "harm shown, within margin"
			case h < margin:
				verdict = "no harm beyond margin"
			}
			runChecks(t, []check3{
				{"one-sided lower bound", f(c.Guard.Lower), lo, 1e-6, "Fieller 1954 roots, distuv.StudentsT quantile 0.95"},
				{"one-sided upper bound", f(c.Guard.Upper), hi, 1e-6, "Fieller 1954 roots, distuv.StudentsT quantile 0.95"},
				{"one-sided p_value", f(c.Guard.PValue), wantP, 1e-6, "Fieller pivot at 1 ± margin, distuv.StudentsT"},
				{"bound", f(c.Guard.Bound), wantBound, 1e-6, "the Fieller bound on the harmful side"},
			})
			if c.Guard.Verdict != verdict {
				t.Errorf("verdict: got %q, want %q from the bounds against 0 and the margin (Source: rule written out in the test)", c.Guard.Verdict, verdict)
			}
			if c.Guard.Alarming != (verdict == "harm beyond margin" || verdict == "harm shown, margin not ruled out") {
				t.Errorf("alarming: got %v for verdict %q", c.Guard.Alarming, verdict)
			}
			if c.Family != "guard" || !near(f(c.PValueAdjusted), f(c.PValue), 0) {
				t.Errorf("guard family: got %q, p_value_adjusted %v, want \"guard\", unadjusted %v", c.Family, f(c.PValueAdjusted), f(c.PValue))
			}
		})
	}
}

// ---- multiple testing ----

func TestMultipleTesting(t *testing.T) {
	dir := t.TempDir()
	// Three variants, planned 0.5/0.25/0.25 and assigned exactly so. Rates
	// per unit in 14 days for control, t1, t2: effects of several sizes so
	// the raw p-values spread out.
	guardFixture(t, dir, []string{"control", "t1", "t2"}, []int{1200, 600, 600}, map[string][]float64{
		"a": {2, 2.2, 2}, "b": {1, 1.2, 1}, "c": {1, 1, 1.12}, "d": {1, 1.02, 0.98}, "g": {1, 1, 1},
	}, 11)
	ms := countMetric("pa", "primary", "a", "") + countMetric("sb", "secondary", "b", "") +
		countMetric("sc", "secondary", "c", "") + countMetric("sd", "mechanism", "d", "") +
		countMetric("gg", "guard", "g", "harmful = \"increase\"\nmargin = 0.1\n")
	spec := writeText(t, dir, "spec.toml", spec3{Variants: "control = 0.5\nt1 = 0.25\nt2 = 0.25\n", EventCols: []string{"etype"}, Metrics: ms}.toml())

	bonf := func(p []float64) []float64 {
		out := make([]float64, len(p))
		for i, v := range p {
			out[i] = math.Min(1, float64(len(p))*v)
		}
		return out
	}
	none := func(p []float64) []float64 { return append([]float64(nil), p...) }
	for _, tc := range []struct {
		name   string
		flags  []string
		method string
		adj    func([]float64) []float64
		source string
	}{
		{"default is holm", nil, "holm", holmByHand, "Holm 1979 step-down, written out in the test"},
		{"bh", []string{"--adjust", "bh"}, "bh", bhByHand, "Benjamini & Hochberg 1995 step-up, written out in the test"},
		{"bonferroni", []string{"--adjust", "bonferroni"}, "bonferroni", bonf, "min(1, m·p)"},
		{"none", []string{"--adjust", "none"}, "none", none, "no adjustment"},
	} {
		t.Run(tc.name, func(t *testing.T) {
			rep := mustRun3(t, spec, tc.flags...)
			if rep.Adjustment != tc.method {
				t.Errorf("adjustment: got %q, want %q", rep.Adjustment, tc.method)
			}
			families := map[string][]*cmp3{}
			wantFam := map[string]string{"pa": "primary", "sb": "secondary", "sc": "secondary", "sd": "secondary", "gg": "guard"}
			for i := range rep.Metrics {
				m := &rep.Metrics[i]
				for j := range m.Comparisons {
					c := &m.Comparisons[j]
					if c.Family != wantFam[m.Name] {
						t.Errorf("%s/%s family: got %q, want %q", m.Name, c.Variant, c.Family, wantFam[m.Name])
					}
					families[c.Family] = append(families[c.Family], c)
				}
			}
			if n := len(families["secondary"]); n != 6 {
				t.Fatalf("secondary family: got %d comparisons, want 6 (3 metrics × 2 treatment variants)", n)
			}
			if n := len(families["primary"]); n != 2 {
				t.Fatalf("primary family: got %d comparisons, want 2", n)
			}
			for _, fam := range []string{"secondary", "primary"} {
				cs := families[fam]
				raw := make([]float64, len(cs))
				for i, c := range cs {
					raw[i] = f(c.PValue)
				}
				want := tc.adj(raw)
				for i, c := range cs {
					if got := f(c.PValueAdjusted); !near(got, want[i], 1e-9) {
						t.Errorf("%s family, comparison %s (raw p %v): p_value_adjusted got %v, want %v (Source: %s)", fam, c.Variant, raw[i], got, want[i], tc.source)
					}
				}
			}
			for _, c := range families["guard"] {
				if f(c.PValueAdjusted) != f(c.PValue) {
					t.Errorf("guard %s: p_value_adjusted got %v, want the raw %v (guards are not adjusted)", c.Variant, f(c.PValueAdjusted), f(c.PValue))
				}
			}
			if tc.method == "holm" {
				// The family's raw p-values must spread out for the check to bite.
				small := 0
				for _, c := range families["secondary"] {
					if f(c.PValue) < 0.05 {
						small++
					}
				}
				if small == 0 || small == 6 {
					t.Errorf("fixture: %d of 6 secondary p-values below 0.05, want some but not all", small)
				}
			}
		})
	}
}
