package compiler_test

import (
	"os"
	"testing"

	"github.com/assay-dev/assay/compiler"
	"github.com/assay-dev/assay/metrics"
)

// TestOutcomeSources: the health check of units without outcome rows
// reads the sources of primary, secondary and guard metrics; a source
// only mechanism metrics read (taps on the shelf, which only the shelf
// arm can produce) is left out (the rule in Plan.OutcomeSources).
// Source: the demo spec, whose taps source only the mechanism metric
// shelf_taps reads.
func TestOutcomeSources(t *testing.T) {
	src, err := os.ReadFile("../testdata/demo/reorder.toml")
	if err != nil {
		t.Fatal(err)
	}
	s, ds := metrics.Load("../testdata/demo/reorder.toml", src)
	if ds.HasErrors() {
		t.Fatal(ds)
	}
	p, ds := compiler.Compile(s, compiler.Options{})
	if ds.HasErrors() {
		t.Fatal(ds)
	}
	var got []string
	for _, src := range p.OutcomeSources() {
		got = append(got, src.Name)
	}
	want := []string{"orders", "support"}
	if len(got) != len(want) || got[0] != want[0] || got[1] != want[1] {
		t.Errorf("outcome sources: got %v, want %v (taps is read by the mechanism metric only)", got, want)
	}
}

// TestPriorOnlyOptions: the prior_only option round-trips through the
// options text and needs a prior run.
func TestPriorOnlyOptions(t *testing.T) {
	o := compiler.Options{PriorOnly: true}
	back, err := compiler.ParseOptions(o.Text())
	if err != nil || !back.PriorOnly || o.Text() != "prior_only=true" {
		t.Errorf("Text %q, parsed %+v, %v", o.Text(), back, err)
	}
	src, err := os.ReadFile("../testdata/golden/minimal/spec.toml")
	if err != nil {
		t.Fatal(err)
	}
	s, ds := metrics.Load("spec.toml", src)
	if ds.HasErrors() {
		t.Fatal(ds)
	}
	if _, ds := compiler.Compile(s, o); !ds.HasErrors() {
		t.Errorf("prior_only on a spec without prior runs compiled without an error")
	}
}
