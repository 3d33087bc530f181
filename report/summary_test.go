package report

import (
	"math"
	"strings"
	"testing"

	"github.com/assay-dev/assay/compiler"
)

// summaryReport is a hand-made report: one primary, one mechanism and two
// guard metrics, one treatment arm. The numbers are invented; the summary
// only reads them, so each case states its expectation from the inputs.
func summaryReport(primaryP, mechP float64, asOf string, seq bool, guards ...Guard) *Report {
	margin := 0.05
	cmp := func(diff, lo, hi, p float64) Compare {
		c := Compare{Variant: "b", Baseline: "a", Difference: Num(diff), CILow: Num(lo), CIHigh: Num(hi),
			Relative: Num(diff / 2), RelativeCILow: Num(lo / 2), RelativeCIHigh: Num(hi / 2), PValue: Num(p), PValueAdjusted: Num(math.Min(1, 2*p))}
		if seq {
			c.Sequential = &SeqInfo{CILow: Num(lo * 2), CIHigh: Num(hi * 2), PValue: Num(math.Min(1, 3*p))}
		}
		return c
	}
	r := &Report{Experiment: Experiment{ID: "x", Hypothesis: "A  makes\nB rise.", Start: "2026-01-01T00:00:00Z", End: "2026-02-01T00:00:00Z", AsOf: asOf, Confidence: 0.95},
		Health: Health{Available: true, Triggered: 1000, Eligible: 900, SampleRatio: SampleRatio{PValue: 0.5, Alpha: 0.001},
			Exclusions: []Exclusion{{Reason: "any", Units: 100, Rate: 0.1}}}}
	r.Metrics = []MetricInfo{
		{Name: "prim", Role: "primary", Window: [2]string{"0d", "14d"}, Comparisons: []Compare{cmp(0.2, 0.1, 0.3, primaryP)}},
		{Name: "mech", Role: "mechanism", Window: [2]string{"0d", "7d"}, Comparisons: []Compare{cmp(-1, -1.5, -0.5, mechP)}},
	}
	for i, g := range guards {
		g := g
		c := cmp(0.01, -0.01, 0.03, 0.4)
		c.Guard = &g
		r.Metrics = append(r.Metrics, MetricInfo{Name: []string{"g1", "g2"}[i], Role: "guard", Harmful: "increase", Margin: &margin, Window: [2]string{"0d", "14d"}, Comparisons: []Compare{c}})
	}
	return r
}

func TestSummarize(t *testing.T) {
	ok := Guard{Verdict: "no harm beyond margin"}
	bad := Guard{Verdict: "harm beyond margin", Alarming: true}
	unsure := Guard{Verdict: "inconclusive"}
	tests := []struct {
		name          string
		r             *Report
		look, mon     string
		primary, mech string
		pKind         string
		guardOrder    []string
		cannot        []string // substrings expected in CannotSay
		notCannot     []string
	}{
		{
			// p = 0.001 < 0.05 with a positive difference: up. The mechanism's
			// adjusted p = 2 × 0.2 = 0.4 ≥ 0.05: no clear change.
			name: "final, primary up, mechanism flat", r: summaryReport(0.001, 0.2, "2026-02-01T00:00:00Z", false, ok, bad),
			look: "final", mon: "fixed", primary: "up", mech: "no clear change", pKind: "unadjusted",
			guardOrder: []string{"g2", "g1"},
			cannot:     []string{"mechanism did not clearly move", "judgement for the people"},
			notCannot:  []string{"interim", "Inconclusive guards"},
		},
		{
			// Primary p = 0.3: no clear change, so its interval is quoted as
			// the plausible range; mechanism adjusted p = 0.002 with a
			// negative difference: down.
			name: "interim fixed, primary flat", r: summaryReport(0.3, 0.001, "2026-01-20T00:00:00Z", false, unsure),
			look: "interim", mon: "fixed", primary: "no clear change", mech: "down", pKind: "unadjusted",
			guardOrder: []string{"g1"},
			cannot:     []string{"not evidence of no effect; changes from +0.1000 to +0.3000", "interim look at a fixed-horizon", "Inconclusive guards", "up to 14d, 7d"},
		},
		{
			// Sequential: the always-valid p = 3 × 0.02 = 0.06 ≥ 0.05 rules,
			// though the fixed-horizon p = 0.02 would say "up".
			name: "interim sequential", r: summaryReport(0.02, 0.001, "2026-01-20T00:00:00Z", true),
			look: "interim", mon: "sequential", primary: "no clear change", mech: "down", pKind: "always-valid",
			cannot:    []string{"not evidence of no effect; changes from +0.2000 to +0.6000"},
			notCannot: []string{"interim look at a fixed-horizon"},
		},
		{
			name: "not estimable", r: summaryReport(math.NaN(), 0.001, "2026-02-01T00:00:00Z", false),
			look: "final", mon: "fixed", primary: "not estimable", mech: "down", pKind: "unadjusted",
		},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			s := tc.r.Summarize()
			if s.Look != tc.look || s.Monitoring != tc.mon {
				t.Errorf("look %q monitoring %q, want %q %q", s.Look, s.Monitoring, tc.look, tc.mon)
			}
			if s.Hypothesis != "A makes B rise." {
				t.Errorf("hypothesis %q", s.Hypothesis)
			}
			if s.Alpha != 0.05 {
				t.Errorf("alpha %v, want 0.05", s.Alpha)
			}
			if len(s.Primary) != 1 || s.Primary[0].Moved != tc.primary || s.Primary[0].PValueKind != tc.pKind {
				t.Errorf("primary %+v, want moved %q (%s)", s.Primary, tc.primary, tc.pKind)
			}
			if len(s.Mechanism) != 1 || s.Mechanism[0].Moved != tc.mech {
				t.Errorf("mechanism %+v, want %q", s.Mechanism, tc.mech)
			}
			var order []string
			for _, g := range s.Guards {
				order = append(order, g.Metric)
			}
			if strings.Join(order, ",") != strings.Join(tc.guardOrder, ",") {
				t.Errorf("guards %v, want %v (alarming first)", order, tc.guardOrder)
			}
			all := strings.Join(s.CannotSay, "\n")
			for _, want := range tc.cannot {
				if !strings.Contains(all, want) {
					t.Errorf("cannot-say lacks %q:\n%s", want, all)
				}
			}
			for _, no := range tc.notCannot {
				if strings.Contains(all, no) {
					t.Errorf("cannot-say has %q:\n%s", no, all)
				}
			}
			txt := tc.r.Text()
			if !strings.Contains(txt, "Summary\n") || strings.Index(txt, "Summary") > strings.Index(txt, "Health\n") {
				t.Errorf("the summary is not before the health section:\n%s", txt)
			}
		})
	}
}

// TestSummaryNoVerdict checks that no format hands down a decision: the
// words a verdict would use appear only in the sentence that leaves the
// decision to people.
func TestSummaryNoVerdict(t *testing.T) {
	r := summaryReport(0.001, 0.001, "2026-02-01T00:00:00Z", false, Guard{Verdict: "no harm beyond margin"})
	for _, out := range []string{r.Text(), r.Markdown()} {
		low := strings.ToLower(out)
		for _, w := range []string{"recommend", "should ship", "ship it", "do not ship", "winner", "launch"} {
			if strings.Contains(low, w) {
				t.Errorf("report says %q", w)
			}
		}
		if !strings.Contains(out, "the decision, ship or not, is a judgement for the people who own the product") {
			t.Error("the summary does not leave the decision to people")
		}
	}
}

// TestHTMLAlarmsFirst renders a report with a sample-ratio alarm and a
// harmed guard: the alarm opens the summary, before the hypothesis, and
// the alarming guard heads the guard table, marked in words, not colour.
func TestHTMLAlarmsFirst(t *testing.T) {
	r := summaryReport(0.001, 0.001, "2026-02-01T00:00:00Z", false,
		Guard{Verdict: "no harm beyond margin"}, Guard{Verdict: "harm beyond margin", Alarming: true})
	r.Alarms = []string{"SAMPLE RATIO MISMATCH: eligible units per variant do not match the planned weights."}
	r.Health.SampleRatio = SampleRatio{PValue: 1e-6, Alpha: 0.001, Alarm: true}
	var b strings.Builder
	if err := r.HTML(&b, nil, compiler.Queries{}, ""); err != nil {
		t.Fatal(err)
	}
	page := b.String()
	alarm, hyp := strings.Index(page, "ALARM: SAMPLE RATIO MISMATCH"), strings.Index(page, "Hypothesis: A makes B rise.")
	if alarm < 0 || hyp < 0 || alarm > hyp {
		t.Errorf("alarm at %d, hypothesis at %d: want the alarm first", alarm, hyp)
	}
	g2, g1 := strings.Index(page, "<td>!! alarm</td><td>g2</td>"), strings.Index(page, "<td>ok</td><td>g1</td>")
	if g2 < 0 || g1 < 0 || g2 > g1 {
		t.Errorf("guard rows at %d (alarming g2) and %d (g1): want the alarming one first, marked in words", g2, g1)
	}
	if !strings.Contains(page, "!! MISMATCH") {
		t.Error("the health table does not mark the sample-ratio mismatch in words")
	}
}

// TestAgainstTarget reads primary intervals against a planned target; the
// cases are placed by hand around the interval [lo, hi].
func TestAgainstTarget(t *testing.T) {
	tests := []struct {
		name           string
		lo, hi, target float64
		want           string
	}{
		{"beyond a rise", 0.2, 0.4, 0.1, "above the target"},
		{"short of a rise", 0.01, 0.05, 0.1, "below the target"},
		{"contains a rise", 0.05, 0.3, 0.1, "includes the target"},
		{"beyond a fall", -0.4, -0.2, -0.1, "above the target"},
		{"short of a fall", -0.05, 0.02, -0.1, "below the target"},
		{"contains a fall", -0.3, -0.05, -0.1, "includes the target"},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			s := Summary{Primary: []SummaryEffect{{CILow: Num(tc.lo), CIHigh: Num(tc.hi)}}, Target: &SummaryTarget{Absolute: Num(tc.target), Relative: Num(tc.target)}}
			s.againstTarget()
			if got := s.Primary[0].AgainstTarget; got != tc.want {
				t.Errorf("[%g, %g] against %g: %q, want %q", tc.lo, tc.hi, tc.target, got, tc.want)
			}
		})
	}
	// Without a plan nothing is read.
	s := Summary{Primary: []SummaryEffect{{CILow: 0.1, CIHigh: 0.2}}}
	s.againstTarget()
	if s.Primary[0].AgainstTarget != "" {
		t.Errorf("without a target: %q", s.Primary[0].AgainstTarget)
	}
}

// TestTargetShown checks the sentence that places the primary interval
// against the plan's target.
func TestTargetShown(t *testing.T) {
	r := summaryReport(0.001, 0.001, "2026-02-01T00:00:00Z", false)
	s := r.Summarize()
	s.Target = &SummaryTarget{Absolute: 0.15, Relative: 0.075}
	s.againstTarget()
	lines := targetLines(s)
	want := "prim in b: the interval [+0.1000, +0.3000] includes the target effect of the plan, +0.1500 (+7.50% relative)"
	if len(lines) != 1 || lines[0] != want {
		t.Errorf("got %q, want %q", lines, want)
	}
}
