package metrics_test

import (
	"fmt"
	"testing"

	"github.com/assay-dev/assay/compiler"
	"github.com/assay-dev/assay/dialects"
	"github.com/assay-dev/assay/metrics"
)

// BenchmarkCheck runs what `assay check` and `assay compile` do for a
// spec of 300 and of 3000 metrics: load, compile to a plan and print the
// DuckDB queries. The 3000/300 time ratio should stay near 10.
func BenchmarkCheck(b *testing.B) {
	for _, n := range []int{300, 3000} {
		src := metrics.BigSpec(n)
		b.Run(fmt.Sprintf("metrics=%d", n), func(b *testing.B) {
			for i := 0; i < b.N; i++ {
				s, ds := metrics.Load("big.toml", src)
				if ds.HasErrors() {
					b.Fatal(ds)
				}
				p, ds := compiler.Compile(s, compiler.Options{})
				if ds.HasErrors() {
					b.Fatal(ds)
				}
				if _, err := compiler.Print(p, dialects.DuckDB{}); err != nil {
					b.Fatal(err)
				}
			}
		})
	}
}
