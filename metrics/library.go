package metrics

// Shared definition libraries.
//
// A library is a TOML file of source and metric definitions that many
// experiment specs use by name:
//
//	[library]
//	about = "Definitions shared by the grocery app's experiments"
//
//	[sources.orders]          # as in a spec
//	file = "data/orders.parquet"
//	unit = "customer_id"
//	time = "ordered_at"
//	columns = ["order_id", "customer_id", "ordered_at", "amount", "status"]
//
//	[metrics.delivered_orders]  # as in a spec, without role or covariate
//	label = "Orders per customer, 14 days"
//	kind = "count"
//	source = "orders"
//	filter = "status = 'delivered'"
//	window = ["0d", "14d"]
//
// A spec names the files it uses with a top-level `library` key (a path
// relative to the spec, or a list of them) and takes a metric with
// `shared = "NAME"` in its own metric table:
//
//	library = "../library/grocery.toml"
//
//	[metrics.orders_14d]
//	shared = "delivered_orders"
//	role = "primary"
//	covariate = { window = ["-28d", "0d"] }
//
// Beside `shared`, a spec's metric may set only what varies from one
// experiment to the next: role and covariate (never in a library), and
// window, cap, cap_quantile, margin, harmful and label. When one of the
// latter differs from the library's value it is an override: it is kept in
// Metric.Shared.Overrides, printed in the compiled SQL's comment and listed
// in the report. Any other key is an error, so a definition cannot drift
// from the library without a review of the library.
//
// Sources: a library's sources are available to every spec that uses it.
// A spec may declare a source of the same name to say where it lives for
// that experiment (table, file, place); its unit, time, time_format, static
// and columns must equal the library's. File paths are relative to the
// spec that is run, as for the spec's own sources.
//
// Places: a source may say where it lives per target with a `place` table,
// target name → { table = ... } or { file = ... }:
//
//	[sources.orders]
//	file = "data/orders.parquet"           # used when no target is chosen
//	place.warehouse = { table = "analytics.orders" }
//
// LoadOptions.Target picks one; a source without that target keeps its
// default table or file.
//
// The spec's fingerprint covers the library definitions it uses (each as
// canonical JSON) and the chosen target, so a change to a used library
// definition changes the fingerprint of every spec that uses it, and an
// unrelated library change changes none.

import (
	"crypto/sha256"
	"encoding/hex"
	"encoding/json"
	"fmt"
	"os"
	"path/filepath"
	"reflect"
	"sort"
	"strings"
	"time"

	"github.com/BurntSushi/toml"
)

// Library diagnostic codes (append-only, as in codes.go).
const (
	// CodeLibrary: a library that cannot be read, a shared metric that is
	// not in any library used, or a key a spec may not set on it.
	//   [metrics.orders]
	//   shared = "ordrs"
	CodeLibrary = "library"
	// CodeSharedSource: a spec redeclares a library source with a different
	// shape (unit, time, time_format, static or columns).
	//   [sources.orders]   # columns differ from the library's
	CodeSharedSource = "shared-source"
	// CodePlace: a source's per-target place that cannot be used.
	//   place.warehouse = { table = "a.b", file = "x.parquet" }
	CodePlace = "place"
)

// libraryKey is the spec's top-level key naming the libraries it uses;
// sharedKey is the metric key naming a library definition; placeKey is the
// source key holding per-target places.
const (
	libraryKey = "library"
	sharedKey  = "shared"
	placeKey   = "place"
)

// OverridableKeys are the keys of a shared metric that a spec may set to a
// value other than the library's; each such difference is an Override.
var OverridableKeys = []string{"window", "cap", "cap_quantile", "margin", "harmful", "label"}

// experimentKeys are the keys of a shared metric that belong to the
// experiment alone: a library may not set them.
var experimentKeys = []string{"role", "covariate", "buckets"}

// LoadOptions changes how a spec is read.
type LoadOptions struct {
	// Target picks each source's place (see the package's library notes);
	// "" keeps the default table or file.
	Target string
	// asPriorRun loads a spec named by another spec's prior run: only its
	// exposure source, filter and period are used, so its own prior runs
	// are not followed (two specs naming each other would never end).
	asPriorRun bool
}

// SharedDef records that a metric's definition comes from a library.
type SharedDef struct {
	Library     string // the library file, as resolved
	Name        string // the definition's name in the library
	Fingerprint string // 8 hex digits of the library's definition (canonical JSON)
	Overrides   []Override
	At          Range // the spec's `shared` key
}

// Override is a key a spec set on a shared metric to a value other than
// the library's.
type Override struct {
	Key     string
	Value   string // as written in the spec, e.g. ["0d", "28d"]
	Library string // the library's value; "" when the library sets none
}

// String renders the override as "window [0d, 28d) (library [0d, 14d))".
func (o Override) String() string {
	if o.Library == "" {
		return fmt.Sprintf("%s %s (library: not set)", o.Key, o.Value)
	}
	return fmt.Sprintf("%s %s (library: %s)", o.Key, o.Value, o.Library)
}

// Library is a checked library file.
type Library struct {
	File  string
	About string
	// Sources and Metrics are the checked definitions, in file order.
	Sources []*Source
	Metrics []*Metric

	src     []byte
	ix      *keyIndex
	lines   *lineIndex
	sources map[string]map[string]any // raw tables
	metrics map[string]map[string]any
}

// LoadLibraryFile reads and checks the library at path on its own.
func LoadLibraryFile(path string) (*Library, []byte, Diagnostics) {
	src, err := os.ReadFile(path)
	if err != nil {
		return nil, nil, Diagnostics{{Code: CodeLibrary, Summary: "cannot read library: " + cleanIOError(err), Subject: Range{File: path}}}
	}
	lib, ds := LoadLibrary(path, src)
	return lib, src, ds
}

// IsLibrary reports whether src is a library file (it has a top-level
// [library] table) rather than an experiment spec.
func IsLibrary(src []byte) bool {
	var raw map[string]any
	if _, err := toml.Decode(string(src), &raw); err != nil {
		return false
	}
	_, ok := raw[libraryKey].(map[string]any)
	return ok
}

// LoadLibrary parses and checks a library: every source as in a spec, and
// every metric as in a spec (role and covariate are the experiment's and
// may not be set). Diagnostics point into file.
func LoadLibrary(file string, src []byte) (*Library, Diagnostics) {
	l := &loader{file: file, src: src}
	var raw map[string]any
	if _, err := toml.Decode(string(src), &raw); err != nil {
		return nil, Diagnostics{l.syntaxDiag(err)}
	}
	l.ix = buildKeyIndex(src)
	l.spec = &Spec{File: file, Ranges: map[string]Range{}, TimeZone: time.UTC, TZName: "UTC", Confidence: 0.95}
	lib := &Library{File: file, src: src, ix: l.ix, sources: map[string]map[string]any{}, metrics: map[string]map[string]any{}}
	root := l.table(nil, raw, "library", "sources", "metrics")
	if lt := root.sub("library", true, "about"); lt != nil {
		lib.About, _ = lt.str("about", false, "")
	}
	srcs := map[string]*Source{}
	if st := root.sub("sources", false); st != nil {
		for _, name := range st.keys() {
			sub := st.sub(name, false, "table", "file", "unit", "time", "time_format", "static", "columns", placeKey)
			if sub == nil {
				continue
			}
			lib.sources[name] = sub.m
			l.checkPlaces(sub)
			plain := &table{l: l, path: sub.path, m: withoutKey(sub.m, placeKey)}
			if !plain.has("table") && !plain.has("file") {
				// A library source may leave its location to each spec.
				plain.m["table"] = name
			}
			if s := l.source(name, plain); s != nil {
				if _, ok := sub.m["table"]; !ok && sub.m["file"] == nil {
					s.Table, s.TableParts = "", nil
				}
				srcs[name] = s
				lib.Sources = append(lib.Sources, s)
			}
		}
		l.caseClash(st, "source")
	}
	ref := func(t *table, key string) *Source {
		name, ok := t.str(key, true, "the name of a source under [sources]")
		if !ok {
			return nil
		}
		if s, ok := srcs[name]; ok {
			return s
		}
		names := make([]string, 0, len(lib.Sources))
		for _, s := range lib.Sources {
			names = append(names, s.Name)
		}
		msg := fmt.Sprintf("source `%s` is not declared in this library", name)
		if sg := Suggest(name, names); sg != "" {
			msg += fmt.Sprintf("; did you mean `%s`?", sg)
		}
		l.errAt(t.p(key), CodeUndefined, "declared sources: "+strings.Join(names, ", "), "%s", msg)
		return nil
	}
	libMetricKeys := without(metricKeys, experimentKeys...)
	if mt := root.sub("metrics", false); mt != nil {
		for _, name := range mt.keys() {
			sub := mt.sub(name, false, libMetricKeys...)
			if sub == nil {
				continue
			}
			lib.metrics[name] = sub.m
			// Check as a spec would, with a role that admits the keys given:
			// a guard when harm settings are present.
			m := copyMap(sub.m)
			m["role"] = "secondary"
			if _, ok := m["harmful"]; ok {
				m["role"] = "guard"
			} else if _, ok := m["margin"]; ok {
				m["role"] = "guard"
			}
			if met := l.metric(name, &table{l: l, path: sub.path, m: m}, ref); met != nil {
				met.Role = ""
				lib.Metrics = append(lib.Metrics, met)
			}
		}
		l.caseClash(mt, "metric")
	}
	if len(lib.sources) == 0 && len(lib.metrics) == 0 {
		l.errAt(nil, CodeMissingKey, "declare [sources.NAME] and [metrics.NAME] tables as in a spec", "the library defines no sources and no metrics")
	}
	l.diags.Sort()
	return lib, l.diags
}

// ---- use by a spec ----

// libState is what the loader knows about the libraries a spec uses.
type libState struct {
	libs    []*Library
	aliases map[string]alias // spec key path → where its text really is
	shared  map[string]*SharedDef
	defs    []string // canonical texts of used definitions, for the fingerprint
}

// alias maps a key path of the merged spec to a key path in another file
// (lib != nil) or elsewhere in the spec (lib == nil).
type alias struct {
	lib *Library
	to  []string
}

// foreignRange returns the range of a key path whose text lives in a
// library, or at another path of the spec (a chosen place).
func (l *loader) foreignRange(path []string, keyOnly bool) (Range, bool) {
	if l.lib == nil {
		return Range{}, false
	}
	for n := len(path); n > 0; n-- {
		a, ok := l.lib.aliases[pathKey(path[:n]...)]
		if !ok {
			continue
		}
		to := append(append([]string{}, a.to...), path[n:]...)
		ix, src, file := l.ix, l.src, l.file
		if a.lib != nil {
			ix, src, file = a.lib.ix, a.lib.src, a.lib.File
		}
		for m := len(to); m > 0; m-- {
			loc, ok := ix.keys[pathKey(to[:m]...)]
			if !ok {
				continue
			}
			r := loc.value
			if keyOnly || m < len(to) {
				r = loc.key
			}
			if a.lib == nil {
				return Range{File: file, Start: l.pos(r[0]), End: l.pos(r[1])}, true
			}
			if a.lib.lines == nil {
				a.lib.lines = newLineIndex(src)
			}
			return Range{File: file, Start: a.lib.lines.pos(r[0]), End: a.lib.lines.pos(r[1])}, true
		}
		return Range{File: file, Start: Pos{Line: 1, Column: 1}, End: Pos{Line: 1, Column: 2, Byte: 1}}, true
	}
	return Range{}, false
}

// isForeign reports whether the text at path lives elsewhere.
func (l *loader) isForeign(path []string) bool {
	if l.lib == nil {
		return false
	}
	for n := len(path); n > 0; n-- {
		if _, ok := l.lib.aliases[pathKey(path[:n]...)]; ok {
			return true
		}
	}
	return false
}

// useLibraries reads the libraries the spec names, merges the sources and
// metric definitions it uses into raw, and applies the chosen places. It
// runs before the spec is read, so the rest of the loader sees one
// document; the aliases keep every diagnostic pointing at the file and line
// the text came from.
func (l *loader) useLibraries(raw map[string]any) {
	l.lib = &libState{aliases: map[string]alias{}, shared: map[string]*SharedDef{}}
	l.spec.Target = l.opts.Target
	if v, ok := raw[libraryKey]; ok {
		l.readLibraries(v)
	}
	sources, _ := raw["sources"].(map[string]any)
	metricsT, _ := raw["metrics"].(map[string]any)
	if metricsT != nil {
		names := sortedKeys(metricsT)
		for _, name := range names {
			mt, ok := metricsT[name].(map[string]any)
			if !ok {
				continue
			}
			if _, ok := mt[sharedKey]; ok {
				if merged := l.mergeMetric(name, mt); merged != nil {
					metricsT[name] = merged
				} else {
					// Reported; reading the rest of the table without its
					// definition would only add "needs `kind`" noise.
					delete(metricsT, name)
				}
			}
		}
	}
	if len(l.lib.libs) > 0 {
		if sources == nil {
			sources = map[string]any{}
			raw["sources"] = sources
		}
		used := map[string]bool{}
		collectSourceNames(raw, used)
		for _, lib := range l.lib.libs {
			for _, s := range lib.Sources {
				name := s.Name
				lt := lib.sources[name]
				if mine, ok := sources[name].(map[string]any); ok {
					l.sameShape(name, mine, lt, lib)
					if used[name] {
						l.lib.defs = append(l.lib.defs, canonical("source", lib.File, name, shapeOf(lt)))
					}
					continue
				}
				if _, taken := sources[name]; taken || !used[name] {
					continue
				}
				sources[name] = copyMap(lt)
				l.lib.aliases[pathKey("sources", name)] = alias{lib: lib, to: []string{"sources", name}}
				l.lib.defs = append(l.lib.defs, canonical("source", lib.File, name, lt))
			}
		}
	}
	for _, name := range sortedKeys(sources) {
		if st, ok := sources[name].(map[string]any); ok {
			l.pickPlace(name, st)
		}
	}
}

// readLibraries reads the files named by the spec's `library` key.
func (l *loader) readLibraries(v any) {
	var paths []string
	var at [][]string
	switch x := v.(type) {
	case string:
		paths, at = []string{x}, [][]string{{libraryKey}}
	case []any:
		for i, e := range x {
			s, ok := e.(string)
			if !ok {
				l.errAt([]string{libraryKey, "#" + itoa(i)}, CodeType, "", "`library[%d]` must be a path, not %s", i, tomlType(e))
				continue
			}
			paths = append(paths, s)
			at = append(at, []string{libraryKey, "#" + itoa(i)})
		}
	default:
		l.errAt([]string{libraryKey}, CodeType, "write library = \"path/to/library.toml\" or a list of paths", "`library` must be a path or a list of paths, not %s", tomlType(v))
		return
	}
	seen := map[string]bool{}
	for i, p := range paths {
		if !strings.HasSuffix(strings.ToLower(p), ".toml") {
			l.errAt(at[i], CodeLibrary, "a library is a TOML file, e.g. library = \"../library/grocery.toml\"", "library %q is not a .toml file", p)
			continue
		}
		full := p
		if !filepath.IsAbs(p) {
			full = filepath.Join(filepath.Dir(l.file), p)
		}
		if seen[full] {
			l.errAt(at[i], CodeDuplicate, "", "library %q is listed twice", p)
			continue
		}
		seen[full] = true
		lib, _, ds := LoadLibraryFile(full)
		if lib == nil && len(ds) > 0 && ds[0].Subject.Start.Line == 0 {
			l.errAt(at[i], CodeLibrary, "paths are relative to the spec's directory", "cannot read library %q: %s", p, strings.TrimPrefix(ds[0].Summary, "cannot read library: "))
			continue
		}
		l.diags = append(l.diags, ds...)
		if lib == nil || ds.HasErrors() {
			l.errAt(at[i], CodeLibrary, "fix the library first: assay check "+full, "library %q has errors; its definitions are not used", p)
			continue
		}
		l.lib.libs = append(l.lib.libs, lib)
		l.spec.Libraries = append(l.spec.Libraries, full)
	}
}

// mergeMetric returns the library definition named by mt's `shared` key
// with the spec's per-experiment keys laid over it, or nil.
func (l *loader) mergeMetric(name string, mt map[string]any) map[string]any {
	path := []string{"metrics", name}
	ref, ok := mt[sharedKey].(string)
	if !ok {
		l.errAt(append(path, sharedKey), CodeType, "", "`shared` must be the name of a library metric, not %s", tomlType(mt[sharedKey]))
		return nil
	}
	var lib *Library
	var def map[string]any
	var all []string
	for _, x := range l.lib.libs {
		if d, ok := x.metrics[ref]; ok && lib == nil {
			lib, def = x, d
		}
		all = append(all, sortedKeys(anyMap(x.metrics))...)
	}
	if lib == nil {
		if len(l.lib.libs) == 0 && !l.diags.HasErrors() {
			l.errAt(append(path, sharedKey), CodeLibrary, "name the library file with a top-level library = \"path/to/library.toml\"", "metric `%s` uses shared definition `%s` but the spec uses no library", name, ref)
			return nil
		}
		if len(l.lib.libs) == 0 {
			return nil
		}
		msg := fmt.Sprintf("shared metric `%s` is not defined in the libraries used", ref)
		if sg := Suggest(ref, all); sg != "" {
			msg += fmt.Sprintf("; did you mean `%s`?", sg)
		}
		l.errAt(append(path, sharedKey), CodeLibrary, "library metrics: "+strings.Join(all, ", "), "%s", msg)
		return nil
	}
	allowed := append(append([]string{sharedKey}, experimentKeys...), OverridableKeys...)
	bad := false
	for _, k := range sortedKeys(mt) {
		if contains(allowed, k) {
			continue
		}
		bad = true
		l.errKey(append(path, k), CodeLibrary, "a spec may set role, covariate, buckets, "+strings.Join(OverridableKeys, ", ")+" on a shared metric; change the library, or define a metric of its own under another name",
			"`%s` of shared metric `%s` is fixed by the library (%s)", k, ref, filepath.Base(lib.File))
	}
	if bad {
		return nil
	}
	merged := copyMap(def)
	sd := &SharedDef{Library: lib.File, Name: ref, At: l.rng(append(path, sharedKey), false)}
	for _, k := range sortedKeys(def) {
		l.lib.aliases[pathKey("metrics", name, k)] = alias{lib: lib, to: []string{"metrics", ref, k}}
	}
	setCap := func() {
		// A cap set here replaces the library's capping rule.
		delete(merged, "cap")
		delete(merged, "cap_quantile")
	}
	if _, ok := mt["cap"]; ok {
		setCap()
	} else if _, ok := mt["cap_quantile"]; ok {
		setCap()
	}
	for _, k := range sortedKeys(mt) {
		if k == sharedKey {
			continue
		}
		v := mt[k]
		delete(l.lib.aliases, pathKey("metrics", name, k))
		if contains(OverridableKeys, k) {
			lv, had := def[k]
			if !had || !reflect.DeepEqual(lv, v) {
				o := Override{Key: k, Value: l.rawValue(append(path, k))}
				if had {
					o.Library = rawAt(lib, []string{"metrics", ref, k})
				}
				sd.Overrides = append(sd.Overrides, o)
			}
		}
		merged[k] = v
	}
	// Harm settings in a library are the defaults for experiments that
	// make the metric a guard; other roles leave them out.
	if r, _ := merged["role"].(string); r != string(Guard) {
		if _, mine := mt["harmful"]; !mine {
			delete(merged, "harmful")
		}
		if _, mine := mt["margin"]; !mine {
			delete(merged, "margin")
		}
	}
	// The definition fingerprint covers the library's text only: a change
	// of an override is the spec's and shows in the spec's fingerprint and
	// the rule's "overridden here" part.
	text := canonical("metric", lib.File, ref, def)
	sum := sha256.Sum256([]byte(text))
	sd.Fingerprint = hex.EncodeToString(sum[:4])
	l.lib.defs = append(l.lib.defs, text)
	l.lib.shared[name] = sd
	return merged
}

// sameShape reports a spec source that redeclares a library source with a
// different shape.
func (l *loader) sameShape(name string, mine, theirs map[string]any, lib *Library) {
	for _, k := range []string{"unit", "time", "time_format", "static", "columns"} {
		a, b := mine[k], theirs[k]
		if reflect.DeepEqual(a, b) {
			continue
		}
		where := l.rngIn(lib, []string{"sources", name, k})
		l.errAt([]string{"sources", name, k}, CodeSharedSource,
			fmt.Sprintf("the library declares it at %s; a spec may only say where a library source lives (table, file, place)", where),
			"source `%s` differs from library %s in `%s`", name, filepath.Base(lib.File), k)
	}
}

// rngIn returns the range of a key path in a library file.
func (l *loader) rngIn(lib *Library, path []string) Range {
	for n := len(path); n > 0; n-- {
		if loc, ok := lib.ix.keys[pathKey(path[:n]...)]; ok {
			if lib.lines == nil {
				lib.lines = newLineIndex(lib.src)
			}
			return Range{File: lib.File, Start: lib.lines.pos(loc.key[0]), End: lib.lines.pos(loc.key[1])}
		}
	}
	return Range{File: lib.File}
}

// checkPlaces checks a source's place table.
func (l *loader) checkPlaces(t *table) {
	pt := t.sub(placeKey, false)
	if pt == nil {
		return
	}
	for _, target := range pt.keys() {
		one := pt.sub(target, false, "table", "file")
		if one == nil {
			continue
		}
		_, hasT := one.m["table"]
		_, hasF := one.m["file"]
		if hasT == hasF {
			l.errAt(one.path, CodePlace, "write place."+target+" = { table = \"schema.table\" } or { file = \"path.parquet\" }", "place `%s` of source `%s` needs exactly one of `table` and `file`", target, t.path[len(t.path)-1])
		}
	}
}

// pickPlace replaces a source's table or file by the chosen target's, and
// removes the place table so the source reads as an ordinary declaration.
func (l *loader) pickPlace(name string, st map[string]any) {
	path := []string{"sources", name}
	if _, ok := st[placeKey]; !ok {
		return
	}
	t := &table{l: l, path: path, m: st}
	l.checkPlaces(t)
	places, _ := st[placeKey].(map[string]any)
	delete(st, placeKey)
	target := l.opts.Target
	if target == "" {
		return
	}
	p, ok := places[target].(map[string]any)
	if !ok {
		return // the default table or file serves this target
	}
	delete(st, "table")
	delete(st, "file")
	for _, k := range []string{"table", "file"} {
		if v, ok := p[k]; ok {
			st[k] = v
			from := []string{"sources", name, placeKey, target}
			if a, ok := l.lib.aliases[pathKey(path...)]; ok {
				l.lib.aliases[pathKey("sources", name, k)] = alias{lib: a.lib, to: append(append([]string{}, a.to...), placeKey, target, k)}
			} else {
				l.lib.aliases[pathKey("sources", name, k)] = alias{to: append(from, k)}
			}
		}
	}
}

// sealShared records each shared metric's definition on the spec and adds
// the used library definitions and the target to the fingerprint.
func (l *loader) sealShared() {
	if l.lib == nil {
		return
	}
	for _, m := range l.spec.Metrics {
		if sd, ok := l.lib.shared[m.Name]; ok {
			m.Shared = sd
		}
	}
	if len(l.lib.defs) == 0 && l.opts.Target == "" {
		return
	}
	h := sha256.New()
	h.Write(l.src)
	for _, d := range l.lib.defs {
		h.Write([]byte{0})
		h.Write([]byte(d))
	}
	if l.opts.Target != "" {
		h.Write([]byte("\x00target=" + l.opts.Target))
	}
	l.spec.Fingerprint = hex.EncodeToString(h.Sum(nil)[:8])
}

// canonical renders a definition as canonical JSON (sorted keys), named by
// its kind, library file name and definition name.
func canonical(kind, file, name string, v map[string]any) string {
	b, err := json.Marshal(v)
	if err != nil {
		b = []byte(fmt.Sprint(v))
	}
	return kind + " " + filepath.Base(file) + "#" + name + " " + string(b)
}

func shapeOf(m map[string]any) map[string]any {
	out := map[string]any{}
	for _, k := range []string{"unit", "time", "time_format", "static", "columns"} {
		if v, ok := m[k]; ok {
			out[k] = v
		}
	}
	return out
}

// rawAt returns the text of a key's value in a library.
func rawAt(lib *Library, path []string) string {
	loc, ok := lib.ix.keys[pathKey(path...)]
	if !ok {
		return ""
	}
	return string(lib.src[loc.value[0]:loc.value[1]])
}

// collectSourceNames adds every string value of a "source" key in v.
func collectSourceNames(v any, out map[string]bool) {
	switch x := v.(type) {
	case map[string]any:
		for k, e := range x {
			if s, ok := e.(string); ok && k == "source" {
				out[s] = true
				continue
			}
			collectSourceNames(e, out)
		}
	case []any:
		for _, e := range x {
			collectSourceNames(e, out)
		}
	case []map[string]any:
		for _, e := range x {
			collectSourceNames(e, out)
		}
	}
}

func copyMap(m map[string]any) map[string]any {
	out := make(map[string]any, len(m))
	for k, v := range m {
		if sub, ok := v.(map[string]any); ok {
			v = copyMap(sub)
		}
		out[k] = v
	}
	return out
}

func withoutKey(m map[string]any, key string) map[string]any {
	out := copyMap(m)
	delete(out, key)
	return out
}

func without(list []string, drop ...string) []string {
	var out []string
	for _, s := range list {
		if !contains(drop, s) {
			out = append(out, s)
		}
	}
	return out
}

func sortedKeys(m map[string]any) []string {
	ks := make([]string, 0, len(m))
	for k := range m {
		ks = append(ks, k)
	}
	sort.Strings(ks)
	return ks
}

func anyMap(m map[string]map[string]any) map[string]any {
	out := make(map[string]any, len(m))
	for k, v := range m {
		out[k] = v
	}
	return out
}
