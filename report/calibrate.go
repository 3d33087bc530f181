package report

import (
	"encoding/json"
	"fmt"
	"sort"
	"strings"
	"text/tabwriter"

	"github.com/assay-dev/assay/compiler"
	"github.com/assay-dev/assay/results"
	"github.com/assay-dev/assay/stats"
)

// Calibration is the result of re-splitting real units at random many
// times (an A/A test on the user's own data): with no true difference
// between the re-assigned arms, each test should reject at about its
// significance level.
type Calibration struct {
	SchemaVersion int         `json:"schema_version"`
	ToolVersion   string      `json:"tool_version"`
	Experiment    string      `json:"experiment"`
	Start         string      `json:"start"`
	End           string      `json:"end"`
	Splits        int         `json:"splits"`
	Salt          int64       `json:"salt"`
	Alpha         float64     `json:"alpha"`
	Metrics       []CalMetric `json:"metrics"`
	Cautions      []string    `json:"cautions"`
}

// CalMetric is one metric's observed false-positive rate.
type CalMetric struct {
	Name  string `json:"name"`
	Role  string `json:"role"`
	Kind  string `json:"kind"`
	Tests int    `json:"tests"` // comparisons with a defined p-value
	// FalsePositives counts tests with p < alpha.
	FalsePositives int `json:"false_positives"`
	Rate           Num `json:"rate"`
	// Lo and Hi bound the count expected from a well-calibrated test
	// (central 99% binomial range).
	Lo      int    `json:"expected_low"`
	Hi      int    `json:"expected_high"`
	Verdict string `json:"verdict"` // "ok", "too many false positives", "too few false positives", "not tested"
	// Reason says why a metric was not tested.
	Reason string `json:"reason,omitempty"`
}

// Calibrate judges each metric's false-positive rate over the splits of a
// calibration query.
func Calibrate(p *compiler.Plan, set *results.Set, alpha float64) *Calibration {
	c := &Calibration{SchemaVersion: SchemaVersion, ToolVersion: compiler.Version, Experiment: p.Spec.ID,
		Start: stamp(p.StartUS), End: stamp(p.EndUS), Splits: p.Splits, Salt: p.Salt, Alpha: alpha}
	splits := map[int]map[string]*results.Row{}
	var keys []int
	for i := range set.Rows {
		row := &set.Rows[i]
		k := row.Split
		if splits[k] == nil {
			splits[k] = map[string]*results.Row{}
			keys = append(keys, k)
		}
		splits[k][row.Variant] = row
	}
	sort.Ints(keys)
	for _, mp := range p.Metrics {
		cm := CalMetric{Name: mp.M.Name, Role: string(mp.M.Role), Kind: kindName(mp.M)}
		for _, k := range keys {
			info := metricInfo(p, mp, splits[k], p.Spec.Confidence)
			for _, cmp := range info.Comparisons {
				if !cmp.PValue.OK() {
					if cm.Reason == "" {
						cm.Reason = untestedReason(cmp, info)
					}
					continue
				}
				cm.Tests++
				if float64(cmp.PValue) < alpha {
					cm.FalsePositives++
				}
			}
		}
		if cm.Tests > 0 {
			cm.Reason = ""
		}
		cm.Rate = Num(ratio(float64(cm.FalsePositives), float64(cm.Tests)))
		cm.Lo, cm.Hi = stats.BinomialRange(cm.Tests, alpha, 0.99)
		switch {
		case cm.Tests == 0:
			cm.Verdict = "not tested"
			if len(keys) == 0 {
				cm.Reason = "the period has no eligible units to re-split"
			} else if cm.Reason == "" {
				cm.Reason = "no re-split gave a defined p-value"
			}
		case cm.FalsePositives > cm.Hi:
			cm.Verdict = "too many false positives"
		case cm.FalsePositives < cm.Lo:
			cm.Verdict = "too few false positives"
		default:
			cm.Verdict = "ok"
		}
		c.Metrics = append(c.Metrics, cm)
	}
	c.Cautions = []string{
		"Each split re-assigns the same units at random, so the splits are not independent experiments; the expected range assumes independence and is a guide, not a test of its own.",
		"Too many false positives point at a test that is anti-conservative on this data (typically heavy tails or a few extreme units: consider a cap); too few point at an overly conservative test. Re-splitting assigns units independently, so it cannot reveal dependence between units (e.g. members of one household randomised separately).",
		"A good calibration on past data does not guarantee the same behaviour in a future experiment.",
	}
	return c
}

// JSON renders the calibration as indented JSON.
func (c *Calibration) JSON() ([]byte, error) {
	b, err := json.MarshalIndent(c, "", "  ")
	if err != nil {
		return nil, err
	}
	return append(b, '\n'), nil
}

// Text renders the calibration for a terminal.
func (c *Calibration) Text() string {
	var b strings.Builder
	fmt.Fprintf(&b, "assay %s: calibration of %s over exposures in [%s, %s)\n", c.ToolVersion, c.Experiment, c.Start, c.End)
	fmt.Fprintf(&b, "%d random re-splits of the eligible units (salt %d); a test is a false positive when p < %g.\n\n", c.Splits, c.Salt, c.Alpha)
	tw := tabwriter.NewWriter(&b, 0, 0, 2, ' ', 0)
	fmt.Fprintln(tw, "  metric\trole\ttests\tfalse positives\trate\texpected (99%)\tverdict\t")
	for _, m := range c.Metrics {
		verdict := m.Verdict
		if m.Reason != "" {
			verdict += ": " + m.Reason
		}
		fmt.Fprintf(tw, "  %s\t%s\t%d\t%d\t%s\t%d to %d\t%s\t\n", m.Name, m.Role, m.Tests, m.FalsePositives, strings.TrimPrefix(pct(float64(m.Rate)), "+"), m.Lo, m.Hi, verdict)
	}
	tw.Flush()
	b.WriteString("\nCautions\n")
	for _, s := range c.Cautions {
		fmt.Fprintf(&b, "  - %s\n", s)
	}
	return b.String()
}
