package bench

import (
	"context"
	"database/sql"
	"fmt"
	"math"
	"runtime"
	"sort"
	"strconv"
	"syscall"
	"time"
)

// Approach names one way of computing the aggregates.
type Approach string

// The approaches a run measures.
const (
	Assay     Approach = "a"         // assay's compiled main query (10 metrics)
	Bound     Approach = "b"         // one scan of each outcome table, grouped by unit
	Reference Approach = "c"         // the hand-written query
	Notebook  Approach = "d"         // per-unit rows pulled into Go, statistics with gonum
	AssayOne  Approach = "a1"        // assay's compiled main query for one metric
	AssayTwo  Approach = "a2"        // assay's compiled main query for one metric per source
	AssayCov  Approach = "a2c"       // as a2, with the primary metric's covariate: Spec10's scans and windows
	Compile50 Approach = "compile50" // load, compile and print a 50-metric spec
)

// Approaches lists the approaches in report order.
var Approaches = []Approach{Assay, Bound, Reference, Notebook, AssayOne, AssayTwo, AssayCov, Compile50}

// Describe is a short label of an approach for reports.
func (a Approach) Describe() string {
	switch a {
	case Assay:
		return "(a) assay main query, 10 metrics"
	case Bound:
		return "(b) physical bound: scan + group by unit"
	case Reference:
		return "(c) hand-written query"
	case Notebook:
		return "(d) notebook: per-unit rows + gonum"
	case AssayOne:
		return "(a1) assay main query, 1 metric"
	case AssayTwo:
		return "(a2) assay main query, 1 metric per source"
	case AssayCov:
		return "(a2c) assay main query, a2 + CUPED"
	case Compile50:
		return "compile 50-metric spec"
	}
	return string(a)
}

// Measurement is what one approach measured in its own process.
type Measurement struct {
	Approach Approach
	// Times are the timed runs, after one untimed warm-up run.
	Times  []time.Duration
	Median time.Duration
	// Cold is the first (untimed) run: for compile50, the first compile
	// in a fresh process, with the expression parser's start-up.
	Cold time.Duration
	// Full is assay run's whole path after compilation (main and health
	// queries through engine.Query, then report.Analyze), for approach a.
	Full time.Duration
	// MaxRSS is the process's peak resident set (getrusage ru_maxrss), in
	// bytes: DuckDB's memory as well as Go's.
	MaxRSS int64
	// HeapInUse is Go's heap in use after the analysis and a GC, with the
	// analysis result (the report, or the notebook's per-unit frame) still
	// alive.
	HeapInUse uint64
	// Aggregates are the results, with numbers as strconv 'g' text so that
	// NaN survives JSON.
	Aggregates map[string]map[string]string
	Err        string
}

// MeasureOptions say how to measure.
type MeasureOptions struct {
	// Runs is the number of timed runs after one untimed warm-up.
	Runs     int
	Progress func(stage string)
}

// runner returns a function computing approach a once, with what the
// approach keeps alive after its analysis.
func runner(ctx context.Context, db *sql.DB, a Approach) (func() (Aggregates, any, error), error) {
	switch a {
	case Assay, AssayOne, AssayTwo, AssayCov:
		src := map[Approach][]byte{Assay: Spec10, AssayOne: Spec1(), AssayTwo: Spec2(), AssayCov: Spec2Cov()}[a]
		_, q, err := Compile("spec.toml", src)
		if err != nil {
			return nil, err
		}
		return func() (Aggregates, any, error) { agg, err := RunAssay(ctx, db, q); return agg, nil, err }, nil
	case Bound:
		return func() (Aggregates, any, error) { agg, err := RunBound(ctx, db); return agg, nil, err }, nil
	case Reference:
		return func() (Aggregates, any, error) { agg, err := RunReference(ctx, db); return agg, nil, err }, nil
	case Notebook:
		return func() (Aggregates, any, error) { return RunNotebook(ctx, db) }, nil
	case Compile50:
		src := Spec50()
		return func() (Aggregates, any, error) {
			_, _, err := Compile("spec50.toml", src)
			return nil, nil, err
		}, nil
	}
	return nil, fmt.Errorf("unknown approach %q", a)
}

// Measure runs approach a on db: one untimed warm-up (reported as Cold),
// then opt.Runs timed runs. It is meant to run alone in its process, so
// that MaxRSS is the approach's own peak. For approach a it also times one
// full assay run (engine.Query and report.Analyze) and measures the Go heap
// with that report alive.
func Measure(ctx context.Context, db *sql.DB, a Approach, opt MeasureOptions) Measurement {
	ms := MeasureInterleaved(ctx, db, []Approach{a}, opt)
	m := ms[0]
	if m.Err != "" {
		return m
	}
	var keep any
	if a == Assay {
		if opt.Progress != nil {
			opt.Progress("a: full run with health query and analysis")
		}
		plan, q, err := Compile("spec.toml", Spec10)
		if err != nil {
			m.Err = err.Error()
			return m
		}
		start := time.Now()
		rep, _, err := RunAssayReport(ctx, db, plan, q)
		m.Full = time.Since(start)
		if err != nil {
			m.Err = err.Error()
			return m
		}
		keep = rep
	} else if a == Notebook {
		// The notebook keeps its per-unit frame for further analysis.
		_, keep, _ = RunNotebook(ctx, db)
	}
	m.HeapInUse = heapInUse()
	runtime.KeepAlive(keep)
	m.MaxRSS = MaxRSS()
	return m
}

// MeasureInterleaved times several approaches on db round by round (one
// untimed warm-up round, then opt.Runs timed rounds, each running every
// approach once), so that a busy machine slows them alike. The results are
// in the order of as; MaxRSS and HeapInUse are left zero, since they would
// mix the approaches.
func MeasureInterleaved(ctx context.Context, db *sql.DB, as []Approach, opt MeasureOptions) []Measurement {
	out := make([]Measurement, len(as))
	runs := make([]func() (Aggregates, any, error), len(as))
	for i, a := range as {
		out[i].Approach = a
		r, err := runner(ctx, db, a)
		if err != nil {
			out[i].Err = err.Error()
			continue
		}
		runs[i] = r
	}
	for round := 0; round <= opt.Runs; round++ {
		for i, a := range as {
			if runs[i] == nil {
				continue
			}
			if opt.Progress != nil {
				opt.Progress(fmt.Sprintf("%s: round %d of %d", a, round, opt.Runs))
			}
			start := time.Now()
			agg, _, err := runs[i]()
			el := time.Since(start)
			if err != nil {
				out[i].Err = err.Error()
				runs[i] = nil
				continue
			}
			if round == 0 {
				out[i].Cold = el
			} else {
				out[i].Times = append(out[i].Times, el)
			}
			out[i].Aggregates = encode(agg)
		}
	}
	for i := range out {
		out[i].Median = Median(out[i].Times)
	}
	return out
}

func heapInUse() uint64 {
	runtime.GC()
	var ms runtime.MemStats
	runtime.ReadMemStats(&ms)
	return ms.HeapInuse
}

// MaxRSS is this process's peak resident set size in bytes, from
// getrusage(RUSAGE_SELF) (Linux reports ru_maxrss in KiB).
func MaxRSS() int64 {
	var ru syscall.Rusage
	if err := syscall.Getrusage(syscall.RUSAGE_SELF, &ru); err != nil {
		return -1
	}
	return ru.Maxrss * 1024
}

// Median is the median of ts (0 when empty).
func Median(ts []time.Duration) time.Duration {
	if len(ts) == 0 {
		return 0
	}
	s := append([]time.Duration(nil), ts...)
	sort.Slice(s, func(i, j int) bool { return s[i] < s[j] })
	if len(s)%2 == 1 {
		return s[len(s)/2]
	}
	return (s[len(s)/2-1] + s[len(s)/2]) / 2
}

func encode(a Aggregates) map[string]map[string]string {
	if a == nil {
		return nil
	}
	out := map[string]map[string]string{}
	for v, row := range a {
		r := map[string]string{}
		for c, x := range row {
			r[c] = strconv.FormatFloat(x, 'g', -1, 64)
		}
		out[v] = r
	}
	return out
}

// Decode turns a Measurement's aggregates back into numbers.
func (m Measurement) Decode() Aggregates {
	if m.Aggregates == nil {
		return nil
	}
	out := Aggregates{}
	for v, row := range m.Aggregates {
		r := map[string]float64{}
		for c, s := range row {
			x, err := strconv.ParseFloat(s, 64)
			if err != nil {
				x = math.NaN()
			}
			r[c] = x
		}
		out[v] = r
	}
	return out
}
