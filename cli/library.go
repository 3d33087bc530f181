package cli

import (
	"flag"
	"fmt"
	"io"
	"os"
	"path/filepath"
	"regexp"
	"sort"
	"strings"

	"github.com/assay-dev/assay/metrics"
)

// registerPlace adds the flag that picks each source's place.
func registerPlace(fs *flag.FlagSet, target *string) {
	fs.StringVar(target, "place", "", "read each source from its place for this target (a key of the source's place table, e.g. warehouse); default: its table or file")
}

// loadFor reads and checks a spec for a target, printing diagnostics (those
// in a library file with the library's own lines) to stderr.
func loadFor(path, target string, stderr io.Writer) (*metrics.Spec, bool) {
	src, err := os.ReadFile(path)
	if err != nil {
		_, _, ds := metrics.LoadFile(path)
		printDiagsIn(stderr, ds, path, nil)
		return loadReport(path, nil, ds, stderr)
	}
	spec, ds := metrics.LoadWith(path, src, metrics.LoadOptions{Target: target})
	printDiagsIn(stderr, ds, path, src)
	return loadReport(path, spec, ds, stderr)
}

// printDiagsIn prints diagnostics with the text of the file each points
// into: path's text is src; other files (libraries) are read once.
func printDiagsIn(w io.Writer, ds metrics.Diagnostics, path string, src []byte) {
	texts := map[string][]byte{path: src}
	for _, d := range ds {
		f := d.Subject.File
		text, ok := texts[f]
		if !ok {
			text, _ = os.ReadFile(f)
			texts[f] = text
		}
		fmt.Fprint(w, d.Long(text))
	}
}

// checkLibrary is `assay check` on a library file: the library is checked
// on its own.
func checkLibrary(path string, src []byte, stdout, stderr io.Writer) int {
	lib, ds := metrics.LoadLibrary(path, src)
	printDiagsIn(stderr, ds, path, src)
	if lib == nil || ds.HasErrors() {
		n := 0
		for _, d := range ds {
			if d.Severity == metrics.Error {
				n++
			}
		}
		fmt.Fprintf(stderr, "%s: %d error(s)\n", path, n)
		return ExitInput
	}
	fmt.Fprintf(stdout, "%s: ok (library: %d sources, %d metrics)\n", path, len(lib.Sources), len(lib.Metrics))
	return ExitOK
}

// isLibraryFile reports whether path holds a library rather than a spec.
func isLibraryFile(path string) ([]byte, bool) {
	src, err := os.ReadFile(path)
	if err != nil {
		return nil, false
	}
	return src, metrics.IsLibrary(src)
}

// expandSpecs turns paths, directories and glob patterns into the spec
// files they name, sorted and without duplicates. A directory stands for
// its *.toml files; library files are left out.
func expandSpecs(args []string) ([]string, error) {
	seen := map[string]bool{}
	var out []string
	add := func(p string, fromDir bool) {
		if seen[p] {
			return
		}
		if fromDir {
			if _, lib := isLibraryFile(p); lib {
				return
			}
		}
		seen[p] = true
		out = append(out, p)
	}
	for _, a := range args {
		if st, err := os.Stat(a); err == nil && st.IsDir() {
			files, _ := filepath.Glob(filepath.Join(a, "*.toml"))
			sort.Strings(files)
			for _, f := range files {
				add(f, true)
			}
			continue
		}
		if strings.ContainsAny(a, "*?[") {
			files, err := filepath.Glob(a)
			if err != nil {
				return nil, fmt.Errorf("bad pattern %q: %v", a, err)
			}
			if len(files) == 0 {
				return nil, fmt.Errorf("no files match %q", a)
			}
			sort.Strings(files)
			for _, f := range files {
				add(f, true)
			}
			continue
		}
		add(a, false)
	}
	if len(out) == 0 {
		return nil, fmt.Errorf("no spec files found in %s", strings.Join(args, " "))
	}
	return out, nil
}

// cmdReach is `assay reach METRIC PATHS...`: which specs use a library
// metric, under which name and role, and what each overrides, so that a
// reviewer of a library change sees every experiment it reaches.
func cmdReach(args []string, stdout, stderr io.Writer) int {
	fs := flagSet("reach", "reach [--library FILE] METRIC SPEC|DIR|GLOB...", stderr)
	libFilter := fs.String("library", "", "only count uses of the metric from this library file")
	pos, code, ok := parseMany(fs, args)
	if !ok {
		return code
	}
	if len(pos) < 2 {
		fmt.Fprintf(stderr, "assay reach: give a library metric name and at least one spec, directory or pattern\n")
		fs.Usage()
		return ExitInput
	}
	name := pos[0]
	paths, err := expandSpecs(pos[1:])
	if err != nil {
		fmt.Fprintf(stderr, "assay reach: %v\n", err)
		return ExitInput
	}
	wantLib := ""
	if *libFilter != "" {
		wantLib, _ = filepath.Abs(*libFilter)
	}
	uses, failed := 0, 0
	for _, p := range paths {
		src, err := os.ReadFile(p)
		if err != nil {
			fmt.Fprintf(stderr, "assay reach: %v\n", err)
			failed++
			continue
		}
		spec, ds := metrics.Load(p, src)
		if spec == nil || ds.HasErrors() {
			fmt.Fprintf(stderr, "assay reach: %s has errors (assay check %s); skipped\n", p, p)
			failed++
			continue
		}
		for _, m := range spec.Metrics {
			sd := m.Shared
			if sd == nil || sd.Name != name {
				continue
			}
			if wantLib != "" {
				if abs, _ := filepath.Abs(sd.Library); abs != wantLib {
					continue
				}
			}
			uses++
			line := fmt.Sprintf("%s: %s as %s (%s) in experiment %s", sd.At, filepath.Base(sd.Library)+"#"+name, m.Name, m.Role, spec.ID)
			if len(sd.Overrides) > 0 {
				parts := make([]string, len(sd.Overrides))
				for i, o := range sd.Overrides {
					parts[i] = o.String()
				}
				line += "; overrides " + strings.Join(parts, ", ")
			}
			fmt.Fprintln(stdout, line)
		}
	}
	fmt.Fprintf(stdout, "%d use(s) of %s in %d spec file(s)\n", uses, name, len(paths)-failed)
	if failed > 0 {
		return ExitInput
	}
	return ExitOK
}

// ruleLine matches a metric's comment in the compiled SQL:
// "-- NAME (ROLE, KIND): RULE".
var ruleLine = regexp.MustCompile(`(?m)^\s*-- (\S+) \((primary|secondary|guard|mechanism), (mean|proportion|ratio)\): (.*)$`)

// sharedMark matches the shared-definition part of a rule.
var sharedMark = regexp.MustCompile(`shared definition (\S+) from (\S+) \(definition ([0-9a-f]+)\)`)

// explainStale names, after compile --check found a stale file, the
// metrics whose definition differs between the committed SQL and what the
// spec compiles to now (a shared definition changed in its library, an
// override, or the spec's own definition).
func explainStale(w io.Writer, old []byte, now string) {
	rules := func(text string) (map[string]string, []string) {
		m := map[string]string{}
		var order []string
		for _, g := range ruleLine.FindAllStringSubmatch(text, -1) {
			if _, ok := m[g[1]]; !ok {
				order = append(order, g[1])
			}
			m[g[1]] = g[4]
		}
		return m, order
	}
	was, _ := rules(string(old))
	is, order := rules(now)
	for _, name := range order {
		prev, ok := was[name]
		switch {
		case !ok:
			fmt.Fprintf(w, "  metric %s is new\n", name)
		case prev != is[name]:
			a, b := sharedMark.FindStringSubmatch(prev), sharedMark.FindStringSubmatch(is[name])
			if a != nil && b != nil && a[1] == b[1] && a[3] != b[3] {
				fmt.Fprintf(w, "  metric %s: shared definition %s in %s changed (definition %s -> %s)\n", name, b[1], b[2], a[3], b[3])
			} else {
				fmt.Fprintf(w, "  metric %s: its definition changed\n", name)
			}
		}
	}
	var gone []string
	for name := range was {
		if _, ok := is[name]; !ok {
			gone = append(gone, name)
		}
	}
	sort.Strings(gone)
	for _, name := range gone {
		fmt.Fprintf(w, "  metric %s was removed\n", name)
	}
}
