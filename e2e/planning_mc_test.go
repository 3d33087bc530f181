package e2e

// Monte Carlo through the real path: `assay size` plans one week from an
// invented pre-period; 200 replicate experiments of exactly the planned
// size are then generated with a true effect equal to each metric's
// planned minimum detectable effect, and analysed in one `assay run`
// broken down by replicate. The share of replicates significant at the
// planned level must lie within the exact 99% binomial range around the
// planned power (gonum's binomial, computed here), for a mean, a mean
// with CUPED, a proportion and a ratio metric.

import (
	"bytes"
	"encoding/json"
	"fmt"
	"math"
	"math/rand/v2"
	"strconv"
	"testing"
	"time"

	"gonum.org/v1/gonum/stat/distuv"

	asreport "github.com/assay-dev/assay/report"
)

const mcSpec = `[experiment]
id = "plan-mc"
hypothesis = "Invented replicate experiments planted at the planned minimum detectable effect of each metric."
start = 2026-06-01T00:00:00Z
end = 2026-06-08T00:00:00Z
confidence = 0.95

[variants]
control = 0.5
treatment = 0.5

[sources.exposures]
file = "exposures.parquet"
unit = "unit_id"
time = "at"
columns = ["unit_id", "variant", "at"]

[sources.visits]
file = "visits.parquet"
unit = "unit_id"
time = "at"
columns = ["unit_id", "at"]

[sources.events]
file = "events.parquet"
unit = "unit_id"
time = "at"
columns = ["unit_id", "at", "kind", "v"]

[sources.reps]
file = "reps.parquet"
unit = "unit_id"
static = true
columns = ["unit_id", "rep"]

[exposure]
source = "exposures"
variant = "variant"

[metrics.cuped]
role = "primary"
kind = "sum"
source = "events"
value = "v"
filter = "kind = 'c'"
window = ["0d", "7d"]
covariate = { window = ["-7d", "0d"] }

[metrics.plain]
role = "secondary"
kind = "sum"
source = "events"
value = "v"
filter = "kind = 'a'"
window = ["0d", "7d"]

[metrics.share]
role = "secondary"
kind = "proportion"
source = "events"
filter = "kind = 'p'"
window = ["0d", "7d"]

[metrics.per_event]
role = "secondary"
kind = "ratio"
window = ["0d", "7d"]
numerator = { source = "events", kind = "sum", value = "v", filter = "kind = 'r'" }
denominator = { source = "events", kind = "count", filter = "kind = 'r'" }

[segments.rep]
source = "reps"
column = "rep"
top = 1000

[planning]
stand_in = { source = "visits" }
pre_start = 2026-05-04T00:00:00Z
pre_end = 2026-05-18T00:00:00Z
max_weeks = 1
`

// mcUnit writes one unit's events around its trigger: the shifts are
// the planted effects (zero in control and in the pre-period).
func mcUnit(rng *rand.Rand, id string, trig time.Time, shift map[string]float64, events *[][]string) {
	add := func(off time.Duration, kind string, v float64) {
		*events = append(*events, []string{id, tsText(trig.Add(off)), kind, strconv.FormatFloat(math.Round(v*1e4)/1e4, 'f', 4, 64)})
	}
	in := func() time.Duration { return time.Hour + time.Duration(rng.Int64N(int64(5*day))) }
	// Mean without covariate: one value ~ N(10, 4²).
	add(in(), "a", 10+4*rng.NormFloat64()+shift["plain"])
	// Mean with CUPED: x ~ N(10, 4²) three days before, y correlated 0.8 with it.
	x := 10 + 4*rng.NormFloat64()
	add(-3*day, "c", x)
	add(in(), "c", 10+0.8*(x-10)+4*0.6*rng.NormFloat64()+shift["cuped"])
	// Proportion: an event with probability 0.3 (+ shift).
	if rng.Float64() < 0.3+shift["share"] {
		add(in(), "p", 1)
	}
	// Ratio: 1 to 3 events of value ~ N(5, 2²) (+ shift per event).
	for k := 1 + rng.IntN(3); k > 0; k-- {
		add(in(), "r", 5+2*rng.NormFloat64()+shift["per_event"])
	}
}

func TestPlannedPowerMonteCarlo(t *testing.T) {
	if testing.Short() {
		t.Skip("Monte Carlo: 200 replicate experiments")
	}
	dir := t.TempDir()
	rng := rand.New(rand.NewPCG(2026, 12))
	pre := time.Date(2026, 5, 4, 0, 0, 0, 0, time.UTC)
	var visits, events, reps, exposures [][]string
	for i := 0; i < 14*150; i++ { // pre-period: 150 new units a day
		id := fmt.Sprintf("p%06d", i)
		trig := pre.Add(time.Duration(i/150)*day + time.Duration(1+rng.IntN(22))*time.Hour)
		visits = append(visits, []string{id, tsText(trig)})
		mcUnit(rng, id, trig, nil, &events)
	}
	writeBulk(t, dir, "visits.parquet", []col3{{"unit_id", "VARCHAR"}, {"at", "TIMESTAMP"}}, visits)
	// The events file of the plan holds the pre-period only; the run's
	// events file is written after the plan is known.
	writeBulk(t, dir, "events.parquet", []col3{{"unit_id", "VARCHAR"}, {"at", "TIMESTAMP"}, {"kind", "VARCHAR"}, {"v", "DOUBLE"}}, events)
	spec := writeText(t, dir, "mc.toml", mcSpec)
	code, out, errs := runCLI("size", "--format", "json", spec)
	if code != 0 {
		t.Fatalf("size: exit %d\n%s", code, errs)
	}
	var z asreport.Sizing
	if err := json.NewDecoder(bytes.NewReader([]byte(out))).Decode(&z); err != nil {
		t.Fatal(err)
	}
	perArm := int(math.Round(z.Weeks[0].UnitsPerArm[0]))
	shift := map[string]float64{}
	level := map[string]float64{}
	for i, b := range z.Baselines {
		m := z.Weeks[0].MDE[i]
		shift[b.Metric] = float64(m.Absolute)
		if b.Metric == "cuped" {
			shift[b.Metric] = float64(m.CUPEDAbsolute)
		}
		level[b.Metric] = b.Alpha
	}
	t.Logf("planned %d units per arm; effects %v; levels %v", perArm, shift, level)

	const R = 200
	start := time.Date(2026, 6, 1, 0, 0, 0, 0, time.UTC)
	for r := 0; r < R; r++ {
		for a, variant := range []string{"control", "treatment"} {
			for j := 0; j < perArm; j++ {
				id := fmt.Sprintf("r%03d_%d_%05d", r, a, j)
				trig := start.Add(time.Duration(rng.Int64N(int64(6 * day))))
				exposures = append(exposures, []string{id, variant, tsText(trig)})
				reps = append(reps, []string{id, fmt.Sprintf("rep%03d", r)})
				var s map[string]float64
				if a == 1 {
					s = shift
				}
				mcUnit(rng, id, trig, s, &events)
			}
		}
	}
	writeBulk(t, dir, "exposures.parquet", []col3{{"unit_id", "VARCHAR"}, {"variant", "VARCHAR"}, {"at", "TIMESTAMP"}}, exposures)
	writeBulk(t, dir, "reps.parquet", []col3{{"unit_id", "VARCHAR"}, {"rep", "VARCHAR"}}, reps)
	writeBulk(t, dir, "events.parquet", []col3{{"unit_id", "VARCHAR"}, {"at", "TIMESTAMP"}, {"kind", "VARCHAR"}, {"v", "DOUBLE"}}, events)

	code, out, errs = runCLI("run", "--format", "json", "--by", "rep", "--as-of", "2026-06-15T00:00:00Z", spec)
	if code != 0 {
		t.Fatalf("run: exit %d\n%s", code, errs)
	}
	var rep struct {
		Segments []struct {
			Metrics []struct {
				Metric string `json:"metric"`
				Rows   []struct {
					Value       string `json:"value"`
					Comparisons []struct {
						PValue float64 `json:"p_value"`
					} `json:"comparisons"`
				} `json:"rows"`
			} `json:"metrics"`
		} `json:"segments"`
	}
	if err := json.Unmarshal([]byte(out), &rep); err != nil {
		t.Fatal(err)
	}
	if len(rep.Segments) != 1 {
		t.Fatalf("%d breakdowns, want 1", len(rep.Segments))
	}
	lo, hi := binomialRange99(R, z.Power)
	for _, m := range rep.Segments[0].Metrics {
		hits, tests := 0, 0
		for _, row := range m.Rows {
			if len(row.Comparisons) != 1 {
				continue
			}
			tests++
			if row.Comparisons[0].PValue < level[m.Metric] {
				hits++
			}
		}
		t.Logf("%s: %d of %d significant at %g (planned power %g: 99%% range %d to %d)", m.Metric, hits, tests, level[m.Metric], z.Power, lo, hi)
		if tests != R || hits < lo || hits > hi {
			t.Errorf("%s: %d of %d replicates significant, want %d to %d", m.Metric, hits, tests, lo, hi)
		}
	}
}

// binomialRange99 is the central 99% range of a Binomial(n, p) count from
// gonum's distribution: the largest lo with P(X < lo) ≤ 0.005 and the
// smallest hi with P(X > hi) ≤ 0.005.
func binomialRange99(n int, p float64) (lo, hi int) {
	b := distuv.Binomial{N: float64(n), P: p}
	for lo = 0; lo < n && b.CDF(float64(lo)) <= 0.005; lo++ {
	}
	for hi = n; hi > 0 && 1-b.CDF(float64(hi-1)) <= 0.005; hi-- {
	}
	return lo, hi
}
