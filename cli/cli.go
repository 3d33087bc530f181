// Package cli implements the assay command line. Run is the whole program
// with its streams passed in, so tests drive a command, its output and its
// exit code in-process.
package cli

import (
	"context"
	"errors"
	"flag"
	"fmt"
	"io"
	"os"
	"os/signal"
	"path/filepath"
	"strings"
	"time"

	"github.com/assay-dev/assay/compiler"
	"github.com/assay-dev/assay/dialects"
	"github.com/assay-dev/assay/engine"
	"github.com/assay-dev/assay/metrics"
	"github.com/assay-dev/assay/report"
)

// Exit codes. They are part of the documented interface.
const (
	ExitOK     = 0 // success
	ExitInput  = 1 // invalid spec, flags or arguments
	ExitEngine = 2 // the database could not be opened or a query failed
	ExitSRM    = 4 // sample-ratio mismatch alarm
	ExitHarm   = 5 // a guard metric shows harm (only with --fail-on-harm)
)

const usage = `assay compiles experiment metric definitions into SQL and analyses the results.

Usage:
  assay check SPEC.toml              validate a spec; print every problem
  assay compile [flags] SPEC.toml    print the SQL for a spec
  assay run [flags] SPEC.toml        run the SQL on DuckDB and print the analysis
  assay version                      print the version

Run 'assay COMMAND --help' for a command's flags.

Exit codes: 0 ok, 1 input error, 2 engine error, 4 sample-ratio mismatch,
5 guard harm (with --fail-on-harm).
`

// Run runs the assay command line with args (without the program name).
func Run(args []string, stdin io.Reader, stdout, stderr io.Writer) (code int) {
	defer func() {
		if r := recover(); r != nil {
			fmt.Fprintf(stderr, "assay: internal error: %v\nPlease report this with the spec that caused it.\n", r)
			code = ExitEngine
		}
	}()
	if len(args) == 0 {
		fmt.Fprint(stderr, usage)
		return ExitInput
	}
	switch args[0] {
	case "-h", "--help", "help":
		fmt.Fprint(stdout, usage)
		return ExitOK
	case "-v", "--version", "version":
		fmt.Fprintf(stdout, "assay %s\n", compiler.Version)
		return ExitOK
	case "check":
		return cmdCheck(args[1:], stdout, stderr)
	case "compile":
		return cmdCompile(args[1:], stdout, stderr)
	case "run":
		return cmdRun(args[1:], stdout, stderr)
	}
	fmt.Fprintf(stderr, "assay: unknown command %q\n\n%s", args[0], usage)
	return ExitInput
}

// flagSet makes a flag set that prints to stderr and parses flags given
// after the spec path too.
func flagSet(name, synopsis string, stderr io.Writer) *flag.FlagSet {
	fs := flag.NewFlagSet("assay "+name, flag.ContinueOnError)
	fs.SetOutput(stderr)
	fs.Usage = func() {
		fmt.Fprintf(stderr, "Usage: assay %s\n\n", synopsis)
		fs.PrintDefaults()
	}
	return fs
}

// parse parses flags that may come before or after the single positional
// spec argument.
func parse(fs *flag.FlagSet, args []string) (string, int, bool) {
	var pos []string
	for {
		if err := fs.Parse(args); err != nil {
			if errors.Is(err, flag.ErrHelp) {
				return "", ExitOK, false
			}
			return "", ExitInput, false
		}
		if fs.NArg() == 0 {
			break
		}
		pos = append(pos, fs.Arg(0))
		args = fs.Args()[1:]
	}
	if len(pos) != 1 {
		fmt.Fprintf(fs.Output(), "%s: expected one spec file, got %d\n", fs.Name(), len(pos))
		fs.Usage()
		return "", ExitInput, false
	}
	return pos[0], 0, true
}

// load reads and checks a spec, printing diagnostics to stderr.
func load(path string, stderr io.Writer) (*metrics.Spec, bool) {
	spec, src, ds := metrics.LoadFile(path)
	printDiags(stderr, ds, src)
	if spec == nil || ds.HasErrors() {
		n := 0
		for _, d := range ds {
			if d.Severity == metrics.Error {
				n++
			}
		}
		fmt.Fprintf(stderr, "%s: %d error(s)\n", path, n)
		return nil, false
	}
	return spec, true
}

func printDiags(w io.Writer, ds metrics.Diagnostics, src []byte) {
	for _, d := range ds {
		fmt.Fprint(w, d.Long(src))
	}
}

func cmdCheck(args []string, stdout, stderr io.Writer) int {
	fs := flagSet("check", "check SPEC.toml", stderr)
	path, code, ok := parse(fs, args)
	if !ok {
		return code
	}
	spec, ok := load(path, stderr)
	if !ok {
		return ExitInput
	}
	plan, ds := compiler.Compile(spec, compiler.Options{})
	printDiags(stderr, ds, nil)
	if ds.HasErrors() {
		return ExitInput
	}
	fmt.Fprintf(stdout, "%s: ok (%d variants, %d metrics, %d eligibility rules, %d sources)\n", path, len(plan.Variants), len(plan.Metrics), len(plan.Rules), len(spec.Sources))
	return ExitOK
}

type compileFlags struct {
	dialect string
	asOf    string
	groupBy string
	health  bool
}

func (c *compileFlags) register(fs *flag.FlagSet) {
	fs.StringVar(&c.dialect, "dialect", "duckdb", "SQL dialect: "+strings.Join(dialects.Names(), ", "))
	fs.StringVar(&c.asOf, "as-of", "", "count outcomes up to this time (RFC 3339, e.g. 2026-04-01T00:00:00Z); default: the analysis end")
	fs.StringVar(&c.groupBy, "by", "", "comma-separated extra grouping keys: segment names or trigger_day")
}

func (c *compileFlags) plan(spec *metrics.Spec, stderr io.Writer) (*compiler.Plan, dialects.Dialect, bool) {
	d, err := dialects.Lookup(c.dialect)
	if err != nil {
		fmt.Fprintf(stderr, "assay: %v\n", err)
		return nil, nil, false
	}
	opt := compiler.Options{}
	if c.asOf != "" {
		t, err := parseTime(c.asOf)
		if err != nil {
			fmt.Fprintf(stderr, "assay: --as-of: %v\n", err)
			return nil, nil, false
		}
		opt.AsOf = t
	}
	if c.groupBy != "" {
		for _, k := range strings.Split(c.groupBy, ",") {
			opt.GroupBy = append(opt.GroupBy, strings.TrimSpace(k))
		}
	}
	plan, ds := compiler.Compile(spec, opt)
	printDiags(stderr, ds, nil)
	if ds.HasErrors() {
		return nil, nil, false
	}
	return plan, d, true
}

func parseTime(s string) (time.Time, error) {
	for _, layout := range []string{time.RFC3339Nano, "2006-01-02T15:04:05", "2006-01-02"} {
		if t, err := time.ParseInLocation(layout, s, time.UTC); err == nil {
			return t, nil
		}
	}
	return time.Time{}, fmt.Errorf("cannot read %q as a time; use RFC 3339 such as 2026-04-01T00:00:00Z", s)
}

func cmdCompile(args []string, stdout, stderr io.Writer) int {
	fs := flagSet("compile", "compile [flags] SPEC.toml", stderr)
	var cf compileFlags
	cf.register(fs)
	which := fs.String("query", "both", "which query to print: main, health or both")
	path, code, ok := parse(fs, args)
	if !ok {
		return code
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
	switch *which {
	case "main":
		fmt.Fprint(stdout, q.Main+";\n")
	case "health":
		fmt.Fprint(stdout, q.Health+";\n")
	case "both":
		fmt.Fprint(stdout, q.Main+";\n\n"+q.Health+";\n")
	default:
		fmt.Fprintf(stderr, "assay: --query must be main, health or both\n")
		return ExitInput
	}
	return ExitOK
}

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
	conn, err := engine.OpenDuckDB(engine.DuckDBOptions{Path: *db, FileDir: dir, Threads: *threads, MemoryLimit: *mem})
	if err != nil {
		fmt.Fprintf(stderr, "assay: cannot open DuckDB: %v\n", err)
		return ExitEngine
	}
	defer conn.Close()
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
