package report

import (
	"bytes"
	"encoding/csv"
	"encoding/json"
	"errors"
	"fmt"
	"os"
	"path/filepath"
	"strconv"
	"strings"
	"time"
)

// SavedFormat names the file format written by Save in its JSON form; it
// lets a reader tell an assay results file from any other JSON.
const SavedFormat = "assay-results"

// SavedVersion is the version of the saved-results format. It changes only
// when a field is removed or changes meaning.
//
// Version 2: the CSV names CUPED-adjusted values apart from unadjusted ones
// (cuped, cuped_value, cuped_std_error, unadjusted_*), and carries the
// compile options and the guard's alarming flag; the JSON holds report
// schema version 2.
const SavedVersion = 2

// Saved is the JSON form of a results file: the report with when it was
// computed, by which tool version, from which spec.
type Saved struct {
	Format          string  `json:"format"`
	FormatVersion   int     `json:"format_version"`
	RanAt           string  `json:"ran_at"` // RFC 3339, UTC
	ToolVersion     string  `json:"tool_version"`
	SpecFingerprint string  `json:"spec_fingerprint"`
	ExperimentID    string  `json:"experiment_id"`
	Report          *Report `json:"report"`
}

// CSVHeader is the header row of the CSV form of a results file: one row per
// metric and variant, with the comparison against the baseline on treatment
// rows. Empty cells are values that could not be computed; the reason
// columns say why.
//
// value and std_error are the arm's unadjusted mean; cuped_value and
// cuped_std_error its CUPED-adjusted mean within the compared pair (empty
// for the baseline when several arms are compared with it, since each
// pair has its own). The comparison columns (difference … p_value) are the
// report's headline comparison, CUPED-adjusted when cuped is true; the
// unadjusted_* columns always hold the comparison without adjustment.
// p_value_adjusted is the multiple-testing adjustment, unrelated to CUPED.
var CSVHeader = []string{
	"ran_at", "tool_version", "spec_fingerprint", "compile_options", "experiment_id",
	"metric", "role", "kind", "variant", "baseline", "n", "value", "std_error", "value_reason",
	"cuped_value", "cuped_std_error",
	"method", "cuped", "difference", "difference_std_error", "ci_low", "ci_high",
	"relative", "relative_ci_low", "relative_ci_high", "p_value", "p_value_adjusted", "family",
	"unadjusted_difference", "unadjusted_ci_low", "unadjusted_ci_high", "unadjusted_p_value",
	"reason", "relative_reason", "guard_verdict", "guard_alarming",
}

// Save writes r to path as JSON or CSV, chosen by the extension (.json or
// .csv), stamped with ranAt, the tool version and the spec fingerprint.
//
// The file is written atomically: to a temporary file in the same
// directory, flushed to disk, then renamed over path. A reader (or a run
// interrupted at any point) sees either the previous file or the complete
// new one, never a partial file; on error no temporary file is left.
func Save(path string, r *Report, ranAt time.Time) error {
	if r == nil {
		return errors.New("save: no report to save")
	}
	var data []byte
	var err error
	switch ext := strings.ToLower(filepath.Ext(path)); ext {
	case ".json":
		data, err = savedJSON(r, ranAt)
	case ".csv":
		data, err = savedCSV(r, ranAt)
	default:
		return fmt.Errorf("save %s: cannot tell the format from the extension %q; use .json or .csv", path, ext)
	}
	if err != nil {
		return fmt.Errorf("save %s: %w", path, err)
	}
	if err := writeAtomic(path, data); err != nil {
		return fmt.Errorf("save %s: %w", path, err)
	}
	return nil
}

func stampUTC(t time.Time) string { return t.UTC().Format(time.RFC3339Nano) }

func savedJSON(r *Report, ranAt time.Time) ([]byte, error) {
	s := Saved{
		Format: SavedFormat, FormatVersion: SavedVersion, RanAt: stampUTC(ranAt),
		ToolVersion: r.ToolVersion, SpecFingerprint: r.Experiment.SpecFingerprint,
		ExperimentID: r.Experiment.ID, Report: r,
	}
	b, err := json.MarshalIndent(s, "", "  ")
	if err != nil {
		return nil, err
	}
	return append(b, '\n'), nil
}

func savedCSV(r *Report, ranAt time.Time) ([]byte, error) {
	var buf bytes.Buffer
	w := csv.NewWriter(&buf)
	if err := w.Write(CSVHeader); err != nil {
		return nil, err
	}
	ran := stampUTC(ranAt)
	for _, m := range r.Metrics {
		for vi, v := range m.Variants {
			row := []string{
				ran, csvText(r.ToolVersion), csvText(r.Experiment.SpecFingerprint), csvText(r.Experiment.CompileOptions), csvText(r.Experiment.ID),
				csvText(m.Name), csvText(m.Role), csvText(m.Kind), csvText(v.Variant), strconv.FormatBool(vi == 0), strconv.FormatInt(v.N, 10),
				csvNum(v.Value), csvNum(v.StdError), csvText(v.Reason),
			}
			var c *Compare
			for i := range m.Comparisons {
				if m.Comparisons[i].Variant == v.Variant {
					c = &m.Comparisons[i]
				}
			}
			cv, cse := "", ""
			switch {
			case c != nil && c.CUPED != nil && c.CUPED.NotApplied == "":
				cv, cse = csvNum(c.CUPED.VariantValue), csvNum(c.CUPED.VariantStdError)
			case c == nil && len(m.Comparisons) == 1 && m.Comparisons[0].CUPED != nil && m.Comparisons[0].CUPED.NotApplied == "":
				cv, cse = csvNum(m.Comparisons[0].CUPED.BaselineValue), csvNum(m.Comparisons[0].CUPED.BaselineStdError)
			}
			row = append(row, cv, cse)
			if c == nil {
				// The baseline row: it has no comparison of its own.
				row = append(row, make([]string, len(CSVHeader)-len(row))...)
			} else {
				verdict, alarming := "", ""
				if c.Guard != nil {
					verdict, alarming = csvText(c.Guard.Verdict), strconv.FormatBool(c.Guard.Alarming)
				}
				u := *c
				cuped := c.CUPED != nil && c.CUPED.NotApplied == ""
				if cuped {
					u = c.CUPED.Unadjusted
				}
				row = append(row, csvText(c.Method), strconv.FormatBool(cuped), csvNum(c.Difference), csvNum(c.StdError), csvNum(c.CILow), csvNum(c.CIHigh),
					csvNum(c.Relative), csvNum(c.RelativeCILow), csvNum(c.RelativeCIHigh), csvNum(c.PValue), csvNum(c.PValueAdjusted),
					csvText(c.Family), csvNum(u.Difference), csvNum(u.CILow), csvNum(u.CIHigh), csvNum(u.PValue),
					csvText(c.Reason), csvText(c.RelReason), verdict, alarming)
			}
			if err := w.Write(row); err != nil {
				return nil, err
			}
		}
	}
	w.Flush()
	return buf.Bytes(), w.Error()
}

// csvNum renders a finite number with 12 significant digits, and NaN or an
// infinity as an empty cell.
func csvNum(n Num) string {
	if !n.OK() {
		return ""
	}
	return strconv.FormatFloat(float64(n), 'g', 12, 64)
}

// csvText guards a text cell against spreadsheet formula injection: a cell
// that begins with =, +, -, @, a tab or a carriage return is prefixed with
// a single quote, as the OWASP "CSV Injection" page recommends, so that a
// variant or metric name such as =HYPERLINK(...) is shown, not evaluated.
func csvText(s string) string {
	if s != "" && strings.ContainsRune("=+-@\t\r", rune(s[0])) {
		return "'" + s
	}
	return s
}

// writeAtomic writes data to a temporary file next to path, syncs it, and
// renames it over path; the directory is synced too where the platform
// allows it, so the rename survives a crash.
func writeAtomic(path string, data []byte) (err error) {
	dir := filepath.Dir(path)
	if fi, err := os.Stat(path); err == nil && fi.IsDir() {
		return errors.New("is a directory")
	}
	f, err := os.CreateTemp(dir, "."+filepath.Base(path)+".*.tmp")
	if err != nil {
		return err
	}
	tmp := f.Name()
	defer func() {
		if err != nil {
			f.Close()
			os.Remove(tmp)
		}
	}()
	if _, err = f.Write(data); err != nil {
		return err
	}
	if err = f.Sync(); err != nil {
		return err
	}
	if err = f.Close(); err != nil {
		return err
	}
	mode := os.FileMode(0o644)
	if fi, statErr := os.Stat(path); statErr == nil {
		mode = fi.Mode().Perm()
	}
	if err = os.Chmod(tmp, mode); err != nil {
		return err
	}
	if err = os.Rename(tmp, path); err != nil {
		return err
	}
	if d, dirErr := os.Open(dir); dirErr == nil {
		d.Sync() // best effort: not every platform can sync a directory
		d.Close()
	}
	return nil
}
