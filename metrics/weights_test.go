package metrics

import (
	"math"
	"strings"
	"testing"
)

// specWithVariants returns the minimal golden spec with its [variants]
// table replaced by body.
func specWithVariants(body string) []byte {
	return []byte(`[experiment]
id = "w"
hypothesis = "A larger checkout button makes more visitors finish checkout within a week."
start = 2026-05-01T00:00:00Z
end = 2026-05-29T00:00:00Z

[variants]
` + body + `
[sources.a]
table = "a"
unit = "u"
time = "t"
columns = ["u", "arm", "t"]

[exposure]
source = "a"
variant = "arm"

[metrics.m]
role = "primary"
kind = "count"
source = "a"
window = ["0d", "7d"]
`)
}

// TestWeightsNormalised checks that weights summing to 1 within
// WeightTolerance, and positive ratios, are accepted and divided by their
// sum, and that only ratios get a note. Expected shares are the written
// weights divided by their sum, worked by hand (e.g. 50/(50+25+25) = 0.5).
func TestWeightsNormalised(t *testing.T) {
	tests := []struct {
		name    string
		body    string
		want    []float64
		written []string
		note    string // "" when no note is expected
	}{
		{"exact halves", "control = 0.5\ntreatment = 0.5\n", []float64{0.5, 0.5}, []string{"0.5", "0.5"}, ""},
		{"thirds rounded", "control = 0.3333\nb = 0.3333\nc = 0.3333\n", []float64{1.0 / 3, 1.0 / 3, 1.0 / 3}, []string{"0.3333", "0.3333", "0.3333"}, ""},
		{"within tolerance above", "control = 0.5005\ntreatment = 0.5\n", []float64{0.5005 / 1.0005, 0.5 / 1.0005}, []string{"0.5005", "0.5"}, ""},
		{"percent ratios", "control = 50\nb = 25\nc = 25\n", []float64{0.5, 0.25, 0.25}, []string{"50", "25", "25"},
			"planned weights sum to 100 and are read as ratios: control 50.00%, b 25.00%, c 25.00%"},
		{"two to one", "control = 2\ntreatment = 1\n", []float64{2.0 / 3, 1.0 / 3}, []string{"2", "1"},
			"planned weights sum to 3 and are read as ratios: control 66.67%, treatment 33.33%"},
		{"just outside tolerance", "control = 0.3\nb = 0.3\nc = 0.3\n", []float64{1.0 / 3, 1.0 / 3, 1.0 / 3}, []string{"0.3", "0.3", "0.3"},
			"planned weights sum to 0.9 and are read as ratios: control 33.33%, b 33.33%, c 33.33%"},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			s, ds := Load("w.toml", specWithVariants(tc.body))
			if ds.HasErrors() {
				t.Fatalf("got errors: %v", ds)
			}
			if len(s.Variants) != len(tc.want) {
				t.Fatalf("got %d variants, want %d", len(s.Variants), len(tc.want))
			}
			for i, v := range s.Variants {
				if math.Abs(v.Weight-tc.want[i]) > 1e-12 {
					t.Errorf("variant %s: got weight %v, want %v", v.Name, v.Weight, tc.want[i])
				}
				if v.WrittenText != tc.written[i] {
					t.Errorf("variant %s: got written %q, want %q", v.Name, v.WrittenText, tc.written[i])
				}
			}
			var notes []Diagnostic
			for _, d := range ds {
				if d.Severity == Note {
					notes = append(notes, d)
				}
			}
			if tc.note == "" {
				if len(ds) != 0 {
					t.Errorf("got diagnostics %v, want none", ds)
				}
				return
			}
			if len(notes) != 1 || notes[0].Summary != tc.note || notes[0].Code != CodeWeights {
				t.Fatalf("got %v, want one note %q", ds, tc.note)
			}
			if got := notes[0].Short(); !strings.HasPrefix(got, "w.toml:7:1: note: ") {
				t.Errorf("got short form %q, want it to start with w.toml:7:1: note: ", got)
			}
		})
	}
}

// TestWeightsRefused checks the weights still refused: not positive, or
// too large to add.
func TestWeightsRefused(t *testing.T) {
	tests := []struct{ name, body, want string }{
		{"zero", "control = 1\ntreatment = 0\n", "variant `treatment` has weight 0; weights must be positive"},
		{"negative", "control = 0.5\ntreatment = -0.5\n", "variant `treatment` has weight -0.5; weights must be positive"},
		{"overflow", "control = 1e308\ntreatment = 1e308\n", "planned weights are too large to add up"},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			_, ds := Load("w.toml", specWithVariants(tc.body))
			found := false
			for _, d := range ds {
				if d.Severity == Error && d.Code == CodeWeights && d.Summary == tc.want {
					found = true
				}
				if d.Severity == Note {
					t.Errorf("unexpected note beside an error: %s", d.Short())
				}
			}
			if !found {
				t.Errorf("got %v, want error %q", ds, tc.want)
			}
		})
	}
}
