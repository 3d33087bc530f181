package cli

import (
	"context"
	"fmt"
	"io"
	"os"
	"os/signal"
	"path/filepath"
	"strings"
	"time"

	"github.com/assay-dev/assay/compiler"
	"github.com/assay-dev/assay/metrics"
	"github.com/assay-dev/assay/pipeline"
	"github.com/assay-dev/assay/report"
)

// cmdCalibrate re-splits the spec's eligible units at random many times and
// reports each metric's false-positive rate: an A/A test on real data.
func cmdCalibrate(args []string, stdout, stderr io.Writer) int {
	fs := flagSet("calibrate", "calibrate [flags] SPEC.toml", stderr)
	db := fs.String("db", "", "DuckDB database file, opened read-only (default: in-memory; file sources are read directly)")
	dsn := fs.String("dsn", "", "run on a PostgreSQL or MySQL/MariaDB server instead of DuckDB (default: $ASSAY_DSN; the password is never printed)")
	splits := fs.Int("splits", 200, "number of random re-splits")
	salt := fs.Int64("salt", 1, "salt of the re-split hash; change it for a fresh set of splits")
	alpha := fs.Float64("alpha", 0.05, "significance level whose false-positive rate is checked")
	start := fs.String("start", "", "analyse another period: its start (e.g. a period before the experiment, RFC 3339)")
	end := fs.String("end", "", "analyse another period: its end (RFC 3339)")
	format := fs.String("format", "text", "output format: text or json")
	standIn := fs.Bool("stand-in", false, "before launch: re-split the [planning] stand-in cohort of the pre-period (--start/--end, default [planning] pre_start/pre_end)")
	path, code, ok := parse(fs, args)
	if !ok {
		return code
	}
	if *splits < 1 || *splits > 10000 {
		fmt.Fprintln(stderr, "assay calibrate: --splits must be between 1 and 10000")
		return ExitInput
	}
	if *alpha <= 0 || *alpha >= 1 {
		fmt.Fprintln(stderr, "assay calibrate: --alpha must be between 0 and 1")
		return ExitInput
	}
	if *format != "text" && *format != "json" {
		fmt.Fprintln(stderr, "assay calibrate: --format must be text or json")
		return ExitInput
	}
	spec, ok := load(path, stderr)
	if !ok {
		return ExitInput
	}
	opt := compiler.Options{Splits: *splits, Salt: *salt, StandIn: *standIn}
	for _, o := range []struct {
		flag string
		src  *string
		dst  *time.Time
	}{{"--start", start, &opt.Start}, {"--end", end, &opt.End}} {
		if *o.src == "" {
			continue
		}
		t, err := parseTime(*o.src)
		if err != nil {
			fmt.Fprintf(stderr, "assay calibrate: %s: %v\n", o.flag, err)
			return ExitInput
		}
		*o.dst = t
	}
	absoluteFiles(spec, path)
	dir, _ := filepath.Abs(filepath.Dir(path))
	ctx, stop := signal.NotifyContext(context.Background(), os.Interrupt)
	defer stop()
	eng, err := pipeline.Open(ctx, pipeline.Target{DSN: *dsn, DB: *db, FileDir: dir})
	if err != nil {
		return openFailed(stderr, err)
	}
	defer eng.Close()
	checked := spec
	if *standIn {
		checked = StandInView(spec) // size.go
	}
	cds, empty, err := eng.Check(ctx, checked)
	if err != nil {
		return queryFailed(ctx, stderr, err)
	}
	printDiags(stderr, cds, specText(path))
	if cds.HasErrors() {
		return ExitInput
	}
	if len(empty) > 0 {
		fmt.Fprintf(stderr, "assay calibrate: warning: sources without rows, read as zeros: %s\n", strings.Join(empty, ", "))
	}
	plan, q, ds, err := eng.Compile(ctx, spec, opt)
	printDiags(stderr, ds, specText(path))
	if ds.HasErrors() {
		return ExitInput
	}
	if err != nil {
		return openFailed(stderr, err)
	}
	prog := newProgress(stderr)
	prog.Stage(fmt.Sprintf("running %d re-splits in one query", *splits))
	set, err := eng.Run(ctx, plan, q, false)
	prog.Done()
	if err != nil {
		return queryFailed(ctx, stderr, err)
	}
	cal := report.Calibrate(plan, set, *alpha)
	if *format == "json" {
		b, err := cal.JSON()
		if err != nil {
			fmt.Fprintf(stderr, "assay: %v\n", err)
			return ExitEngine
		}
		stdout.Write(b)
	} else {
		fmt.Fprint(stdout, cal.Text())
	}
	return ExitOK
}

// absoluteFiles resolves relative file sources against the spec's
// directory before the SQL is printed for execution, so a run does not
// depend on the working directory (nor on DuckDB's file_search_path, which
// splits on commas). `assay compile` keeps the paths as written.
func absoluteFiles(spec *metrics.Spec, specPath string) {
	dir, err := filepath.Abs(filepath.Dir(specPath))
	if err != nil {
		return
	}
	for _, src := range spec.Sources {
		if src.File != "" && !filepath.IsAbs(src.File) {
			src.File = filepath.Join(dir, src.File)
		}
	}
	// A prior run named by its spec reads that spec's exposure source,
	// which is not among this spec's sources.
	for _, pr := range spec.PriorRuns {
		if src := pr.Source; pr.Spec != "" && src != nil && src.File != "" && !filepath.IsAbs(src.File) {
			src.File = filepath.Join(dir, src.File)
		}
	}
}
