package report

import (
	"fmt"
	"strings"

	"github.com/assay-dev/assay/compiler"
	"github.com/assay-dev/assay/results"
)

// Units exposed in a prior run. By default they are only excluded
// (compiler.ExcludedPrior) and counted by variant in the health section.
// With analysis = "apart" in the spec's [prior_runs], the run also
// compiles a query whose eligible units are exactly those
// (compiler.Options.PriorOnly) and the report shows their comparisons on
// their own, never mixed into the main result: a unit that saw the change
// before may respond differently the second time (carry-over), so the
// two groups answer different questions.

// PriorApart is the analysis of the previously exposed units.
type PriorApart struct {
	Runs []string `json:"runs"`
	// Units are the previously exposed units analysed, by variant.
	Units   map[string]int64 `json:"units_by_variant"`
	Metrics []MetricInfo     `json:"metrics"`
	Note    string           `json:"note"`
}

// AddPriorApart analyses the result of a PriorOnly plan (no health query)
// and attaches it to r as its prior_apart section.
func (r *Report) AddPriorApart(p *compiler.Plan, set *results.Set, opt Options) error {
	if !p.PriorOnly {
		return fmt.Errorf("report: the plan of the prior-run analysis was not compiled with PriorOnly")
	}
	sub, err := Analyze(p, set, opt)
	if err != nil {
		return err
	}
	pa := &PriorApart{Units: map[string]int64{}, Metrics: sub.Metrics,
		Note: "These units saw the change in an earlier run before this one started. They are left out of every other result of this report and compared here on their own: a unit that has seen the change before may respond differently the second time, so read this beside the main result, not pooled with it. The arms of this group may not be comparable: the units are those that came back after the earlier exposure, which the earlier variant may itself have influenced, and no sample-ratio check is run on them."}
	for _, pr := range p.Spec.PriorRuns {
		pa.Runs = append(pa.Runs, pr.Name)
	}
	for _, row := range set.Overall() {
		if row.Split == 0 {
			pa.Units[row.Variant] += row.Units
		}
	}
	r.PriorApart = pa
	return nil
}

// priorApartDoc adds the section to the document.
func (r *Report) priorApartDoc(d *document) {
	pa := r.PriorApart
	if pa == nil {
		return
	}
	d.heading(2, "Previously exposed units, analysed apart")
	var units []string
	for _, v := range r.Experiment.Variants {
		units = append(units, fmt.Sprintf("%s %d", v.Name, pa.Units[v.Name]))
	}
	d.para("Prior runs %s; units analysed: %s.", strings.Join(pa.Runs, ", "), strings.Join(units, ", "))
	d.para("%s", pa.Note)
	for _, m := range pa.Metrics {
		metricDoc(d, m)
	}
}
