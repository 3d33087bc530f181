// Package bench measures how fast assay's compiled SQL runs and how it
// scales. It generates a deterministic scratch DuckDB database (Generate),
// compiles a ten-metric spec against it and times four ways of getting the
// same per-variant aggregates from the same data:
//
//   - (a) assay's compiled main query;
//   - (b) the physical bound: one scan of each outcome table grouped by
//     unit, with no join and no filter;
//   - (c) the best query an expert would write by hand for the same metrics
//     (reference.sql);
//   - (d) the notebook approach: pull one row per unit out of the engine
//     (notebook.sql) and compute the statistics in Go with gonum.
//
// (a), (c) and (d) must agree to 1e-9 relative; the smoke test checks that
// at a tiny size. Times are reported as ratios, never checked against a
// limit. The assay-bench command (bench/cmd/assay-bench) runs the large
// sizes on demand.
package bench
