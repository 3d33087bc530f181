package cli

import (
	"context"
	"encoding/json"
	"fmt"
	"io"
	"os"
	"os/signal"
	"strconv"
	"strings"
	"text/tabwriter"
	"time"

	"github.com/assay-dev/assay/engine/store"
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
	format := fs.String("format", "text", "output format: text or json")
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
	case *format != "text" && *format != "json":
		fmt.Fprintf(stderr, "assay history: --format must be text or json\n")
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
