package cli

import (
	"errors"
	"flag"
	"fmt"
	"io"
	"os"
	"path/filepath"
	"strings"
	"time"
	"unicode"

	"github.com/assay-dev/assay/compiler"
	"github.com/assay-dev/assay/dialects"
	"github.com/assay-dev/assay/metrics"
)

type compileFlags struct {
	dialect  string
	asOf     string
	groupBy  string
	segments bool
	health   bool
	place    string // library.go: the target that picks each source's place
	// priorOnly compiles the query of the units prior runs exposed (the
	// analysis = "apart" query assay run adds); compile only.
	priorOnly bool
}

func (c *compileFlags) register(fs *flag.FlagSet) {
	fs.StringVar(&c.dialect, "dialect", "duckdb", "SQL dialect: "+strings.Join(dialects.Names(), ", "))
	fs.StringVar(&c.asOf, "as-of", "", "count outcomes up to this time (RFC 3339, e.g. 2026-04-01T00:00:00Z); default: the analysis end")
	c.registerBreakdowns(fs)
	registerPlace(fs, &c.place) // library.go
}

func (c *compileFlags) registerBreakdowns(fs *flag.FlagSet) {
	fs.StringVar(&c.groupBy, "by", "", "breakdowns computed beside the overall result, each on its own: comma-separated segment names and/or trigger_day (default: every segment)")
	fs.BoolVar(&c.segments, "segments", true, "break every metric down by each declared segment (false: no breakdowns unless --by names them)")
}

// options returns the compile options the flags ask for.
func (c *compileFlags) options(spec *metrics.Spec) (compiler.Options, error) {
	var opt compiler.Options
	if c.asOf != "" {
		t, err := parseTime(c.asOf)
		if err != nil {
			return opt, fmt.Errorf("--as-of: %v", err)
		}
		if t.IsZero() || t.Year() < 1900 {
			return opt, fmt.Errorf("--as-of: %q is not a plausible time", c.asOf)
		}
		opt.AsOf = t
	}
	switch {
	case c.groupBy != "":
		for _, k := range strings.Split(c.groupBy, ",") {
			opt.Breakdowns = append(opt.Breakdowns, strings.TrimSpace(k))
		}
	case c.segments:
		opt.Breakdowns = compiler.DefaultBreakdowns(spec)
	}
	if c.priorOnly {
		opt.PriorOnly, opt.Breakdowns = true, nil
	}
	return opt, nil
}

func (c *compileFlags) plan(spec *metrics.Spec, stderr io.Writer) (*compiler.Plan, dialects.Dialect, bool) {
	d, err := dialects.Lookup(c.dialect)
	if err != nil {
		fmt.Fprintf(stderr, "assay: %v\n", err)
		return nil, nil, false
	}
	opt, err := c.options(spec)
	if err != nil {
		fmt.Fprintf(stderr, "assay: %v\n", err)
		return nil, nil, false
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

// ExitStale is compile --check's exit code when a committed SQL file is
// missing or differs from what compile --out would write now.
const ExitStale = 3

func cmdCompile(args []string, stdout, stderr io.Writer) int {
	fs := flagSet("compile", "compile [flags] SPEC.toml\n       assay compile --out DIR | --check DIR [flags] SPEC.toml...", stderr)
	var cf compileFlags
	cf.register(fs)
	fs.BoolVar(&cf.priorOnly, "prior-only", false, "print the query that assay run adds for a spec whose prior runs say analysis = \"apart\": its eligible units are those a prior run exposed")
	which := fs.String("query", "both", "which query to print: main, health or both")
	out := fs.String("out", "", "write the SQL to DIR instead of printing it: one file <experiment id>.<dialect>.sql per spec and per dialect (--dialect takes a comma-separated list or all)")
	check := fs.String("check", "", "compare the files in DIR with what --out would write; exit 3 if any is missing or stale")
	if hasFlag(args, "out") || hasFlag(args, "check") {
		paths, code, ok := parseMany(fs, args)
		if !ok {
			return code
		}
		return compileFiles(paths, cf, *which, *out, *check, stdout, stderr)
	}
	path, code, ok := parse(fs, args)
	if !ok {
		return code
	}
	spec, ok := loadFor(path, cf.place, stderr)
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
	text, ok := queryText(q, *which)
	if !ok {
		fmt.Fprintf(stderr, "assay: --query must be main, health or both\n")
		return ExitInput
	}
	fmt.Fprint(stdout, text)
	return ExitOK
}

// queryText is what compile prints for --query which: the statements a
// run executes, in order, with the dialect's setup and cleanup statements
// (the cohort table) around the named queries.
func queryText(q compiler.Queries, which string) (string, bool) {
	switch which {
	case "main":
		return q.Script(true, false), true
	case "health":
		return q.Script(false, true), true
	case "both":
		return q.Script(true, true), true
	}
	return "", false
}

// hasFlag reports whether args set the flag name (-name, --name, with or
// without =value).
func hasFlag(args []string, name string) bool {
	for _, a := range args {
		if a == "--" {
			return false
		}
		a = strings.TrimLeft(a, "-")
		if a == name || strings.HasPrefix(a, name+"=") {
			return true
		}
	}
	return false
}

// parseMany parses flags around one or more spec paths.
func parseMany(fs *flag.FlagSet, args []string) ([]string, int, bool) {
	var pos []string
	for {
		if err := fs.Parse(args); err != nil {
			if errors.Is(err, flag.ErrHelp) {
				return nil, ExitOK, false
			}
			return nil, ExitInput, false
		}
		if fs.NArg() == 0 {
			break
		}
		pos = append(pos, fs.Arg(0))
		args = fs.Args()[1:]
	}
	if len(pos) == 0 {
		fmt.Fprintf(fs.Output(), "%s: expected at least one spec file\n", fs.Name())
		fs.Usage()
		return nil, ExitInput, false
	}
	return pos, 0, true
}

// sqlFileName is the file compile --out writes for an experiment and a
// dialect; characters other than letters, digits, '.', '-' and '_' in the
// experiment id become '_'.
func sqlFileName(id, dialect string) string {
	safe := strings.Map(func(r rune) rune {
		if r < 0x80 && (unicode.IsLetter(r) || unicode.IsDigit(r) || r == '.' || r == '-' || r == '_') {
			return r
		}
		return '_'
	}, id)
	if safe == "" || strings.Trim(safe, ".") == "" {
		safe = "_"
	}
	return safe + "." + dialect + ".sql"
}

// compileFiles implements --out (write) and --check (compare).
func compileFiles(paths []string, cf compileFlags, which, out, check string, stdout, stderr io.Writer) int {
	if (out == "") == (check == "") {
		fmt.Fprintf(stderr, "assay compile: give one of --out DIR and --check DIR\n")
		return ExitInput
	}
	if _, ok := queryText(compiler.Queries{}, which); !ok {
		fmt.Fprintf(stderr, "assay: --query must be main, health or both\n")
		return ExitInput
	}
	names := strings.Split(cf.dialect, ",")
	if cf.dialect == "all" {
		names = dialects.Names()
	}
	dir := out + check
	files := map[string]string{} // file name -> SQL text
	var order []string
	from := map[string]string{} // file name -> spec path
	for _, path := range paths {
		spec, ok := loadFor(path, cf.place, stderr)
		if !ok {
			return ExitInput
		}
		for _, name := range names {
			one := cf
			one.dialect = strings.TrimSpace(name)
			plan, d, ok := one.plan(spec, stderr)
			if !ok {
				return ExitInput
			}
			q, err := compiler.Print(plan, d)
			if err != nil {
				fmt.Fprintf(stderr, "assay: %s: %s: %v\n", path, d.Name(), err)
				return ExitInput
			}
			f := sqlFileName(spec.ID, d.Name())
			if prev, dup := from[f]; dup {
				fmt.Fprintf(stderr, "assay compile: %s and %s both write %s (same experiment id)\n", prev, path, f)
				return ExitInput
			}
			from[f] = path
			files[f], _ = queryText(q, which)
			order = append(order, f)
		}
	}
	if out != "" {
		if err := os.MkdirAll(out, 0o755); err != nil {
			fmt.Fprintf(stderr, "assay compile: %v\n", err)
			return ExitInput
		}
		for _, f := range order {
			p := filepath.Join(out, f)
			if err := os.WriteFile(p, []byte(files[f]), 0o644); err != nil {
				fmt.Fprintf(stderr, "assay compile: %v\n", err)
				return ExitInput
			}
			fmt.Fprintf(stdout, "wrote %s\n", p)
		}
		return ExitOK
	}
	stale := 0
	for _, f := range order {
		p := filepath.Join(dir, f)
		got, err := os.ReadFile(p)
		switch {
		case errors.Is(err, os.ErrNotExist):
			fmt.Fprintf(stderr, "assay compile --check: %s is missing (compiled from %s)\n", p, from[f])
			stale++
		case err != nil:
			fmt.Fprintf(stderr, "assay compile --check: %v\n", err)
			return ExitInput
		case string(got) != files[f]:
			fmt.Fprintf(stderr, "assay compile --check: %s is stale: it differs from what %s compiles to now\n", p, from[f])
			stale++
			explainStale(stderr, got, files[f]) // library.go: names the metrics that changed
		}
	}
	if stale > 0 {
		fmt.Fprintf(stderr, "assay compile --check: %d of %d file(s) missing or stale; refresh them with assay compile --out %s and the same flags\n", stale, len(order), dir)
		return ExitStale
	}
	fmt.Fprintf(stdout, "%d file(s) in %s are up to date\n", len(order), dir)
	return ExitOK
}
