package report_test

import (
	"bytes"
	"encoding/json"
	"math"
	"math/rand"
	"regexp"
	"strings"
	"testing"

	"gonum.org/v1/gonum/stat"

	"github.com/assay-dev/assay/compiler"
	"github.com/assay-dev/assay/dialects"
	"github.com/assay-dev/assay/metrics"
	"github.com/assay-dev/assay/report"
	"github.com/assay-dev/assay/report/html"
	"github.com/assay-dev/assay/results"
	"github.com/assay-dev/assay/stats"
)

// dayReport analyses invented per-unit counts of the edge spec over five
// trigger days, with the trigger_day breakdown: every statistic (per day
// and overall) is computed by gonum's stat.MeanVariance from the unit
// values, not by the code under test.
func dayReport(t *testing.T) (*report.Report, *compiler.Plan, compiler.Queries, map[string][]float64) {
	t.Helper()
	spec, ds := metrics.Load("edges.toml", []byte(edgeSpec))
	if ds.HasErrors() {
		t.Fatal(ds.Error())
	}
	p, ds := compiler.Compile(spec, compiler.Options{Breakdowns: []string{compiler.KeyTriggerDay}})
	if ds.HasErrors() {
		t.Fatal(ds.Error())
	}
	d, err := dialects.Lookup("duckdb")
	if err != nil {
		t.Fatal(err)
	}
	q, err := compiler.Print(p, d)
	if err != nil {
		t.Fatal(err)
	}
	rng := rand.New(rand.NewSource(14))
	days := []string{"2026-05-01", "2026-05-02", "2026-05-03", "2026-05-04", "2026-05-05"}
	all := map[string][]float64{}
	var rows []results.Row
	var health []results.HealthRow
	for _, day := range days {
		for _, v := range []string{"control", "treatment"} {
			n := 20 + rng.Intn(30)
			lambda := 2.0
			if v == "treatment" {
				lambda = 2.3
			}
			xs := make([]float64, n)
			for i := range xs {
				// Counts: a sum of Bernoulli draws, mean about lambda.
				for k := 0; k < 10; k++ {
					if rng.Float64() < lambda/10 {
						xs[i]++
					}
				}
			}
			all[v] = append(all[v], xs...)
			mean, vr := stat.MeanVariance(xs, nil)
			r := row(v, int64(n), moments{n: float64(n), mean: mean, vr: vr, den: 1, denVar: 0, x: 1, xVar: 1})
			r.Group, r.Key = 0, day
			rows = append(rows, r)
			health = append(health, results.HealthRow{Kind: compiler.HealthTriggers, Variant: v, Day: day, Rows: int64(n), Units: int64(n)},
				results.HealthRow{Kind: compiler.HealthExposures, Variant: v, Day: day, Rows: int64(n + 3), Units: int64(n + 1)})
		}
	}
	for _, v := range []string{"control", "treatment"} {
		mean, vr := stat.MeanVariance(all[v], nil)
		n := float64(len(all[v]))
		rows = append(rows, row(v, int64(n), moments{n: n, mean: mean, vr: vr, den: 1, denVar: 0, x: 1, xVar: 1}))
	}
	set := &results.Set{SpecFingerprint: p.Spec.Fingerprint, Options: p.Options.Text(), Rows: rows, Health: health}
	rep, err := report.Analyze(p, set, report.Options{})
	if err != nil {
		t.Fatal(err)
	}
	return rep, p, q, all
}

var tagRE = regexp.MustCompile(`(?s)<style.*?</style>|<[^>]*>`)

// pageText is the page's text with tags dropped and entities decoded, as
// scripts/browser-check reads the rendered DOM.
func pageText(b []byte) string {
	s := tagRE.ReplaceAllString(string(b), "\n")
	return strings.NewReplacer("&lt;", "<", "&gt;", ">", "&#43;", "+", "&#39;", "'", "&quot;", `"`, "&amp;", "&").Replace(s)
}

// TestHTMLShowsNumbers renders the page and checks that it is
// self-contained, that every number ExpectedNumbers lists is on it as a
// word, and that numbers link to the SQL result columns and CTEs.
func TestHTMLShowsNumbers(t *testing.T) {
	rep, p, q, _ := dayReport(t)
	var buf bytes.Buffer
	if err := rep.HTML(&buf, p, q, "duckdb"); err != nil {
		t.Fatal(err)
	}
	page := buf.String()
	for _, bad := range []string{"<script", "<link", "<img", "http://", "https://", "@import"} {
		if strings.Contains(page, bad) {
			t.Errorf("page contains %q", bad)
		}
	}
	text := pageText(buf.Bytes())
	nums := report.ExpectedNumbers(rep)
	if len(nums) < 30 {
		t.Fatalf("only %d expected numbers", len(nums))
	}
	for _, n := range nums {
		re := regexp.MustCompile(`(^|[^\w.])` + regexp.QuoteMeta(n) + `($|[^\w])`)
		if !re.MatchString(text) {
			t.Errorf("number %q is not on the page", n)
		}
	}
	for _, anchor := range []string{`href="#col-trials__mean"`, `href="#col-trials__n"`, `href="#col-trials__var"`, `href="#cte-main-pass_trials"`, `href="#health-triggers"`, `href="#col-units"`} {
		if !strings.Contains(page, anchor) {
			t.Errorf("page has no link %s", anchor)
		}
	}
	// The JSON round trip gives the same list (null reads back as NaN).
	js, err := rep.JSON()
	if err != nil {
		t.Fatal(err)
	}
	var back report.Report
	if err := json.Unmarshal(js, &back); err != nil {
		t.Fatal(err)
	}
	if got := report.ExpectedNumbers(&back); strings.Join(got, " ") != strings.Join(nums, " ") {
		t.Errorf("ExpectedNumbers from the JSON differs:\n got %v\nwant %v", got, nums)
	}
}

// TestCumulativeLastDay checks the cumulative effect by trigger day: its
// last point pools every day, so it must equal stats.Welch on the moments
// of all units, computed by gonum from the unit values themselves.
func TestCumulativeLastDay(t *testing.T) {
	rep, p, q, all := dayReport(t)
	pg := rep.HTMLPage(p, q, "duckdb")
	var line *html.Line
	for _, s := range pg.Sections {
		for _, b := range s.Blocks {
			if l, ok := b.(html.Line); ok && strings.Contains(l.Title, "trials") {
				line = &l
			}
		}
	}
	if line == nil {
		t.Fatal("no cumulative line for the primary metric")
	}
	if len(line.Points) != 5 {
		t.Fatalf("%d points, want 5 (one per trigger day)", len(line.Points))
	}
	mom := func(xs []float64) stats.Moments {
		m, v := stat.MeanVariance(xs, nil)
		return stats.Moments{N: float64(len(xs)), Mean: m, Var: v}
	}
	want := stats.Welch(mom(all["control"]), mom(all["treatment"]), 0.95)
	last := line.Points[4]
	for _, c := range []struct {
		name      string
		got, want float64
	}{{"estimate", last.Estimate, want.Relative}, {"low", last.Low, want.RelCILow}, {"high", last.High, want.RelCIHigh}} {
		if math.Abs(c.got-c.want) > 1e-9*math.Max(1, math.Abs(c.want)) {
			t.Errorf("last day %s = %.12g, want %.12g", c.name, c.got, c.want)
		}
	}
	// The first point uses the first day's units only.
	if line.Points[0].Label != "2026-05-01" {
		t.Errorf("first point %q, want 2026-05-01", line.Points[0].Label)
	}
}

// TestHTMLWithoutSQL renders a page for a report without compiled SQL (no
// links) and without a trigger_day breakdown (the cumulative section says
// how to get it).
func TestHTMLWithoutSQL(t *testing.T) {
	p := edgePlan(t)
	r := &res{Rows: []results.Row{
		row("control", 100, moments{n: 100, mean: 2, vr: 1, den: 1, denVar: 0.5, x: 1, xVar: 1}),
		row("treatment", 100, moments{n: 100, mean: 2.2, vr: 1, den: 1, denVar: 0.5, x: 1, xVar: 1}),
	}}
	rep, err := report.Analyze(p, r.set(p), report.Options{})
	if err != nil {
		t.Fatal(err)
	}
	var buf bytes.Buffer
	if err := rep.HTML(&buf, p, compiler.Queries{}, ""); err != nil {
		t.Fatal(err)
	}
	if strings.Contains(buf.String(), `href="#col-`) {
		t.Error("links to SQL that is not on the page")
	}
	if !strings.Contains(buf.String(), "--by naming trigger_day") {
		t.Error("the cumulative section does not say how to get it")
	}
}

// TestHTMLEveryDialect embeds the SQL of every dialect: the page renders
// (unique anchors, no link without a target), and the per-variant values
// link to their result columns wherever the dialect quotes them.
func TestHTMLEveryDialect(t *testing.T) {
	rep, p, _, _ := dayReport(t)
	for _, name := range dialects.Names() {
		t.Run(name, func(t *testing.T) {
			d, err := dialects.Lookup(name)
			if err != nil {
				t.Fatal(err)
			}
			q, err := compiler.Print(p, d)
			if err != nil {
				t.Fatal(err)
			}
			var buf bytes.Buffer
			if err := rep.HTML(&buf, p, q, name); err != nil {
				t.Fatalf("render: %v", err)
			}
			for _, want := range []string{`id="cte-main-eligible"`, `id="col-trials__mean"`, `href="#col-trials__mean"`} {
				if !strings.Contains(buf.String(), want) {
					t.Errorf("page lacks %s", want)
				}
			}
		})
	}
}
