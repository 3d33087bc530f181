// Command assay-bench generates the benchmark data sets and measures assay's
// compiled SQL against the physical bound, a hand-written query and the
// notebook approach, on the same data in one run. See package bench.
//
//	assay-bench run [-sizes 10m,100m] [-dir /tmp/assay-bench] [-runs 5] [-threads 2] [-memory-limit 8GB] [-clean]
//	assay-bench gen -size 10m [-dir DIR] [-threads N] [-memory-limit 8GB]
//	assay-bench measure -db FILE -approach a [-runs 5] (one approach in its own process; JSON on stdout)
//	assay-bench time -db FILE [-runs 5] Q1.sql Q2.sql ... (for trying hand edits of the compiled SQL)
//	assay-bench sql [-metrics 10] [-query main] (print a benchmark query)
//
// Each approach runs in its own child process so that its peak resident
// memory is its own. Progress goes to stderr when it is a terminal.
package main

import (
	"bytes"
	"context"
	"encoding/json"
	"flag"
	"fmt"
	"io"
	"os"
	"os/exec"
	"os/signal"
	"strings"
	"text/tabwriter"
	"time"

	"github.com/assay-dev/assay/bench"
	"github.com/assay-dev/assay/compiler"
	"github.com/assay-dev/assay/engine"
)

func main() { os.Exit(run(os.Args[1:], os.Stdout, os.Stderr)) }

const usage = `usage:
  assay-bench run [flags]        generate missing data sets and measure every approach
  assay-bench gen -size NAME     write one data set
  assay-bench measure [flags]    measure one approach in this process (used by run)
  assay-bench time -db FILE Q.sql...   median time of each query file, and whether their results agree
  assay-bench explain -db FILE Q.sql   print EXPLAIN ANALYZE of a query file (time per operator)
  assay-bench sql [-metrics 10|1|50] [-query main|health|reference|notebook|bound]   print a benchmark query
sizes: tiny (2k units, 20k rows), 1m (100k units, 1M rows), 10m (1M units, 10M rows), 100m (10M units, 100M rows)
`

func run(args []string, stdout, stderr io.Writer) int {
	if len(args) == 0 {
		fmt.Fprint(stderr, usage)
		return 1
	}
	ctx, stop := signal.NotifyContext(context.Background(), os.Interrupt)
	defer stop()
	switch args[0] {
	case "run":
		return cmdRun(ctx, args[1:], stdout, stderr)
	case "gen":
		return cmdGen(ctx, args[1:], stderr)
	case "measure":
		return cmdMeasure(ctx, args[1:], stdout, stderr)
	case "time":
		return cmdTime(ctx, args[1:], stdout, stderr)
	case "sql":
		return cmdSQL(args[1:], stdout, stderr)
	case "explain":
		return cmdExplain(ctx, args[1:], stdout, stderr)
	}
	fmt.Fprint(stderr, usage)
	return 1
}

// engineFlags are the DuckDB settings every subcommand takes.
type engineFlags struct {
	threads int
	mem     string
	dir     string
}

func (e *engineFlags) register(fs *flag.FlagSet) {
	fs.IntVar(&e.threads, "threads", 0, "DuckDB worker threads (default: all cores)")
	fs.StringVar(&e.mem, "memory-limit", "8GB", "DuckDB memory limit; DuckDB spills to disk beyond it")
	fs.StringVar(&e.dir, "dir", "/tmp/assay-bench", "scratch directory for the data sets (keep it outside the repository)")
}

func (e *engineFlags) args() []string {
	return []string{"-threads", fmt.Sprint(e.threads), "-memory-limit", e.mem, "-dir", e.dir}
}

// progress returns a function printing stage lines with the elapsed time to
// stderr when it is a terminal, and nil otherwise.
func progress(stderr io.Writer, start time.Time) func(string) {
	f, ok := stderr.(*os.File)
	if !ok {
		return nil
	}
	st, err := f.Stat()
	if err != nil || st.Mode()&os.ModeCharDevice == 0 {
		return nil
	}
	return func(stage string) {
		fmt.Fprintf(stderr, "[%7s] %s\n", time.Since(start).Round(100*time.Millisecond), stage)
	}
}

func cmdGen(ctx context.Context, args []string, stderr io.Writer) int {
	fs := flag.NewFlagSet("gen", flag.ContinueOnError)
	fs.SetOutput(stderr)
	var ef engineFlags
	ef.register(fs)
	name := fs.String("size", "tiny", "data set size")
	if err := fs.Parse(args); err != nil {
		return 1
	}
	size, ok := bench.SizeByName(*name)
	if !ok {
		fmt.Fprintf(stderr, "assay-bench: unknown size %q\n", *name)
		return 1
	}
	start := time.Now()
	path := size.File(ef.dir)
	err := bench.Generate(ctx, path, size, bench.GenOptions{Threads: ef.threads, MemoryLimit: ef.mem, Progress: progress(stderr, start)})
	if err != nil {
		fmt.Fprintf(stderr, "assay-bench: %v\n", err)
		return 2
	}
	fmt.Fprintf(stderr, "assay-bench: wrote %s in %s\n", path, time.Since(start).Round(100*time.Millisecond))
	return 0
}

func cmdMeasure(ctx context.Context, args []string, stdout, stderr io.Writer) int {
	fs := flag.NewFlagSet("measure", flag.ContinueOnError)
	fs.SetOutput(stderr)
	var ef engineFlags
	ef.register(fs)
	dbPath := fs.String("db", "", "benchmark database file (opened read-only)")
	list := fs.String("approach", "a", "a, b, c, d, a1, a2, a2c or compile50; several, comma-separated, are timed round by round")
	runs := fs.Int("runs", 5, "timed runs after one warm-up")
	if err := fs.Parse(args); err != nil {
		return 1
	}
	db, err := engine.OpenDuckDB(engine.DuckDBOptions{Path: *dbPath, Threads: ef.threads, MemoryLimit: ef.mem})
	if err != nil {
		fmt.Fprintf(stderr, "assay-bench: %v\n", err)
		return 2
	}
	defer db.Close()
	var as []bench.Approach
	for _, a := range strings.Split(*list, ",") {
		as = append(as, bench.Approach(strings.TrimSpace(a)))
	}
	opt := bench.MeasureOptions{Runs: *runs, Progress: progress(stderr, time.Now())}
	var ms []bench.Measurement
	if len(as) == 1 {
		ms = []bench.Measurement{bench.Measure(ctx, db, as[0], opt)}
	} else {
		ms = bench.MeasureInterleaved(ctx, db, as, opt)
	}
	b, _ := json.Marshal(ms)
	stdout.Write(append(b, '\n'))
	for _, m := range ms {
		if m.Err != "" {
			return 2
		}
	}
	return 0
}

// child runs assay-bench measure in a new process and decodes its output.
func child(ctx context.Context, self, path string, as []bench.Approach, runs int, ef engineFlags, stderr io.Writer) []bench.Measurement {
	names := make([]string, len(as))
	for i, a := range as {
		names[i] = string(a)
	}
	var out bytes.Buffer
	cmd := exec.CommandContext(ctx, self, append([]string{"measure", "-db", path, "-approach", strings.Join(names, ","), "-runs", fmt.Sprint(runs)}, ef.args()...)...)
	cmd.Stdout, cmd.Stderr = &out, stderr
	runErr := cmd.Run()
	var ms []bench.Measurement
	if err := json.Unmarshal(out.Bytes(), &ms); err != nil || len(ms) != len(as) {
		ms = make([]bench.Measurement, len(as))
		for i, a := range as {
			ms[i] = bench.Measurement{Approach: a, Err: fmt.Sprintf("measuring process failed: %v", runErr)}
		}
	}
	return ms
}

func loadAvg() string {
	b, err := os.ReadFile("/proc/loadavg")
	if err != nil {
		return "unknown"
	}
	f := strings.Fields(string(b))
	if len(f) < 3 {
		return "unknown"
	}
	return strings.Join(f[:3], " ")
}

// sizeResult is everything measured at one size.
type sizeResult struct {
	Size    bench.Size
	GenTime time.Duration // 0 when the data set already existed
	By      map[bench.Approach]bench.Measurement
	// LoadBefore and LoadAfter are /proc/loadavg's 1, 5 and 15 minute load
	// averages around the measurements: other work on the machine.
	LoadBefore, LoadAfter string
}

func cmdRun(ctx context.Context, args []string, stdout, stderr io.Writer) int {
	fs := flag.NewFlagSet("run", flag.ContinueOnError)
	fs.SetOutput(stderr)
	var ef engineFlags
	ef.register(fs)
	sizes := fs.String("sizes", "10m", "comma-separated data set sizes")
	runs := fs.Int("runs", 5, "timed runs per approach after one warm-up (medians are reported)")
	list := fs.String("approaches", "a,b,c,d,a1,a2,a2c,compile50", "approaches to measure")
	clean := fs.Bool("clean", false, "delete each data set after measuring it")
	jsonOut := fs.String("json", "", "also write all measurements to this file")
	if err := fs.Parse(args); err != nil {
		return 1
	}
	self, err := os.Executable()
	if err != nil {
		fmt.Fprintf(stderr, "assay-bench: %v\n", err)
		return 2
	}
	start := time.Now()
	prog := progress(stderr, start)
	var results []*sizeResult
	failed := false
	for _, name := range strings.Split(*sizes, ",") {
		size, ok := bench.SizeByName(strings.TrimSpace(name))
		if !ok {
			fmt.Fprintf(stderr, "assay-bench: unknown size %q\n", name)
			return 1
		}
		r := &sizeResult{Size: size, By: map[bench.Approach]bench.Measurement{}}
		path := size.File(ef.dir)
		if _, err := os.Stat(path); err != nil {
			if prog != nil {
				prog("generating " + size.Name)
			}
			t0 := time.Now()
			cmd := exec.CommandContext(ctx, self, append([]string{"gen", "-size", size.Name}, ef.args()...)...)
			cmd.Stderr = stderr
			if err := cmd.Run(); err != nil {
				fmt.Fprintf(stderr, "assay-bench: generating %s: %v\n", size.Name, err)
				return 2
			}
			r.GenTime = time.Since(t0)
		}
		var timed []bench.Approach
		compile := false
		for _, a := range strings.Split(*list, ",") {
			switch a := bench.Approach(strings.TrimSpace(a)); a {
			case bench.Compile50:
				compile = true
			default:
				timed = append(timed, a)
			}
		}
		r.LoadBefore = loadAvg()
		if prog != nil {
			prog(fmt.Sprintf("%s: timing %d approaches round by round", size.Name, len(timed)))
		}
		for _, m := range child(ctx, self, path, timed, *runs, ef, stderr) {
			r.By[m.Approach] = m
		}
		// Peak memory: each approach alone in a fresh process, one run.
		for _, a := range timed {
			if prog != nil {
				prog(fmt.Sprintf("%s: peak memory of %s", size.Name, a.Describe()))
			}
			m := child(ctx, self, path, []bench.Approach{a}, 1, ef, stderr)[0]
			t := r.By[a]
			t.MaxRSS, t.HeapInUse, t.Full = m.MaxRSS, m.HeapInUse, m.Full
			if t.Err == "" {
				t.Err = m.Err
			}
			r.By[a] = t
		}
		if compile {
			r.By[bench.Compile50] = child(ctx, self, path, []bench.Approach{bench.Compile50}, 50, ef, stderr)[0]
		}
		r.LoadAfter = loadAvg()
		for _, m := range r.By {
			if m.Err != "" {
				fmt.Fprintf(stderr, "assay-bench: %s %s: %s\n", size.Name, m.Approach, m.Err)
				failed = true
			}
		}
		results = append(results, r)
		if *clean {
			os.Remove(path)
		}
		if !printSize(stdout, r, ef) {
			failed = true
		}
	}
	printAcross(stdout, results)
	if *jsonOut != "" {
		b, _ := json.MarshalIndent(results, "", "  ")
		if err := os.WriteFile(*jsonOut, b, 0o644); err != nil {
			fmt.Fprintf(stderr, "assay-bench: %v\n", err)
			failed = true
		}
	}
	if failed {
		return 3
	}
	return 0
}

func mib(b int64) string { return fmt.Sprintf("%.1f MiB", float64(b)/(1<<20)) }

func secs(d time.Duration) string {
	if d < time.Second {
		return fmt.Sprintf("%.2f ms", float64(d)/1e6)
	}
	return fmt.Sprintf("%.3f s", d.Seconds())
}

func ratio(a, b time.Duration) string {
	if a == 0 || b == 0 {
		return "n/a"
	}
	return fmt.Sprintf("%.2f", float64(a)/float64(b))
}

// printSize prints one size's table, ratios and agreement check. It reports
// whether the approaches agree.
func printSize(w io.Writer, r *sizeResult, ef engineFlags) bool {
	s := r.Size
	fmt.Fprintf(w, "\n== size %s: %d units, %d outcome rows (orders %d, sessions %d); threads %d, memory limit %s\n",
		s.Name, s.Units, s.Rows, s.OrderRows(), s.SessionRows(), ef.threads, ef.mem)
	if r.GenTime > 0 {
		fmt.Fprintf(w, "generated in %s\n", secs(r.GenTime))
	}
	fmt.Fprintf(w, "load average before %s, after %s (1, 5, 15 min); times are medians of round-by-round runs\n", r.LoadBefore, r.LoadAfter)
	tw := tabwriter.NewWriter(w, 2, 8, 2, ' ', 0)
	fmt.Fprintln(tw, "approach\tmedian\tmin\truns\tfirst run\tpeak RSS\tGo heap after analysis\t")
	for _, a := range bench.Approaches {
		m, ok := r.By[a]
		if !ok || m.Err != "" {
			continue
		}
		fmt.Fprintf(tw, "%s\t%s\t%s\t%d\t%s\t%s\t%s\t\n", a.Describe(), secs(m.Median), secs(minimum(m.Times)), len(m.Times), secs(m.Cold), mib(m.MaxRSS), mib(int64(m.HeapInUse)))
		if a == bench.Assay {
			fmt.Fprintf(tw, "(a+) assay run: main + health + analysis\t%s\t\t1\t\t\t\t\n", secs(m.Full))
		}
	}
	tw.Flush()
	med := func(a bench.Approach) time.Duration { return r.By[a].Median }
	fmt.Fprintf(w, "(a)/(b) = %s   (a)/(c) = %s   (d)/(a) = %s   10 metrics/1 metric (a)/(a1) = %s   10 metrics/1 per source (a)/(a2) = %s   10 metrics/1 per source with CUPED (a)/(a2c) = %s\n",
		ratio(med(bench.Assay), med(bench.Bound)), ratio(med(bench.Assay), med(bench.Reference)),
		ratio(med(bench.Notebook), med(bench.Assay)), ratio(med(bench.Assay), med(bench.AssayOne)), ratio(med(bench.Assay), med(bench.AssayTwo)),
		ratio(med(bench.Assay), med(bench.AssayCov)))
	ok := true
	base := r.By[bench.Assay].Decode()
	for _, a := range []bench.Approach{bench.Reference, bench.Notebook} {
		m, found := r.By[a]
		if !found || base == nil || m.Err != "" {
			continue
		}
		mm := bench.Compare(base, m.Decode(), 1e-9)
		if len(mm) == 0 {
			fmt.Fprintf(w, "agreement (a) vs %s: all %d statistics equal to 1e-9 relative\n", a, countStats(base))
			continue
		}
		ok = false
		fmt.Fprintf(w, "DISAGREEMENT (a) vs %s: %d statistics differ\n", a, len(mm))
		for i, x := range mm {
			if i == 10 {
				break
			}
			fmt.Fprintf(w, "  %v\n", x)
		}
	}
	return ok
}

func minimum(ts []time.Duration) time.Duration {
	var m time.Duration
	for i, t := range ts {
		if i == 0 || t < m {
			m = t
		}
	}
	return m
}

func countStats(a bench.Aggregates) int {
	n := 0
	for _, row := range a {
		n += len(row)
	}
	return n
}

// printAcross prints the ratios between sizes: time growth and Go heap
// growth from each size to the next larger one.
func printAcross(w io.Writer, rs []*sizeResult) {
	for i := 1; i < len(rs); i++ {
		p, q := rs[i-1], rs[i]
		pa, qa := p.By[bench.Assay], q.By[bench.Assay]
		fmt.Fprintf(w, "\n%s/%s: rows x%.0f, units x%.0f; (a) time x%s, (b) time x%s, (c) time x%s; Go heap after analysis x%.2f (%s -> %s)\n",
			q.Size.Name, p.Size.Name, float64(q.Size.Rows)/float64(p.Size.Rows), float64(q.Size.Units)/float64(p.Size.Units),
			ratio(qa.Median, pa.Median), ratio(q.By[bench.Bound].Median, p.By[bench.Bound].Median),
			ratio(q.By[bench.Reference].Median, p.By[bench.Reference].Median),
			float64(qa.HeapInUse)/float64(max(pa.HeapInUse, 1)), mib(int64(pa.HeapInUse)), mib(int64(qa.HeapInUse)))
	}
}

func cmdSQL(args []string, stdout, stderr io.Writer) int {
	fs := flag.NewFlagSet("sql", flag.ContinueOnError)
	fs.SetOutput(stderr)
	n := fs.Int("metrics", 10, "spec: 10, 1, 2 (one per source) or 50 metrics")
	which := fs.String("query", "main", "main, health, reference, notebook or bound")
	if err := fs.Parse(args); err != nil {
		return 1
	}
	src := map[int][]byte{10: bench.Spec10, 1: bench.Spec1(), 2: bench.Spec2(), 50: bench.Spec50()}[*n]
	if src == nil {
		fmt.Fprintf(stderr, "assay-bench: -metrics must be 10, 1 or 50\n")
		return 1
	}
	_, q, err := bench.Compile("spec.toml", src)
	if err != nil {
		fmt.Fprintf(stderr, "assay-bench: %v\n", err)
		return 2
	}
	switch *which {
	// The setup statement, when there is one, comes first and the cleanup
	// is left out, so that the text runs as one file whose last statement
	// returns the rows (the next setup replaces the table).
	case "main":
		fmt.Fprint(stdout, withSetup(q, q.Main))
	case "health":
		fmt.Fprint(stdout, withSetup(q, q.Health))
	case "reference":
		fmt.Fprint(stdout, bench.ReferenceSQL())
	case "notebook":
		fmt.Fprint(stdout, bench.NotebookSQL())
	case "bound":
		fmt.Fprint(stdout, bench.BoundSQL())
	default:
		fmt.Fprintf(stderr, "assay-bench: unknown -query %q\n", *which)
		return 1
	}
	return 0
}

// cmdTime times query files on one database, interleaving them run by run
// so that they see the same machine state, and checks that every file
// returns the same aggregates as the first.
func cmdTime(ctx context.Context, args []string, stdout, stderr io.Writer) int {
	fs := flag.NewFlagSet("time", flag.ContinueOnError)
	fs.SetOutput(stderr)
	var ef engineFlags
	ef.register(fs)
	dbPath := fs.String("db", "", "benchmark database file (opened read-only)")
	runs := fs.Int("runs", 5, "timed runs per file after one warm-up")
	if err := fs.Parse(args); err != nil {
		return 1
	}
	db, err := engine.OpenDuckDB(engine.DuckDBOptions{Path: *dbPath, Threads: ef.threads, MemoryLimit: ef.mem})
	if err != nil {
		fmt.Fprintf(stderr, "assay-bench: %v\n", err)
		return 2
	}
	defer db.Close()
	files := fs.Args()
	texts := make([]string, len(files))
	for i, f := range files {
		b, err := os.ReadFile(f)
		if err != nil {
			fmt.Fprintf(stderr, "assay-bench: %v\n", err)
			return 1
		}
		texts[i] = strings.TrimRight(strings.TrimSpace(string(b)), ";")
	}
	times := make([][]time.Duration, len(files))
	results := make([]bench.Aggregates, len(files))
	prog := progress(stderr, time.Now())
	for r := 0; r <= *runs; r++ {
		for i, q := range texts {
			if prog != nil {
				prog(fmt.Sprintf("run %d: %s", r, files[i]))
			}
			t0 := time.Now()
			agg, err := bench.QueryAggregates(ctx, db, q)
			el := time.Since(t0)
			if err != nil {
				fmt.Fprintf(stderr, "assay-bench: %s: %v\n", files[i], err)
				return 2
			}
			if r > 0 {
				times[i] = append(times[i], el)
			}
			results[i] = agg
		}
	}
	code := 0
	base := bench.Median(times[0])
	for i, f := range files {
		mm := bench.Compare(results[i], results[0], 1e-9)
		agree := "agrees with the first"
		if len(mm) > 0 {
			agree = fmt.Sprintf("DIFFERS from the first in %d statistics, e.g. %v", len(mm), mm[0])
			code = 3
		}
		fmt.Fprintf(stdout, "%-50s median %s  x%.3f of the first  %s\n", f, secs(bench.Median(times[i])), float64(bench.Median(times[i]))/float64(base), agree)
	}
	return code
}

func cmdExplain(ctx context.Context, args []string, stdout, stderr io.Writer) int {
	fs := flag.NewFlagSet("explain", flag.ContinueOnError)
	fs.SetOutput(stderr)
	var ef engineFlags
	ef.register(fs)
	dbPath := fs.String("db", "", "benchmark database file (opened read-only)")
	if err := fs.Parse(args); err != nil || fs.NArg() != 1 {
		fmt.Fprintf(stderr, "usage: assay-bench explain -db FILE Q.sql\n")
		return 1
	}
	b, err := os.ReadFile(fs.Arg(0))
	if err != nil {
		fmt.Fprintf(stderr, "assay-bench: %v\n", err)
		return 1
	}
	db, err := engine.OpenDuckDB(engine.DuckDBOptions{Path: *dbPath, Threads: ef.threads, MemoryLimit: ef.mem})
	if err != nil {
		fmt.Fprintf(stderr, "assay-bench: %v\n", err)
		return 2
	}
	defer db.Close()
	rs, err := db.QueryContext(ctx, "EXPLAIN ANALYZE "+strings.TrimRight(strings.TrimSpace(string(b)), ";"))
	if err != nil {
		fmt.Fprintf(stderr, "assay-bench: %v\n", engine.CleanError(err))
		return 2
	}
	defer rs.Close()
	for rs.Next() {
		var k, v string
		if err := rs.Scan(&k, &v); err != nil {
			fmt.Fprintf(stderr, "assay-bench: %v\n", err)
			return 2
		}
		fmt.Fprintln(stdout, v)
	}
	return 0
}

// withSetup is query preceded by q's setup statement, if any.
func withSetup(q compiler.Queries, query string) string {
	if q.Setup == "" {
		return query
	}
	return strings.TrimRight(q.Setup, "\n") + ";\n\n" + query
}
