package cli

import (
	"bytes"
	"fmt"
	"io"
	"slices"
	"strings"

	"github.com/assay-dev/assay/compiler"
	"github.com/assay-dev/assay/dialects"
	"github.com/assay-dev/assay/metrics"
	"github.com/assay-dev/assay/report"
	"github.com/assay-dev/assay/results"
)

// cmdAnalyze is the bring-your-own-executor path: the per-variant result
// set of the main query that `assay compile` printed, run by the user's own
// pipeline and exported as CSV or JSON, analysed exactly as `assay run`
// analyses the rows it reads itself.
func cmdAnalyze(args []string, stdout, stderr io.Writer) int {
	fs := flagSet("analyze", "analyze [flags] SPEC.toml --aggregates FILE [--health FILE]", stderr)
	cf := compileFlags{dialect: "duckdb"}
	fs.StringVar(&cf.asOf, "as-of", "", "the --as-of the query was compiled with (RFC 3339); default: the one the result carries")
	cf.registerBreakdowns(fs)
	aggs := fs.String("aggregates", "", "the main query's result, exported as CSV or JSON (required); on engines without GROUPING SETS, the results of the main query and of each breakdown query, comma-separated")
	health := fs.String("health", "", "the health query's result, exported as CSV or JSON (recommended: exposure, trigger and exclusion counts)")
	format := fs.String("format", "text", "output format: text, json, markdown or html (one self-contained page with plots and the compiled SQL)")
	dialect := fs.String("dialect", "duckdb", "html: the SQL dialect the aggregates were computed in, for the SQL embedded in the page")
	mdLimit := fs.Int("markdown-limit", report.MarkdownLimit, "markdown: cap the report at this many bytes for a review comment, leaving out whole breakdowns and notes (named at the end); 0: no cap")
	failHarm := fs.Bool("fail-on-harm", false, "exit with code 5 when a guard metric shows harm")
	srmAlpha := fs.Float64("srm-alpha", report.SRMAlpha, "sample-ratio mismatch alarm threshold (p-value)")
	adjust := fs.String("adjust", "holm", "multiple-testing adjustment for secondary metrics and variants: holm, bh, bonferroni or none")
	path, code, ok := parse(fs, args)
	if !ok {
		return code
	}
	if *srmAlpha <= 0 || *srmAlpha >= 1 {
		fmt.Fprintf(stderr, "assay analyze: --srm-alpha must be between 0 and 1\n")
		return ExitInput
	}
	switch *adjust {
	case "holm", "bh", "bonferroni", "none":
	default:
		fmt.Fprintf(stderr, "assay analyze: --adjust must be holm, bh, bonferroni or none\n")
		return ExitInput
	}
	if *aggs == "" {
		fmt.Fprintf(stderr, "assay analyze: --aggregates FILE is required: the exported result of the main query that assay compile printed\n")
		return ExitInput
	}
	if !validFormat(*format) {
		fmt.Fprintf(stderr, "assay analyze: --format must be text, json, markdown or html\n")
		return ExitInput
	}
	if _, err := dialects.Lookup(*dialect); err != nil {
		fmt.Fprintf(stderr, "assay analyze: --dialect: %v\n", err)
		return ExitInput
	}
	spec, ok := load(path, stderr)
	if !ok {
		return ExitInput
	}
	t, err := readTables(strings.Split(*aggs, ","))
	if err != nil {
		fmt.Fprintf(stderr, "assay analyze: %v\n", err)
		return ExitInput
	}
	// The options come from the flags when given, and otherwise from the
	// result itself (its compile_options column), so that a result is read
	// with the as-of and breakdowns it was computed with.
	opt, err := resultOptions(t, spec)
	if err != nil {
		fmt.Fprintf(stderr, "assay analyze: %s: %v\n", *aggs, err)
		return ExitInput
	}
	if cf.asOf != "" || cf.groupBy != "" || !cf.segments {
		if opt, err = cf.options(spec); err != nil {
			fmt.Fprintf(stderr, "assay analyze: %v\n", err)
			return ExitInput
		}
	}
	plan, ds := compiler.Compile(spec, opt)
	printDiags(stderr, ds, nil)
	if ds.HasErrors() {
		return ExitInput
	}
	set, err := results.Main(plan, t.Columns, t.Rows)
	if err != nil {
		fmt.Fprintf(stderr, "assay analyze: %s: %v\n", *aggs, err)
		return ExitInput
	}
	if *health != "" {
		ht, err := results.ReadTable(*health)
		if err != nil {
			fmt.Fprintf(stderr, "assay analyze: %v\n", err)
			return ExitInput
		}
		if set.Health, err = results.Health(ht.Columns, ht.Rows); err != nil {
			fmt.Fprintf(stderr, "assay analyze: %s: %v\n", *health, err)
			return ExitInput
		}
		if set.Health == nil {
			set.Health = []results.HealthRow{}
		}
	} else {
		fmt.Fprintf(stderr, "assay analyze: no --health file: exposure, trigger and exclusion counts are not available; the sample-ratio check uses the eligible units\n")
	}
	rep, err := report.Analyze(plan, set, report.Options{SRMAlpha: *srmAlpha, Adjust: *adjust})
	if err != nil {
		fmt.Fprintf(stderr, "assay analyze: %s: %v\n", *aggs, err)
		return ExitInput
	}
	page := func(w io.Writer) error {
		d, err := dialects.Lookup(*dialect)
		if err != nil {
			return err
		}
		q, err := compiler.Print(plan, d)
		if err != nil {
			return err
		}
		return rep.HTML(w, plan, q, d.Name())
	}
	return emitReport(rep, *format, *failHarm, *mdLimit, stdout, stderr, page)
}

// validFormat reports whether f is an output format of run and analyze.
func validFormat(f string) bool {
	return f == "text" || f == "json" || f == "markdown" || f == "html"
}

// readTables reads exported results with the same columns (the main
// query and, on engines without GROUPING SETS, each breakdown query) as
// one table.
func readTables(paths []string) (*results.Table, error) {
	var all *results.Table
	for _, p := range paths {
		t, err := results.ReadTable(strings.TrimSpace(p))
		if err != nil {
			return nil, err
		}
		if all == nil {
			all = t
			continue
		}
		if !slices.EqualFunc(all.Columns, t.Columns, strings.EqualFold) {
			return nil, fmt.Errorf("%s: its columns differ from those of %s: export the main and breakdown queries of one compile", p, paths[0])
		}
		all.Rows = append(all.Rows, t.Rows...)
	}
	return all, nil
}

// resultOptions checks that a main result was computed from this spec
// (its spec_fingerprint column) and reads the compile options it carries.
func resultOptions(t *results.Table, spec *metrics.Spec) (compiler.Options, error) {
	col := func(name string) int {
		for i, c := range t.Columns {
			if strings.EqualFold(c, name) {
				return i
			}
		}
		return -1
	}
	fp, oc := col(compiler.ColSpecFingerprint), col(compiler.ColOptions)
	for _, c := range []struct {
		name string
		at   int
	}{{compiler.ColSpecFingerprint, fp}, {compiler.ColOptions, oc}} {
		if c.at < 0 {
			return compiler.Options{}, fmt.Errorf("the result has no %s column (is it the main query's result?), so it cannot be checked against the spec: export every column of the main query that assay compile printed", c.name)
		}
	}
	if len(t.Rows) == 0 {
		return compiler.Options{}, fmt.Errorf("the result has no rows, so it cannot be checked against the spec")
	}
	for i, row := range t.Rows {
		if got := results.Text(value(row, fp)); got != spec.Fingerprint {
			return compiler.Options{}, fmt.Errorf("row %d carries spec fingerprint %q, but the spec's is %s: the query was compiled from another version of the spec; compile it again and rerun it", i+1, got, spec.Fingerprint)
		}
	}
	return compiler.ParseOptions(results.Text(value(t.Rows[0], oc)))
}

func value(row []any, i int) any {
	if i < len(row) {
		return row[i]
	}
	return nil
}

// emitReport prints rep and returns the exit code, as assay run does.
// page writes the HTML page (format html).
func emitReport(rep *report.Report, format string, failHarm bool, mdLimit int, stdout, stderr io.Writer, page func(io.Writer) error) int {
	switch format {
	case "html":
		var buf bytes.Buffer
		if err := page(&buf); err != nil {
			fmt.Fprintf(stderr, "assay: html: %v\n", err)
			return ExitEngine
		}
		stdout.Write(buf.Bytes())
	case "json":
		b, err := rep.JSON()
		if err != nil {
			fmt.Fprintf(stderr, "assay: %v\n", err)
			return ExitEngine
		}
		stdout.Write(b)
	case "markdown":
		fmt.Fprint(stdout, rep.MarkdownCapped(mdLimit))
	default:
		fmt.Fprint(stdout, rep.Text())
	}
	if rep.Health.SampleRatio.Alarm {
		return ExitSRM
	}
	if failHarm && rep.HarmShown() {
		return ExitHarm
	}
	return ExitOK
}
