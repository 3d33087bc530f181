package metrics

// BigSpec exposes the generated many-metric spec to the external test
// package's benchmarks.
var BigSpec = bigSpec
