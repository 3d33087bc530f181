package e2e

// Effect by time since the trigger through the whole path: the outcome
// window of a count metric split into buckets in the same pass, the
// per-bucket moments and the trend contrast from the main query, and the
// report's trend test. Expected values are written out here with gonum
// from the planted per-unit counts.

import (
	"bytes"
	"encoding/json"
	"fmt"
	"math"
	"strings"
	"testing"
	"time"

	"gonum.org/v1/gonum/stat"
	"gonum.org/v1/gonum/stat/distuv"
)

// elapsedUnit is one planted unit: its arm and its count in each bucket.
type elapsedUnit struct {
	step, arm int
	y         []float64
}

// elapsedFixture writes n units triggered over the first 14 days (a share
// treatShare[step] of them in the treatment; step 0 is days 0–6), each
// with Poisson(rates[arm][b]) events in bucket b of bucketDays days after
// its trigger, plus events before the trigger and after the window that
// no bucket may count.
func elapsedFixture(t testing.TB, dir string, n int, bucketDays int, rates [2][]float64, treatShare [2]float64, seed uint64) []elapsedUnit {
	t.Helper()
	r := newRand(seed)
	var expo, ev [][]string
	var units []elapsedUnit
	B := len(rates[0])
	for i := range n {
		u := fmt.Sprintf("u%06d", i)
		d := i * 14 / n
		step := 0
		if d >= 7 {
			step = 1
		}
		arm := 0
		if r.Float64() < treatShare[step] {
			arm = 1
		}
		trig := within(r, start3T.Add(time.Duration(d)*day), day)
		expo = append(expo, []string{u, []string{"control", "treatment"}[arm], tsText(trig)})
		eu := elapsedUnit{step: step, arm: arm, y: make([]float64, B)}
		for b := range B {
			k := poisson(r, rates[arm][b])
			from := trig.Add(time.Duration(b*bucketDays) * day)
			for range k {
				ev = append(ev, []string{u, tsText(within(r, from, time.Duration(bucketDays)*day))})
			}
			eu.y[b] = float64(k)
		}
		// Outside every bucket: a second before the trigger and at the
		// window's end.
		ev = append(ev, []string{u, tsText(trig.Add(-time.Second))}, []string{u, tsText(trig.Add(time.Duration(B*bucketDays) * day))})
		units = append(units, eu)
	}
	writeBulk(t, dir, "exposures.parquet", []col3{{"unit_id", "VARCHAR"}, {"variant", "VARCHAR"}, {"exposed_at", "TIMESTAMP"}}, expo)
	writeBulk(t, dir, "events.parquet", []col3{{"unit_id", "VARCHAR"}, {"happened_at", "TIMESTAMP"}}, ev)
	return units
}

// elapsedReport is the part of the JSON report this test reads.
type elapsedReport struct {
	Cautions []string `json:"cautions"`
	Timing   struct {
		Elapsed []struct {
			Metric  string `json:"metric"`
			Variant string `json:"variant"`
			Buckets []struct {
				From       string `json:"from"`
				To         string `json:"to"`
				N          int64  `json:"n"`
				NVariant   int64  `json:"n_variant"`
				Baseline   num    `json:"baseline_value"`
				Value      num    `json:"value"`
				Difference num    `json:"difference"`
			} `json:"buckets"`
			Slope         num     `json:"slope"`
			SlopeStdError num     `json:"slope_std_error"`
			PValue        num     `json:"p_value"`
			Alpha         float64 `json:"alpha"`
			Trend         string  `json:"trend"`
			Method        string  `json:"method"`
		} `json:"by_time_since_trigger"`
	} `json:"timing"`
}

// elapsedByHand is the trend test written out from the per-unit counts:
// each unit's contrast L = Σ w_b·y_b with w_b = 2b − (B − 1), Welch's t on
// L between the arms (gonum stat.MeanVariance and Student's t with the
// Welch–Satterthwaite df), and the slope Σ w_b·d_b / Σ w_b·b.
func elapsedByHand(units []elapsedUnit) (means [2][]float64, slope, se, p float64) {
	B := len(units[0].y)
	var ls [2][]float64
	ys := [2][][]float64{make([][]float64, B), make([][]float64, B)}
	scale := 0.0
	for b := range B {
		scale += float64((2*b - (B - 1)) * b)
	}
	for _, u := range units {
		l := 0.0
		for b, y := range u.y {
			l += float64(2*b-(B-1)) * y
			ys[u.arm][b] = append(ys[u.arm][b], y)
		}
		ls[u.arm] = append(ls[u.arm], l)
	}
	for a := range 2 {
		for b := range B {
			means[a] = append(means[a], stat.Mean(ys[a][b], nil))
		}
	}
	mb, vb := stat.MeanVariance(ls[0], nil)
	mt, vt := stat.MeanVariance(ls[1], nil)
	x, y := vb/float64(len(ls[0])), vt/float64(len(ls[1]))
	df := (x + y) * (x + y) / (x*x/float64(len(ls[0])-1) + y*y/float64(len(ls[1])-1))
	tstat := (mt - mb) / math.Sqrt(x+y)
	p = 2 * distuv.StudentsT{Mu: 0, Sigma: 1, Nu: df}.Survival(math.Abs(tstat))
	return means, (mt - mb) / scale, math.Sqrt(x+y) / scale, p
}

func runElapsed(t *testing.T, spec string) *elapsedReport {
	t.Helper()
	code, out, errs := runCLI("run", "--format", "json", spec)
	if code != 0 {
		t.Fatalf("exit %d\n%s", code, errs)
	}
	var r elapsedReport
	if err := json.NewDecoder(bytes.NewReader([]byte(out))).Decode(&r); err != nil {
		t.Fatal(err)
	}
	if len(r.Timing.Elapsed) != 1 {
		t.Fatalf("by_time_since_trigger: got %d entries, want 1", len(r.Timing.Elapsed))
	}
	return &r
}

const metricVisitsBuckets = `
[metrics.visits]
role = "primary"
kind = "count"
source = "events"
window = ["0d", "%dd"]
buckets = "%dd"
`

func TestElapsedTrend(t *testing.T) {
	cases := []struct {
		name       string
		bucketDays int
		rates      [2][]float64
		seed       uint64
		want       string // the trend the report must flag, "" for none
	}{
		// Planted novelty: +0.8 events in the first week, none in the second.
		{"fading", 7, [2][]float64{{2, 2}, {2.8, 2}}, 71, "fading"},
		// Planted learning over seven two-day buckets.
		{"growing", 2, [2][]float64{{1, 1, 1, 1, 1, 1, 1}, {1, 1.1, 1.2, 1.3, 1.4, 1.5, 1.6}}, 73, "growing"},
		// A constant effect: whether this one draw flags is decided by the
		// hand computation (at most alpha of draws do: see the calibration
		// test in package stats).
		{"constant", 7, [2][]float64{{2, 2}, {2.4, 2.4}}, 79, "by hand"},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			dir := t.TempDir()
			B := len(c.rates[0])
			units := elapsedFixture(t, dir, 4000, c.bucketDays, c.rates, [2]float64{0.5, 0.5}, c.seed)
			spec := writeText(t, dir, "spec.toml", spec3{Metrics: fmt.Sprintf(metricVisitsBuckets, B*c.bucketDays, c.bucketDays)}.toml())
			rep := runElapsed(t, spec)
			e := rep.Timing.Elapsed[0]
			means, slope, se, p := elapsedByHand(units)
			var checks []check3
			for b := range B {
				checks = append(checks,
					check3{fmt.Sprintf("bucket %d baseline", b+1), f(e.Buckets[b].Baseline), means[0][b], 1e-9, "gonum stat.Mean of the planted counts"},
					check3{fmt.Sprintf("bucket %d variant", b+1), f(e.Buckets[b].Value), means[1][b], 1e-9, "gonum stat.Mean of the planted counts"})
				if want := fmt.Sprintf("%dd", (b+1)*c.bucketDays); e.Buckets[b].To != want {
					t.Errorf("bucket %d ends at %s, want %s", b+1, e.Buckets[b].To, want)
				}
			}
			checks = append(checks,
				check3{"slope", f(e.Slope), slope, 1e-9, "Σ w_b·d_b / Σ w_b·b from per-unit contrasts"},
				check3{"slope SE", f(e.SlopeStdError), se, 1e-9, "Welch SE of the per-unit contrasts / Σ w_b·b"},
				check3{"p", f(e.PValue), p, 1e-9, "gonum StudentsT survival, Welch–Satterthwaite df"})
			runChecks(t, checks)
			want := c.want
			if want == "by hand" {
				want = ""
				if p < 0.05 {
					want = "fading"
					if slope > 0 {
						want = "growing"
					}
				}
			}
			if e.Trend != want {
				t.Errorf("trend: got %q, want %q (p = %v)", e.Trend, want, p)
			}
			flagged := false
			for _, s := range rep.Cautions {
				flagged = flagged || strings.Contains(s, "with time since the trigger")
			}
			if flagged != (want != "") {
				t.Errorf("caution about the trend: %v, want %v; cautions %q", flagged, want != "", rep.Cautions)
			}
		})
	}
}

// TestElapsedTrendByStep: with a rollout schedule the trend contrast is
// stratified by step like the primary comparison.
// Source: post-stratified difference (Cochran 1977, §5A.9) of the per-unit
// contrasts, written out with gonum.
func TestElapsedTrendByStep(t *testing.T) {
	dir := t.TempDir()
	units := elapsedFixture(t, dir, 4000, 7, [2][]float64{{2, 2}, {2.8, 2}}, [2]float64{0.05, 0.5}, 83)
	spec := writeText(t, dir, "spec.toml", spec3{Metrics: fmt.Sprintf(metricVisitsBuckets, 14, 7), Extra: rolloutTOML}.toml())
	rep := runElapsed(t, spec)
	e := rep.Timing.Elapsed[0]
	var ls [2][2][]float64
	for _, u := range units {
		ls[u.step][u.arm] = append(ls[u.step][u.arm], u.y[1]-u.y[0])
	}
	var d, v float64
	n := float64(len(units))
	for k := range 2 {
		mb, vb := stat.MeanVariance(ls[k][0], nil)
		mt, vt := stat.MeanVariance(ls[k][1], nil)
		nb, nt := float64(len(ls[k][0])), float64(len(ls[k][1]))
		w := (nb + nt) / n
		d += w * (mt - mb)
		v += w * w * (vt/nt + vb/nb)
	}
	// Each bucket's difference is post-stratified the same way.
	for b := range 2 {
		var ys [2][2][]float64
		for _, u := range units {
			ys[u.step][u.arm] = append(ys[u.step][u.arm], u.y[b])
		}
		want := 0.0
		for k := range 2 {
			w := float64(len(ys[k][0])+len(ys[k][1])) / n
			want += w * (stat.Mean(ys[k][1], nil) - stat.Mean(ys[k][0], nil))
		}
		runChecks(t, []check3{{fmt.Sprintf("bucket %d by-step difference", b+1), f(e.Buckets[b].Difference), want, 1e-9, "Σ_k w_k·(ȳ_t − ȳ_b) by hand"}})
	}
	// Two buckets: w = (−1, 1), Σ w_b·b = 1, so the slope is D itself.
	runChecks(t, []check3{
		{"by-step slope", f(e.Slope), d, 1e-9, "Σ_k w_k·(L̄_t − L̄_b) by hand"},
		{"by-step slope SE", f(e.SlopeStdError), math.Sqrt(v), 1e-9, "√Σ w_k²(s²_t/n_t + s²_b/n_b) by hand"},
	})
	if !strings.Contains(e.Method, "stratified by rollout step") || e.Trend != "fading" {
		t.Errorf("method %q trend %q: want the by-step contrast and a fading trend", e.Method, e.Trend)
	}
}
