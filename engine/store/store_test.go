package store

import (
	"bufio"
	"context"
	"errors"
	"fmt"
	"math"
	"os"
	"os/exec"
	"path/filepath"
	"strconv"
	"strings"
	"testing"
	"time"

	"github.com/assay-dev/assay/report"
)

// TestMain doubles as a helper process for the locking tests:
// ASSAY_STORE_HOLD=path holds the store until stdin closes;
// ASSAY_STORE_APPEND=path appends ASSAY_STORE_N entries, one open and
// close each, as a fleet does.
func TestMain(m *testing.M) {
	if p := os.Getenv("ASSAY_STORE_HOLD"); p != "" {
		s, err := Open(context.Background(), p, 0)
		if err != nil {
			fmt.Println("error:", err)
			os.Exit(1)
		}
		fmt.Println("held")
		bufio.NewReader(os.Stdin).ReadString('\n')
		s.Close()
		os.Exit(0)
	}
	if p := os.Getenv("ASSAY_STORE_APPEND"); p != "" {
		n, _ := strconv.Atoi(os.Getenv("ASSAY_STORE_N"))
		tag := os.Getenv("ASSAY_STORE_TAG")
		for i := range n {
			s, err := Open(context.Background(), p, 30*time.Second)
			if err != nil {
				fmt.Println("error:", err)
				os.Exit(1)
			}
			if err := s.Append(context.Background(), entry(fmt.Sprintf("%s-%d", tag, i), 0.1*float64(i))); err != nil {
				fmt.Println("error:", err)
				os.Exit(1)
			}
			s.Close()
		}
		os.Exit(0)
	}
	os.Exit(m.Run())
}

// sample is a small hand-written report: one metric, two variants, one
// comparison, one segment value, one alarm.
func sample(id string, diff float64) *report.Report {
	v := []report.VariantVal{{Variant: "control", N: 100, Value: 1.0, StdError: 0.1}, {Variant: "shelf", N: 98, Value: report.Num(1.0 + diff), StdError: 0.12}}
	c := []report.Compare{{Variant: "shelf", Baseline: "control", Method: "welch-t", Difference: report.Num(diff), StdError: 0.156,
		CILow: report.Num(diff - 0.3), CIHigh: report.Num(diff + 0.3), Relative: report.Num(diff), RelativeCILow: report.Num(math.NaN()),
		RelativeCIHigh: report.Num(math.NaN()), Statistic: 1.6, DF: 190, PValue: 0.11, PValueAdjusted: 0.11, Family: "primary"}}
	return &report.Report{SchemaVersion: report.SchemaVersion, ToolVersion: "test",
		Experiment: report.Experiment{ID: "exp-" + id[:1], AsOf: "2026-04-13T00:00:00Z", SpecFingerprint: "s", Fingerprint: "f" + id},
		Alarms:     []string{"an alarm"},
		Metrics:    []report.MetricInfo{{Name: "orders", Variants: v, Comparisons: c}},
		Segments: []report.Segment{{Name: "platform", Metrics: []report.SegmentMetrics{{Metric: "orders",
			Rows: []report.SegmentRow{{Value: "ios", Variants: v, Comparisons: c}}}}}},
	}
}

func entry(id string, diff float64) Entry {
	return Entry{RunID: id, FleetID: "fleet", SpecPath: "x.toml", RunAt: time.Date(2026, 4, 14, 0, 0, 0, 0, time.UTC), Report: sample(id, diff), Status: "ok"}
}

// statsPerRun counts the statistics of sample by hand: each variant value
// has n, immature, value, std_error (4 numbers); each comparison has
// difference, std_error, ci_low, ci_high, relative, relative_ci_low,
// relative_ci_high, statistic, df, p_value, p_value_adjusted (11). Twice
// (overall and the ios segment): 2 × (2×4 + 11) = 38.
const statsPerRun = 38

// TestAppendRoundTrip checks that an appended run comes back whole: its
// row counts and, through History, the comparison's numbers.
func TestAppendRoundTrip(t *testing.T) {
	ctx := context.Background()
	path := filepath.Join(t.TempDir(), "results.duckdb")
	s, err := Open(ctx, path, 0)
	if err != nil {
		t.Fatal(err)
	}
	defer s.Close()
	for i, d := range []float64{0.25, -0.5} {
		if err := s.Append(ctx, entry(fmt.Sprintf("a%d", i), d)); err != nil {
			t.Fatal(err)
		}
	}
	runs, stats, alarms, err := s.Counts(ctx)
	if err != nil {
		t.Fatal(err)
	}
	if runs != 2 || stats != 2*statsPerRun || alarms != 2 {
		t.Errorf("counts: got %d runs, %d stats, %d alarms; want 2, %d, 2", runs, stats, alarms, 2*statsPerRun)
	}
	h, err := s.History(ctx, "exp-a", "orders")
	if err != nil {
		t.Fatal(err)
	}
	if len(h) != 2 {
		t.Fatalf("history: got %d points, want 2", len(h))
	}
	for i, want := range []float64{0.25, -0.5} {
		p := h[i]
		// The store keeps the report's numbers as the JSON report writes them
		// (12 significant digits).
		near := func(x *float64, w float64) bool { return x != nil && math.Abs(*x-w) <= 1e-11*math.Max(1, math.Abs(w)) }
		if !near(p.Difference, want) || !near(p.CILow, want-0.3) || !near(p.CIHigh, want+0.3) || !near(p.N, 98) {
			t.Errorf("point %d: got %+v, want difference %v, interval ±0.3, n 98", i, p, want)
		}
	}
}

// TestAppendAllOrNothing checks that a run whose transaction fails — an
// error before COMMIT, or the context cancelled (an interrupt) — leaves no
// row in any table, and that the store is usable afterwards.
func TestAppendAllOrNothing(t *testing.T) {
	cases := []struct {
		name string
		hook func(cancel context.CancelFunc) error
	}{
		{"error before commit", func(context.CancelFunc) error { return errors.New("disk full (simulated)") }},
		{"interrupted before commit", func(cancel context.CancelFunc) error { cancel(); return nil }},
	}
	for _, tc := range cases {
		t.Run(tc.name, func(t *testing.T) {
			path := filepath.Join(t.TempDir(), "results.duckdb")
			s, err := Open(context.Background(), path, 0)
			if err != nil {
				t.Fatal(err)
			}
			defer s.Close()
			ctx, cancel := context.WithCancel(context.Background())
			defer cancel()
			s.beforeCommit = func() error { return tc.hook(cancel) }
			if err := s.Append(ctx, entry("b1", 0.1)); err == nil {
				t.Fatal("append: got no error, want the failure")
			}
			s.beforeCommit = nil
			runs, stats, alarms, err := s.Counts(context.Background())
			if err != nil {
				t.Fatal(err)
			}
			if runs+stats+alarms != 0 {
				t.Errorf("after a failed append: got %d runs, %d stats, %d alarms, want none", runs, stats, alarms)
			}
			if err := s.Append(context.Background(), entry("b2", 0.1)); err != nil {
				t.Fatalf("append after the failure: %v", err)
			}
		})
	}
}

// helper starts this test binary as a helper process.
func helper(t *testing.T, env ...string) *exec.Cmd {
	t.Helper()
	cmd := exec.Command(os.Args[0], "-test.run=^$")
	cmd.Env = append(os.Environ(), env...)
	return cmd
}

// TestLockedStore checks the two behaviours while another process holds
// the store: with no wait, Open fails with ErrBusy naming the file; with a
// wait, it succeeds once the other process lets go.
func TestLockedStore(t *testing.T) {
	path := filepath.Join(t.TempDir(), "results.duckdb")
	cmd := helper(t, "ASSAY_STORE_HOLD="+path)
	stdin, _ := cmd.StdinPipe()
	stdout, _ := cmd.StdoutPipe()
	if err := cmd.Start(); err != nil {
		t.Fatal(err)
	}
	line, _ := bufio.NewReader(stdout).ReadString('\n')
	if strings.TrimSpace(line) != "held" {
		stdin.Close()
		cmd.Wait()
		t.Fatalf("helper: got %q, want held", line)
	}
	_, err := Open(context.Background(), path, 300*time.Millisecond)
	if !errors.Is(err, ErrBusy) || !strings.Contains(err.Error(), path) {
		t.Errorf("open while held: got %v, want ErrBusy naming %s", err, path)
	}
	go func() {
		time.Sleep(500 * time.Millisecond)
		stdin.Close()
	}()
	s, err := Open(context.Background(), path, 30*time.Second)
	if err != nil {
		t.Fatalf("open with a wait: %v", err)
	}
	s.Close()
	if err := cmd.Wait(); err != nil {
		t.Errorf("helper: %v", err)
	}
}

// TestConcurrentAppenders runs two processes that append to one store at
// the same time; every entry of both must be there, complete.
func TestConcurrentAppenders(t *testing.T) {
	if testing.Short() {
		t.Skip("starts two processes")
	}
	path := filepath.Join(t.TempDir(), "results.duckdb")
	const n = 5
	var cmds []*exec.Cmd
	for _, tag := range []string{"p", "q"} {
		cmd := helper(t, "ASSAY_STORE_APPEND="+path, "ASSAY_STORE_N="+strconv.Itoa(n), "ASSAY_STORE_TAG="+tag)
		if err := cmd.Start(); err != nil {
			t.Fatal(err)
		}
		cmds = append(cmds, cmd)
	}
	for _, cmd := range cmds {
		if err := cmd.Wait(); err != nil {
			t.Errorf("appender: %v", err)
		}
	}
	s, err := OpenReadOnly(context.Background(), path, 10*time.Second)
	if err != nil {
		t.Fatal(err)
	}
	defer s.Close()
	runs, err := s.Runs(context.Background())
	if err != nil {
		t.Fatal(err)
	}
	if len(runs) != 2*n {
		t.Fatalf("got %d runs, want %d", len(runs), 2*n)
	}
	for _, r := range runs {
		if r.Stats != statsPerRun {
			t.Errorf("run %s: got %d stats, want %d", r.RunID, r.Stats, statsPerRun)
		}
	}
}
