package e2e

import (
	"bufio"
	"bytes"
	"context"
	"errors"
	"os/exec"
	"path/filepath"
	"strings"
	"syscall"
	"testing"
	"time"

	"github.com/assay-dev/assay/engine/store"
)

var (
	checkoutSpec = filepath.Join("..", "testdata", "demo", "checkout.toml")
	reorderSpec  = filepath.Join("..", "testdata", "demo", "reorder.toml")
)

// storedRuns reads a results store: its runs and the total number of
// statistics rows (to find rows that belong to no run).
func storedRuns(t *testing.T, path string) ([]store.Run, int64) {
	t.Helper()
	s, err := store.OpenReadOnly(context.Background(), path, 10*time.Second)
	if err != nil {
		t.Fatal(err)
	}
	defer s.Close()
	runs, err := s.Runs(context.Background())
	if err != nil {
		t.Fatal(err)
	}
	_, stats, _, err := s.Counts(context.Background())
	if err != nil {
		t.Fatal(err)
	}
	return runs, stats
}

// completeCounts runs each spec alone into a fresh store and returns the
// number of statistics a complete run of each experiment stores.
func completeCounts(t *testing.T, bin string, specs ...string) map[string]int64 {
	t.Helper()
	dir := t.TempDir()
	st := filepath.Join(dir, "ref.duckdb")
	cmd := exec.Command(bin, append([]string{"fleet", "--out", dir, "--store", st, "--threads", "1"}, specs...)...)
	if out, err := cmd.CombinedOutput(); err != nil {
		t.Fatalf("reference fleet: %v\n%s", err, out)
	}
	runs, _ := storedRuns(t, st)
	out := map[string]int64{}
	for _, r := range runs {
		out[r.Experiment] = r.Stats
	}
	return out
}

// TestFleetInterrupted interrupts a fleet (SIGINT) while its second
// experiment runs: the fleet exits 130, the store holds the first
// experiment complete and nothing partial — every statistics row belongs
// to a stored run, and each stored run has as many rows as an
// uninterrupted run of the same experiment.
func TestFleetInterrupted(t *testing.T) {
	if testing.Short() {
		t.Skip("runs the demo in a subprocess")
	}
	bin := assayBinary(t)
	want := completeCounts(t, bin, checkoutSpec, reorderSpec)
	dir := t.TempDir()
	st := filepath.Join(dir, "results.duckdb")
	cmd := exec.Command(bin, "fleet", "--out", dir, "--store", st, "--threads", "1", checkoutSpec, reorderSpec)
	stdout, _ := cmd.StdoutPipe()
	var errb bytes.Buffer
	cmd.Stderr = &errb
	if err := cmd.Start(); err != nil {
		t.Fatal(err)
	}
	sc := bufio.NewScanner(stdout)
	var lines []string
	if sc.Scan() {
		lines = append(lines, sc.Text())
		cmd.Process.Signal(syscall.SIGINT)
	}
	for sc.Scan() {
		lines = append(lines, sc.Text())
	}
	err := cmd.Wait()
	var ee *exec.ExitError
	if !errors.As(err, &ee) || ee.ExitCode() != 130 {
		t.Fatalf("fleet: got %v, want exit 130\n%s\n%s", err, strings.Join(lines, "\n"), errb.String())
	}
	if len(lines) == 0 || !strings.HasPrefix(lines[0], "ok      checkout-shelf-2026-03") {
		t.Fatalf("first line: got %q, want the first experiment ok", lines)
	}
	runs, stats := storedRuns(t, st)
	var sum int64
	for _, r := range runs {
		sum += r.Stats
		if r.Stats != want[r.Experiment] {
			t.Errorf("run %s of %s: got %d statistics, want %d (a complete run)", r.RunID, r.Experiment, r.Stats, want[r.Experiment])
		}
	}
	if len(runs) < 1 || runs[0].Experiment != "checkout-shelf-2026-03" {
		t.Errorf("store: got runs %+v, want the first experiment", runs)
	}
	if sum != stats {
		t.Errorf("store: %d statistics rows, %d of them in stored runs: partial rows left behind", stats, sum)
	}
	t.Logf("fleet output:\n%s", strings.Join(lines, "\n"))
	last := lines[len(lines)-1]
	if !strings.HasPrefix(last, "fleet: 2 experiment(s):") || !strings.Contains(last, "interrupted") && len(runs) == 1 {
		t.Errorf("summary: got %q, want the interrupted experiment named", last)
	}
}

// TestFleetConcurrent runs two fleets against one results store at the same
// time: both succeed (the second waits for the store), and every run of
// both is stored complete.
func TestFleetConcurrent(t *testing.T) {
	if testing.Short() {
		t.Skip("runs the demo in two subprocesses")
	}
	bin := assayBinary(t)
	want := completeCounts(t, bin, checkoutSpec, reorderSpec)
	dir := t.TempDir()
	st := filepath.Join(dir, "results.duckdb")
	var cmds []*exec.Cmd
	var outs []*bytes.Buffer
	for _, name := range []string{"a", "b"} {
		cmd := exec.Command(bin, "fleet", "--out", filepath.Join(dir, name), "--store", st, "--threads", "1", "--segments=false", checkoutSpec, reorderSpec)
		var b bytes.Buffer
		cmd.Stdout, cmd.Stderr = &b, &b
		if err := cmd.Start(); err != nil {
			t.Fatal(err)
		}
		cmds, outs = append(cmds, cmd), append(outs, &b)
	}
	for i, cmd := range cmds {
		if err := cmd.Wait(); err != nil {
			t.Errorf("fleet %d: %v\n%s", i, err, outs[i].String())
		}
	}
	runs, stats := storedRuns(t, st)
	if len(runs) != 4 {
		t.Fatalf("store: got %d runs, want 4 (two experiments, two fleets)", len(runs))
	}
	fleets := map[string]int{}
	var sum int64
	for _, r := range runs {
		fleets[r.FleetID]++
		sum += r.Stats
	}
	if len(fleets) != 2 || sum != stats {
		t.Errorf("store: got fleets %v and %d of %d statistics rows in runs, want 2 fleets of 2 runs and no stray rows", fleets, sum, stats)
	}
	// Without breakdowns a complete run has fewer rows than the reference
	// (which has them); compare the two fleets with each other instead.
	per := map[string][]int64{}
	for _, r := range runs {
		per[r.Experiment] = append(per[r.Experiment], r.Stats)
	}
	for exp, counts := range per {
		if len(counts) != 2 || counts[0] != counts[1] || counts[0] == 0 || counts[0] > want[exp] {
			t.Errorf("%s: got statistics counts %v, want two equal complete runs", exp, counts)
		}
	}
}
