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
	"github.com/assay-dev/assay/engine"
	"github.com/assay-dev/assay/report"
)

func cmdRun(args []string, stdout, stderr io.Writer) int {
	fs := flagSet("run", "run [flags] SPEC.toml", stderr)
	var cf compileFlags
	cf.register(fs)
	db := fs.String("db", "", "DuckDB database file, opened read-only (default: in-memory; file sources are read directly)")
	format := fs.String("format", "text", "output format: text, json or markdown")
	threads := fs.Int("threads", 0, "DuckDB worker threads (default: all cores)")
	mem := fs.String("memory-limit", "", "DuckDB memory limit, e.g. 8GB (default: DuckDB's)")
	failHarm := fs.Bool("fail-on-harm", false, "exit with code 5 when a guard metric shows harm")
	path, code, ok := parse(fs, args)
	if !ok {
		return code
	}
	if cf.groupBy != "" {
		fmt.Fprintf(stderr, "assay run: --by is not supported yet; use assay compile --by to see grouped SQL\n")
		return ExitInput
	}
	if *format != "text" && *format != "json" && *format != "markdown" {
		fmt.Fprintf(stderr, "assay run: --format must be text, json or markdown\n")
		return ExitInput
	}
	if cf.dialect != "duckdb" {
		fmt.Fprintf(stderr, "assay run: only the embedded duckdb engine runs queries in this version\n")
		return ExitInput
	}
	spec, ok := load(path, stderr)
	if !ok {
		return ExitInput
	}
	plan, d, ok := cf.plan(spec, stderr)
	if !ok {
		return ExitInput
	}
	q, err := compiler.Print(plan, d)
	if err != nil {
		fmt.Fprintf(stderr, "assay: %v\n", err)
		return ExitInput
	}
	dir, _ := filepath.Abs(filepath.Dir(path))
	ctx, stop := signal.NotifyContext(context.Background(), os.Interrupt)
	defer stop()
	start := time.Now()
	// --- engine opening (other engines plug in here) ---
	conn, err := engine.OpenDuckDB(engine.DuckDBOptions{Path: *db, FileDir: dir, Threads: *threads, MemoryLimit: *mem})
	if err != nil {
		fmt.Fprintf(stderr, "assay: cannot open DuckDB: %v\n", err)
		return ExitEngine
	}
	defer conn.Close()
	// --- end of engine opening ---
	res, err := engine.Query(ctx, conn, q.Main, q.Health, nil)
	if err != nil {
		fmt.Fprintf(stderr, "assay: query failed: %v\n", engine.CleanError(err))
		return ExitEngine
	}
	fmt.Fprintf(stderr, "assay: queries ran in %s\n", time.Since(start).Round(time.Millisecond))
	rep, err := report.Analyze(plan, res)
	if err != nil {
		fmt.Fprintf(stderr, "assay: %v\n", err)
		return ExitEngine
	}
	switch *format {
	case "json":
		b, err := rep.JSON()
		if err != nil {
			fmt.Fprintf(stderr, "assay: %v\n", err)
			return ExitEngine
		}
		stdout.Write(b)
	case "markdown":
		fmt.Fprint(stdout, rep.Markdown())
	default:
		fmt.Fprint(stdout, rep.Text())
	}
	if rep.Health.SampleRatio.Alarm {
		return ExitSRM
	}
	if *failHarm {
		for _, a := range rep.Alarms {
			if strings.HasPrefix(a, "GUARD HARM") {
				return ExitHarm
			}
		}
	}
	return ExitOK
}
