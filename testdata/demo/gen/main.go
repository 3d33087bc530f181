// Command gen writes the synthetic "reorder shelf" demo data set used by the
// assay examples and end-to-end tests.
//
// The scenario is invented: a grocery-delivery app shows a row of previously
// bought items (the reorder shelf) on its home screen to customers in the
// "shelf" variant. The generator plants known effects for eligible treated
// customers so that an analysis can be checked against the truth. The shelf
// is launched in steps (a 5% test step, a 25% ramp, then 50/50) and a
// spring pantry sale raises everyone's orders for a weekend, so that pooling
// the steps misleads while a by-step reading does not. It writes TRUTH.md
// next to the Parquet files describing what was planted and how many
// customers fell into each category.
//
// Usage:
//
//	go run ./testdata/demo/gen [-seed N] [-customers N] [-out DIR]
//
// The output is byte-identical for identical flags.
package main

import (
	"flag"
	"fmt"
	"os"
)

// config holds the command-line settings of one generator run.
type config struct {
	seed      uint64
	customers int
	out       string
}

func main() {
	var cfg config
	flag.Uint64Var(&cfg.seed, "seed", 20260302, "seed of the deterministic random number generator")
	flag.IntVar(&cfg.customers, "customers", 20000, "number of exposed customers to simulate")
	flag.StringVar(&cfg.out, "out", "testdata/demo/data", "directory the data files are written to")
	flag.Parse()
	if cfg.customers < 100 {
		fmt.Fprintln(os.Stderr, "gen: -customers must be at least 100")
		os.Exit(2)
	}
	if err := run(cfg); err != nil {
		fmt.Fprintln(os.Stderr, "gen:", err)
		os.Exit(1)
	}
}

// run simulates the data set, writes the Parquet files and TRUTH.md, and
// prints the category counts to standard error.
func run(cfg config) error {
	ds := simulate(cfg.seed, cfg.customers)
	st := summarize(ds)
	if err := os.MkdirAll(cfg.out, 0o755); err != nil {
		return err
	}
	if err := writeParquet(ds, cfg.out); err != nil {
		return err
	}
	if err := os.WriteFile(cfg.out+"/TRUTH.md", []byte(truthMarkdown(cfg, st)), 0o644); err != nil {
		return err
	}
	fmt.Fprint(os.Stderr, st.text())
	return nil
}
