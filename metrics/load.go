package metrics

import (
	"crypto/sha256"
	"encoding/hex"
	"errors"
	"fmt"
	"math"
	"os"
	"sort"
	"strconv"
	"strings"
	"time"
	_ "time/tzdata" // time zones must not depend on the machine's zoneinfo
	"unicode/utf8"

	"github.com/BurntSushi/toml"

	"github.com/assay-dev/assay/metrics/expr"
	"github.com/assay-dev/assay/metrics/timefmt"
)

// LoadFile reads and checks the spec at path. It returns the spec (nil when
// the file could not be read or parsed), the file's text for rendering
// diagnostics, and all problems found.
func LoadFile(path string) (*Spec, []byte, Diagnostics) {
	src, err := os.ReadFile(path)
	if err != nil {
		return nil, nil, Diagnostics{{Code: CodeSyntax, Summary: "cannot read spec: " + cleanIOError(err), Subject: Range{File: path}}}
	}
	s, ds := Load(path, src)
	return s, src, ds
}

func cleanIOError(err error) string {
	var pe *os.PathError
	if errors.As(err, &pe) {
		return pe.Err.Error()
	}
	return err.Error()
}

// Load parses and checks a spec. Problems are reported all at once; the
// returned spec is nil only when the TOML itself could not be parsed.
func Load(file string, src []byte) (*Spec, Diagnostics) {
	return LoadWith(file, src, LoadOptions{})
}

// LoadWith is Load with options (the target that picks each source's place).
func LoadWith(file string, src []byte, o LoadOptions) (*Spec, Diagnostics) {
	l := &loader{file: file, src: src, opts: o}
	if !utf8.Valid(src) {
		off := 0
		for off < len(src) {
			r, size := utf8.DecodeRune(src[off:])
			if r == utf8.RuneError && size == 1 {
				break
			}
			off += size
		}
		p := posAt(src, off)
		return nil, Diagnostics{{Code: CodeEncoding, Summary: "spec is not valid UTF-8 text",
			Hint: "save the file as UTF-8", Subject: Range{File: file, Start: p, End: Pos{Line: p.Line, Column: p.Column + 1, Byte: off + 1}}}}
	}
	var raw map[string]any
	if _, err := toml.Decode(string(src), &raw); err != nil {
		return nil, Diagnostics{l.syntaxDiag(err)}
	}
	l.ix = buildKeyIndex(src)
	sum := sha256.Sum256(src)
	l.spec = &Spec{File: file, Fingerprint: hex.EncodeToString(sum[:8]), Ranges: map[string]Range{}}
	l.useLibraries(raw) // library.go: merges shared definitions and picks places
	l.load(raw)
	l.sealShared() // library.go: records overrides, extends the fingerprint
	l.diags.Sort()
	return l.spec, l.diags
}

func (l *loader) syntaxDiag(err error) Diagnostic {
	var pe toml.ParseError
	if errors.As(err, &pe) {
		start := l.pos(pe.Position.Start)
		end := l.pos(pe.Position.Start + max(pe.Position.Len, 1))
		msg := pe.Message
		hint := ""
		if pe.Usage != "" {
			hint = strings.Join(strings.Fields(pe.Usage), " ")
		}
		if strings.Contains(msg, "has already been defined") || strings.Contains(msg, "already defined") {
			return Diagnostic{Code: CodeDuplicate, Summary: "TOML: " + msg, Hint: "each name may be declared only once", Subject: Range{File: l.file, Start: start, End: end}}
		}
		return Diagnostic{Code: CodeSyntax, Summary: "TOML: " + msg, Hint: hint, Subject: Range{File: l.file, Start: start, End: end}}
	}
	return Diagnostic{Code: CodeSyntax, Summary: "TOML: " + err.Error(), Subject: Range{File: l.file, Start: Pos{Line: 1, Column: 1}}}
}

type loader struct {
	file  string
	src   []byte
	lines *lineIndex // built on first use
	ix    *keyIndex
	diags Diagnostics
	spec  *Spec
	opts  LoadOptions
	lib   *libState // library.go: where merged keys came from
}

// pos returns the position of byte offset off in the spec text.
func (l *loader) pos(off int) Pos {
	if l.lines == nil {
		l.lines = newLineIndex(l.src)
	}
	return l.lines.pos(off)
}

// rng returns the range of a key path's value (or key when keyOnly).
func (l *loader) rng(path []string, keyOnly bool) Range {
	if r, ok := l.foreignRange(path, keyOnly); ok { // library.go
		return r
	}
	for n := len(path); n > 0; n-- {
		if loc, ok := l.ix.keys[pathKey(path[:n]...)]; ok {
			r := loc.value
			if keyOnly || n < len(path) {
				r = loc.key
			}
			return Range{File: l.file, Start: l.pos(r[0]), End: l.pos(r[1])}
		}
	}
	return Range{File: l.file, Start: Pos{Line: 1, Column: 1}, End: Pos{Line: 1, Column: 2, Byte: 1}}
}

func (l *loader) report(at Range, code, hint, format string, args ...any) {
	l.diags = append(l.diags, Diagnostic{Code: code, Summary: fmt.Sprintf(format, args...), Hint: hint, Subject: at})
}

func (l *loader) errAt(path []string, code, hint, format string, args ...any) {
	l.report(l.rng(path, false), code, hint, format, args...)
}

func (l *loader) errKey(path []string, code, hint, format string, args ...any) {
	l.report(l.rng(path, true), code, hint, format, args...)
}

func dotted(path []string) string {
	parts := make([]string, 0, len(path))
	for _, p := range path {
		if strings.HasPrefix(p, "#") {
			parts[len(parts)-1] += "[" + p[1:] + "]"
			continue
		}
		parts = append(parts, p)
	}
	return strings.Join(parts, ".")
}

// table is a TOML table being read with a fixed set of keys.
type table struct {
	l    *loader
	path []string
	m    map[string]any
}

// table reads v as a table whose keys must be among allowed.
func (l *loader) table(path []string, v any, allowed ...string) *table {
	m, ok := v.(map[string]any)
	if !ok {
		l.errAt(path, CodeType, "", "`%s` must be a table, not %s", dotted(path), tomlType(v))
		return &table{l: l, path: path, m: map[string]any{}}
	}
	t := &table{l: l, path: path, m: m}
	if allowed != nil {
		for _, k := range t.keys() {
			if !contains(allowed, k) {
				p := append(append([]string{}, path...), k)
				hint := "allowed keys here: " + strings.Join(allowed, ", ")
				where := "in [" + dotted(path) + "]"
				if len(path) == 0 {
					where = "at the top level"
				}
				if s := Suggest(k, allowed); s != "" {
					l.errKey(p, CodeUnknownKey, hint, "unknown key `%s` %s; did you mean `%s`?", k, where, s)
				} else {
					l.errKey(p, CodeUnknownKey, hint, "unknown key `%s` %s", k, where)
				}
			}
		}
	}
	return t
}

func contains(list []string, s string) bool {
	for _, x := range list {
		if x == s {
			return true
		}
	}
	return false
}

// keys returns the table's keys in file order.
func (t *table) keys() []string {
	type keyed struct {
		k   string
		seq int
	}
	ks := make([]keyed, 0, len(t.m))
	prefix := pathKey(t.path...)
	if len(t.path) > 0 {
		prefix += "\x1f"
	}
	for k := range t.m {
		// The sequence number is looked up once per key, not once per
		// comparison: tables such as [metrics] can hold thousands of keys.
		seq := math.MaxInt
		if loc, ok := t.l.ix.keys[prefix+k]; ok {
			seq = loc.seq
		}
		ks = append(ks, keyed{k, seq})
	}
	sort.Slice(ks, func(i, j int) bool {
		if ks[i].seq != ks[j].seq {
			return ks[i].seq < ks[j].seq
		}
		return ks[i].k < ks[j].k
	})
	out := make([]string, len(ks))
	for i, x := range ks {
		out[i] = x.k
	}
	return out
}

func (t *table) p(key string) []string { return append(append([]string{}, t.path...), key) }
func (t *table) has(key string) bool   { _, ok := t.m[key]; return ok }

func (t *table) at(key string) Range {
	r := t.l.rng(t.p(key), false)
	t.l.spec.Ranges[dotted(t.p(key))] = r
	return r
}

func (t *table) missing(key, hint string) {
	if len(t.path) == 0 {
		t.l.errAt(t.path, CodeMissingKey, hint, "the spec has no [%s] table", key)
		return
	}
	t.l.errAt(t.path, CodeMissingKey, hint, "[%s] needs `%s`", dotted(t.path), key)
}

func (t *table) str(key string, required bool, hint string) (string, bool) {
	v, ok := t.m[key]
	if !ok {
		if required {
			t.missing(key, hint)
		}
		return "", false
	}
	s, ok := v.(string)
	if !ok {
		t.l.errAt(t.p(key), CodeType, hint, "`%s` must be a string, not %s", dotted(t.p(key)), tomlType(v))
		return "", false
	}
	t.at(key)
	return s, true
}

func (t *table) enum(key string, required bool, def string, options ...string) string {
	s, ok := t.str(key, required, "one of: "+strings.Join(options, ", "))
	if !ok {
		return def
	}
	if !contains(options, s) {
		hint := "one of: " + strings.Join(options, ", ")
		if sg := Suggest(s, options); sg != "" {
			t.l.errAt(t.p(key), CodeValue, hint, "`%s` cannot be %q; did you mean %q?", dotted(t.p(key)), s, sg)
		} else {
			t.l.errAt(t.p(key), CodeValue, hint, "`%s` cannot be %q", dotted(t.p(key)), s)
		}
		return def
	}
	return s
}

func (t *table) num(key string) (float64, bool) {
	v, ok := t.m[key]
	if !ok {
		return 0, false
	}
	var f float64
	switch x := v.(type) {
	case int64:
		f = float64(x)
	case float64:
		f = x
	default:
		t.l.errAt(t.p(key), CodeType, "", "`%s` must be a number, not %s", dotted(t.p(key)), tomlType(v))
		return 0, false
	}
	if math.IsNaN(f) || math.IsInf(f, 0) {
		t.l.errAt(t.p(key), CodeValue, "", "`%s` must be a finite number", dotted(t.p(key)))
		return 0, false
	}
	t.at(key)
	return f, true
}

func (t *table) boolean(key string) (bool, bool) {
	v, ok := t.m[key]
	if !ok {
		return false, false
	}
	b, ok := v.(bool)
	if !ok {
		t.l.errAt(t.p(key), CodeType, "", "`%s` must be true or false, not %s", dotted(t.p(key)), tomlType(v))
		return false, false
	}
	return b, true
}

func (t *table) strList(key string, required bool) ([]string, bool) {
	v, ok := t.m[key]
	if !ok {
		if required {
			t.missing(key, "")
		}
		return nil, false
	}
	arr, ok := v.([]any)
	if !ok {
		t.l.errAt(t.p(key), CodeType, "", "`%s` must be an array of strings, not %s", dotted(t.p(key)), tomlType(v))
		return nil, false
	}
	out := make([]string, 0, len(arr))
	good := true
	for i, e := range arr {
		s, ok := e.(string)
		if !ok {
			t.l.errAt(append(t.p(key), "#"+itoa(i)), CodeType, "", "`%s[%d]` must be a string, not %s", dotted(t.p(key)), i, tomlType(e))
			good = false
			continue
		}
		out = append(out, s)
	}
	t.at(key)
	return out, good
}

func (t *table) sub(key string, required bool, allowed ...string) *table {
	v, ok := t.m[key]
	if !ok {
		if required {
			t.missing(key, "")
		}
		return nil
	}
	sub := t.l.table(t.p(key), v, allowed...)
	if _, isTable := v.(map[string]any); !isTable {
		// The wrong type is reported; reading an empty table in its place
		// would only add "needs `...`" noise for every required key.
		return nil
	}
	return sub
}

func tomlType(v any) string {
	switch v.(type) {
	case string:
		return "a string"
	case int64:
		return "an integer"
	case float64:
		return "a float"
	case bool:
		return "a boolean"
	case time.Time:
		return "a datetime"
	case []any, []map[string]any:
		return "an array"
	case map[string]any:
		return "a table"
	}
	return fmt.Sprintf("%T", v)
}

// ---- the spec ----

var topKeys = []string{"experiment", "variants", "sources", "exposure", "eligibility", "metrics", "segments", "rollout", "prior_runs", "calendar", "planning", libraryKey}

func (l *loader) load(raw map[string]any) {
	root := l.table(nil, raw, topKeys...)
	s := l.spec

	exp := root.sub("experiment", true, "id", "hypothesis", "unit", "start", "end", "confidence", "time_zone", "monitoring", "planned_units")
	if exp != nil {
		l.experiment(exp)
	} else {
		s.Confidence = 0.95
		s.TimeZone = time.UTC
	}
	if v := root.sub("variants", true); v != nil {
		l.variants(v)
	}
	srcs := map[string]*Source{}
	if st := root.sub("sources", true); st != nil {
		for _, name := range st.keys() {
			src := l.source(name, st.sub(name, false, "table", "file", "unit", "time", "time_format", "static", "columns"))
			if src != nil {
				srcs[name] = src
				s.Sources = append(s.Sources, src)
			}
		}
		if len(st.m) == 0 {
			l.errAt(st.path, CodeMissingKey, "declare the exposure source and at least one outcome source", "[sources] is empty")
		}
		l.caseClash(st, "source")
	}
	ref := func(t *table, key string) *Source {
		name, ok := t.str(key, true, "the name of a table under [sources]")
		if !ok {
			return nil
		}
		src, ok := srcs[name]
		if !ok {
			names := make([]string, 0, len(srcs))
			for _, x := range s.Sources {
				names = append(names, x.Name)
			}
			hint := "declared sources: " + strings.Join(names, ", ")
			if len(names) == 0 {
				hint = "declare it as a [sources." + name + "] table"
			}
			if sg := Suggest(name, names); sg != "" {
				l.errAt(t.p(key), CodeUndefined, hint, "source `%s` is not declared; did you mean `%s`?", name, sg)
			} else {
				l.errAt(t.p(key), CodeUndefined, hint, "source `%s` is not declared under [sources]", name)
			}
			return nil
		}
		return src
	}
	if et := root.sub("exposure", true, "source", "variant", "filter"); et != nil {
		l.exposure(et, ref)
	}
	if el := root.sub("eligibility", false); el != nil {
		for _, name := range el.keys() {
			if r := l.rule(name, el.sub(name, false, "kind", "source", "filter", "window", "require"), ref); r != nil {
				s.Rules = append(s.Rules, r)
			}
		}
		l.caseClash(el, "rule")
	}
	if mt := root.sub("metrics", true); mt != nil {
		for _, name := range mt.keys() {
			if m := l.metric(name, mt.sub(name, false, metricKeys...), ref); m != nil {
				s.Metrics = append(s.Metrics, m)
			}
		}
		l.covariates(mt)
		l.caseClash(mt, "metric")
		primaries := 0
		for _, m := range s.Metrics {
			if m.Role == Primary {
				primaries++
				if primaries == 2 {
					l.errAt(append(mt.p(m.Name), "role"), CodePrimary, "keep one metric as primary and make the others secondary", "metric `%s` is a second primary metric; an experiment has exactly one", m.Name)
				}
			}
		}
		if primaries == 0 && len(mt.m) > 0 && !rolesUnclear(mt) {
			l.errAt(mt.path, CodePrimary, "set role = \"primary\" on the metric the hypothesis is about", "no primary metric: an experiment has exactly one")
		}
		if len(mt.m) == 0 {
			l.errAt(mt.path, CodeMissingKey, "", "[metrics] is empty")
		}
	}
	if sg := root.sub("segments", false); sg != nil {
		for _, name := range sg.keys() {
			if seg := l.segment(name, sg.sub(name, false, "source", "column", "top"), ref); seg != nil {
				s.Segments = append(s.Segments, seg)
			}
		}
		l.caseClash(sg, "segment")
	}
	// Allocation schedule: see rollout.go.
	if rt := root.sub("rollout", false, rolloutKeys...); rt != nil {
		l.rollout(rt)
	}
	if pt := root.sub("prior_runs", false); pt != nil && !l.opts.asPriorRun {
		for _, name := range pt.keys() {
			if r := l.priorRun(name, pt.sub(name, false, priorRunKeys...), ref); r != nil {
				s.PriorRuns = append(s.PriorRuns, r)
			}
		}
		l.caseClash(pt, "prior run")
	}
	if ct := root.sub("calendar", false, calendarKeys...); ct != nil {
		l.calendar(ct)
	}
	if pt := root.sub("planning", false, planningKeys...); pt != nil {
		l.planning(pt, ref) // planning.go
	}
}

// caseClash reports names under t that differ only in letter case. assay
// derives SQL identifiers from them, and DuckDB and MySQL match identifiers
// without regard to case, so two such names would silently share a column.
func (l *loader) caseClash(t *table, what string) {
	first := map[string]string{}
	for _, k := range t.keys() {
		low := strings.ToLower(k)
		if prev, ok := first[low]; ok {
			l.errKey(t.p(k), CodeDuplicate, "rename one of them: SQL engines compare these names without regard to case",
				"%s `%s` differs from %s `%s` only in letter case", what, k, what, prev)
			continue
		}
		first[low] = k
	}
}

// rolesUnclear reports whether some metric's role could not be read, so
// that a misspelt role = "primry" does not also claim the spec has no
// primary metric.
func rolesUnclear(mt *table) bool {
	for _, v := range mt.m {
		m, ok := v.(map[string]any)
		if !ok {
			return true
		}
		r, _ := m["role"].(string)
		if !contains([]string{string(Primary), string(Secondary), string(Guard), string(Mechanism)}, r) {
			return true
		}
	}
	return false
}

func (l *loader) experiment(t *table) {
	s := l.spec
	if id, ok := t.str("id", true, "a short identifier such as \"reorder-shelf-2026-03\""); ok {
		if strings.TrimSpace(id) == "" || strings.ContainsAny(id, "\x00\n\r") {
			t.l.errAt(t.p("id"), CodeIdent, "", "experiment id must be a non-empty single line")
		}
		s.ID = id
	}
	hintHyp := "state the change, why it should move the primary metric, and which way"
	if h, ok := t.str("hypothesis", true, hintHyp); ok {
		if len(strings.Fields(h)) < 5 {
			t.l.errAt(t.p("hypothesis"), CodeValue, hintHyp, "the hypothesis is too short to review")
		}
		s.Hypothesis = strings.TrimSpace(h)
	}
	s.Unit, _ = t.str("unit", false, "")
	if s.Unit == "" {
		s.Unit = "unit"
	}
	s.TimeZone = time.UTC
	s.TZName = "UTC"
	if tz, ok := t.str("time_zone", false, ""); ok {
		loc, err := time.LoadLocation(tz)
		if err != nil || tz == "" || tz == "Local" {
			t.l.errAt(t.p("time_zone"), CodeTime, "use an IANA name such as \"UTC\" or \"Europe/Amsterdam\"", "unknown time zone %q", tz)
		} else {
			s.TimeZone, s.TZName = loc, tz
		}
	}
	var okS, okE bool
	s.Start, okS = l.timestamp(t, "start", true)
	s.End, okE = l.timestamp(t, "end", true)
	if okS && okE && !s.End.After(s.Start) {
		t.l.errAt(t.p("end"), CodeTime, "", "analysis end %s is not after start %s", s.End.UTC().Format(time.RFC3339), s.Start.UTC().Format(time.RFC3339))
	}
	s.Monitoring = Monitoring(t.enum("monitoring", false, string(MonitoringFixed), string(MonitoringFixed), string(MonitoringSequential)))
	if n, ok := t.num("planned_units"); ok {
		if n < 2 || n != math.Trunc(n) {
			t.l.errAt(t.p("planned_units"), CodeValue, "the number of units you expect at the planned end, e.g. 20000", "planned_units must be a whole number of at least 2")
		} else if s.Monitoring != MonitoringSequential {
			t.l.errAt(t.p("planned_units"), CodeValue, "set monitoring = \"sequential\" to tune the always-valid intervals", "planned_units only applies to monitoring = \"sequential\"")
		} else {
			s.PlannedUnits = n
		}
	}
	s.Confidence = 0.95
	if c, ok := t.num("confidence"); ok {
		if c <= 0.5 || c >= 1 {
			t.l.errAt(t.p("confidence"), CodeValue, "write it as a fraction, e.g. 0.95", "confidence must be between 0.5 and 1 (exclusive), got %v", c)
		} else {
			s.Confidence = c
		}
	}
}

// timestamp reads a TOML datetime or a string timestamp. Local datetimes
// (no offset) are wall-clock times in the experiment's time zone.
func (l *loader) timestamp(t *table, key string, required bool) (time.Time, bool) {
	v, ok := t.m[key]
	if !ok {
		if required {
			t.missing(key, "a timestamp such as 2026-03-02T00:00:00Z")
		}
		return time.Time{}, false
	}
	t.at(key)
	zone := l.spec.TimeZone
	switch x := v.(type) {
	case time.Time:
		switch x.Location().String() {
		case "datetime-local", "date-local":
			return time.Date(x.Year(), x.Month(), x.Day(), x.Hour(), x.Minute(), x.Second(), x.Nanosecond(), zone), true
		case "time-local":
			t.l.errAt(t.p(key), CodeTime, "add a date", "`%s` is a time of day without a date", dotted(t.p(key)))
			return time.Time{}, false
		}
		return x, true
	case string:
		for _, layout := range []string{time.RFC3339Nano, "2006-01-02T15:04:05", "2006-01-02 15:04:05", "2006-01-02"} {
			var tm time.Time
			var err error
			if layout == time.RFC3339Nano {
				tm, err = time.Parse(layout, x)
			} else {
				tm, err = time.ParseInLocation(layout, x, zone)
			}
			if err == nil {
				return tm, true
			}
		}
		t.l.errAt(t.p(key), CodeTime, "use a TOML datetime such as 2026-03-02T00:00:00Z", "cannot read %q as a timestamp", x)
	default:
		t.l.errAt(t.p(key), CodeType, "use a TOML datetime such as 2026-03-02T00:00:00Z", "`%s` must be a datetime, not %s", dotted(t.p(key)), tomlType(v))
	}
	return time.Time{}, false
}

// WeightTolerance is how far from 1 the written weights may sum and still
// be read as fractions of the traffic (0.3333 three times sums to 0.9999).
// Weights further from 1 are read as ratios (50/25/25, or 2 and 1), and
// the loader adds a note showing the split they stand for. Either way the
// weights are divided by their sum.
const WeightTolerance = 1e-3

func (l *loader) variants(t *table) {
	s := l.spec
	sum := 0.0
	good := true
	for _, name := range t.keys() {
		w, ok := t.num(name)
		if !ok {
			good = false
			continue
		}
		if w <= 0 {
			t.l.errAt(t.p(name), CodeWeights, "weights are shares or ratios of the traffic, e.g. 0.5 and 0.5, or 50 and 50", "variant `%s` has weight %v; weights must be positive", name, w)
			good = false
		}
		l.ident(t.p(name), name, "variant name", true)
		s.Variants = append(s.Variants, Variant{Name: name, Weight: w, Written: w, WrittenText: l.rawValue(t.p(name)), At: t.l.rng(t.p(name), true)})
		sum += w
	}
	if len(t.m) < 2 {
		t.l.errAt(t.path, CodeVariants, "list the baseline first, then at least one treatment, e.g. control = 0.5 and treatment = 0.5", "an experiment needs at least two variants, found %d", len(t.m))
		return
	}
	if !good || math.IsInf(sum, 0) || sum <= 0 {
		if good {
			t.l.errAt(t.path, CodeWeights, "write smaller weights, e.g. 0.5 and 0.5", "planned weights are too large to add up")
		}
		return
	}
	for i := range s.Variants {
		s.Variants[i].Weight = s.Variants[i].Written / sum
	}
	if math.Abs(sum-1) <= WeightTolerance {
		return
	}
	parts := make([]string, len(s.Variants))
	for i, v := range s.Variants {
		parts[i] = fmt.Sprintf("%s %s", v.Name, strconv.FormatFloat(100*v.Weight, 'f', 2, 64)+"%")
	}
	l.diags = append(l.diags, Diagnostic{Severity: Note, Code: CodeWeights, Subject: l.rng(t.path, true),
		Summary: fmt.Sprintf("planned weights sum to %s and are read as ratios: %s", strconv.FormatFloat(sum, 'g', 10, 64), strings.Join(parts, ", ")),
		Hint:    "write fractions that sum to 1 (within " + strconv.FormatFloat(WeightTolerance, 'g', -1, 64) + ") to silence this note"})
}

// rawValue returns the text of a key's value as written in the spec.
func (l *loader) rawValue(path []string) string {
	loc, ok := l.ix.keys[pathKey(path...)]
	if !ok {
		return ""
	}
	return string(l.src[loc.value[0]:loc.value[1]])
}

// ident checks that name can be used as an identifier.
func (l *loader) ident(path []string, name, what string, keyOnly bool) bool {
	var bad string
	switch {
	case name == "":
		bad = "is empty"
	case strings.ContainsRune(name, 0):
		bad = "contains a NUL byte"
	case strings.ContainsAny(name, "\n\r\t"):
		bad = "contains a line break or tab"
	case strings.IndexFunc(name, isControl) >= 0:
		bad = fmt.Sprintf("contains the control character %U", []rune(name)[indexRune(name, isControl)])
	case utf8.RuneCountInString(name) > 128:
		bad = "is longer than 128 characters"
	}
	if bad == "" {
		return true
	}
	if keyOnly {
		l.errKey(path, CodeIdent, "", "%s %q %s", what, name, bad)
	} else {
		l.errAt(path, CodeIdent, "", "%s %q %s", what, name, bad)
	}
	return false
}

// isControl reports whether r is a control, line-separator or
// bidirectional-formatting character: such characters can end a SQL comment
// line in some engines or make a name display differently from its value.
func isControl(r rune) bool {
	return r < 0x20 || r >= 0x7f && r < 0xa0 || r == 0x2028 || r == 0x2029 ||
		r >= 0x202a && r <= 0x202e || r >= 0x2066 && r <= 0x2069 || r == 0xfeff
}

// indexRune returns the rune index of the first rune of s satisfying f, or -1.
func indexRune(s string, f func(rune) bool) int {
	i := 0
	for _, r := range s {
		if f(r) {
			return i
		}
		i++
	}
	return -1
}

func (l *loader) source(name string, t *table) *Source {
	if t == nil {
		return nil
	}
	src := &Source{Name: name, At: l.rng(t.path, true)}
	l.ident(t.path, name, "source name", true)
	tbl, hasT := t.str("table", false, "")
	file, hasF := t.str("file", false, "")
	switch {
	case hasT && hasF:
		l.errAt(t.p("file"), CodeSource, "a source reads either a table (or view) or a file", "source `%s` sets both `table` and `file`", name)
	case !hasT && !hasF:
		if !t.has("table") && !t.has("file") {
			l.errAt(t.path, CodeSource, "set table = \"schema.table\" or file = \"path/to/data.parquet\"", "source `%s` needs `table` or `file`", name)
		}
	case hasT:
		parts, err := SplitTableName(tbl)
		if err != nil {
			l.errAt(t.p("table"), CodeIdent, "write schema.table; quote a part that holds dots or spaces: schema.\"my table\"", "table name %q: %v", tbl, err)
		}
		for _, part := range parts {
			if !l.ident(t.p("table"), part, "table name part", false) {
				break
			}
		}
		src.Table, src.TableParts = tbl, parts
	case hasF:
		if strings.ContainsRune(file, 0) || strings.TrimSpace(file) == "" {
			l.errAt(t.p("file"), CodeIdent, "", "file path must be non-empty and without NUL bytes")
		} else if ext := strings.ToLower(fileExt(file)); ext != ".parquet" && ext != ".csv" && ext != ".json" && ext != ".tsv" {
			l.errAt(t.p("file"), CodeSource, "file sources are read by DuckDB: .parquet, .csv, .tsv or .json", "cannot tell the format of file %q from its extension", file)
		}
		src.File = file
	}
	cols, _ := t.strList("columns", true)
	seen := map[string]bool{}
	lower := map[string]string{}
	for i, c := range cols {
		if !l.ident(append(t.p("columns"), "#"+itoa(i)), c, "column name", false) {
			continue
		}
		if seen[c] {
			l.errAt(append(t.p("columns"), "#"+itoa(i)), CodeDuplicate, "", "column `%s` is listed twice in source `%s`", c, name)
			continue
		}
		if prev, ok := lower[strings.ToLower(c)]; ok {
			l.errAt(append(t.p("columns"), "#"+itoa(i)), CodeDuplicate, "DuckDB and MySQL match column names without regard to case",
				"column `%s` differs from column `%s` of source `%s` only in letter case", c, prev, name)
			continue
		}
		seen[c] = true
		lower[strings.ToLower(c)] = c
		src.Columns = append(src.Columns, c)
	}
	col := func(key string, required bool) string {
		c, ok := t.str(key, required, "")
		if !ok {
			return ""
		}
		if !seen[c] && cols != nil {
			hint := "declared columns: " + strings.Join(src.Columns, ", ")
			if sg := Suggest(c, src.Columns); sg != "" {
				l.errAt(t.p(key), CodeColumn, hint, "column `%s` is not in the columns of source `%s`; did you mean `%s`?", c, name, sg)
			} else {
				l.errAt(t.p(key), CodeColumn, hint, "column `%s` is not in the columns of source `%s`", c, name)
			}
		}
		return c
	}
	src.Unit = col("unit", true)
	src.Time = col("time", false)
	if tf, ok := t.str("time_format", false, ""); ok {
		f, err := timefmt.Parse(tf)
		switch {
		case src.Time == "":
			l.errKey(t.p("time_format"), CodeSource, "set time = \"column\" too, or drop time_format", "source `%s` has a time_format but no time column", name)
		case err != nil:
			hint := "one of " + strings.Join(timefmt.Names, ", ") + ", or a layout of " + timefmt.Verbs
			if sg := Suggest(tf, timefmt.Names); sg != "" {
				l.errAt(t.p("time_format"), CodeValue, hint, "%v; did you mean %q?", err, sg)
			} else {
				l.errAt(t.p("time_format"), CodeValue, hint, "%v", err)
			}
		default:
			src.TimeFormat = f
		}
	}
	src.Static, _ = t.boolean("static")
	if src.Static && src.Time != "" {
		l.errAt(t.p("static"), CodeSource, "drop `time` for a static attribute source, or drop `static`", "source `%s` has a time column and is marked static", name)
	}
	return src
}

func fileExt(p string) string {
	i := strings.LastIndexByte(p, '.')
	if i < 0 || strings.ContainsAny(p[i:], "/\\") {
		return ""
	}
	return p[i:]
}

type refFunc func(t *table, key string) *Source

func (l *loader) exposure(t *table, ref refFunc) {
	e := &l.spec.Exposure
	e.At = l.rng(t.path, true)
	e.Source = ref(t, "source")
	v, ok := t.str("variant", true, "the column that holds the assigned variant name")
	if e.Source != nil {
		if e.Source.Time == "" {
			l.errAt(t.p("source"), CodeSource, "declare the exposure time column with time = \"...\"", "exposure source `%s` has no time column, so triggers cannot be found", e.Source.Name)
		}
		if ok {
			l.column(t.p("variant"), e.Source, v)
		}
	}
	e.Variant = v
	e.Filter = l.expression(t, "filter", e.Source, true)
}

func (l *loader) column(path []string, src *Source, c string) {
	if contains(src.Columns, c) {
		return
	}
	hint := "declared columns: " + strings.Join(src.Columns, ", ")
	if sg := Suggest(c, src.Columns); sg != "" {
		l.errAt(path, CodeColumn, hint, "column `%s` is not in the columns of source `%s`; did you mean `%s`?", c, src.Name, sg)
	} else {
		l.errAt(path, CodeColumn, hint, "column `%s` is not in the columns of source `%s`", c, src.Name)
	}
}

// expression parses and checks t[key] against src's columns. boolean says
// the expression is a filter.
func (l *loader) expression(t *table, key string, src *Source, boolean bool) *Expr {
	text, ok := t.str(key, false, "")
	if !ok {
		return nil
	}
	at := t.at(key)
	valueStart, mapped := l.exprOrigin(t.p(key), text)
	locate := func(sp expr.Span) Range {
		if !mapped {
			return at
		}
		return Range{File: l.file, Start: l.pos(valueStart + sp.Start), End: l.pos(valueStart + max(sp.End, sp.Start+1))}
	}
	node, ds := expr.Parse(text)
	if node != nil && src != nil {
		ds = append(ds, expr.Check(node, src.Columns)...)
	}
	what := "value"
	if boolean {
		what = "filter"
	}
	if node != nil && len(ds) == 0 {
		k := expr.KindOf(node)
		if boolean && k != expr.KindBoolean && k != expr.KindUnknown {
			l.report(at, CodeExpr, "a filter must be a condition such as amount > 0", "`%s` is not a condition", dotted(t.p(key)))
		}
		if !boolean && k == expr.KindBoolean {
			l.report(at, CodeExpr, "use CASE WHEN ... THEN 1 ELSE 0 END for an indicator", "`%s` is a condition, not a number", dotted(t.p(key)))
		}
		if !boolean && k == expr.KindString {
			l.report(at, CodeExpr, "", "`%s` is text, not a number", dotted(t.p(key)))
		}
	}
	for _, d := range ds {
		code := CodeExpr
		if strings.Contains(d.Code, "COLUMN") {
			code = CodeColumn
		}
		msg := d.Msg
		if src != nil && code == CodeColumn {
			msg += " (source `" + src.Name + "`)"
		}
		l.report(locate(d.Span), code, d.Hint, "%s in %s `%s`", msg, what, dotted(t.p(key)))
	}
	if node == nil || len(ds) > 0 {
		return nil
	}
	l.annotateTimes(node, src)
	return &Expr{Text: text, Node: node, At: at}
}

// annotateTimes records, in each local-time function call of n, the
// experiment's time zone and how the column stores times (the source's
// time_format applies to its time column only).
func (l *loader) annotateTimes(n expr.Node, src *Source) {
	expr.Walk(n, func(x expr.Node) bool {
		f, ok := x.(*expr.Func)
		if !ok || !expr.IsLocal(f.Name) || len(f.Args) != 1 {
			return true
		}
		tr := &expr.TimeRead{Zone: l.spec.TZName}
		if c, ok := f.Args[0].(*expr.Column); ok && src != nil && c.Name == src.Time {
			tr.Format = src.TimeFormat
		}
		f.Time = tr
		return true
	})
}

// exprOrigin returns the byte offset in the file where the expression text
// begins, when offsets inside the string map one to one onto the file.
func (l *loader) exprOrigin(path []string, text string) (int, bool) {
	if l.isForeign(path) { // library.go: the text lives in another file
		return 0, false
	}
	loc, ok := l.ix.keys[pathKey(path...)]
	if !ok {
		return 0, false
	}
	raw := string(l.src[loc.value[0]:loc.value[1]])
	for _, q := range []string{`'''`, `"""`, `'`, `"`} {
		if strings.HasPrefix(raw, q) && strings.HasSuffix(raw, q) && len(raw) >= 2*len(q) {
			inner := raw[len(q) : len(raw)-len(q)]
			if inner == text {
				return loc.value[0] + len(q), true
			}
			// Multi-line strings drop a newline right after the delimiter.
			if len(q) == 3 && strings.HasPrefix(inner, "\n") && inner[1:] == text {
				return loc.value[0] + len(q) + 1, true
			}
		}
	}
	return 0, false
}

func (l *loader) duration(t *table, path []string, s string) (Duration, bool) {
	d, err := ParseDuration(s)
	if err != nil {
		l.errAt(path, CodeDuration, "write an offset such as \"0d\", \"14d\", \"-60d\", \"36h\", \"90m\" or \"30s\"", "cannot read offset %q: %v", s, err)
		return Duration{}, false
	}
	return d, true
}

// window reads a [start, end) pair of offsets.
func (l *loader) window(t *table, required bool) (from, to Duration, ok bool) {
	list, good := t.strList("window", required)
	if !good {
		return
	}
	if len(list) != 2 {
		l.errAt(t.p("window"), CodeWindow, "write window = [\"0d\", \"14d\"]: start and end offsets from the trigger", "`%s` needs exactly two offsets, found %d", dotted(t.p("window")), len(list))
		return
	}
	f, ok1 := l.duration(t, append(t.p("window"), "#0"), list[0])
	e, ok2 := l.duration(t, append(t.p("window"), "#1"), list[1])
	if !ok1 || !ok2 {
		return
	}
	if e.Micros <= f.Micros {
		l.errAt(t.p("window"), CodeWindow, "windows are half-open [start, end): end must be after start", "window end %s is not after start %s", e.Text, f.Text)
		return
	}
	return f, e, true
}

func (l *loader) rule(name string, t *table, ref refFunc) *Rule {
	if t == nil {
		return nil
	}
	r := &Rule{Name: name, At: l.rng(t.path, true)}
	l.ident(t.path, name, "rule name", true)
	r.Kind = RuleKind(t.enum("kind", true, "", "attribute", "history"))
	r.Source = ref(t, "source")
	r.Filter = l.expression(t, "filter", r.Source, true)
	if !t.has("filter") && r.Kind == RuleAttribute {
		t.missing("filter", "the condition a unit's attributes must meet at its trigger")
	}
	switch r.Kind {
	case RuleAttribute:
		if t.has("window") || t.has("require") {
			l.errKey(t.p(firstPresent(t, "window", "require")), CodeUnknownKey, "window and require belong to kind = \"history\" rules", "attribute rule `%s` does not take `%s`", name, firstPresent(t, "window", "require"))
		}
		if r.Source != nil && !r.Source.IsEvent() && !r.Source.Static {
			l.errAt(t.p("source"), CodeAfterTrigger, "give the source a time column (values valid from that time) so assay reads the value as of each trigger, or mark it static = true if it never changes",
				"attribute source `%s` has neither a time column nor static = true: its current values may have been written after the trigger", r.Source.Name)
		}
	case RuleHistory:
		from, to, ok := l.window(t, true)
		if ok {
			if to.Micros > 0 {
				l.errAt(t.p("window"), CodeAfterTrigger, "eligibility is decided at the trigger: end the window at \"0d\" or earlier", "rule `%s` reads data after the trigger (window ends at %s)", name, to.Text)
			}
			r.From, r.To = from, to
		}
		req := t.enum("require", false, "present", "present", "absent")
		r.Absent = req == "absent"
		if r.Source != nil && !r.Source.IsEvent() {
			l.errAt(t.p("source"), CodeSource, "history rules need an event source with a time column", "source `%s` has no time column", r.Source.Name)
		}
	}
	return r
}

func firstPresent(t *table, keys ...string) string {
	for _, k := range keys {
		if t.has(k) {
			return k
		}
	}
	return keys[0]
}

var metricKeys = []string{"role", "kind", "label", "source", "value", "filter", "window", "above", "cap", "cap_quantile", "numerator", "denominator", "harmful", "margin", "covariate", "buckets"}

var aggKeys = []string{"source", "kind", "value", "filter", "cap", "cap_quantile"}

func (l *loader) metric(name string, t *table, ref refFunc) *Metric {
	if t == nil {
		return nil
	}
	m := &Metric{Name: name, At: l.rng(t.path, true)}
	l.ident(t.path, name, "metric name", true)
	m.Label, _ = t.str("label", false, "")
	m.Role = Role(t.enum("role", true, "secondary", "primary", "secondary", "guard", "mechanism"))
	kind := t.enum("kind", true, "", "sum", "count", "count_distinct", "proportion", "ratio")
	from, to, ok := l.window(t, true)
	if ok {
		if from.Micros < 0 {
			l.errAt(append(t.p("window"), "#0"), CodeAfterTrigger, "outcomes are counted from the trigger on; pre-trigger data belongs in an eligibility rule or a covariate", "metric `%s` window starts before the trigger (%s)", name, from.Text)
		}
		m.From, m.To = from, to
	}
	switch kind {
	case "ratio":
		m.Kind = KindRatio
		for _, k := range []string{"source", "value", "filter", "above", "cap", "cap_quantile"} {
			if t.has(k) {
				l.errKey(t.p(k), CodeUnknownKey, "set it inside numerator or denominator", "ratio metric `%s` does not take `%s` directly", name, k)
			}
		}
		m.Num = l.agg(t.sub("numerator", true, aggKeys...), ref, true)
		m.Den = l.agg(t.sub("denominator", true, aggKeys...), ref, true)
	case "proportion", "sum", "count", "count_distinct":
		for _, k := range []string{"numerator", "denominator"} {
			if t.has(k) {
				l.errKey(t.p(k), CodeUnknownKey, "numerator and denominator belong to kind = \"ratio\"", "metric `%s` of kind %q does not take `%s`", name, kind, k)
			}
		}
		m.Kind = KindMean
		fn := kind
		if kind == "proportion" {
			m.Kind = KindProportion
			fn = "count"
			if t.has("value") {
				fn = "sum"
			}
			if a, ok := t.num("above"); ok {
				m.Above = a
			}
			for _, k := range []string{"cap", "cap_quantile"} {
				if t.has(k) {
					l.errKey(t.p(k), CodeCap, "a proportion is 0 or 1 per unit; there is nothing to cap", "proportion metric `%s` does not take `%s`", name, k)
				}
			}
		} else if t.has("above") {
			l.errKey(t.p("above"), CodeUnknownKey, "`above` belongs to kind = \"proportion\"", "metric `%s` of kind %q does not take `above`", name, kind)
		}
		m.Value = l.aggFields(t, ref, AggFunc(fn))
	}
	l.buckets(m, t, kind)
	if m.Role == Guard {
		m.Harmful = Direction(t.enum("harmful", true, "", string(Increase), string(Decrease)))
		if mg, ok := t.num("margin"); ok {
			if mg < 0 || mg >= 1 {
				l.errAt(t.p("margin"), CodeGuard, "a relative margin such as 0.02 tolerates a 2% change in the harmful direction", "margin must be in [0, 1), got %v", mg)
			}
			m.Margin = mg
		} else if !t.has("margin") {
			t.missing("margin", "the tolerated relative change in the harmful direction, e.g. 0.02")
		}
	} else {
		for _, k := range []string{"harmful", "margin"} {
			if t.has(k) {
				l.errKey(t.p(k), CodeGuard, "set role = \"guard\" to watch a metric for harm", "metric `%s` is not a guard and does not take `%s`", name, k)
			}
		}
	}
	return m
}

// buckets reads a metric's optional buckets = "7d": the outcome window
// split by time since the trigger (see Metric.Bucket).
func (l *loader) buckets(m *Metric, t *table, kind string) {
	s, ok := t.str("buckets", false, "write buckets = \"7d\": the length of each part of the outcome window")
	if !ok {
		return
	}
	path := t.p("buckets")
	b, ok := l.duration(t, path, s)
	if !ok {
		return
	}
	w := m.To.Micros - m.From.Micros
	switch {
	case kind == "ratio":
		l.errAt(path, CodeWindow, "split a count or sum metric of the numerator instead", "ratio metric `%s` cannot be split into buckets: a ratio per bucket has no per-unit value to compare", m.Name)
	case b.Micros <= 0:
		l.errAt(path, CodeWindow, "write a positive length such as \"1d\" or \"7d\"", "bucket length %s is not positive", b.Text)
	case w <= 0:
		// the window itself is reported
	case w%b.Micros != 0:
		l.errAt(path, CodeWindow, fmt.Sprintf("choose a length that divides the window (%s to %s) evenly, such as %s", m.From.Text, m.To.Text, bucketHint(w)), "bucket length %s does not divide metric `%s`'s window into whole buckets", b.Text, m.Name)
	case w/b.Micros < 2 || w/b.Micros > MaxBuckets:
		l.errAt(path, CodeWindow, fmt.Sprintf("choose a length that gives 2 to %d buckets, such as %s", MaxBuckets, bucketHint(w)), "bucket length %s splits metric `%s`'s window into %d buckets", b.Text, m.Name, w/b.Micros)
	default:
		m.Bucket, m.BucketAt = b, l.rng(path, false)
	}
}

// bucketHint suggests bucket lengths that split a window of w
// microseconds into 2 to MaxBuckets whole buckets: whole weeks first, then
// whole days.
func bucketHint(w int64) string {
	const day = 86400e6
	var out []string
	for _, n := range []int64{7 * day, day} {
		if w%n == 0 && w/n >= 2 && w/n <= MaxBuckets {
			out = append(out, fmt.Sprintf("%q", durationText(n)))
		}
	}
	if len(out) == 0 {
		return "a whole fraction of it"
	}
	return strings.Join(out, " or ")
}

func durationText(us int64) string {
	const day = 86400e6
	if us%day == 0 {
		return fmt.Sprintf("%dd", us/int64(day))
	}
	return fmt.Sprintf("%dh", us/3600e6)
}

// covariates reads each metric's optional covariate table once every metric
// is known, since a covariate may name another metric.
func (l *loader) covariates(mt *table) {
	byName := map[string]*Metric{}
	var names []string
	for _, m := range l.spec.Metrics {
		byName[m.Name] = m
		names = append(names, m.Name)
	}
	for _, m := range l.spec.Metrics {
		mtab, ok := mt.m[m.Name].(map[string]any)
		if !ok {
			continue
		}
		if _, ok := mtab["covariate"]; !ok {
			continue
		}
		t := l.table(mt.p(m.Name), mtab).sub("covariate", false, "window", "metric")
		if t == nil {
			continue
		}
		c := &Covariate{Of: m, At: l.rng(t.path, true)}
		if name, ok := t.str("metric", false, "the name of a metric under [metrics]"); ok {
			of, found := byName[name]
			switch {
			case !found:
				hint := "metrics: " + strings.Join(names, ", ")
				if sg := Suggest(name, names); sg != "" {
					l.errAt(t.p("metric"), CodeUndefinedMetric, hint, "covariate metric `%s` is not declared; did you mean `%s`?", name, sg)
				} else {
					l.errAt(t.p("metric"), CodeUndefinedMetric, hint, "covariate metric `%s` is not declared", name)
				}
				continue
			case of.Kind == KindRatio && of != m:
				l.errAt(t.p("metric"), CodeValue, "name a count, sum, count_distinct or proportion metric; its per-unit value before the trigger is the covariate", "covariate metric `%s` is a ratio; a covariate must be one per-unit value", name)
				continue
			}
			c.Of = of
		}
		from, to, ok := l.window(t, true)
		if !ok {
			continue
		}
		if to.Micros > 0 {
			l.errAt(t.p("window"), CodeAfterTrigger, "a covariate must be measured before the trigger: end its window at \"0d\" or earlier", "covariate of metric `%s` reads data after the trigger (window ends at %s)", m.Name, to.Text)
			continue
		}
		c.From, c.To = from, to
		switch c.Of.Kind {
		case KindRatio:
			c.Agg = c.Of.Num
		case KindProportion:
			c.Agg, c.Indicator, c.Above = c.Of.Value, true, c.Of.Above
		default:
			c.Agg = c.Of.Value
		}
		if c.Agg == nil || c.Agg.Source == nil {
			continue
		}
		m.Covariate = c
	}
}

// agg reads a numerator or denominator table.
func (l *loader) agg(t *table, ref refFunc, _ bool) *Agg {
	if t == nil {
		return nil
	}
	fn := AggFunc(t.enum("kind", true, "", "sum", "count", "count_distinct"))
	return l.aggFields(t, ref, fn)
}

func (l *loader) aggFields(t *table, ref refFunc, fn AggFunc) *Agg {
	a := &Agg{Func: fn, At: l.rng(t.path, true)}
	a.Source = ref(t, "source")
	if a.Source != nil && !a.Source.IsEvent() {
		l.errAt(t.p("source"), CodeSource, "outcome sources need a time column so outcomes can be placed relative to the trigger", "source `%s` has no time column", a.Source.Name)
	}
	switch fn {
	case AggSum, AggCountDistinct:
		if !t.has("value") {
			t.missing("value", "the expression to "+map[AggFunc]string{AggSum: "sum", AggCountDistinct: "count distinct values of"}[fn])
		}
		a.Value = l.expression(t, "value", a.Source, false)
	case AggCount:
		if t.has("value") {
			l.errKey(t.p("value"), CodeUnknownKey, "count counts rows; use kind = \"sum\" or \"count_distinct\" with a value", "kind \"count\" does not take `value`")
		}
	}
	a.Filter = l.expression(t, "filter", a.Source, true)
	if c, ok := t.num("cap"); ok {
		a.Cap, a.HasCap = c, true
		if c <= 0 {
			l.errAt(t.p("cap"), CodeCap, "", "cap must be positive, got %v", c)
		}
	}
	if q, ok := t.num("cap_quantile"); ok {
		if q <= 0.5 || q >= 1 {
			l.errAt(t.p("cap_quantile"), CodeCap, "a pooled quantile such as 0.99 caps the top 1% of units", "cap_quantile must be in (0.5, 1), got %v", q)
		} else {
			a.CapQuantile = q
		}
		if a.HasCap {
			l.errAt(t.p("cap_quantile"), CodeCap, "choose one", "set either `cap` or `cap_quantile`, not both")
		}
	}
	return a
}

func (l *loader) segment(name string, t *table, ref refFunc) *Segment {
	if t == nil {
		return nil
	}
	seg := &Segment{Name: name, At: l.rng(t.path, true), TopK: 10}
	seg.Source = ref(t, "source")
	c, ok := t.str("column", true, "")
	if ok && seg.Source != nil {
		l.column(t.p("column"), seg.Source, c)
		if seg.Source != l.spec.Exposure.Source && seg.Source.IsEvent() {
			l.errAt(t.p("source"), CodeSource, "segments come from the qualifying exposure row or from an attribute source", "segment `%s` reads event source `%s`", name, seg.Source.Name)
		} else if seg.Source != l.spec.Exposure.Source && !seg.Source.Static {
			l.errAt(t.p("source"), CodeAfterTrigger, "mark the attribute source static = true if its values never change; segments cannot read time-versioned sources yet", "segment `%s` reads attribute source `%s`, whose values may be from after the trigger", name, seg.Source.Name)
		}
	}
	seg.Column = c
	if k, ok := t.num("top"); ok {
		if k < 1 || k > 1000 || k != math.Trunc(k) {
			l.errAt(t.p("top"), CodeValue, "", "top must be a whole number from 1 to 1000")
		} else {
			seg.TopK = int(k)
		}
	}
	return seg
}

// SplitTableName splits a qualified table name at dots. A part that starts
// with a double quote runs to the matching closing quote and may hold dots,
// spaces or doubled quotes ("a""b" is a"b); other parts are taken as
// written, quotes included.
func SplitTableName(name string) ([]string, error) {
	var parts []string
	i := 0
	for {
		if i < len(name) && name[i] == '"' {
			var b strings.Builder
			j := i + 1
			closed := false
			for j < len(name) {
				if name[j] == '"' {
					if j+1 < len(name) && name[j+1] == '"' {
						b.WriteByte('"')
						j += 2
						continue
					}
					closed = true
					j++
					break
				}
				b.WriteByte(name[j])
				j++
			}
			if !closed {
				return parts, errors.New("unclosed double quote")
			}
			parts = append(parts, b.String())
			i = j
		} else {
			j := strings.IndexByte(name[i:], '.')
			if j < 0 {
				j = len(name) - i
			}
			parts = append(parts, name[i:i+j])
			i += j
		}
		if i == len(name) {
			return parts, nil
		}
		if name[i] != '.' {
			return parts, errors.New("expected a dot after a quoted part")
		}
		i++
		if i == len(name) {
			return append(parts, ""), nil
		}
	}
}

// ParseDuration reads an offset: an optional sign, an integer and a unit
// (w, d, h, m, s), e.g. "14d", "-60d", "36h"; "0" is zero.
func ParseDuration(s string) (Duration, error) {
	t := strings.TrimSpace(s)
	if t == "0" {
		return Duration{Text: s}, nil
	}
	if t == "" {
		return Duration{}, errors.New("empty")
	}
	neg := false
	if t[0] == '-' || t[0] == '+' {
		neg = t[0] == '-'
		t = t[1:]
	}
	if len(t) < 2 {
		return Duration{}, errors.New("expected a number and a unit")
	}
	unit := t[len(t)-1]
	n, err := strconv.ParseInt(t[:len(t)-1], 10, 64)
	if err != nil || n < 0 {
		return Duration{}, errors.New("expected a whole number before the unit")
	}
	var mult int64
	switch unit {
	case 'w':
		mult = 7 * 86400e6
	case 'd':
		mult = 86400e6
	case 'h':
		mult = 3600e6
	case 'm':
		mult = 60e6
	case 's':
		mult = 1e6
	default:
		return Duration{}, fmt.Errorf("unknown unit %q (use w, d, h, m or s)", string(unit))
	}
	if n > (1<<62)/mult || n > 3650*86400e6/mult {
		return Duration{}, errors.New("offset longer than ten years")
	}
	us := n * mult
	if neg {
		us = -us
	}
	return Duration{Micros: us, Text: s}, nil
}
