package cli

import (
	"context"
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
	"github.com/assay-dev/assay/metrics"
	"github.com/assay-dev/assay/pipeline"
	"github.com/assay-dev/assay/report"
)

// cmdSize plans an experiment before launch: it runs the spec's planning
// query (the [planning] stand-in trigger over a pre-period, every unit in
// one pooled arm) and prints baselines, traffic by whole week, minimum
// detectable effects and, for a target effect, the shortest duration.
func cmdSize(args []string, stdout, stderr io.Writer) int {
	fs := flagSet("size", "size [flags] SPEC.toml", stderr)
	db := fs.String("db", "", "DuckDB database file, opened read-only (default: in-memory; file sources are read directly)")
	dsn := fs.String("dsn", "", "run on a PostgreSQL or MySQL/MariaDB server instead of DuckDB (default: $ASSAY_DSN; the password is never printed)")
	start := fs.String("start", "", "pre-period start (RFC 3339; default: [planning] pre_start)")
	end := fs.String("end", "", "pre-period end (RFC 3339; default: [planning] pre_end)")
	target := fs.Float64("target", 0, "smallest effect on the primary metric worth detecting (default: [planning] target_effect)")
	scale := fs.String("target-scale", "", "relative (0.03 is +3%) or absolute (the metric's own units); default: [planning] target_scale")
	power := fs.Float64("power", 0, "power to plan for (default: [planning] power, else 0.8)")
	maxWeeks := fs.Int("max-weeks", 0, "longest duration to consider, in whole weeks (default: [planning] max_weeks, else 8)")
	adjust := fs.String("adjust", "holm", "the multiple-testing adjustment the run will use: holm, bh, bonferroni or none")
	format := fs.String("format", "text", "output format: text, markdown, json, toml (the [planning] table only) or sql (print the planning query without running it)")
	dialect := fs.String("dialect", "duckdb", "SQL dialect of --format sql: "+strings.Join(dialects.Names(), ", "))
	path, code, ok := parse(fs, args)
	if !ok {
		return code
	}
	fail := func(format string, a ...any) int {
		fmt.Fprintf(stderr, "assay size: "+format+"\n", a...)
		return ExitInput
	}
	switch *format {
	case "text", "markdown", "json", "toml", "sql":
	default:
		return fail("--format must be text, markdown, json, toml or sql")
	}
	switch *adjust {
	case "holm", "bh", "bonferroni", "none":
	default:
		return fail("--adjust must be holm, bh, bonferroni or none")
	}
	if *power != 0 && (*power <= 0 || *power >= 1) {
		return fail("--power must be between 0 and 1 (exclusive)")
	}
	if *maxWeeks != 0 && (*maxWeeks < 1 || *maxWeeks > metrics.MaxPlanWeeks) {
		return fail("--max-weeks must be from 1 to %d", metrics.MaxPlanWeeks)
	}
	if *target < 0 || (*target == 0 && isFlagSet(fs.Visit, "target")) {
		return fail("--target must be positive")
	}
	if *scale != "" && *scale != "relative" && *scale != "absolute" {
		return fail("--target-scale must be relative or absolute")
	}
	spec, ok := load(path, stderr)
	if !ok {
		return ExitInput
	}
	if spec.Planning == nil || spec.Planning.StandIn == nil {
		return fail("%s has no [planning] table with a stand-in trigger; add one, e.g.\n\n  [planning]\n  stand_in = { source = \"visits\", filter = \"screen = 'home'\" }\n\nnaming the rows that mark when a unit would have been exposed", path)
	}
	opt := compiler.Options{StandIn: true, Breakdowns: []string{compiler.KeyTriggerDay}}
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
			return fail("%s: %v", o.flag, err)
		}
		*o.dst = t
	}
	if opt.Start.IsZero() != opt.End.IsZero() {
		return fail("give both --start and --end, or neither")
	}
	sopt := report.SizeOptions{Power: *power, MaxWeeks: *maxWeeks, Adjust: *adjust, Target: *target, TargetRelative: true}
	if *target > 0 && *scale == "" {
		sopt.TargetRelative = spec.Planning.Target == 0 || spec.Planning.TargetRelative
	} else if *scale != "" {
		if *target == 0 {
			return fail("--target-scale needs --target")
		}
		sopt.TargetRelative = *scale == "relative"
	}
	if *format == "sql" {
		d, err := dialects.Lookup(*dialect)
		if err != nil {
			return fail("%v", err)
		}
		plan, ds := compiler.Compile(spec, opt)
		printDiags(stderr, ds, specText(path))
		if ds.HasErrors() {
			return ExitInput
		}
		q, err := compiler.Print(plan, d)
		if err != nil {
			return fail("%v", err)
		}
		fmt.Fprint(stdout, q.Script(true, true))
		return ExitOK
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
	prog := newProgress(stderr)
	defer prog.Done()
	prog.Stage("checking sources and columns")
	cds, empty, err := eng.Check(ctx, StandInView(spec))
	if err != nil {
		prog.Pause()
		return queryFailed(ctx, stderr, err)
	}
	if len(cds) > 0 {
		prog.Pause()
		printDiags(stderr, cds, specText(path))
		if cds.HasErrors() {
			return ExitInput
		}
	}
	plan, q, ds, err := eng.Compile(ctx, spec, opt)
	if len(ds) > 0 {
		prog.Pause()
		printDiags(stderr, ds, specText(path))
	}
	if ds.HasErrors() {
		return ExitInput
	}
	if err != nil {
		prog.Pause()
		return openFailed(stderr, err)
	}
	prog.Stage("running the planning query over the pre-period")
	set, err := eng.Run(ctx, plan, q, true)
	if err != nil {
		prog.Pause()
		return queryFailed(ctx, stderr, err)
	}
	prog.Done()
	z, err := report.Size(plan, set, sopt)
	if err != nil {
		return fail("%v", err)
	}
	if len(empty) > 0 {
		z.Cautions = append([]string{fmt.Sprintf("Sources without rows, read as zeros: %s.", strings.Join(empty, ", "))}, z.Cautions...)
	}
	switch *format {
	case "json":
		b, err := z.JSON()
		if err != nil {
			fmt.Fprintf(stderr, "assay: %v\n", err)
			return ExitEngine
		}
		stdout.Write(b)
	case "markdown":
		fmt.Fprint(stdout, z.Markdown())
	case "toml":
		fmt.Fprint(stdout, z.TOML)
	default:
		fmt.Fprint(stdout, z.Text())
	}
	return ExitOK
}

// isFlagSet reports whether the flag called name was given.
func isFlagSet(visit func(func(*flag.Flag)), name string) bool {
	set := false
	visit(func(f *flag.Flag) {
		if f.Name == name {
			set = true
		}
	})
	return set
}

// StandInView returns the spec as a planning query reads it, for the
// catalogue check: its exposure is the stand-in trigger, and it holds only
// the sources the stand-in, the metrics and the eligibility rules read, so
// that the real exposure source (which may not exist before launch) and
// segment-only sources are not required. The spec is not edited.
func StandInView(s *metrics.Spec) *metrics.Spec {
	if s.Planning == nil || s.Planning.StandIn == nil {
		return s
	}
	c := *s
	si := s.Planning.StandIn
	c.Exposure = metrics.Exposure{Source: si.Source, Filter: si.Filter, At: si.At}
	used := map[*metrics.Source]bool{si.Source: true}
	for _, m := range s.Metrics {
		for _, a := range m.Aggs() {
			if a != nil {
				used[a.Source] = true
			}
		}
		if m.Covariate != nil && m.Covariate.Agg != nil {
			used[m.Covariate.Agg.Source] = true
		}
	}
	for _, r := range s.Rules {
		used[r.Source] = true
	}
	c.Segments = nil // planning queries group by trigger day only
	c.Sources = nil
	for _, src := range s.Sources {
		if used[src] {
			c.Sources = append(c.Sources, src)
		}
	}
	return &c
}
