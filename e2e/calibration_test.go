package e2e

// Calibration through the real path. TestSimulatedExperiments runs many
// small independent experiments (one exposure file with a rep column,
// one spec per rep selecting its units with exposure.filter and reading
// that rep's events file)
// with three arms: control, "aa" (no true effect: an A/A comparison) and
// "ab" (a planted effect whose true size follows analytically from the
// generating model). It judges false-positive rates and interval coverage
// with exact binomial ranges at level 0.999, for mean, proportion and
// ratio metrics, plain and CUPED-adjusted. TestCalibrateCommand checks
// `assay calibrate` against an independent recomputation.

import (
	"fmt"
	"math"
	"strings"
	"sync"
	"testing"
	"time"

	"gonum.org/v1/gonum/stat"
)

// Generating model of the simulated experiments (per unit i):
//
//	λ_i ~ Gamma(k = 2, s = 1.5)   events per 14 days (E λ = 3)
//	m_i ~ Gamma(4, 5)             mean amount (E m = 20)
//	pre  [−28d, 0):  Poisson(2λ_i) events, amounts m_i·Gamma(2, 1/2)
//	post [0, 14d):   Poisson(λ_i·(1 + δ·ab)) events, amounts m_i·(1 + δ2·ab)·Gamma(2, 1/2)
const (
	simShape, simScale = 2.0, 1.5
	simMeanAmount      = 20.0
	simDelta           = 0.2 // rate effect in arm ab
	simDelta2          = 0.1 // amount effect in arm ab
	simAbove           = 2   // conv = 1 when the unit has more than 2 events
)

// True effects of arm ab against control (Source: the generating model,
// worked out analytically):
//
//	count: E[Y] = E[λ]·(1 + δ), so the difference is E[λ]·δ = k·s·δ.
//	proportion P(Y > 2): Y is Poisson–Gamma, i.e. negative binomial with
//	  size k and p = 1/(1 + c·s) for a rate multiplier c, so
//	  P(Y ≤ 2) = p^k·(1 + k(1−p) + k(k+1)/2·(1−p)²).
//	ratio sum(amount)/count: E[Σ amount]/E[count] = E[λ m]·E[g]/E[λ] = E[m]
//	  (λ and m independent, E[g] = 1), so the difference is E[m]·δ2.
func simTrueEffects() map[string]float64 {
	k, s := simShape, simScale
	pLE2 := func(c float64) float64 {
		p := 1 / (1 + c*s)
		q := 1 - p
		return math.Pow(p, k) * (1 + k*q + k*(k+1)/2*q*q)
	}
	return map[string]float64{
		"cnt":  k * s * simDelta,
		"conv": (1 - pLE2(1+simDelta)) - (1 - pLE2(1)),
		"aov":  simMeanAmount * simDelta2,
	}
}

// simFixture writes reps experiments of perRep = {control, aa, ab} units
// each. Triggers fall in the first 20 days, so every unit is mature.
func simFixture(t testing.TB, dir string, reps int, perRep [3]int, seed uint64) {
	t.Helper()
	r := newRand(seed)
	arms := []string{"control", "aa", "ab"}
	var expo, ev [][]string
	id := 0
	for rep := range reps {
		for a, arm := range arms {
			ab := 0.0
			if arm == "ab" {
				ab = 1
			}
			for range perRep[a] {
				u := fmt.Sprintf("u%07d", id)
				id++
				trig := within(r, start3T, 20*day)
				expo = append(expo, []string{u, arm, tsText(trig), fmt.Sprint(rep)})
				lam := gamma(r, simShape, simScale)
				m := gamma(r, 4, simMeanAmount/4)
				for range poisson(r, 2*lam) {
					ev = append(ev, []string{fmt.Sprint(rep), u, tsText(within(r, trig.Add(-28*day), 28*day)), fmt.Sprintf("%.6f", m*gamma(r, 2, 0.5))})
				}
				for range poisson(r, lam*(1+simDelta*ab)) {
					ev = append(ev, []string{fmt.Sprint(rep), u, tsText(within(r, trig, 14*day)), fmt.Sprintf("%.6f", m*(1+simDelta2*ab)*gamma(r, 2, 0.5))})
				}
			}
		}
	}
	writeBulk(t, dir, "exposures.parquet", []col3{{"unit_id", "VARCHAR"}, {"variant", "VARCHAR"}, {"exposed_at", "TIMESTAMP"}, {"rep", "INTEGER"}}, expo)
	writeBulkSplit(t, dir, "events_%03d.parquet", []col3{{"unit_id", "VARCHAR"}, {"happened_at", "TIMESTAMP"}, {"w", "DOUBLE"}}, ev)
}

var simMetrics = fmt.Sprintf(`
[metrics.cnt]
role = "primary"
kind = "count"
source = "events"
window = ["0d", "14d"]

[metrics.conv]
role = "secondary"
kind = "proportion"
source = "events"
above = %d
window = ["0d", "14d"]

[metrics.aov]
role = "secondary"
kind = "ratio"
window = ["0d", "14d"]
numerator = { source = "events", kind = "sum", value = "w" }
denominator = { source = "events", kind = "count" }

[metrics.cnt_cv]
role = "secondary"
kind = "count"
source = "events"
window = ["0d", "14d"]
covariate = { window = ["-28d", "0d"] }

[metrics.conv_cv]
role = "secondary"
kind = "proportion"
source = "events"
above = %d
window = ["0d", "14d"]
covariate = { window = ["-28d", "0d"] }

[metrics.aov_cv]
role = "secondary"
kind = "ratio"
window = ["0d", "14d"]
numerator = { source = "events", kind = "sum", value = "w" }
denominator = { source = "events", kind = "count" }
covariate = { window = ["-28d", "0d"] }
`, simAbove, simAbove)

// simResult is one rep's comparisons per metric.
type simResult struct {
	aa, ab map[string]cmp3
}

func TestSimulatedExperiments(t *testing.T) {
	if testing.Short() {
		t.Skip("Monte Carlo calibration: skipped with -short")
	}
	const reps = 200
	perRep := [3]int{120, 90, 90} // planned 0.4 / 0.3 / 0.3
	dir := t.TempDir()
	simFixture(t, dir, reps, perRep, 31337)
	specs := make([]string, reps)
	for k := range reps {
		specs[k] = writeText(t, dir, fmt.Sprintf("rep%03d.toml", k), spec3{
			Variants:       "control = 0.4\naa = 0.3\nab = 0.3\n",
			ExpoCols:       []string{"rep"},
			EventCols:      []string{"w"},
			ExposureFilter: fmt.Sprintf("rep = %d", k),
			EventsFile:     fmt.Sprintf("events_%03d.parquet", k),
			Metrics:        simMetrics,
		}.toml())
	}

	// Two workers, one DuckDB thread each: the runs are independent.
	began := time.Now()
	results := make([]simResult, reps)
	var wg sync.WaitGroup
	var mu sync.Mutex
	var failures []string
	next := make(chan int)
	for range 2 {
		wg.Add(1)
		go func() {
			defer wg.Done()
			for k := range next {
				code, out, errs := runCLI("run", "--format", "json", "--threads", "1", "--segments=false", specs[k])
				var rep *report3
				if code == 0 {
					rep = decodeReport3(out)
				}
				if rep == nil {
					mu.Lock()
					failures = append(failures, fmt.Sprintf("rep %d: exit %d\n%s", k, code, errs))
					mu.Unlock()
					continue
				}
				res := simResult{aa: map[string]cmp3{}, ab: map[string]cmp3{}}
				for _, m := range rep.Metrics {
					for _, c := range m.Comparisons {
						if c.Variant == "aa" {
							res.aa[m.Name] = c
						} else {
							res.ab[m.Name] = c
						}
					}
					for _, v := range m.Variants {
						if want := map[string]int64{"control": 120, "aa": 90, "ab": 90}[v.Variant]; v.N != want {
							mu.Lock()
							failures = append(failures, fmt.Sprintf("rep %d %s %s: n %d, want %d", k, m.Name, v.Variant, v.N, want))
							mu.Unlock()
						}
					}
				}
				results[k] = res
			}
		}()
	}
	for k := range reps {
		next <- k
	}
	close(next)
	wg.Wait()
	t.Logf("%d simulated experiments in %s", reps, time.Since(began).Round(time.Millisecond))
	if len(failures) > 0 {
		t.Fatalf("runs failed:\n%s", strings.Join(failures[:min(5, len(failures))], "\n"))
	}

	truth := simTrueEffects()
	fpLo, fpHi := binomRange(reps, 0.05, 0.999)   // Source: exact Binomial(200, 0.05) sums, distuv.Binomial
	covLo, covHi := binomRange(reps, 0.95, 0.999) // Source: exact Binomial(200, 0.95) sums, distuv.Binomial
	t.Logf("binomial 0.999 ranges: false positives %d..%d, coverage %d..%d of %d", fpLo, fpHi, covLo, covHi, reps)
	widths := map[string]float64{}
	for _, name := range []string{"cnt", "conv", "aov", "cnt_cv", "conv_cv", "aov_cv"} {
		kind := strings.TrimSuffix(name, "_cv")
		t.Run(name, func(t *testing.T) {
			fp, cov := 0, 0
			var w []float64
			for k, r := range results {
				aa, ok1 := r.aa[name]
				ab, ok2 := r.ab[name]
				if !ok1 || !ok2 || aa.PValue == nil || ab.CILow == nil || ab.CIHigh == nil {
					t.Fatalf("rep %d: comparison missing or undefined", k)
				}
				if *aa.PValue < 0.05 {
					fp++
				}
				if *ab.CILow <= truth[kind] && truth[kind] <= *ab.CIHigh {
					cov++
				}
				w = append(w, *ab.CIHigh-*ab.CILow)
			}
			widths[name] = stat.Mean(w, nil)
			t.Logf("%s: %d/%d A/A p < 0.05; %d/%d A/B intervals cover %.6g; mean width %.5g", name, fp, reps, cov, reps, truth[kind], widths[name])
			if fp < fpLo || fp > fpHi {
				t.Errorf("A/A false positives: got %v, want %v..%v (exact binomial 0.999 range around 0.05 × %d)", fp, fpLo, fpHi, reps)
			}
			if cov < covLo || cov > covHi {
				t.Errorf("A/B coverage of the true effect %v: got %v, want %v..%v (exact binomial 0.999 range around 0.95 × %d)", truth[kind], cov, covLo, covHi, reps)
			}
		})
	}
	for _, kind := range []string{"cnt", "conv", "aov"} {
		if !(widths[kind+"_cv"] < widths[kind]) {
			t.Errorf("%s: CUPED mean interval width got %v, want smaller than the unadjusted %v", kind, widths[kind+"_cv"], widths[kind])
		}
	}
	// CUPED's "unadjusted" block is the plain analysis of the same metric.
	for k, r := range results[:10] {
		for _, kind := range []string{"cnt", "aov"} {
			plain, cv := r.ab[kind], r.ab[kind+"_cv"]
			if cv.CUPED == nil || !near(f(cv.CUPED.Unadjusted.Difference), f(plain.Difference), 1e-9) {
				t.Errorf("rep %d %s_cv: unadjusted difference does not match %s's difference %v", k, kind, kind, f(plain.Difference))
			}
		}
	}
}

func decodeReport3(out string) *report3 {
	var r report3
	if err := jsonUnmarshal(out, &r); err != nil || r.SchemaVersion != 2 {
		return nil
	}
	return &r
}

// calFixture writes one A/A-style fixture of n units split 50/50 with the
// simulation's generating model and no effect, events carrying an amount
// w and a column big that is 0 everywhere except one event of the first
// unit, where it is 1e9 (a single extreme outlier).
func calFixture(t testing.TB, dir string, n int, seed uint64) {
	t.Helper()
	r := newRand(seed)
	var expo, ev [][]string
	for i := range n {
		u := fmt.Sprintf("u%05d", i)
		variant := "control"
		if i%2 == 1 {
			variant = "treatment"
		}
		trig := within(r, start3T, 20*day)
		expo = append(expo, []string{u, variant, tsText(trig)})
		lam := gamma(r, simShape, simScale)
		m := gamma(r, 4, simMeanAmount/4)
		for range poisson(r, lam) {
			ev = append(ev, []string{u, tsText(within(r, trig, 14*day)), fmt.Sprintf("%.6f", m*gamma(r, 2, 0.5)), "0"})
		}
		if i == 0 {
			ev = append(ev, []string{u, tsText(trig.Add(time.Hour)), "1", "1000000000"})
		}
	}
	writeBulk(t, dir, "exposures.parquet", []col3{{"unit_id", "VARCHAR"}, {"variant", "VARCHAR"}, {"exposed_at", "TIMESTAMP"}}, expo)
	writeBulk(t, dir, "events.parquet", []col3{{"unit_id", "VARCHAR"}, {"happened_at", "TIMESTAMP"}, {"w", "DOUBLE"}, {"big", "DOUBLE"}}, ev)
}

var calMetrics = fmt.Sprintf(`
[metrics.cnt]
role = "primary"
kind = "count"
source = "events"
window = ["0d", "14d"]

[metrics.conv]
role = "secondary"
kind = "proportion"
source = "events"
above = %d
window = ["0d", "14d"]

[metrics.aov]
role = "secondary"
kind = "ratio"
window = ["0d", "14d"]
numerator = { source = "events", kind = "sum", value = "w" }
denominator = { source = "events", kind = "count" }

[metrics.whale]
role = "secondary"
kind = "sum"
source = "events"
value = "big"
window = ["0d", "14d"]
`, simAbove)

// calSplitSQL recomputes the calibration's per-split aggregates with
// hand-written SQL: per-unit values over [trigger, trigger + 14d), and the
// documented re-split rule (the unit goes to control when
// hash(unit id as text, split, salt) mod 10^6 / 10^6 is below control's
// planned weight 0.5, else to treatment).
const calSplitSQL = `
WITH trig AS (
  SELECT unit_id, min(exposed_at) AS t FROM read_parquet('exposures.parquet') GROUP BY unit_id
), u AS (
  SELECT tr.unit_id,
    count(e.happened_at)::DOUBLE AS cnt,
    coalesce(sum(e.w), 0) AS amt,
    coalesce(sum(e.big), 0) AS big
  FROM trig AS tr LEFT JOIN read_parquet('events.parquet') AS e
    ON e.unit_id = tr.unit_id AND e.happened_at >= tr.t AND e.happened_at < tr.t + INTERVAL 14 DAY
  GROUP BY tr.unit_id
), s AS (
  SELECT z.split,
    CASE WHEN CAST(hash(CAST(u.unit_id AS VARCHAR), z.split, %d) %% 1000000 AS DOUBLE) / 1000000 < 0.5 THEN 0 ELSE 1 END AS arm,
    u.*
  FROM u CROSS JOIN range(%d) AS z(split)
)
SELECT split, arm, count(*)::DOUBLE AS n,
  avg(cnt) AS cnt_mean, var_samp(cnt) AS cnt_var,
  avg(CASE WHEN cnt > %d THEN 1.0 ELSE 0.0 END)::DOUBLE AS conv_mean,
  avg(amt) AS amt_mean, var_samp(amt) AS amt_var, covar_samp(amt, cnt) AS amt_cnt_cov,
  avg(big) AS big_mean, var_samp(big) AS big_var
FROM s GROUP BY split, arm ORDER BY split, arm`

func TestCalibrateCommand(t *testing.T) {
	dir := t.TempDir()
	calFixture(t, dir, 2000, 99)
	spec := writeText(t, dir, "spec.toml", spec3{EventCols: []string{"w", "big"}, Metrics: calMetrics}.toml())
	db := dirDB(t, dir)
	for _, tc := range []struct {
		name   string
		splits int
		salt   int
		alpha  float64
		flags  []string
	}{
		{"defaults", 200, 1, 0.05, nil},
		{"flags", 60, 7, 0.1, []string{"--splits", "60", "--salt", "7", "--alpha", "0.1"}},
	} {
		t.Run(tc.name, func(t *testing.T) {
			args := append([]string{"calibrate", "--format", "json"}, tc.flags...)
			code, out, errs := runCLI(append(args, spec)...)
			if code != 0 {
				t.Fatalf("assay calibrate: exit %d\n%s", code, errs)
			}
			var cal calibration3
			if err := jsonUnmarshal(out, &cal); err != nil {
				t.Fatalf("decode: %v\n%s", err, out)
			}
			if cal.Splits != tc.splits || cal.Salt != int64(tc.salt) || cal.Alpha != tc.alpha {
				t.Errorf("splits/salt/alpha: got %v/%v/%v, want %v/%v/%v", cal.Splits, cal.Salt, cal.Alpha, tc.splits, tc.salt, tc.alpha)
			}

			// Independent recomputation: per-split aggregates by hand-written SQL,
			// tests written out in Go (Source: Welch 1947 with distuv.StudentsT;
			// two-proportion pooled z; delta-method ratio z, Deng, Knoblich & Lu 2018).
			rows := queryMaps(t, db, fmt.Sprintf(calSplitSQL, tc.salt, tc.splits, simAbove))
			type agg = map[string]float64
			bySplit := map[int][2]agg{}
			for _, r := range rows {
				a := agg{}
				for k, v := range r {
					if k != "split" && k != "arm" {
						a[k] = toFloat(t, v)
					}
				}
				s, arm := int(toFloat(t, r["split"])), int(toFloat(t, r["arm"]))
				p := bySplit[s]
				p[arm] = a
				bySplit[s] = p
			}
			if len(bySplit) != tc.splits {
				t.Fatalf("hand SQL: %d splits, want %d", len(bySplit), tc.splits)
			}
			fp := map[string]int{}
			for _, p := range bySplit {
				b, tr := p[0], p[1]
				pv := map[string]float64{}
				se, df := welchRef(b["cnt_var"], b["n"], tr["cnt_var"], tr["n"])
				pv["cnt"] = tTwoSided((tr["cnt_mean"]-b["cnt_mean"])/se, df)
				se, df = welchRef(b["big_var"], b["n"], tr["big_var"], tr["n"])
				pv["whale"] = tTwoSided((tr["big_mean"]-b["big_mean"])/se, df)
				pool := (b["conv_mean"]*b["n"] + tr["conv_mean"]*tr["n"]) / (b["n"] + tr["n"])
				pv["conv"] = normTwoSided((tr["conv_mean"] - b["conv_mean"]) / math.Sqrt(pool*(1-pool)*(1/b["n"]+1/tr["n"])))
				ratioVar := func(a agg) (float64, float64) {
					R := a["amt_mean"] / a["cnt_mean"]
					return R, (a["amt_var"] - 2*R*a["amt_cnt_cov"] + R*R*a["cnt_var"]) / (a["n"] * a["cnt_mean"] * a["cnt_mean"])
				}
				rb, vb := ratioVar(b)
				rt, vt := ratioVar(tr)
				pv["aov"] = normTwoSided((rt - rb) / math.Sqrt(vb+vt))
				for k, v := range pv {
					if v < tc.alpha {
						fp[k]++
					}
				}
			}
			t.Logf("false positives by hand over %d splits: %v", tc.splits, fp)
			lo, hi := binomRange(tc.splits, tc.alpha, 0.99) // Source: exact binomial sums (distuv.Binomial.Prob)
			wantVerdict := map[string]string{"cnt": "ok", "conv": "ok", "aov": "ok", "whale": "too few false positives"}
			if len(cal.Metrics) != 4 {
				t.Fatalf("metrics: got %d, want 4", len(cal.Metrics))
			}
			for _, m := range cal.Metrics {
				t.Run(m.Name, func(t *testing.T) {
					if want := tc.splits * (2 - 1); m.Tests != want {
						t.Errorf("tests: got %v, want %v (splits × (variants − 1))", m.Tests, want)
					}
					if m.FalsePositives != fp[m.Name] {
						t.Errorf("false_positives: got %v, want %v (Source: hand-written SQL re-split and tests written out in Go)", m.FalsePositives, fp[m.Name])
					}
					if !near(f(m.Rate), float64(m.FalsePositives)/float64(m.Tests), 1e-12) {
						t.Errorf("rate: got %v, want %v", f(m.Rate), float64(m.FalsePositives)/float64(m.Tests))
					}
					if m.Lo != lo || m.Hi != hi {
						t.Errorf("expected range: got %v..%v, want %v..%v (Source: exact central 99%% binomial range)", m.Lo, m.Hi, lo, hi)
					}
					if m.Verdict != wantVerdict[m.Name] {
						t.Errorf("verdict: got %q, want %q (%d false positives, range %d..%d)", m.Verdict, wantVerdict[m.Name], m.FalsePositives, m.Lo, m.Hi)
					}
				})
			}
			// The outlier metric: whichever arm holds the 1e9 unit, the difference
			// is about 1e9/n_arm and so is its standard error, so t ≈ ±1 and
			// p ≈ 0.32 in every split (Source: worked out by hand).
			if fp["whale"] != 0 {
				t.Errorf("whale false positives by hand: got %v, want 0", fp["whale"])
			}
		})
	}
}
