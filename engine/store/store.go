// Package store keeps the results of every run in an append-only DuckDB
// file, so that a fleet of experiments analysed night after night leaves a
// history: which run, when, as of which time, from which spec and tool
// version, every statistic of every metric and comparison, the health
// counts and the alarms.
//
// Why one DuckDB file rather than a Parquet dataset: appends are
// transactions (BEGIN … COMMIT), so an interrupted run leaves no partial
// rows without any file-renaming protocol of our own; DuckDB takes a file
// lock, so two writers cannot interleave their rows, and the second one
// sees a clear error that we turn into waiting; the history view is one SQL
// query; and the file can still be exported to Parquet with one COPY
// statement when another tool wants it. A Parquet dataset would need a
// file per run plus a manifest (or a table format) to get the same
// atomicity, and a separate lock to serialise writers.
//
// Atomicity: one transaction per experiment. A fleet writes each
// experiment's rows (its run, statistics and alarms) in one transaction as
// soon as that experiment is analysed, so an interrupted fleet keeps the
// experiments it finished, complete, and has no row at all of the one it
// was working on. Every row carries its run id; runs also carry the fleet
// id, so one night's results are found together.
//
// Concurrency: the store is opened only for the length of one append and
// closed again. While another process holds it, Open retries until the
// wait given runs out, then fails with ErrBusy, which names the file; rows
// are never lost because nothing is written until the lock is held.
package store

import (
	"context"
	"database/sql"
	"database/sql/driver"
	"encoding/json"
	"errors"
	"fmt"
	"math"
	"os"
	"sort"
	"strings"
	"time"

	"github.com/duckdb/duckdb-go/v2"

	"github.com/assay-dev/assay/report"
)

// ErrBusy is returned (wrapped) when another process holds the store for
// longer than the wait allowed.
var ErrBusy = errors.New("the results store is in use by another process")

// SchemaVersion is the version of the store's tables, kept in assay_meta.
const SchemaVersion = 1

// schema creates the store's tables. Every table is append-only: rows are
// inserted, never updated or deleted.
var schema = []string{
	`CREATE TABLE IF NOT EXISTS assay_meta (key VARCHAR PRIMARY KEY, value VARCHAR)`,
	`INSERT OR IGNORE INTO assay_meta VALUES ('schema_version', '1')`,
	`CREATE TABLE IF NOT EXISTS runs (
		run_id VARCHAR PRIMARY KEY,
		fleet_id VARCHAR NOT NULL,
		experiment VARCHAR NOT NULL,
		spec_path VARCHAR NOT NULL,
		run_at TIMESTAMP NOT NULL,
		as_of TIMESTAMP,
		fingerprint VARCHAR NOT NULL,
		spec_fingerprint VARCHAR NOT NULL,
		compile_options VARCHAR NOT NULL,
		tool_version VARCHAR NOT NULL,
		status VARCHAR NOT NULL,
		srm_alarm BOOLEAN NOT NULL,
		guard_harm BOOLEAN NOT NULL,
		health VARCHAR NOT NULL,
		report VARCHAR NOT NULL)`,
	`CREATE TABLE IF NOT EXISTS stats (
		run_id VARCHAR NOT NULL,
		metric VARCHAR NOT NULL,
		segment VARCHAR NOT NULL,
		segment_value VARCHAR NOT NULL,
		variant VARCHAR NOT NULL,
		baseline VARCHAR NOT NULL,
		statistic VARCHAR NOT NULL,
		value DOUBLE)`,
	`CREATE TABLE IF NOT EXISTS alarms (
		run_id VARCHAR NOT NULL,
		seq INTEGER NOT NULL,
		alarm VARCHAR NOT NULL)`,
}

// Store is an open results store.
type Store struct {
	db   *sql.DB
	path string
	// beforeCommit, when set (tests), runs inside each append's transaction
	// after the rows are written and before COMMIT; an error rolls back.
	beforeCommit func() error
}

// Open opens the store at path read-write, creating the file and its
// tables when missing. While another process holds the file it retries
// every 100 ms until wait has passed, then returns an error wrapping
// ErrBusy.
func Open(ctx context.Context, path string, wait time.Duration) (*Store, error) {
	return open(ctx, path, wait, false)
}

// OpenReadOnly opens an existing store for reading.
func OpenReadOnly(ctx context.Context, path string, wait time.Duration) (*Store, error) {
	return open(ctx, path, wait, true)
}

func open(ctx context.Context, path string, wait time.Duration, readOnly bool) (*Store, error) {
	if path == "" || strings.ContainsRune(path, 0) {
		return nil, fmt.Errorf("results store path %q is not usable", path)
	}
	deadline := time.Now().Add(wait)
	for {
		s, err := try(path, readOnly)
		if err == nil {
			return s, nil
		}
		if !errors.Is(err, ErrBusy) || time.Now().After(deadline) {
			return nil, err
		}
		select {
		case <-ctx.Done():
			return nil, fmt.Errorf("%w (stopped waiting: %v)", err, ctx.Err())
		case <-time.After(100 * time.Millisecond):
		}
	}
}

func try(path string, readOnly bool) (*Store, error) {
	attach := "ATTACH IF NOT EXISTS " + sqlString(path) + " AS assay_store"
	if readOnly {
		attach += " (READ_ONLY)"
	}
	conn, err := duckdb.NewConnector("", func(ex driver.ExecerContext) error {
		for _, s := range []string{"SET enable_progress_bar = false", "SET autoinstall_known_extensions = false", attach, "USE assay_store"} {
			if _, err := ex.ExecContext(context.Background(), s, nil); err != nil {
				return err
			}
		}
		return nil
	})
	if err != nil {
		return nil, classify(path, err)
	}
	db := sql.OpenDB(conn)
	db.SetMaxOpenConns(1)
	if err := db.Ping(); err != nil {
		db.Close()
		return nil, classify(path, err)
	}
	s := &Store{db: db, path: path}
	if !readOnly {
		for _, q := range schema {
			if _, err := db.Exec(q); err != nil {
				db.Close()
				return nil, fmt.Errorf("results store %s: %v", path, err)
			}
		}
	}
	return s, nil
}

// classify turns DuckDB's lock conflict into ErrBusy.
func classify(path string, err error) error {
	msg := err.Error()
	if strings.Contains(msg, "Could not set lock") || strings.Contains(msg, "Conflicting lock") {
		return fmt.Errorf("%w: %s (%s)", ErrBusy, path, firstLine(msg))
	}
	// Another process that is creating the store has made the file but
	// not yet written its header: wait for it like for a lock. A file
	// that stays invalid fails once the wait is over.
	if strings.Contains(msg, "not a valid DuckDB database file") {
		if fi, err := os.Stat(path); err == nil && time.Since(fi.ModTime()) < 10*time.Second {
			return fmt.Errorf("%w: %s (%s)", ErrBusy, path, firstLine(msg))
		}
	}
	return fmt.Errorf("cannot open results store %s: %s", path, firstLine(msg))
}

func firstLine(s string) string {
	if i := strings.IndexByte(s, '\n'); i >= 0 {
		return s[:i]
	}
	return s
}

// Close closes the store and releases its lock.
func (s *Store) Close() error { return s.db.Close() }

// Entry is one experiment's run to append.
type Entry struct {
	RunID    string // unique; see NewID
	FleetID  string
	SpecPath string
	RunAt    time.Time
	Report   *report.Report
	// Status is the one-word outcome the fleet printed: ok, srm, harm.
	Status string
}

// NewID returns an id built from t and a sequence number, ordered by time.
func NewID(t time.Time, seq int) string {
	return fmt.Sprintf("%s-%04d", t.UTC().Format("20060102T150405.000000Z"), seq)
}

// Append writes e in one transaction: all of its rows or none.
func (s *Store) Append(ctx context.Context, e Entry) (err error) {
	rep := e.Report
	if rep == nil {
		return errors.New("results store: entry without a report")
	}
	full, err := rep.JSON()
	if err != nil {
		return err
	}
	health, err := json.Marshal(rep.Health)
	if err != nil {
		return err
	}
	stats, err := Flatten(rep)
	if err != nil {
		return err
	}
	tx, err := s.db.BeginTx(ctx, nil)
	if err != nil {
		return fmt.Errorf("results store %s: %v", s.path, err)
	}
	defer func() {
		if err != nil {
			tx.Rollback()
		}
	}()
	var asOf any
	if t, perr := time.Parse(time.RFC3339Nano, rep.Experiment.AsOf); perr == nil {
		asOf = t.UTC()
	}
	if _, err = tx.ExecContext(ctx, `INSERT INTO runs VALUES (?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?)`,
		e.RunID, e.FleetID, rep.Experiment.ID, e.SpecPath, e.RunAt.UTC(), asOf, rep.Experiment.Fingerprint,
		rep.Experiment.SpecFingerprint, rep.Experiment.CompileOptions, rep.ToolVersion, e.Status,
		rep.Health.SampleRatio.Alarm, rep.HarmShown(), string(health), string(full)); err != nil {
		return fmt.Errorf("results store %s: %v", s.path, err)
	}
	ins, err := tx.PrepareContext(ctx, `INSERT INTO stats VALUES (?, ?, ?, ?, ?, ?, ?, ?)`)
	if err != nil {
		return fmt.Errorf("results store %s: %v", s.path, err)
	}
	defer ins.Close()
	for _, st := range stats {
		var v any
		if !math.IsNaN(st.Value) && !math.IsInf(st.Value, 0) {
			v = st.Value
		}
		if _, err = ins.ExecContext(ctx, e.RunID, st.Metric, st.Segment, st.SegmentValue, st.Variant, st.Baseline, st.Statistic, v); err != nil {
			return fmt.Errorf("results store %s: %v", s.path, err)
		}
	}
	for i, a := range rep.Alarms {
		if _, err = tx.ExecContext(ctx, `INSERT INTO alarms VALUES (?, ?, ?)`, e.RunID, i, a); err != nil {
			return fmt.Errorf("results store %s: %v", s.path, err)
		}
	}
	if s.beforeCommit != nil {
		if err = s.beforeCommit(); err != nil {
			return err
		}
	}
	if err = tx.Commit(); err != nil {
		return fmt.Errorf("results store %s: %v", s.path, err)
	}
	return nil
}

// Stat is one number of a report: a statistic of a metric for a variant
// (Baseline "") or of a comparison with a baseline, overall (Segment "")
// or within a segment value.
type Stat struct {
	Metric, Segment, SegmentValue, Variant, Baseline, Statistic string
	Value                                                       float64 // NaN: not available
}

// Flatten lists every statistic of every metric and comparison in rep,
// overall and in each segment value: each numeric field of the report's
// variant values and comparisons (nested ones, such as the guard's, as
// "guard.field"), named as in the JSON report.
func Flatten(rep *report.Report) ([]Stat, error) {
	var out []Stat
	add := func(metric, seg, segVal string, vals []report.VariantVal, cmps []report.Compare) error {
		for _, v := range vals {
			m, err := numbers(v)
			if err != nil {
				return err
			}
			for _, k := range sortedKeys(m) {
				out = append(out, Stat{Metric: metric, Segment: seg, SegmentValue: segVal, Variant: v.Variant, Statistic: k, Value: m[k]})
			}
		}
		for _, c := range cmps {
			m, err := numbers(c)
			if err != nil {
				return err
			}
			for _, k := range sortedKeys(m) {
				out = append(out, Stat{Metric: metric, Segment: seg, SegmentValue: segVal, Variant: c.Variant, Baseline: c.Baseline, Statistic: k, Value: m[k]})
			}
		}
		return nil
	}
	for _, mi := range rep.Metrics {
		if err := add(mi.Name, "", "", mi.Variants, mi.Comparisons); err != nil {
			return nil, err
		}
	}
	for _, sg := range rep.Segments {
		for _, sm := range sg.Metrics {
			for _, row := range sm.Rows {
				if err := add(sm.Metric, sg.Name, row.Value, row.Variants, row.Comparisons); err != nil {
					return nil, err
				}
			}
		}
	}
	return out, nil
}

// numbers returns the numeric fields of v's JSON form by dotted name; a
// null (NaN in the report) is NaN.
func numbers(v any) (map[string]float64, error) {
	b, err := json.Marshal(v)
	if err != nil {
		return nil, err
	}
	var m map[string]any
	if err := json.Unmarshal(b, &m); err != nil {
		return nil, err
	}
	out := map[string]float64{}
	var walk func(prefix string, m map[string]any)
	walk = func(prefix string, m map[string]any) {
		for k, x := range m {
			switch y := x.(type) {
			case float64:
				out[prefix+k] = y
			case nil:
				out[prefix+k] = math.NaN()
			case map[string]any:
				walk(prefix+k+".", y)
			}
		}
	}
	walk("", m)
	return out, nil
}

func sortedKeys(m map[string]float64) []string {
	ks := make([]string, 0, len(m))
	for k := range m {
		ks = append(ks, k)
	}
	sort.Strings(ks)
	return ks
}

// sqlString quotes s as a SQL string literal.
func sqlString(s string) string { return "'" + strings.ReplaceAll(s, "'", "''") + "'" }

// Point is one run's value of a metric comparison, for the history view.
type Point struct {
	RunID       string    `json:"run_id"`
	RunAt       time.Time `json:"run_at"`
	AsOf        time.Time `json:"as_of"`
	Fingerprint string    `json:"fingerprint"`
	ToolVersion string    `json:"tool_version"`
	Variant     string    `json:"variant"`
	Baseline    string    `json:"baseline"`
	Difference  *float64  `json:"difference"`
	CILow       *float64  `json:"ci_low"`
	CIHigh      *float64  `json:"ci_high"`
	Relative    *float64  `json:"relative"`
	PValue      *float64  `json:"p_value"`
	N           *float64  `json:"n_treatment"`
	Status      string    `json:"status"`
}

// History returns, run by run (ordered by as-of time, then run time), the
// overall comparison of metric in experiment for every treatment variant.
func (s *Store) History(ctx context.Context, experiment, metric string) ([]Point, error) {
	rows, err := s.db.QueryContext(ctx, `
SELECT r.run_id, r.run_at, coalesce(r.as_of, r.run_at), r.fingerprint, r.tool_version, r.status, c.variant, c.baseline,
  max(CASE WHEN c.statistic = 'difference' THEN c.value END),
  max(CASE WHEN c.statistic = 'ci_low' THEN c.value END),
  max(CASE WHEN c.statistic = 'ci_high' THEN c.value END),
  max(CASE WHEN c.statistic = 'relative' THEN c.value END),
  max(CASE WHEN c.statistic = 'p_value' THEN c.value END),
  max(v.value)
FROM runs AS r
JOIN stats AS c ON c.run_id = r.run_id AND c.metric = ? AND c.segment = '' AND c.baseline <> ''
LEFT JOIN stats AS v ON v.run_id = r.run_id AND v.metric = c.metric AND v.segment = '' AND v.baseline = ''
  AND v.variant = c.variant AND v.statistic = 'n'
WHERE r.experiment = ?
GROUP BY ALL
ORDER BY 3, 2, 1, 7`, metric, experiment)
	if err != nil {
		return nil, fmt.Errorf("results store %s: %v", s.path, err)
	}
	defer rows.Close()
	var out []Point
	for rows.Next() {
		var p Point
		var d, lo, hi, rel, pv, n sql.NullFloat64
		if err := rows.Scan(&p.RunID, &p.RunAt, &p.AsOf, &p.Fingerprint, &p.ToolVersion, &p.Status, &p.Variant, &p.Baseline, &d, &lo, &hi, &rel, &pv, &n); err != nil {
			return nil, err
		}
		p.RunAt, p.AsOf = p.RunAt.UTC(), p.AsOf.UTC()
		p.Difference, p.CILow, p.CIHigh, p.Relative, p.PValue, p.N = ptr(d), ptr(lo), ptr(hi), ptr(rel), ptr(pv), ptr(n)
		out = append(out, p)
	}
	return out, rows.Err()
}

func ptr(x sql.NullFloat64) *float64 {
	if !x.Valid {
		return nil
	}
	v := x.Float64
	return &v
}

// Counts returns the number of rows in each table (for checks and tests).
func (s *Store) Counts(ctx context.Context) (runs, stats, alarms int64, err error) {
	err = s.db.QueryRowContext(ctx, `SELECT (SELECT count(*) FROM runs), (SELECT count(*) FROM stats), (SELECT count(*) FROM alarms)`).Scan(&runs, &stats, &alarms)
	return
}

// Run is a stored run's summary.
type Run struct {
	RunID, FleetID, Experiment, Status string
	AsOf                               time.Time
	Stats                              int64
}

// Runs lists the stored runs with their number of statistics, in run id
// order.
func (s *Store) Runs(ctx context.Context) ([]Run, error) {
	rows, err := s.db.QueryContext(ctx, `SELECT r.run_id, r.fleet_id, r.experiment, r.status, coalesce(r.as_of, r.run_at),
  (SELECT count(*) FROM stats AS s WHERE s.run_id = r.run_id) FROM runs AS r ORDER BY r.run_id`)
	if err != nil {
		return nil, err
	}
	defer rows.Close()
	var out []Run
	for rows.Next() {
		var r Run
		if err := rows.Scan(&r.RunID, &r.FleetID, &r.Experiment, &r.Status, &r.AsOf, &r.Stats); err != nil {
			return nil, err
		}
		r.AsOf = r.AsOf.UTC()
		out = append(out, r)
	}
	return out, rows.Err()
}
