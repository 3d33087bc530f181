package cli

import (
	"context"
	"fmt"
	"io"
	"os"
	"os/signal"
	"path/filepath"
	"time"

	"github.com/assay-dev/assay/pipeline"
	"github.com/assay-dev/assay/report"
)

// cmdRampCheck is `assay rampcheck`: the early read of a rollout's test
// step (report.ReadEarly). It reads exposures of the first rollout step
// only (up to the second step's start) unless the spec has no schedule,
// and exits with ExitHold when it lists something to fix first.
func cmdRampCheck(args []string, stdout, stderr io.Writer) int {
	fs := flagSet("rampcheck", "rampcheck [flags] SPEC.toml", stderr)
	var cf compileFlags
	cf.register(fs)
	db := fs.String("db", "", "DuckDB database file, opened read-only (default: in-memory; file sources are read directly)")
	format := fs.String("format", "text", "output format: text, json or markdown")
	threads := fs.Int("threads", 0, "DuckDB worker threads (default: all cores)")
	mem := fs.String("memory-limit", "", "DuckDB memory limit, e.g. 8GB (default: DuckDB's)")
	dsn := fs.String("dsn", "", "run on a PostgreSQL or MySQL/MariaDB server instead of DuckDB (default: $ASSAY_DSN)")
	srmAlpha := fs.Float64("srm-alpha", report.SRMAlpha, "sample-ratio mismatch alarm threshold (p-value)")
	path, code, ok := parse(fs, args)
	if !ok {
		return code
	}
	if *srmAlpha <= 0 || *srmAlpha >= 1 {
		fmt.Fprintf(stderr, "assay rampcheck: --srm-alpha must be between 0 and 1\n")
		return ExitInput
	}
	if *threads < 0 {
		fmt.Fprintf(stderr, "assay rampcheck: --threads must be 0 (all cores) or more\n")
		return ExitInput
	}
	if *format != "text" && *format != "json" && *format != "markdown" {
		fmt.Fprintf(stderr, "assay rampcheck: --format must be text, json or markdown\n")
		return ExitInput
	}
	spec, ok := load(path, stderr)
	if !ok {
		return ExitInput
	}
	absoluteFiles(spec, path)
	opt, err := cf.options(spec)
	if err != nil {
		fmt.Fprintf(stderr, "assay rampcheck: %v\n", err)
		return ExitInput
	}
	end := spec.End
	if ro := spec.Rollout; ro != nil && len(ro.Steps) > 1 {
		// The test step only: exposures up to the next step's start.
		opt.End = ro.Steps[1].Start
		end = opt.End
	}
	if now := time.Now().UTC().Truncate(time.Second); opt.AsOf.IsZero() && end.After(now) {
		// A live read during the step: outcomes are counted up to now, so
		// windows that have not elapsed are not taken as complete.
		opt.AsOf = now
		fmt.Fprintf(stderr, "assay rampcheck: reading as of now (%s); pass --as-of to fix the time\n", now.Format(time.RFC3339))
	}
	dir, _ := filepath.Abs(filepath.Dir(path))
	ctx, stop := signal.NotifyContext(context.Background(), os.Interrupt)
	defer stop()
	eng, err := pipeline.Open(ctx, pipeline.Target{DSN: *dsn, DB: *db, FileDir: dir, Threads: *threads, MemoryLimit: *mem, Dialect: cf.dialect})
	if err != nil {
		return openFailed(stderr, err)
	}
	defer eng.Close()
	cds, empty, err := eng.Check(ctx, spec)
	if err != nil {
		return queryFailed(ctx, stderr, err)
	}
	printDiags(stderr, cds, specText(path))
	if cds.HasErrors() {
		return ExitInput
	}
	plan, q, ds, err := eng.Compile(ctx, spec, opt)
	printDiags(stderr, ds, nil)
	if ds.HasErrors() {
		return ExitInput
	}
	if err != nil {
		return openFailed(stderr, err)
	}
	set, err := eng.Run(ctx, plan, q, true)
	if err != nil {
		return queryFailed(ctx, stderr, err)
	}
	ropt := report.Options{SRMAlpha: *srmAlpha, EmptySources: empty}
	rep, err := report.Analyze(plan, set, ropt)
	if err != nil {
		fmt.Fprintf(stderr, "assay: %v\n", err)
		return ExitEngine
	}
	er := report.ReadEarly(plan, set, rep, ropt)
	switch *format {
	case "json":
		b, err := er.JSON()
		if err != nil {
			fmt.Fprintf(stderr, "assay: %v\n", err)
			return ExitEngine
		}
		stdout.Write(b)
	case "markdown":
		fmt.Fprint(stdout, er.Markdown())
	default:
		fmt.Fprint(stdout, er.Text())
	}
	if er.Blocked() {
		return ExitHold
	}
	return ExitOK
}
