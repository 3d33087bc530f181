// Package testkit holds what the end-to-end tests of several packages
// share: one builder of fixture specs and one in-process runner of the
// CLI. Fixture data are invented scenarios; expected values are computed
// independently in each test.
package testkit

import (
	"bytes"
	"fmt"
	"strings"

	"github.com/assay-dev/assay/cli"
)

// Spec is a fixture spec: an exposure source and an event source read
// from files, control/treatment 50/50 unless Variants says otherwise, and
// the caller's metrics and extra tables.
type Spec struct {
	ID         string // default "fixture"
	Hypothesis string // default a sentence saying it is a fixture
	Start, End string // TOML datetimes; defaults 2026-03-02T00:00:00Z and 2026-04-13T00:00:00Z
	TimeZone   string // "" leaves the default (UTC)
	Variants   string // [variants] body; default control = 0.5, treatment = 0.5
	// Exposures are read from ExposureFile (default exposures.parquet) with
	// columns unit_id, variant, exposed_at and ExposureCols.
	ExposureFile string
	ExposureCols []string
	// Events are read from EventsFile (default events.parquet) with columns
	// unit_id, happened_at and EventCols.
	EventsFile     string
	EventCols      []string
	ExposureFilter string
	Extra          string // more [sources.*], [eligibility.*], [segments.*] tables
	Metrics        string // [metrics.*] tables; one must be primary
}

func or(s, def string) string {
	if s == "" {
		return def
	}
	return s
}

func quoteList(xs []string) string {
	q := make([]string, len(xs))
	for i, x := range xs {
		q[i] = fmt.Sprintf("%q", x)
	}
	return strings.Join(q, ", ")
}

// TOML renders the spec.
func (s Spec) TOML() string {
	var b strings.Builder
	fmt.Fprintf(&b, "[experiment]\nid = %q\nhypothesis = %q\nunit = \"user\"\nstart = %s\nend = %s\nconfidence = 0.95\n",
		or(s.ID, "fixture"), or(s.Hypothesis, "A synthetic fixture whose expected values are computed independently in the test."),
		or(s.Start, "2026-03-02T00:00:00Z"), or(s.End, "2026-04-13T00:00:00Z"))
	if s.TimeZone != "" {
		fmt.Fprintf(&b, "time_zone = %q\n", s.TimeZone)
	}
	fmt.Fprintf(&b, "\n[variants]\n%s\n", or(s.Variants, "control = 0.5\ntreatment = 0.5\n"))
	fmt.Fprintf(&b, "[sources.exposures]\nfile = %q\nunit = \"unit_id\"\ntime = \"exposed_at\"\ncolumns = [%s]\n\n",
		or(s.ExposureFile, "exposures.parquet"), quoteList(append([]string{"unit_id", "variant", "exposed_at"}, s.ExposureCols...)))
	fmt.Fprintf(&b, "[sources.events]\nfile = %q\nunit = \"unit_id\"\ntime = \"happened_at\"\ncolumns = [%s]\n\n",
		or(s.EventsFile, "events.parquet"), quoteList(append([]string{"unit_id", "happened_at"}, s.EventCols...)))
	b.WriteString("[exposure]\nsource = \"exposures\"\nvariant = \"variant\"\n")
	if s.ExposureFilter != "" {
		fmt.Fprintf(&b, "filter = %q\n", s.ExposureFilter)
	}
	b.WriteString("\n" + s.Extra + "\n" + s.Metrics)
	return b.String()
}

// Run runs the assay command line in-process and returns its exit code,
// stdout and stderr.
func Run(args ...string) (code int, stdout, stderr string) {
	var o, e bytes.Buffer
	code = cli.Run(args, nil, &o, &e)
	return code, o.String(), e.String()
}
