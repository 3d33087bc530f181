package metrics_test

import (
	"os"
	"path/filepath"
	"strings"
	"testing"

	"github.com/assay-dev/assay/metrics"
)

// libText is a small library: two sources and three metrics.
const libText = `[library]
about = "test library"

[sources.visits]
file = "visits.parquet"
place.warehouse = { table = "wh.visits" }
unit = "uid"
time = "at"
columns = ["uid", "at", "arm", "spent"]

[sources.pay]
file = "pay.parquet"
unit = "uid"
time = "at"
columns = ["uid", "at", "amount"]

[metrics.spend]
label = "Spend per user, 7 days"
kind = "sum"
source = "pay"
value = "amount"
window = ["0d", "7d"]
cap = 500

[metrics.visits]
kind = "count"
source = "visits"
window = ["0d", "7d"]

[metrics.refunds]
kind = "count"
source = "pay"
filter = "amount < 0"
window = ["0d", "7d"]
harmful = "increase"
margin = 0.02
`

// specHead is a spec that uses lib.toml; metric tables are appended.
const specHead = `library = "lib.toml"

[experiment]
id = "lib-test"
hypothesis = "A shared library gives the same definitions to every experiment."
start = 2026-01-01T00:00:00Z
end = 2026-02-01T00:00:00Z

[variants]
a = 0.5
b = 0.5

[exposure]
source = "visits"
variant = "arm"
`

// setup writes lib.toml and spec.toml into a temporary directory and
// returns the spec's path.
func setup(t *testing.T, lib, spec string) string {
	t.Helper()
	dir := t.TempDir()
	if err := os.WriteFile(filepath.Join(dir, "lib.toml"), []byte(lib), 0o644); err != nil {
		t.Fatal(err)
	}
	p := filepath.Join(dir, "spec.toml")
	if err := os.WriteFile(p, []byte(spec), 0o644); err != nil {
		t.Fatal(err)
	}
	return p
}

func loadWith(t *testing.T, path, target string) (*metrics.Spec, metrics.Diagnostics) {
	t.Helper()
	src, err := os.ReadFile(path)
	if err != nil {
		t.Fatal(err)
	}
	return metrics.LoadWith(path, src, metrics.LoadOptions{Target: target})
}

func metricNamed(s *metrics.Spec, name string) *metrics.Metric {
	for _, m := range s.Metrics {
		if m.Name == name {
			return m
		}
	}
	return nil
}

// TestSharedOverrides checks that a spec takes a library definition, that
// only keys differing from the library count as overrides, and that the
// overridden values are the ones used.
func TestSharedOverrides(t *testing.T) {
	p := setup(t, libText, specHead+`
[metrics.spend_14d]
shared = "spend"
role = "primary"
window = ["0d", "14d"]
cap = 800

[metrics.visits]
shared = "visits"
role = "secondary"
window = ["0d", "7d"]

[metrics.refunds]
shared = "refunds"
role = "guard"
margin = 0.05
`)
	s, ds := loadWith(t, p, "")
	if ds.HasErrors() {
		t.Fatal(ds)
	}
	cases := []struct {
		metric    string
		overrides []string
	}{
		{"spend_14d", []string{`cap 800 (library: 500)`, `window ["0d", "14d"] (library: ["0d", "7d"])`}},
		{"visits", nil}, // window written, but equal to the library's
		{"refunds", []string{`margin 0.05 (library: 0.02)`}},
	}
	for _, tc := range cases {
		t.Run(tc.metric, func(t *testing.T) {
			m := metricNamed(s, tc.metric)
			if m == nil || m.Shared == nil {
				t.Fatalf("metric %s: got no shared definition", tc.metric)
			}
			var got []string
			for _, o := range m.Shared.Overrides {
				got = append(got, o.String())
			}
			if strings.Join(got, "|") != strings.Join(tc.overrides, "|") {
				t.Errorf("overrides: got %q, want %q", got, tc.overrides)
			}
		})
	}
	spend := metricNamed(s, "spend_14d")
	if spend.To.Micros != 14*86400e6 || spend.Value.Cap != 800 || spend.Value.Source == nil || spend.Value.Source.Name != "pay" {
		t.Errorf("spend_14d: got window end %d, cap %v, want 14d and 800 from the spec, source pay from the library", spend.To.Micros, spend.Value.Cap)
	}
	if r := metricNamed(s, "refunds"); r.Harmful != "increase" || r.Margin != 0.05 {
		t.Errorf("refunds: got harmful %q margin %v, want increase (library) and 0.05 (spec)", r.Harmful, r.Margin)
	}
	if v := metricNamed(s, "visits"); v.Harmful != "" {
		t.Errorf("visits: got harmful %q, want none", v.Harmful)
	}
}

// TestSharedDiagnostics checks that each problem is reported in the file
// and on the line that holds the offending text: the spec or the library.
func TestSharedDiagnostics(t *testing.T) {
	badLib := strings.Replace(libText, `filter = "amount < 0"`, `filter = "amont < 0"`, 1)
	cases := []struct {
		name, lib, spec string
		file            string // "lib.toml" or "spec.toml"
		line            int
		code, contains  string
	}{
		{"fixed key", libText, specHead + "\n[metrics.m]\nshared = \"spend\"\nrole = \"primary\"\nfilter = \"amount > 0\"\n",
			"spec.toml", 20, metrics.CodeLibrary, "`filter` of shared metric `spend` is fixed by the library"},
		{"unknown shared metric", libText, specHead + "\n[metrics.m]\nshared = \"spnd\"\nrole = \"primary\"\n",
			"spec.toml", 18, metrics.CodeLibrary, "did you mean `spend`?"},
		{"bad column in library", badLib, specHead + "\n[metrics.m]\nshared = \"spend\"\nrole = \"primary\"\n",
			"lib.toml", 33, metrics.CodeColumn, "amont"},
		{"library with errors", badLib, specHead + "\n[metrics.m]\nshared = \"spend\"\nrole = \"primary\"\n",
			"spec.toml", 1, metrics.CodeLibrary, "has errors"},
		{"missing library", libText, strings.Replace(specHead, "lib.toml", "nope.toml", 1) + "\n[metrics.m]\nshared = \"spend\"\nrole = \"primary\"\n",
			"spec.toml", 1, metrics.CodeLibrary, "cannot read library"},
		{"library not a TOML file", libText, strings.Replace(specHead, "lib.toml", "lib.txt", 1) + "\n[metrics.m]\nshared = \"spend\"\nrole = \"primary\"\n",
			"spec.toml", 1, metrics.CodeLibrary, "is not a .toml file"},
		{"source reshaped", libText, specHead + "\n[sources.pay]\nfile = \"p.csv\"\nunit = \"uid\"\ntime = \"at\"\ncolumns = [\"uid\", \"at\"]\n\n[metrics.m]\nshared = \"spend\"\nrole = \"primary\"\n",
			"spec.toml", 21, metrics.CodeSharedSource, "differs from library lib.toml in `columns`"},
		{"override out of range, in the spec", libText, specHead + "\n[metrics.m]\nshared = \"refunds\"\nrole = \"guard\"\nmargin = 1.5\n",
			"spec.toml", 20, metrics.CodeGuard, "margin must be in [0, 1)"},
		{"cap on a proportion via library key", libText + "\n[metrics.share]\nkind = \"proportion\"\nsource = \"pay\"\nwindow = [\"0d\", \"7d\"]\n",
			specHead + "\n[metrics.m]\nshared = \"share\"\nrole = \"primary\"\ncap = 3\n",
			"spec.toml", 20, metrics.CodeCap, "does not take `cap`"},
	}
	for _, tc := range cases {
		t.Run(tc.name, func(t *testing.T) {
			p := setup(t, tc.lib, tc.spec)
			_, ds := loadWith(t, p, "")
			for _, d := range ds {
				if filepath.Base(d.Subject.File) == tc.file && d.Subject.Start.Line == tc.line && d.Code == tc.code && strings.Contains(d.Summary, tc.contains) {
					return
				}
			}
			t.Errorf("want %s:%d [%s] %q; got:\n%s", tc.file, tc.line, tc.code, tc.contains, ds.Error())
		})
	}
}

// TestLibraryAlone checks a library file on its own: the shipped demo
// library is clean, and a library's own mistakes are found without a spec.
func TestLibraryAlone(t *testing.T) {
	lib, _, ds := metrics.LoadLibraryFile("../testdata/library/grocery.toml")
	if lib == nil || len(ds) > 0 {
		t.Fatalf("demo library: got %v", ds)
	}
	if len(lib.Sources) != 4 || len(lib.Metrics) != 5 {
		t.Errorf("demo library: got %d sources and %d metrics, want 4 and 5", len(lib.Sources), len(lib.Metrics))
	}
	cases := []struct {
		name, text string
		line       int
		code       string
	}{
		{"role is the experiment's", libText + "\n[metrics.x]\nrole = \"primary\"\nkind = \"count\"\nsource = \"pay\"\nwindow = [\"0d\", \"7d\"]\n", 39, metrics.CodeUnknownKey},
		{"undeclared source", libText + "\n[metrics.x]\nkind = \"count\"\nsource = \"pai\"\nwindow = [\"0d\", \"7d\"]\n", 40, metrics.CodeUndefined},
		{"place with both", strings.Replace(libText, `{ table = "wh.visits" }`, `{ table = "wh.visits", file = "v.csv" }`, 1), 6, metrics.CodePlace},
		{"no [library] table", strings.Replace(libText, "[library]\nabout = \"test library\"\n", "", 1), 1, metrics.CodeMissingKey},
	}
	for _, tc := range cases {
		t.Run(tc.name, func(t *testing.T) {
			_, ds := metrics.LoadLibrary("lib.toml", []byte(tc.text))
			for _, d := range ds {
				if d.Subject.File == "lib.toml" && d.Subject.Start.Line == tc.line && d.Code == tc.code {
					return
				}
			}
			t.Errorf("want lib.toml:%d [%s]; got:\n%s", tc.line, tc.code, ds.Error())
		})
	}
	if !metrics.IsLibrary([]byte(libText)) || metrics.IsLibrary([]byte(specHead)) {
		t.Error("IsLibrary: want true for the library and false for the spec")
	}
}

// TestSharedFingerprint checks that the spec fingerprint covers the library
// definitions the spec uses, and only those.
func TestSharedFingerprint(t *testing.T) {
	spec := specHead + "\n[metrics.m]\nshared = \"spend\"\nrole = \"primary\"\n"
	fp := func(lib, target string) string {
		t.Helper()
		s, ds := loadWith(t, setup(t, lib, spec), target)
		if ds.HasErrors() {
			t.Fatal(ds)
		}
		return s.Fingerprint
	}
	base := fp(libText, "")
	cases := []struct {
		name, lib, target string
		changes           bool
	}{
		{"same library", libText, "", false},
		{"comment added to the library", "# reviewed\n" + libText, "", false},
		{"unused metric changed", strings.Replace(libText, `filter = "amount < 0"`, `filter = "amount < -1"`, 1), "", false},
		{"used metric's cap changed", strings.Replace(libText, "cap = 500", "cap = 600", 1), "", true},
		{"used source's columns changed", strings.Replace(libText, `columns = ["uid", "at", "amount"]`, `columns = ["uid", "at", "amount", "note"]`, 1), "", true},
		{"another target", libText, "warehouse", true},
	}
	for _, tc := range cases {
		t.Run(tc.name, func(t *testing.T) {
			got := fp(tc.lib, tc.target)
			if (got != base) != tc.changes {
				t.Errorf("fingerprint %s vs %s: changed = %v, want %v", got, base, got != base, tc.changes)
			}
		})
	}
}

// TestPlaces checks that one spec reads a file by default and a warehouse
// table with the warehouse target, and that a source without the target
// keeps its default.
func TestPlaces(t *testing.T) {
	spec := specHead + "\n[sources.pay]\ntable = \"local.pay\"\nunit = \"uid\"\ntime = \"at\"\ncolumns = [\"uid\", \"at\", \"amount\"]\n" +
		"\n[metrics.m]\nshared = \"spend\"\nrole = \"primary\"\n"
	p := setup(t, libText, spec)
	cases := []struct {
		target            string
		visitsFile, table string
	}{
		{"", "visits.parquet", ""},
		{"warehouse", "", "wh.visits"},
		{"staging", "visits.parquet", ""}, // no such place: the default
	}
	for _, tc := range cases {
		t.Run("target="+tc.target, func(t *testing.T) {
			s, ds := loadWith(t, p, tc.target)
			if ds.HasErrors() {
				t.Fatal(ds)
			}
			var visits, pay *metrics.Source
			for _, src := range s.Sources {
				switch src.Name {
				case "visits":
					visits = src
				case "pay":
					pay = src
				}
			}
			if visits == nil || pay == nil {
				t.Fatalf("got sources %v, want visits (library) and pay (spec)", s.Sources)
			}
			if visits.File != tc.visitsFile || visits.Table != tc.table {
				t.Errorf("visits: got file %q table %q, want %q and %q", visits.File, visits.Table, tc.visitsFile, tc.table)
			}
			if pay.Table != "local.pay" {
				t.Errorf("pay: got table %q, want the spec's local.pay", pay.Table)
			}
			if s.Target != tc.target {
				t.Errorf("target: got %q, want %q", s.Target, tc.target)
			}
		})
	}
}
