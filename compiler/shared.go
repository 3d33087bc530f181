package compiler

import (
	"path/filepath"
	"strings"

	"github.com/assay-dev/assay/metrics"
)

// sharedNote is the part of a metric's rule text that says where a shared
// definition comes from and what the experiment overrode, e.g.
//
//	; shared definition delivered_orders from grocery.toml (definition 3f9a0c21); overridden here: window ["0d", "28d"] (library: ["0d", "14d"])
//
// The rule text is the compiled SQL's comment for the metric and the
// report's definition line, so an override is visible in both. The
// definition fingerprint changes whenever the library definition does,
// which lets compile --check name the metrics a library change affects.
func sharedNote(m *metrics.Metric) string {
	sd := m.Shared
	if sd == nil {
		return ""
	}
	var b strings.Builder
	b.WriteString("; shared definition ")
	b.WriteString(oneLine(sd.Name))
	b.WriteString(" from ")
	b.WriteString(oneLine(filepath.Base(sd.Library)))
	b.WriteString(" (definition ")
	b.WriteString(sd.Fingerprint)
	b.WriteString(")")
	if len(sd.Overrides) > 0 {
		parts := make([]string, len(sd.Overrides))
		for i, o := range sd.Overrides {
			parts[i] = oneLine(o.String())
		}
		b.WriteString("; overridden here: ")
		b.WriteString(strings.Join(parts, ", "))
	}
	return b.String()
}
