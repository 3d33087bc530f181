package cli

import (
	"context"
	"errors"
	"fmt"
	"io"
	"os"
	"os/signal"
	"path/filepath"
	"strings"
	"time"

	"github.com/assay-dev/assay/engine"
	"github.com/assay-dev/assay/engine/store"
	"github.com/assay-dev/assay/pipeline"
	"github.com/assay-dev/assay/report"
)

// Fleet statuses, the first word of each experiment's line.
const (
	fleetOK          = "ok"
	fleetSRM         = "srm"
	fleetHarm        = "harm"
	fleetFailed      = "failed"
	fleetInterrupted = "stopped"
)

// fleetResult is one experiment's outcome in a fleet run.
type fleetResult struct {
	path, id, status, detail string
	code                     int // the exit code the failure alone would give
}

// cmdFleet is `assay fleet`: many specs in one process on one engine
// connection, a report file per experiment, one status line each, the
// results appended to a store, and one exit status for the whole fleet.
func cmdFleet(args []string, stdout, stderr io.Writer) int {
	fs := flagSet("fleet", "fleet --out DIR [--store FILE] [flags] SPEC|DIR|GLOB...", stderr)
	var cf compileFlags
	cf.register(fs)
	out := fs.String("out", "", "directory for the report files, one <experiment id>.<format> per experiment (created if missing)")
	storePath := fs.String("store", "", "append every experiment's results to this DuckDB results store (created if missing)")
	wait := fs.Duration("store-wait", time.Minute, "how long to wait for the results store while another run holds it")
	format := fs.String("format", "json", "report file format: json, markdown or text")
	db := fs.String("db", "", "DuckDB database file, opened read-only (default: in-memory; file sources are read directly)")
	dsn := fs.String("dsn", "", "run on a PostgreSQL or MySQL/MariaDB server instead of DuckDB (default: $ASSAY_DSN)")
	threads := fs.Int("threads", 0, "DuckDB worker threads (default: all cores)")
	mem := fs.String("memory-limit", "", "DuckDB memory limit, e.g. 8GB")
	failHarm := fs.Bool("fail-on-harm", false, "exit with code 5 when any guard metric shows harm")
	srmAlpha := fs.Float64("srm-alpha", report.SRMAlpha, "sample-ratio mismatch alarm threshold (p-value)")
	adjust := fs.String("adjust", "holm", "multiple-testing adjustment: holm, bh, bonferroni or none")
	pos, code, ok := parseMany(fs, args)
	if !ok {
		return code
	}
	switch {
	case *out == "":
		fmt.Fprintf(stderr, "assay fleet: --out DIR is required\n")
		return ExitInput
	case *format != "json" && *format != "markdown" && *format != "text":
		fmt.Fprintf(stderr, "assay fleet: --format must be json, markdown or text\n")
		return ExitInput
	case *srmAlpha <= 0 || *srmAlpha >= 1:
		fmt.Fprintf(stderr, "assay fleet: --srm-alpha must be between 0 and 1\n")
		return ExitInput
	case *threads < 0:
		fmt.Fprintf(stderr, "assay fleet: --threads must be 0 (all cores) or more\n")
		return ExitInput
	}
	switch *adjust {
	case "holm", "bh", "bonferroni", "none":
	default:
		fmt.Fprintf(stderr, "assay fleet: --adjust must be holm, bh, bonferroni or none\n")
		return ExitInput
	}
	paths, err := expandSpecs(pos)
	if err != nil {
		fmt.Fprintf(stderr, "assay fleet: %v\n", err)
		return ExitInput
	}
	if err := os.MkdirAll(*out, 0o755); err != nil {
		fmt.Fprintf(stderr, "assay fleet: %v\n", err)
		return ExitInput
	}
	ctx, stop := signal.NotifyContext(context.Background(), os.Interrupt)
	defer stop()
	start := time.Now()
	fleetID := fmt.Sprintf("%s-p%d", start.UTC().Format("20060102T150405.000000Z"), os.Getpid())
	cwd, _ := os.Getwd()
	eng, err := pipeline.Open(ctx, pipeline.Target{DSN: *dsn, DB: *db, FileDir: cwd, Threads: *threads, MemoryLimit: *mem, Dialect: cf.dialect})
	if err != nil {
		return openFailed(stderr, err)
	}
	defer eng.Close()
	ropt := report.Options{SRMAlpha: *srmAlpha, Adjust: *adjust}
	var results []fleetResult
	written := map[string]string{} // report file -> spec path
	for i, path := range paths {
		if ctx.Err() != nil {
			break
		}
		r := fleetResult{path: path, id: "-"}
		rep := runOne(ctx, eng, path, cf, ropt, &r, stderr)
		if rep != nil {
			r.id = rep.Experiment.ID
			r.status = fleetOK
			switch {
			case rep.Health.SampleRatio.Alarm:
				r.status = fleetSRM
			case rep.HarmShown():
				r.status = fleetHarm
			}
			file := filepath.Join(*out, strings.TrimSuffix(sqlFileName(r.id, "x"), ".x.sql")+"."+map[string]string{"json": "json", "markdown": "md", "text": "txt"}[*format])
			if prev, dup := written[file]; dup {
				r.status, r.code, r.detail = fleetFailed, ExitInput, fmt.Sprintf("experiment id %q is also used by %s", r.id, prev)
			} else if err := writeReport(file, rep, *format); err != nil {
				r.status, r.code, r.detail = fleetFailed, ExitEngine, err.Error()
			} else {
				written[file] = path
				r.detail = "report " + file
				if *storePath != "" {
					if err := appendStore(ctx, *storePath, *wait, store.Entry{RunID: fmt.Sprintf("%s-%03d", fleetID, i), FleetID: fleetID, SpecPath: path, RunAt: start, Report: rep, Status: r.status}); err != nil {
						r.status, r.code, r.detail = fleetFailed, ExitEngine, "results not stored: "+err.Error()
					}
				}
			}
		}
		results = append(results, r)
		fmt.Fprintf(stdout, "%-7s %s  %s  %s\n", r.status, r.id, path, r.detail)
	}
	return fleetSummary(ctx, results, len(paths), *failHarm, *storePath, fleetID, stdout)
}

// runOne checks, compiles, runs and analyses one spec; on failure it fills
// r and returns nil.
func runOne(ctx context.Context, eng *pipeline.Engine, path string, cf compileFlags, ropt report.Options, r *fleetResult, stderr io.Writer) *report.Report {
	fail := func(code int, format string, a ...any) *report.Report {
		r.status, r.code, r.detail = fleetFailed, code, fmt.Sprintf(format, a...)
		if ctx.Err() != nil {
			r.status, r.code, r.detail = fleetInterrupted, ExitInterrupted, "interrupted; nothing of it was stored"
		}
		return nil
	}
	spec, ok := loadFor(path, cf.place, stderr)
	if !ok {
		return fail(ExitInput, "invalid spec (see the messages above)")
	}
	r.id = spec.ID
	absoluteFiles(spec, path)
	opt, err := cf.options(spec)
	if err != nil {
		return fail(ExitInput, "%v", err)
	}
	cds, empty, err := eng.Check(ctx, spec)
	if err != nil {
		return fail(ExitEngine, "checking sources: %v", engine.CleanError(err))
	}
	printDiagsIn(stderr, cds, path, specText(path))
	if cds.HasErrors() {
		return fail(ExitInput, "sources do not match the spec (see the messages above)")
	}
	plan, q, ds, err := eng.Compile(ctx, spec, opt)
	printDiagsIn(stderr, ds, path, nil)
	if ds.HasErrors() {
		return fail(ExitInput, "cannot compile (see the messages above)")
	}
	if err != nil {
		code := ExitEngine
		if errors.Is(err, pipeline.ErrInput) {
			code = ExitInput
		}
		return fail(code, "%v", engine.Redact(err))
	}
	set, err := eng.Run(ctx, plan, q, true)
	if err != nil {
		return fail(ExitEngine, "query failed: %v", engine.CleanError(err))
	}
	ropt.EmptySources = empty
	rep, err := report.Analyze(plan, set, ropt)
	if err != nil {
		return fail(ExitEngine, "%v", err)
	}
	return rep
}

// appendStore appends one entry, holding the store only for that append.
func appendStore(ctx context.Context, path string, wait time.Duration, e store.Entry) error {
	s, err := store.Open(ctx, path, wait)
	if err != nil {
		return err
	}
	if err := s.Append(ctx, e); err != nil {
		s.Close()
		return err
	}
	return s.Close()
}

// writeReport writes a report file atomically (a temporary file renamed).
func writeReport(file string, rep *report.Report, format string) error {
	var b []byte
	switch format {
	case "json":
		var err error
		if b, err = rep.JSON(); err != nil {
			return err
		}
	case "markdown":
		b = []byte(rep.Markdown())
	default:
		b = []byte(rep.Text())
	}
	tmp, err := os.CreateTemp(filepath.Dir(file), ".assay-report-*")
	if err != nil {
		return err
	}
	if _, err := tmp.Write(b); err != nil {
		tmp.Close()
		os.Remove(tmp.Name())
		return err
	}
	if err := tmp.Close(); err != nil {
		os.Remove(tmp.Name())
		return err
	}
	if err := os.Chmod(tmp.Name(), 0o644); err != nil {
		os.Remove(tmp.Name())
		return err
	}
	if err := os.Rename(tmp.Name(), file); err != nil {
		os.Remove(tmp.Name())
		return err
	}
	return nil
}

// fleetSummary prints the summary line and returns the fleet's exit code:
// interrupted (130) before any failed experiment (1 when every failure was
// an input error, else 2), before a sample-ratio alarm (4), before guard
// harm with --fail-on-harm (5).
func fleetSummary(ctx context.Context, rs []fleetResult, total int, failHarm bool, storePath, fleetID string, stdout io.Writer) int {
	by := map[string][]string{}
	worst := 0
	for _, r := range rs {
		name := r.id
		if name == "-" {
			name = r.path
		}
		by[r.status] = append(by[r.status], name)
		if r.status == fleetFailed && (worst == 0 || r.code == ExitEngine) {
			worst = r.code
		}
	}
	var parts []string
	for _, k := range []struct{ status, words string }{{fleetOK, "ok"}, {fleetSRM, "sample-ratio alarm"}, {fleetHarm, "guard harm"}, {fleetFailed, "failed"}, {fleetInterrupted, "interrupted"}} {
		if n := len(by[k.status]); n > 0 {
			p := fmt.Sprintf("%d %s", n, k.words)
			if k.status != fleetOK {
				p += " (" + strings.Join(by[k.status], ", ") + ")"
			}
			parts = append(parts, p)
		}
	}
	if skipped := total - len(rs); skipped > 0 {
		p := fmt.Sprintf("%d not run", skipped)
		if ctx.Err() != nil {
			p += " (interrupted before they started)"
		}
		parts = append(parts, p)
	}
	line := fmt.Sprintf("fleet: %d experiment(s): %s", total, strings.Join(parts, ", "))
	if storePath != "" {
		line += fmt.Sprintf("; results in %s (fleet %s)", storePath, fleetID)
	}
	fmt.Fprintln(stdout, line)
	switch {
	case ctx.Err() != nil:
		return ExitInterrupted
	case worst != 0:
		return worst
	case len(by[fleetSRM]) > 0:
		return ExitSRM
	case failHarm && len(by[fleetHarm]) > 0:
		return ExitHarm
	}
	return ExitOK
}
