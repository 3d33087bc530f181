package metrics

import (
	"fmt"
	"strings"
	"testing"
)

// bigSpec returns a valid spec with n metrics over two sources. Every third
// metric is a ratio, every fifth has a covariate, so the loader's lookups of
// keys, positions and metric names all scale with n.
func bigSpec(n int) []byte {
	var b strings.Builder
	b.WriteString(`[experiment]
id = "big"
hypothesis = "A generated spec with many metrics to measure how checking scales."
start = 2026-05-01T00:00:00Z
end = 2026-05-29T00:00:00Z

[variants]
control = 0.5
treatment = 0.5

[sources.assignments]
table = "analytics.assignments"
unit = "visitor_id"
time = "assigned_at"
columns = ["visitor_id", "arm", "assigned_at"]

[sources.orders]
table = "analytics.orders"
unit = "visitor_id"
time = "ordered_at"
columns = ["visitor_id", "ordered_at", "total", "items", "channel"]

[exposure]
source = "assignments"
variant = "arm"
`)
	for i := 0; i < n; i++ {
		role := "secondary"
		if i == 0 {
			role = "primary"
		}
		fmt.Fprintf(&b, "\n[metrics.m%04d]\nrole = %q\nwindow = [\"0d\", \"%dd\"]\n", i, role, 1+i%28)
		switch i % 3 {
		case 0:
			fmt.Fprintf(&b, "kind = \"sum\"\nsource = \"orders\"\nvalue = \"total * %d\"\nfilter = \"channel = 'web' AND items > %d\"\n", 1+i%7, i%5)
		case 1:
			b.WriteString("kind = \"proportion\"\nsource = \"orders\"\nfilter = \"total > 10\"\n")
		case 2:
			b.WriteString("kind = \"ratio\"\nnumerator = { kind = \"sum\", source = \"orders\", value = \"total\" }\ndenominator = { kind = \"count\", source = \"orders\" }\n")
		}
		if i%5 == 0 && i%3 != 2 {
			b.WriteString("covariate = { window = [\"-14d\", \"0d\"] }\n")
		}
	}
	return []byte(b.String())
}

func TestBigSpecIsValid(t *testing.T) {
	for _, n := range []int{3, 300} {
		s, ds := Load("big.toml", bigSpec(n))
		if ds.HasErrors() {
			t.Fatalf("n=%d: %v", n, ds)
		}
		if got := len(s.Metrics); got != n {
			t.Errorf("n=%d: got %d metrics, want %d", n, got, n)
		}
	}
}

// BenchmarkLoad checks specs of 300 and 3000 metrics. Loading is meant to
// grow about linearly: the 3000/300 time ratio should stay near 10.
func BenchmarkLoad(b *testing.B) {
	for _, n := range []int{300, 3000} {
		src := bigSpec(n)
		b.Run(fmt.Sprintf("metrics=%d", n), func(b *testing.B) {
			b.SetBytes(int64(len(src)))
			for i := 0; i < b.N; i++ {
				if _, ds := Load("big.toml", src); ds.HasErrors() {
					b.Fatal(ds)
				}
			}
		})
	}
}
