package report_test

import (
	"bytes"
	"encoding/csv"
	"encoding/json"
	"math"
	"os"
	"path/filepath"
	"reflect"
	"sort"
	"strings"
	"sync"
	"testing"
	"time"

	"github.com/assay-dev/assay/report"
)

// savedReport is a small report written by hand: one metric, a baseline
// and two treatments, one of them with values that could not be computed,
// and a variant name that a spreadsheet would read as a formula.
func savedReport() *report.Report {
	nan := report.Num(math.NaN())
	return &report.Report{
		SchemaVersion: report.SchemaVersion,
		ToolVersion:   "9.9.9",
		Experiment:    report.Experiment{ID: "shelf-test", SpecFingerprint: "0123456789abcdef"},
		Alarms:        []string{},
		Metrics: []report.MetricInfo{{
			Name: "orders_14d", Role: "primary", Kind: "count",
			Variants: []report.VariantVal{
				{Variant: "control", N: 100, Value: 1.25, StdError: 0.1},
				{Variant: "shelf", N: 98, Value: 1.5, StdError: 0.12},
				{Variant: "=HYPERLINK(\"x\")", N: 1, Value: 2, StdError: nan, Reason: "fewer than 2 units"},
			},
			Comparisons: []report.Compare{
				{Variant: "shelf", Baseline: "control", Method: "welch-t", Difference: 0.25, StdError: 0.15620499351813308,
					CILow: -0.05, CIHigh: 0.55, Relative: 0.2, RelativeCILow: -0.04, RelativeCIHigh: 0.44,
					Statistic: 1.6, DF: 190, PValue: 0.11, PValueAdjusted: 0.11, Family: "primary"},
				{Variant: "=HYPERLINK(\"x\")", Baseline: "control", Method: "welch-t", Difference: 0.75,
					StdError: nan, CILow: nan, CIHigh: nan, Relative: 0.6, RelativeCILow: nan, RelativeCIHigh: nan,
					Statistic: nan, DF: nan, PValue: nan, PValueAdjusted: nan, Family: "primary",
					Reason: "fewer than 2 units in a variant", RelReason: "no standard error"},
			},
		}},
		Cautions: []string{},
	}
}

// ranAt is a run time in a non-UTC zone, to check it is saved in UTC.
var ranAt = time.Date(2026, 4, 13, 9, 30, 0, 0, time.FixedZone("UTC+2", 2*3600))

func dirNames(t *testing.T, dir string) []string {
	t.Helper()
	es, err := os.ReadDir(dir)
	if err != nil {
		t.Fatal(err)
	}
	var out []string
	for _, e := range es {
		out = append(out, e.Name())
	}
	sort.Strings(out)
	return out
}

func TestSaveJSON(t *testing.T) {
	dir := t.TempDir()
	path := filepath.Join(dir, "results.json")
	if err := report.Save(path, savedReport(), ranAt); err != nil {
		t.Fatal(err)
	}
	b, err := os.ReadFile(path)
	if err != nil {
		t.Fatal(err)
	}
	if !json.Valid(b) {
		t.Fatalf("got invalid JSON:\n%s", b)
	}
	if bytes.Contains(b, []byte("NaN")) || bytes.Contains(b, []byte("Inf")) {
		t.Errorf("got NaN or Inf in JSON:\n%s", b)
	}
	var got struct {
		Format          string `json:"format"`
		FormatVersion   int    `json:"format_version"`
		RanAt           string `json:"ran_at"`
		ToolVersion     string `json:"tool_version"`
		SpecFingerprint string `json:"spec_fingerprint"`
		ExperimentID    string `json:"experiment_id"`
		Report          struct {
			Metrics []struct {
				Name        string `json:"name"`
				Comparisons []struct {
					StdError *float64 `json:"std_error"`
					Reason   string   `json:"reason"`
				} `json:"comparisons"`
			} `json:"metrics"`
		} `json:"report"`
	}
	if err := json.Unmarshal(b, &got); err != nil {
		t.Fatal(err)
	}
	// Expected values are the hand-written fixture above; the run time is
	// 09:30 at UTC+2, which is 07:30 UTC.
	checks := []struct {
		name      string
		got, want any
	}{
		{"format", got.Format, "assay-results"},
		{"format_version", got.FormatVersion, 2},
		{"ran_at", got.RanAt, "2026-04-13T07:30:00Z"},
		{"tool_version", got.ToolVersion, "9.9.9"},
		{"spec_fingerprint", got.SpecFingerprint, "0123456789abcdef"},
		{"experiment_id", got.ExperimentID, "shelf-test"},
		{"metric", got.Report.Metrics[0].Name, "orders_14d"},
		{"NaN std_error is null", got.Report.Metrics[0].Comparisons[1].StdError == nil, true},
		{"reason kept", got.Report.Metrics[0].Comparisons[1].Reason, "fewer than 2 units in a variant"},
	}
	for _, c := range checks {
		t.Run(c.name, func(t *testing.T) {
			if !reflect.DeepEqual(c.got, c.want) {
				t.Errorf("got %v, want %v", c.got, c.want)
			}
		})
	}
	if got, want := dirNames(t, dir), []string{"results.json"}; !reflect.DeepEqual(got, want) {
		t.Errorf("got files %v, want %v (no temporary files left)", got, want)
	}
}

func TestSaveCSV(t *testing.T) {
	dir := t.TempDir()
	path := filepath.Join(dir, "results.CSV") // the extension is case-insensitive
	if err := report.Save(path, savedReport(), ranAt); err != nil {
		t.Fatal(err)
	}
	f, err := os.Open(path)
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	rows, err := csv.NewReader(f).ReadAll()
	if err != nil {
		t.Fatalf("got unreadable CSV: %v", err)
	}
	// The header, written out here rather than taken from report.CSVHeader.
	wantHeader := []string{"ran_at", "tool_version", "spec_fingerprint", "compile_options", "experiment_id",
		"metric", "role", "kind", "variant", "baseline", "n", "value", "std_error", "value_reason",
		"cuped_value", "cuped_std_error",
		"method", "cuped", "difference", "difference_std_error", "ci_low", "ci_high",
		"relative", "relative_ci_low", "relative_ci_high", "p_value", "p_value_adjusted", "family",
		"unadjusted_difference", "unadjusted_ci_low", "unadjusted_ci_high", "unadjusted_p_value",
		"reason", "relative_reason", "guard_verdict", "guard_alarming"}
	if !reflect.DeepEqual(rows[0], wantHeader) {
		t.Fatalf("got header %v, want %v", rows[0], wantHeader)
	}
	if got, want := len(rows), 4; got != want {
		t.Fatalf("got %d rows, want %d (header and one per variant)", got, want)
	}
	col := map[string]int{}
	for i, h := range rows[0] {
		col[h] = i
	}
	cell := func(row int, name string) string { return rows[row][col[name]] }
	tests := []struct {
		name      string
		row       int
		column    string
		want      string
		reference string
	}{
		{"run time in UTC", 1, "ran_at", "2026-04-13T07:30:00Z", "09:30 at UTC+2"},
		{"fingerprint", 2, "spec_fingerprint", "0123456789abcdef", "fixture"},
		{"baseline flagged", 1, "baseline", "true", "first variant"},
		{"baseline has no comparison", 1, "difference", "", "fixture"},
		{"treatment flagged", 2, "baseline", "false", "fixture"},
		{"difference", 2, "difference", "0.25", "1.5 - 1.25"},
		{"12 significant digits", 2, "difference_std_error", "0.156204993518", "sqrt(0.1^2 + 0.12^2) rounded"},
		{"formula name guarded", 3, "variant", `'=HYPERLINK("x")`, "OWASP CSV injection advice"},
		{"NaN is empty", 3, "std_error", "", "fixture NaN"},
		{"NaN p-value is empty", 3, "p_value", "", "fixture NaN"},
		{"reason kept", 3, "reason", "fewer than 2 units in a variant", "fixture"},
		{"value reason kept", 3, "value_reason", "fewer than 2 units", "fixture"},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			if got := cell(tc.row, tc.column); got != tc.want {
				t.Errorf("row %d %s: got %q, want %q (%s)", tc.row, tc.column, got, tc.want, tc.reference)
			}
		})
	}
}

func TestSaveErrors(t *testing.T) {
	dir := t.TempDir()
	if err := os.Mkdir(filepath.Join(dir, "taken.json"), 0o755); err != nil {
		t.Fatal(err)
	}
	tests := []struct {
		name, path, want string
	}{
		{"unknown extension", filepath.Join(dir, "results.xlsx"), "use .json or .csv"},
		{"no extension", filepath.Join(dir, "results"), "use .json or .csv"},
		{"missing directory", filepath.Join(dir, "nope", "results.json"), "no such file"},
		{"path is a directory", filepath.Join(dir, "taken.json"), "is a directory"},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			err := report.Save(tc.path, savedReport(), ranAt)
			if err == nil || !strings.Contains(err.Error(), tc.want) {
				t.Errorf("got error %v, want one containing %q", err, tc.want)
			}
		})
	}
	if err := report.Save(filepath.Join(dir, "x.json"), nil, ranAt); err == nil {
		t.Errorf("got no error for a nil report, want one")
	}
	if got, want := dirNames(t, dir), []string{"taken.json"}; !reflect.DeepEqual(got, want) {
		t.Errorf("got files %v after failed saves, want %v", got, want)
	}
}

// TestSaveReadOnlyDir checks that a save into a directory that cannot be
// written fails without leaving anything behind.
func TestSaveReadOnlyDir(t *testing.T) {
	if os.Geteuid() == 0 {
		t.Skip("root can write to read-only directories")
	}
	dir := t.TempDir()
	if err := os.Chmod(dir, 0o555); err != nil {
		t.Fatal(err)
	}
	defer os.Chmod(dir, 0o755)
	if err := report.Save(filepath.Join(dir, "r.json"), savedReport(), ranAt); err == nil {
		t.Errorf("got no error writing into a read-only directory, want one")
	}
	if got := dirNames(t, dir); len(got) != 0 {
		t.Errorf("got files %v, want none", got)
	}
}

// TestSaveReplacesAtomically saves two different reports over the same
// path again and again while readers read it: every read must see one of
// the two complete files, never a mixture or a truncated file. The mode of
// an existing file is kept.
func TestSaveReplacesAtomically(t *testing.T) {
	dir := t.TempDir()
	path := filepath.Join(dir, "r.json")
	small := savedReport()
	big := savedReport()
	for i := 0; i < 2000; i++ {
		big.Cautions = append(big.Cautions, strings.Repeat("caution ", 8))
	}
	if err := report.Save(path, small, ranAt); err != nil {
		t.Fatal(err)
	}
	if err := os.Chmod(path, 0o600); err != nil {
		t.Fatal(err)
	}
	stop := make(chan struct{})
	var wg sync.WaitGroup
	var mu sync.Mutex
	var bad []string
	for r := 0; r < 2; r++ {
		wg.Add(1)
		go func() {
			defer wg.Done()
			for {
				select {
				case <-stop:
					return
				default:
				}
				b, err := os.ReadFile(path)
				if err != nil || !json.Valid(b) {
					mu.Lock()
					bad = append(bad, strings.TrimSpace(string(b[:min(len(b), 40)])))
					mu.Unlock()
				}
			}
		}()
	}
	for i := 0; i < 50; i++ {
		rep := small
		if i%2 == 0 {
			rep = big
		}
		if err := report.Save(path, rep, ranAt); err != nil {
			t.Fatal(err)
		}
	}
	close(stop)
	wg.Wait()
	if len(bad) > 0 {
		t.Errorf("got %d partial reads, want none; first: %q", len(bad), bad[0])
	}
	fi, err := os.Stat(path)
	if err != nil {
		t.Fatal(err)
	}
	if got, want := fi.Mode().Perm(), os.FileMode(0o600); got != want {
		t.Errorf("got mode %v, want %v (kept from the replaced file)", got, want)
	}
	if got, want := dirNames(t, dir), []string{"r.json"}; !reflect.DeepEqual(got, want) {
		t.Errorf("got files %v, want %v", got, want)
	}
}

// TestSaveDeterministic checks that the same report and run time give the
// same bytes.
func TestSaveDeterministic(t *testing.T) {
	for _, ext := range []string{".json", ".csv"} {
		t.Run(ext, func(t *testing.T) {
			dir := t.TempDir()
			a, b := filepath.Join(dir, "a"+ext), filepath.Join(dir, "b"+ext)
			if err := report.Save(a, savedReport(), ranAt); err != nil {
				t.Fatal(err)
			}
			if err := report.Save(b, savedReport(), ranAt); err != nil {
				t.Fatal(err)
			}
			ba, _ := os.ReadFile(a)
			bb, _ := os.ReadFile(b)
			if !bytes.Equal(ba, bb) {
				t.Errorf("got different bytes for the same report")
			}
		})
	}
}
