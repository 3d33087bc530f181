package report

import (
	"path/filepath"

	"github.com/assay-dev/assay/metrics"
)

// sharedInfo returns, for a metric defined in a library, "NAME (FILE)" and
// each override as text, e.g. `window ["0d", "28d"] (library: ["0d", "14d"])`.
func sharedInfo(m *metrics.Metric) (string, []string) {
	if m.Shared == nil {
		return "", nil
	}
	var out []string
	for _, o := range m.Shared.Overrides {
		out = append(out, o.String())
	}
	return m.Shared.Name + " (" + filepath.Base(m.Shared.Library) + ")", out
}
