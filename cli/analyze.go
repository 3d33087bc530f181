package cli

import (
	"fmt"
	"io"
	"strings"

	"github.com/assay-dev/assay/compiler"
	"github.com/assay-dev/assay/engine"
	"github.com/assay-dev/assay/report"
)

// cmdAnalyze is the bring-your-own-executor path: the per-variant result
// set of the main query that `assay compile` printed, run by the user's own
// pipeline and exported as CSV or JSON, analysed exactly as `assay run`
// analyses the rows it reads itself.
func cmdAnalyze(args []string, stdout, stderr io.Writer) int {
	fs := flagSet("analyze", "analyze [flags] SPEC.toml --aggregates FILE [--health FILE]", stderr)
	cf := compileFlags{dialect: "duckdb"}
	fs.StringVar(&cf.asOf, "as-of", "", "the --as-of the query was compiled with (RFC 3339); default: the analysis end")
	aggs := fs.String("aggregates", "", "the main query's result, exported as CSV or JSON (required)")
	health := fs.String("health", "", "the health query's result, exported as CSV or JSON (recommended: exposure, trigger and exclusion counts)")
	format := fs.String("format", "text", "output format: text, json or markdown")
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
	if *format != "text" && *format != "json" && *format != "markdown" {
		fmt.Fprintf(stderr, "assay analyze: --format must be text, json or markdown\n")
		return ExitInput
	}
	spec, ok := load(path, stderr)
	if !ok {
		return ExitInput
	}
	plan, _, ok := cf.plan(spec, stderr)
	if !ok {
		return ExitInput
	}
	t, err := engine.ReadTable(*aggs)
	if err != nil {
		fmt.Fprintf(stderr, "assay analyze: %v\n", err)
		return ExitInput
	}
	rows, err := t.MainRows(nil)
	if err != nil {
		fmt.Fprintf(stderr, "assay analyze: %s: %v\n", *aggs, err)
		return ExitInput
	}
	if err := checkFingerprint(t, rows, spec.Fingerprint); err != nil {
		fmt.Fprintf(stderr, "assay analyze: %s: %v\n", *aggs, err)
		return ExitInput
	}
	engine.MatchStatColumns(rows, statColumns(plan))
	res := &engine.Result{Rows: rows}
	if *health != "" {
		ht, err := engine.ReadTable(*health)
		if err != nil {
			fmt.Fprintf(stderr, "assay analyze: %v\n", err)
			return ExitInput
		}
		if res.Health, err = ht.HealthRows(); err != nil {
			fmt.Fprintf(stderr, "assay analyze: %s: %v\n", *health, err)
			return ExitInput
		}
	} else {
		fmt.Fprintf(stderr, "assay analyze: no --health file: exposure, trigger and exclusion counts are missing from the report; the sample-ratio check uses the eligible units\n")
	}
	rep, err := report.Analyze(plan, res, report.Options{SRMAlpha: *srmAlpha, Adjust: *adjust})
	if err != nil {
		fmt.Fprintf(stderr, "assay: %v\n", err)
		return ExitInput
	}
	return emitReport(rep, *format, *failHarm, stdout, stderr)
}

// checkFingerprint makes sure the result was computed by a query compiled
// from this very spec.
func checkFingerprint(t *engine.Table, rows []engine.Row, want string) error {
	has := false
	for _, c := range t.Columns {
		has = has || strings.EqualFold(c, compiler.ColFingerprint)
	}
	if !has {
		return fmt.Errorf("the result has no %s column, so it cannot be checked against the spec: export every column of the main query that assay compile printed", compiler.ColFingerprint)
	}
	if len(rows) == 0 {
		return fmt.Errorf("the result has no rows, so it cannot be checked against the spec")
	}
	for i, r := range rows {
		if r.Fingerprint != want {
			return fmt.Errorf("row %d carries spec fingerprint %q, but the spec's is %s: the query was compiled from another version of the spec; compile it again and rerun it", i+1, r.Fingerprint, want)
		}
	}
	return nil
}

// statColumns lists every statistics column name the plan's metrics can
// have, for matching names that an engine returned in another case.
func statColumns(p *compiler.Plan) []string {
	var out []string
	for _, mp := range p.Metrics {
		for _, st := range []string{compiler.StatN, compiler.StatMean, compiler.StatVar, compiler.StatNumMean,
			compiler.StatDenMean, compiler.StatNumVar, compiler.StatDenVar, compiler.StatCov} {
			out = append(out, compiler.StatColumn(mp.M.Name, st))
		}
	}
	return out
}

// emitReport prints rep and returns the exit code, as assay run does.
func emitReport(rep *report.Report, format string, failHarm bool, stdout, stderr io.Writer) int {
	switch format {
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
	if failHarm && rep.HarmShown() {
		return ExitHarm
	}
	return ExitOK
}
