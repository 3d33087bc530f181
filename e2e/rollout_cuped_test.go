package e2e

import (
	"fmt"
	"math"
	"testing"
	"time"

	"gonum.org/v1/gonum/mat"
	"gonum.org/v1/gonum/stat/distuv"
)

// TestRolloutByStepCUPED: the by-step primary comparison of a metric with
// a covariate is CUPED within each step, steps weighted by their units.
// Within a step, the CUPED difference with θ pooled within the pair is
// the treatment coefficient of y ~ 1 + treat + x (ordinary least
// squares), so the expected by-step difference is Σ_k w_k·β_k.
// Source: least squares per step with gonum/mat on the planted per-unit
// counts; post-stratification weights (Cochran 1977, §5A.9).
func TestRolloutByStepCUPED(t *testing.T) {
	dir := t.TempDir()
	r := newRand(1601)
	type unit struct {
		step, arm int
		x, y      float64
	}
	var units []unit
	var expo, ev [][]string
	gamma := distuv.Gamma{Alpha: 2, Beta: 1}
	id := 0
	for d := 0; d < 21; d++ {
		step, n, share := 0, 300, 0.05
		if d >= 7 {
			step, n, share = 1, 150, 0.5
		}
		for range n {
			u := fmt.Sprintf("u%06d", id)
			id++
			arm := 0
			if r.Float64() < share {
				arm = 1
			}
			trig := within(r, start3T.Add(time.Duration(d)*day), day)
			expo = append(expo, []string{u, []string{"control", "treatment"}[arm], tsText(trig)})
			// A unit's own rate drives both its pre-period and its outcome;
			// units of the first week order more (drift between steps).
			rate := gamma.Quantile(r.Float64()) * []float64{2, 1}[step]
			x := poisson(r, rate)
			for range x {
				ev = append(ev, []string{u, tsText(within(r, trig.Add(-28*day), 28*day))})
			}
			y := poisson(r, rate+0.4*float64(arm))
			for range y {
				ev = append(ev, []string{u, tsText(within(r, trig, 14*day))})
			}
			units = append(units, unit{step, arm, float64(x), float64(y)})
		}
	}
	writeBulk(t, dir, "exposures.parquet", []col3{{"unit_id", "VARCHAR"}, {"variant", "VARCHAR"}, {"exposed_at", "TIMESTAMP"}}, expo)
	writeBulk(t, dir, "events.parquet", []col3{{"unit_id", "VARCHAR"}, {"happened_at", "TIMESTAMP"}}, ev)
	metric := metricVisits + "covariate = { window = [\"-28d\", \"0d\"] }\n"
	spec := writeText(t, dir, "spec.toml", spec3{Metrics: metric, Extra: rolloutTOML}.toml())
	code, rep := runRollout(t, spec)
	if code != 0 {
		t.Fatalf("exit %d; alarms %q", code, rep.Alarms)
	}
	// By hand: OLS y ~ 1 + treat + x within each step.
	want, total := 0.0, float64(len(units))
	for k := range 2 {
		var rows []unit
		for _, u := range units {
			if u.step == k {
				rows = append(rows, u)
			}
		}
		X := mat.NewDense(len(rows), 3, nil)
		Y := mat.NewVecDense(len(rows), nil)
		for i, u := range rows {
			X.Set(i, 0, 1)
			X.Set(i, 1, float64(u.arm))
			X.Set(i, 2, u.x)
			Y.SetVec(i, u.y)
		}
		var beta mat.VecDense
		if err := beta.SolveVec(X, Y); err != nil {
			t.Fatal(err)
		}
		want += float64(len(rows)) / total * beta.AtVec(1)
	}
	c := rep.Metrics[0].Comparisons[0]
	if got := f(c.Difference); math.Abs(got-want) > 1e-9 {
		t.Errorf("by-step CUPED difference: got %v, want %v (Σ w_k·β_k by least squares)", got, want)
	}
	if c.Method != "by-step stratified-cuped-z" {
		t.Errorf("method: got %q, want by-step stratified-cuped-z", c.Method)
	}
	if lo, hi := f(c.CILow), f(c.CIHigh); !(lo <= 0.4 && 0.4 <= hi) {
		t.Logf("interval [%v, %v] misses the planted 0.4 (possible in 5%% of draws)", lo, hi)
	}
}
