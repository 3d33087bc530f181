package cli

import (
	"context"
	"encoding/json"
	"fmt"
	"io"
	"math"
	"os"
	"os/signal"
	"strconv"
	"strings"
	"text/tabwriter"
	"time"

	"github.com/assay-dev/assay/engine/store"
	"github.com/assay-dev/assay/report/html"
)

// historyDoc is the JSON form of `assay history`: one point per stored run
// and treatment variant, ordered by as-of time.
type historyDoc struct {
	Experiment string        `json:"experiment"`
	Metric     string        `json:"metric"`
	Store      string        `json:"store"`
	Points     []store.Point `json:"points"`
}

// cmdHistory is `assay history`: how a metric's estimate and interval
// moved across the stored runs of one experiment.
func cmdHistory(args []string, stdout, stderr io.Writer) int {
	fs := flagSet("history", "history --store FILE [--format text|json] [--variant NAME] EXPERIMENT METRIC", stderr)
	storePath := fs.String("store", "", "the results store written by assay fleet --store")
	format := fs.String("format", "text", "output format: text, json or html (a self-contained page with a plot per variant)")
	variant := fs.String("variant", "", "only this treatment variant (default: every one)")
	wait := fs.Duration("store-wait", time.Minute, "how long to wait for the results store while another run holds it")
	pos, code, ok := parseMany(fs, args)
	if !ok {
		return code
	}
	switch {
	case len(pos) != 2:
		fmt.Fprintf(stderr, "assay history: give an experiment id and a metric name\n")
		fs.Usage()
		return ExitInput
	case *storePath == "":
		fmt.Fprintf(stderr, "assay history: --store FILE is required\n")
		return ExitInput
	case *format != "text" && *format != "json" && *format != "html":
		fmt.Fprintf(stderr, "assay history: --format must be text, json or html\n")
		return ExitInput
	}
	if _, err := os.Stat(*storePath); err != nil {
		fmt.Fprintf(stderr, "assay history: results store %s: %v\n", *storePath, cleanErr(err))
		return ExitInput
	}
	ctx, stop := signal.NotifyContext(context.Background(), os.Interrupt)
	defer stop()
	s, err := store.OpenReadOnly(ctx, *storePath, *wait)
	if err != nil {
		fmt.Fprintf(stderr, "assay history: %v\n", err)
		return ExitEngine
	}
	defer s.Close()
	points, err := s.History(ctx, pos[0], pos[1])
	if err != nil {
		fmt.Fprintf(stderr, "assay history: %v\n", err)
		return ExitEngine
	}
	if *variant != "" {
		kept := points[:0]
		for _, p := range points {
			if p.Variant == *variant {
				kept = append(kept, p)
			}
		}
		points = kept
	}
	if points == nil {
		points = []store.Point{}
	}
	if *format == "json" {
		b, err := json.MarshalIndent(historyDoc{Experiment: pos[0], Metric: pos[1], Store: *storePath, Points: points}, "", "  ")
		if err != nil {
			fmt.Fprintf(stderr, "assay history: %v\n", err)
			return ExitEngine
		}
		stdout.Write(append(b, '\n'))
		return ExitOK
	}
	if *format == "html" {
		if err := historyHTML(stdout, pos[0], pos[1], points); err != nil {
			fmt.Fprintf(stderr, "assay history: %v\n", err)
			return ExitEngine
		}
		return ExitOK
	}
	if len(points) == 0 {
		fmt.Fprintf(stdout, "No stored runs of metric %s in experiment %s in %s.\n", pos[1], pos[0], *storePath)
		return ExitOK
	}
	fmt.Fprintf(stdout, "History of %s in experiment %s: %d point(s), by as-of time\n\n", pos[1], pos[0], len(points))
	tw := tabwriter.NewWriter(stdout, 0, 0, 2, ' ', 0)
	fmt.Fprintln(tw, "as of\trun at\tvariant\tdifference\tinterval\trelative\tp-value\tunits\tfingerprint\tstatus")
	for _, p := range points {
		fmt.Fprintf(tw, "%s\t%s\t%s vs %s\t%s\t[%s, %s]\t%s\t%s\t%s\t%s\t%s\n",
			p.AsOf.Format(time.RFC3339), p.RunAt.Format(time.RFC3339), p.Variant, p.Baseline,
			num(p.Difference, 'g'), num(p.CILow, 'g'), num(p.CIHigh, 'g'), pct(p.Relative), num(p.PValue, 'p'), num(p.N, 'n'), p.Fingerprint, p.Status)
	}
	tw.Flush()
	return ExitOK
}

// num formats an optional number: 'g' with 4 significant digits and a
// sign, 'p' a p-value, 'n' a count; "-" when missing.
func num(x *float64, kind byte) string {
	if x == nil {
		return "-"
	}
	switch kind {
	case 'p':
		if *x < 0.0001 {
			return "<0.0001"
		}
		return strconv.FormatFloat(*x, 'f', 4, 64)
	case 'n':
		return strconv.FormatFloat(*x, 'f', 0, 64)
	}
	s := strconv.FormatFloat(*x, 'g', 4, 64)
	if !strings.HasPrefix(s, "-") {
		s = "+" + s
	}
	return s
}

func pct(x *float64) string {
	if x == nil {
		return "-"
	}
	return fmt.Sprintf("%+.2f%%", 100**x)
}

// cleanErr drops the operation and path from a file error.
func cleanErr(err error) string {
	var pe *os.PathError
	if e, ok := err.(*os.PathError); ok {
		pe = e
		return pe.Err.Error()
	}
	return err.Error()
}

// historyHTML writes the history as a self-contained page: per treatment
// variant, the estimate and its interval against the as-of time of each
// run, with the numbers in a table beside the plot.
func historyHTML(w io.Writer, experiment, metric string, points []store.Point) error {
	page := html.Page{Title: fmt.Sprintf("History of %s in %s", metric, experiment)}
	var variants []string
	byVariant := map[string][]store.Point{}
	for _, p := range points {
		if _, ok := byVariant[p.Variant]; !ok {
			variants = append(variants, p.Variant)
		}
		byVariant[p.Variant] = append(byVariant[p.Variant], p)
	}
	if len(points) == 0 {
		page.Sections = append(page.Sections, html.Section{Heading: "No stored runs", Blocks: []html.Block{html.Paragraph{Text: "The results store holds no run of this metric in this experiment."}}})
	}
	val := func(x *float64) float64 {
		if x == nil {
			return math.NaN()
		}
		return *x
	}
	for _, v := range variants {
		ps := byVariant[v]
		line := html.Line{ID: "history-" + v, Title: fmt.Sprintf("%s vs %s: difference by as-of time", v, ps[0].Baseline),
			Desc: "Each point is one stored run: its estimate and interval as of that time; the axis counts days from the first run's as-of time.", YLabel: "difference (" + v + " - " + ps[0].Baseline + ")", Absolute: true}
		for i, p := range ps {
			day := int(p.AsOf.Sub(ps[0].AsOf).Hours() / 24)
			if i > 0 && day <= line.Points[i-1].Day {
				day = line.Points[i-1].Day + 1 // runs on one day keep their order
			}
			line.Points = append(line.Points, html.LinePoint{Day: day, Label: p.AsOf.Format(time.RFC3339), Estimate: val(p.Difference), Low: val(p.CILow), High: val(p.CIHigh)})
		}
		page.Sections = append(page.Sections, html.Section{ID: "variant-" + v, Heading: v + " vs " + ps[0].Baseline, Blocks: []html.Block{line}})
	}
	return html.Render(w, page)
}
