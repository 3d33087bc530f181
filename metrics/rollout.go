package metrics

import (
	"fmt"
	"math"
	"os"
	"path/filepath"
	"sort"
	"strings"
	"time"

	"github.com/BurntSushi/toml"
)

// Rollout is the allocation schedule of an experiment launched in steps:
// a small test step first (say 5% of units in the treatment), then wider
// steps. Each unit is analysed with the step in force at its trigger.
type Rollout struct {
	Steps []Step // in time order; the first starts at the analysis start
	// Estimate says how the effect combines steps: EstimateByStep weights
	// each step's within-step difference by the step's share of units;
	// EstimateLastStep uses the units triggered in the last step only.
	Estimate string
	At       Range
}

// Rollout estimates.
const (
	EstimateByStep   = "by_step"
	EstimateLastStep = "last_step"
)

// Step is one allocation step of a rollout.
type Step struct {
	Name  string
	Start time.Time
	// Weights are the step's shares per variant, in Spec.Variants order,
	// normalised to sum to 1; Written are the weights as written.
	Weights []float64
	Written []float64
	At      Range
}

// StepAt returns the index of the step in force at t: the last step whose
// start is at or before t (0 for times before the first step).
func (r *Rollout) StepAt(t time.Time) int {
	i := sort.Search(len(r.Steps), func(i int) bool { return r.Steps[i].Start.After(t) })
	return max(i-1, 0)
}

var rolloutKeys = []string{"estimate", "steps"}

var stepKeys = []string{"start", "weights"}

// rollout reads the [rollout] table. It runs after [experiment] and
// [variants], whose period and names it checks against.
func (l *loader) rollout(t *table) {
	s := l.spec
	ro := &Rollout{At: l.rng(t.path, true)}
	ro.Estimate = t.enum("estimate", false, EstimateByStep, EstimateByStep, EstimateLastStep)
	st := t.sub("steps", true)
	if st == nil {
		return
	}
	if len(st.m) == 0 {
		l.errAt(st.path, CodeRollout, "declare at least one step, e.g. [rollout.steps.trial] with weights", "[rollout.steps] is empty")
		return
	}
	good := true
	for i, name := range st.keys() {
		stt := st.sub(name, false, stepKeys...)
		if stt == nil {
			good = false
			continue
		}
		l.ident(stt.path, name, "step name", true)
		step := Step{Name: name, At: l.rng(stt.path, true)}
		if stt.has("start") {
			tm, ok := l.timestamp(stt, "start", false)
			if !ok {
				good = false
			}
			step.Start = tm
		} else if i == 0 {
			step.Start = s.Start
		} else {
			stt.missing("start", "when the step began, e.g. start = 2026-03-05T00:00:00Z")
			good = false
		}
		if w, ok := l.stepWeights(stt); ok {
			step.Written = w
			step.Weights = normalise(w)
		} else {
			good = false
		}
		ro.Steps = append(ro.Steps, step)
	}
	l.caseClash(st, "step")
	if !good || s.Start.IsZero() || s.End.IsZero() {
		s.Rollout = ro
		return
	}
	for i, step := range ro.Steps {
		path := append(st.p(step.Name), "start")
		switch {
		case i == 0 && !step.Start.Equal(s.Start):
			l.errAt(path, CodeRollout, "the first step begins at the analysis start ("+s.Start.UTC().Format(time.RFC3339)+"); leave its start out to say so",
				"the first step `%s` starts at %s, not at the analysis start", step.Name, step.Start.UTC().Format(time.RFC3339))
		case i > 0 && !step.Start.After(ro.Steps[i-1].Start):
			l.errAt(path, CodeRollout, "list the steps in the order they began, each later than the one before",
				"step `%s` starts at %s, not after step `%s`", step.Name, step.Start.UTC().Format(time.RFC3339), ro.Steps[i-1].Name)
		case i > 0 && !step.Start.Before(s.End):
			l.errAt(path, CodeRollout, "a step that begins at or after the analysis end has no units; drop it or move the end",
				"step `%s` starts at %s, not before the analysis end %s", step.Name, step.Start.UTC().Format(time.RFC3339), s.End.UTC().Format(time.RFC3339))
		}
	}
	s.Rollout = ro
}

// stepWeights reads a step's weights table: one positive weight per
// declared variant, in Spec.Variants order.
func (l *loader) stepWeights(t *table) ([]float64, bool) {
	s := l.spec
	names := make([]string, len(s.Variants))
	for i, v := range s.Variants {
		names[i] = v.Name
	}
	hint := "one weight per variant, e.g. weights = { " + strings.Join(examplePairs(names), ", ") + " }"
	wt := t.sub("weights", true, names...)
	if wt == nil {
		return nil, false
	}
	out := make([]float64, len(names))
	good := len(names) >= 2
	for i, n := range names {
		w, ok := wt.num(n)
		if !ok {
			if !wt.has(n) {
				l.errAt(wt.path, CodeRollout, hint, "`%s` has no weight for variant `%s`", dotted(wt.path), n)
			}
			good = false
			continue
		}
		if w <= 0 {
			l.errAt(wt.p(n), CodeRollout, "every variant needs a positive share in every step; a variant with no traffic is not yet in the experiment", "variant `%s` has weight %v in step `%s`; weights must be positive", n, w, t.path[len(t.path)-1])
			good = false
			continue
		}
		out[i] = w
	}
	for _, k := range wt.keys() {
		if !contains(names, k) {
			good = false
		}
	}
	if good {
		sum := 0.0
		for _, w := range out {
			sum += w
		}
		if math.IsInf(sum, 0) {
			l.errAt(wt.path, CodeRollout, "write smaller weights, e.g. 5 and 95", "step weights are too large to add up")
			good = false
		}
	}
	return out, good
}

func examplePairs(names []string) []string {
	out := make([]string, len(names))
	for i, n := range names {
		out[i] = n + " = 50"
	}
	return out
}

func normalise(w []float64) []float64 {
	sum := 0.0
	for _, x := range w {
		sum += x
	}
	out := make([]float64, len(w))
	for i, x := range w {
		out[i] = x / sum
	}
	return out
}

// PriorRun names the exposures of an earlier run of the experiment (or of
// another experiment on the same feature): units with a qualifying row in
// Source in [From, Until) have seen the change before. They are excluded
// from this analysis ("previously_exposed") and counted by variant, or,
// with analysis = "apart", analysed on their own beside it. Only rows
// before the current analysis start count.
type PriorRun struct {
	Name        string
	Source      *Source
	From, Until time.Time
	Filter      *Expr // nil: every row
	// Spec is the earlier run's spec file when the run was named by it
	// (spec = "…"): Source, From, Until and Filter are then its exposure
	// source and filter and its analysis period.
	Spec string
	// Apart says the previously exposed units are analysed apart instead
	// of only excluded (analysis = "apart"); every prior run of a spec
	// says the same.
	Apart bool
	At    Range
}

var priorRunKeys = []string{"source", "from", "until", "filter", "spec", "analysis"}

// PriorApart reports whether the spec's previously exposed units are
// analysed apart.
func (s *Spec) PriorApart() bool { return len(s.PriorRuns) > 0 && s.PriorRuns[0].Apart }

// priorRun reads one [prior_runs.<name>] table.
func (l *loader) priorRun(name string, t *table, ref refFunc) *PriorRun {
	if t == nil {
		return nil
	}
	s := l.spec
	pr := &PriorRun{Name: name, At: l.rng(t.path, true)}
	l.ident(t.path, name, "prior run name", true)
	pr.Apart = t.enum("analysis", false, "exclude", "exclude", "apart") == "apart"
	raw, _ := t.m["analysis"].(string)
	known := !t.has("analysis") || raw == "exclude" || raw == "apart"
	if known && len(s.PriorRuns) > 0 && s.PriorRuns[0].Apart != pr.Apart {
		l.errAt(t.p("analysis"), CodePriorRun, fmt.Sprintf("set the same analysis on every prior run (prior run `%s` has %q)", s.PriorRuns[0].Name, map[bool]string{true: "apart", false: "exclude"}[s.PriorRuns[0].Apart]), "prior runs disagree on how previously exposed units are analysed")
	}
	if t.has("spec") {
		for _, k := range []string{"source", "from", "until", "filter"} {
			if t.has(k) {
				l.errKey(t.p(k), CodePriorRun, "a prior run named by its spec takes that spec's exposure source, filter and period", "prior run `%s` names a spec and cannot also set `%s`", name, k)
			}
		}
		if !l.priorSpec(pr, t) {
			return nil
		}
	} else {
		pr.Source = ref(t, "source")
		if pr.Source != nil && !pr.Source.IsEvent() {
			l.errAt(t.p("source"), CodePriorRun, "name an event source with a time column, such as the earlier run's exposure log", "source `%s` has no time column, so earlier exposures cannot be dated", pr.Source.Name)
		}
		var okF, okU bool
		pr.From, okF = l.timestamp(t, "from", true)
		pr.Until, okU = l.timestamp(t, "until", false)
		if !t.has("until") {
			pr.Until, okU = s.Start, !s.Start.IsZero()
		}
		if okF && okU && t.has("until") && !pr.Until.After(pr.From) {
			l.errAt(t.p("until"), CodePriorRun, "", "prior run `%s` ends at %s, not after its start %s", name, pr.Until.UTC().Format(time.RFC3339), pr.From.UTC().Format(time.RFC3339))
		}
		pr.Filter = l.expression(t, "filter", pr.Source, true)
	}
	if !pr.From.IsZero() && !s.Start.IsZero() && !pr.From.Before(s.Start) {
		key := "from"
		if pr.Spec != "" {
			key = "spec"
		}
		l.errAt(t.p(key), CodePriorRun, "earlier exposures are those before this run's start", "prior run `%s` starts at %s, not before the analysis start %s", name, pr.From.UTC().Format(time.RFC3339), s.Start.UTC().Format(time.RFC3339))
	}
	return pr
}

// priorSpec fills pr from the earlier run's spec named by t's spec key:
// its exposure source (file paths made relative to this spec's
// directory), its exposure filter and its analysis period. The earlier
// spec's own prior runs are not followed.
func (l *loader) priorSpec(pr *PriorRun, t *table) bool {
	path := t.p("spec")
	p, ok := t.str("spec", true, "the path of the earlier run's spec, relative to this spec")
	if !ok {
		return false
	}
	full := p
	if !filepath.IsAbs(p) {
		full = filepath.Join(filepath.Dir(l.file), p)
	}
	here, err1 := filepath.Abs(l.file)
	there, err2 := filepath.Abs(full)
	if err1 != nil || err2 != nil {
		here, there = filepath.Clean(l.file), filepath.Clean(full)
	}
	if here == there {
		l.errAt(path, CodePriorRun, "name the spec of the earlier run", "prior run `%s` names this spec itself", pr.Name)
		return false
	}
	src, err := os.ReadFile(full)
	if err != nil {
		l.errAt(path, CodePriorRun, "paths are relative to the spec's directory", "cannot read the spec of prior run `%s`: %s", pr.Name, cleanIOError(err))
		return false
	}
	opts := l.opts
	opts.asPriorRun = true
	other, ds := LoadWith(full, src, opts)
	if other == nil || ds.HasErrors() || other.Exposure.Source == nil {
		first := "it cannot be parsed"
		for _, d := range ds {
			if d.Severity != Warning {
				first = d.Short()
				break
			}
		}
		l.errAt(path, CodePriorRun, "fix it first: assay check "+full, "the spec of prior run `%s` has errors (%s)", pr.Name, first)
		return false
	}
	if l.spec.Unit != "" && other.Unit != "" && other.Unit != l.spec.Unit {
		l.errAt(path, CodePriorRun, "earlier exposures must be of the same kind of unit", "the spec of prior run `%s` randomises %q, this one %q", pr.Name, other.Unit, l.spec.Unit)
		return false
	}
	// The earlier spec's relative file paths are relative to its own
	// directory: rebase them onto this spec's (absolute when that fails).
	cp := *other.Exposure.Source
	if cp.File != "" && !filepath.IsAbs(cp.File) {
		target := filepath.Join(filepath.Dir(there), cp.File)
		if rel, err := filepath.Rel(filepath.Dir(here), target); err == nil && filepath.IsAbs(here) && filepath.IsAbs(there) {
			cp.File = rel
		} else {
			cp.File = target
		}
	}
	pr.Spec, pr.Source, pr.Filter, pr.From, pr.Until = p, &cp, other.Exposure.Filter, other.Start, other.End
	return true
}

// Event is a declared calendar event (a holiday, a sale, a fiscal year
// end, an industry event) in [From, Until): behaviour during it may differ
// from the rest of the year, so the report names any event that overlaps
// the analysis period or the pre-period.
type Event struct {
	Name        string
	Kind        string // free text, e.g. "holiday"
	From, Until time.Time
	File        string // the shared calendar file it came from, "" for the spec
	At          Range
}

var calendarKeys = []string{"files", "events"}

var eventKeys = []string{"from", "until", "kind"}

// calendar reads [calendar]: events declared in the spec and in shared
// calendar files (paths relative to the spec's folder) that hold
// [events.<name>] tables of the same shape.
func (l *loader) calendar(t *table) {
	if files, ok := t.strList("files", false); ok {
		for i, f := range files {
			l.calendarFile(append(t.p("files"), "#"+itoa(i)), f)
		}
	}
	if et := t.sub("events", false); et != nil {
		l.events(et, "")
	}
}

func (l *loader) events(et *table, file string) {
	for _, name := range et.keys() {
		t := et.sub(name, false, eventKeys...)
		if t == nil {
			continue
		}
		ev := &Event{Name: name, File: file, At: l.rng(t.path, true)}
		l.ident(t.path, name, "event name", true)
		ev.Kind, _ = t.str("kind", false, "")
		var okF, okU bool
		ev.From, okF = l.timestamp(t, "from", true)
		ev.Until, okU = l.timestamp(t, "until", true)
		if okF && okU && !ev.Until.After(ev.From) {
			l.errAt(t.p("until"), CodeCalendar, "events are half-open [from, until): until is the first moment after the event", "event `%s` ends at %s, not after its start %s", name, ev.Until.UTC().Format(time.RFC3339), ev.From.UTC().Format(time.RFC3339))
			continue
		}
		if okF && okU {
			l.spec.Events = append(l.spec.Events, ev)
		}
	}
}

// calendarFile reads a shared calendar file. Its problems are reported
// against that file.
func (l *loader) calendarFile(path []string, name string) {
	full := name
	if !filepath.IsAbs(full) {
		full = filepath.Join(filepath.Dir(l.file), name)
	}
	src, err := os.ReadFile(full)
	if err != nil {
		l.errAt(path, CodeCalendar, "paths are relative to the spec's folder", "cannot read calendar file %q: %s", name, cleanIOError(err))
		return
	}
	var raw map[string]any
	sub := &loader{file: full, src: src, spec: l.spec}
	if _, err := toml.Decode(string(src), &raw); err != nil {
		l.diags = append(l.diags, sub.syntaxDiag(err))
		return
	}
	sub.ix = buildKeyIndex(src)
	root := sub.table(nil, raw, "events")
	if et := root.sub("events", true); et != nil {
		sub.events(et, name)
	}
	l.diags = append(l.diags, sub.diags...)
}
