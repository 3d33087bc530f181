package report

import (
	"fmt"
	"strings"
	"testing"
)

// bigReport is summaryReport with n segment breakdowns of 30 values each.
func bigReport(n int) *Report {
	r := summaryReport(0.001, 0.001, "2026-02-01T00:00:00Z", false, Guard{Verdict: "no harm beyond margin"})
	r.Cautions = []string{"Intervals are 95% confidence intervals.", "Whether to ship is a decision for people."}
	for s := 0; s < n; s++ {
		seg := Segment{Name: fmt.Sprintf("seg%d", s), VariantMix: SampleRatio{Reason: "n/a"}}
		sm := SegmentMetrics{Metric: "prim"}
		for v := 0; v < 30; v++ {
			sm.Rows = append(sm.Rows, SegmentRow{Value: fmt.Sprintf("value-%d", v),
				Variants:    []VariantVal{{Variant: "a", N: 100}, {Variant: "b", N: 101}},
				Comparisons: []Compare{{Variant: "b", Baseline: "a", Difference: 0.1, CILow: -0.1, CIHigh: 0.3, Relative: 0.05, PValue: 0.3, PValueAdjusted: 0.6}}})
		}
		seg.Metrics = []SegmentMetrics{sm}
		r.Segments = append(r.Segments, seg)
	}
	return r
}

func TestMarkdownCapped(t *testing.T) {
	tests := []struct {
		name     string
		segs     int
		limit    int
		capped   bool
		leftOut  []string // named in the closing note
		mustKeep []string
	}{
		{"small report, default cap", 1, MarkdownLimit, false, nil, []string{"<summary>Breakdown by seg0</summary>", "<summary>Notes on prim</summary>", "<summary>Cautions</summary>"}},
		{"no cap", 40, 0, false, nil, []string{"Breakdown by seg39"}},
		{"large report, default cap", 40, MarkdownLimit, true, []string{"Breakdown by seg39"}, []string{"## Summary", "Breakdown by seg0", "| b |"}},
		{"tiny cap", 3, 2500, true, []string{"Breakdown by seg2", "Breakdown by seg0"}, []string{"## Summary"}},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			out := bigReport(tc.segs).MarkdownCapped(tc.limit)
			if tc.limit > 0 && len(out) > tc.limit {
				t.Errorf("%d bytes, over the cap of %d", len(out), tc.limit)
			}
			note := strings.Contains(out, "This comment is capped at")
			if note != tc.capped {
				t.Errorf("capped note present = %v, want %v", note, tc.capped)
			}
			for _, s := range tc.leftOut {
				if !strings.Contains(out, s+";") && !strings.Contains(out, s+".") {
					t.Errorf("the note does not name %q as left out", s)
				}
			}
			for _, s := range tc.mustKeep {
				if !strings.Contains(out, s) {
					t.Errorf("output lacks %q", s)
				}
			}
			if strings.Count(out, "<details>") != strings.Count(out, "</details>") {
				t.Error("unbalanced <details>")
			}
		})
	}
}
