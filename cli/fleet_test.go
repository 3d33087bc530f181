package cli

import (
	"bytes"
	"context"
	"encoding/json"
	"os"
	"path/filepath"
	"reflect"
	"strings"
	"testing"

	"github.com/assay-dev/assay/engine/store"
)

// runJSON runs `assay run --format json` on spec and returns the decoded
// report.
func runJSON(t *testing.T, args ...string) map[string]any {
	t.Helper()
	var out, errb bytes.Buffer
	if code := Run(append([]string{"run", "--format", "json", "--threads", "1"}, args...), nil, &out, &errb); code != ExitOK {
		t.Fatalf("run %v: exit %d\n%s", args, code, errb.String())
	}
	var m map[string]any
	if err := json.Unmarshal(out.Bytes(), &m); err != nil {
		t.Fatal(err)
	}
	return m
}

func readJSON(t *testing.T, path string) map[string]any {
	t.Helper()
	b, err := os.ReadFile(path)
	if err != nil {
		t.Fatal(err)
	}
	var m map[string]any
	if err := json.Unmarshal(b, &m); err != nil {
		t.Fatal(err)
	}
	return m
}

// TestFleetDemo runs the demo directory (reorder.toml and checkout.toml,
// which share one library) as a fleet: one status line each, a report
// file each whose metrics equal what `assay run` reports for the spec
// alone, and both runs in the results store.
func TestFleetDemo(t *testing.T) {
	if testing.Short() {
		t.Skip("runs DuckDB")
	}
	dir := t.TempDir()
	st := filepath.Join(dir, "results.duckdb")
	var out, errb bytes.Buffer
	code := Run([]string{"fleet", "--out", filepath.Join(dir, "reports"), "--store", st, "--segments=false", "--threads", "1", "../testdata/demo"}, nil, &out, &errb)
	if code != ExitOK {
		t.Fatalf("fleet: exit %d\n%s\n%s", code, out.String(), errb.String())
	}
	lines := strings.Split(strings.TrimSpace(out.String()), "\n")
	want := []string{"ok      checkout-shelf-2026-03  ../testdata/demo/checkout.toml", "ok      reorder-shelf-2026-03  ../testdata/demo/reorder.toml", "fleet: 2 experiment(s): 2 ok; results in " + st}
	if len(lines) != len(want) {
		t.Fatalf("stdout: got %d lines, want %d:\n%s", len(lines), len(want), out.String())
	}
	for i, w := range want {
		if !strings.HasPrefix(lines[i], w) {
			t.Errorf("line %d: got %q, want it to start with %q", i+1, lines[i], w)
		}
	}
	for _, c := range []struct{ id, spec string }{{"checkout-shelf-2026-03", checkoutSpec}, {"reorder-shelf-2026-03", demo}} {
		got := readJSON(t, filepath.Join(dir, "reports", c.id+".json"))
		alone := runJSON(t, "--segments=false", c.spec)
		if !reflect.DeepEqual(got["metrics"], alone["metrics"]) || !reflect.DeepEqual(got["health"], alone["health"]) {
			t.Errorf("%s: the fleet's report differs from assay run's", c.id)
		}
	}
	s, err := store.OpenReadOnly(context.Background(), st, 0)
	if err != nil {
		t.Fatal(err)
	}
	defer s.Close()
	runs, err := s.Runs(context.Background())
	if err != nil {
		t.Fatal(err)
	}
	if len(runs) != 2 || runs[0].Experiment != "checkout-shelf-2026-03" || runs[1].Experiment != "reorder-shelf-2026-03" || runs[0].FleetID != runs[1].FleetID {
		t.Errorf("store: got %+v, want the two experiments of one fleet", runs)
	}
}

// TestFleetFailedExperiment checks that a spec that cannot be read fails on
// its own line, the others still run, and the fleet exits with the input
// error code and names it.
func TestFleetFailedExperiment(t *testing.T) {
	if testing.Short() {
		t.Skip("runs DuckDB")
	}
	dir := t.TempDir()
	var out, errb bytes.Buffer
	code := Run([]string{"fleet", "--out", dir, "--segments=false", "../testdata/bad/unknown_key_typo.toml", checkoutSpec}, nil, &out, &errb)
	if code != ExitInput {
		t.Errorf("exit: got %d, want %d", code, ExitInput)
	}
	for _, w := range []string{"failed  -  ../testdata/bad/unknown_key_typo.toml  invalid spec", "ok      checkout-shelf-2026-03", "1 ok, 1 failed (../testdata/bad/unknown_key_typo.toml)"} {
		if !strings.Contains(out.String(), w) {
			t.Errorf("stdout: want %q in\n%s", w, out.String())
		}
	}
	if !strings.Contains(errb.String(), "unknown key `windwo`") {
		t.Errorf("stderr: want the spec's diagnostic, got\n%s", errb.String())
	}
}

// TestFleetExitCode checks the precedence of the fleet's exit status.
func TestFleetExitCode(t *testing.T) {
	r := func(status string, code int) fleetResult {
		return fleetResult{path: "p", id: status, status: status, code: code}
	}
	cases := []struct {
		name     string
		rs       []fleetResult
		failHarm bool
		want     int
	}{
		{"all ok", []fleetResult{r(fleetOK, 0), r(fleetOK, 0)}, true, ExitOK},
		{"harm without the flag", []fleetResult{r(fleetOK, 0), r(fleetHarm, 0)}, false, ExitOK},
		{"harm with the flag", []fleetResult{r(fleetHarm, 0)}, true, ExitHarm},
		{"srm before harm", []fleetResult{r(fleetHarm, 0), r(fleetSRM, 0)}, true, ExitSRM},
		{"failed input before srm", []fleetResult{r(fleetSRM, 0), r(fleetFailed, ExitInput)}, true, ExitInput},
		{"engine failure before input failure", []fleetResult{r(fleetFailed, ExitInput), r(fleetFailed, ExitEngine)}, true, ExitEngine},
	}
	for _, tc := range cases {
		t.Run(tc.name, func(t *testing.T) {
			var out bytes.Buffer
			if got := fleetSummary(context.Background(), tc.rs, len(tc.rs), tc.failHarm, "", "", &out); got != tc.want {
				t.Errorf("got %d, want %d (%s)", got, tc.want, out.String())
			}
		})
	}
}

// TestHistoryThreeRuns runs the second demo experiment as a fleet three
// times with different --as-of times into one store, then checks that the
// history lists the three runs in as-of order with the estimate and
// interval each run's report file gave.
func TestHistoryThreeRuns(t *testing.T) {
	if testing.Short() {
		t.Skip("runs DuckDB")
	}
	dir := t.TempDir()
	st := filepath.Join(dir, "results.duckdb")
	// Stored out of order on purpose. The experiment starts 2026-03-09 with
	// 28-day windows, so units mature from 2026-04-06.
	asOfs := []string{"2026-04-13T00:00:00Z", "2026-04-09T00:00:00Z", "2026-04-11T00:00:00Z"}
	type point struct{ asOf, diff, lo, hi any }
	byAsOf := map[string]point{}
	for _, a := range asOfs {
		var out, errb bytes.Buffer
		if code := Run([]string{"fleet", "--out", dir, "--store", st, "--segments=false", "--threads", "1", "--as-of", a, checkoutSpec}, nil, &out, &errb); code != ExitOK {
			t.Fatalf("fleet --as-of %s: exit %d\n%s", a, code, errb.String())
		}
		rep := readJSON(t, filepath.Join(dir, "checkout-shelf-2026-03.json"))
		for _, m := range rep["metrics"].([]any) {
			mm := m.(map[string]any)
			if mm["name"] == "basket_28d" {
				c := mm["comparisons"].([]any)[0].(map[string]any)
				byAsOf[a] = point{a, c["difference"], c["ci_low"], c["ci_high"]}
			}
		}
	}
	var out, errb bytes.Buffer
	if code := Run([]string{"history", "--store", st, "--format", "json", "checkout-shelf-2026-03", "basket_28d"}, nil, &out, &errb); code != ExitOK {
		t.Fatalf("history: exit %d\n%s", code, errb.String())
	}
	var doc struct {
		Points []struct {
			AsOf       string   `json:"as_of"`
			Variant    string   `json:"variant"`
			Difference *float64 `json:"difference"`
			CILow      *float64 `json:"ci_low"`
			CIHigh     *float64 `json:"ci_high"`
		} `json:"points"`
	}
	if err := json.Unmarshal(out.Bytes(), &doc); err != nil {
		t.Fatal(err)
	}
	order := []string{"2026-04-09T00:00:00Z", "2026-04-11T00:00:00Z", "2026-04-13T00:00:00Z"}
	if len(doc.Points) != 3 {
		t.Fatalf("history: got %d points, want 3:\n%s", len(doc.Points), out.String())
	}
	for i, p := range doc.Points {
		w := byAsOf[order[i]]
		if p.AsOf != order[i] || p.Variant != "shelf" || p.Difference == nil || *p.Difference != w.diff || *p.CILow != w.lo || *p.CIHigh != w.hi {
			t.Errorf("point %d: got as-of %s %v [%v, %v], want %s %v [%v, %v] from that run's report", i, p.AsOf, deref(p.Difference), deref(p.CILow), deref(p.CIHigh), order[i], w.diff, w.lo, w.hi)
		}
	}
	out.Reset()
	if code := Run([]string{"history", "--store", st, "checkout-shelf-2026-03", "basket_28d"}, nil, &out, &errb); code != ExitOK {
		t.Fatalf("history (text): exit %d\n%s", code, errb.String())
	}
	text := out.String()
	var page bytes.Buffer
	if code := Run([]string{"history", "--store", st, "--format", "html", "checkout-shelf-2026-03", "basket_28d"}, nil, &page, &errb); code != ExitOK {
		t.Fatalf("history (html): exit %d\n%s", code, errb.String())
	}
	for _, w := range append([]string{"<svg", "shelf vs control"}, order...) {
		if !strings.Contains(page.String(), w) {
			t.Errorf("history html: want %q in the page", w)
		}
	}
	if !strings.Contains(text, "3 point(s)") || strings.Index(text, "2026-04-09T00:00:00Z") > strings.Index(text, "2026-04-13T00:00:00Z") {
		t.Errorf("history text: want three points in as-of order, got\n%s", text)
	}
}

func deref(x *float64) any {
	if x == nil {
		return nil
	}
	return *x
}
