package cli

import (
	"flag"
	"fmt"
	"io"
	"strings"
	"time"

	"github.com/assay-dev/assay/compiler"
	"github.com/assay-dev/assay/dialects"
	"github.com/assay-dev/assay/metrics"
)

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
