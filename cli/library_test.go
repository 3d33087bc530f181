package cli

import (
	"bytes"
	"encoding/json"
	"os"
	"path/filepath"
	"strings"
	"testing"
)

const checkoutSpec = "../testdata/demo/checkout.toml"

// copyLibraryDemo copies the second demo spec, the shared library and the
// shared calendar into a temporary tree with the same layout and returns
// the spec and library paths.
func copyLibraryDemo(t *testing.T) (spec, lib string) {
	t.Helper()
	root := t.TempDir()
	for _, f := range [][2]string{{checkoutSpec, "demo/checkout.toml"}, {"../testdata/library/grocery.toml", "library/grocery.toml"}, {"../testdata/library/grocery-calendar.toml", "library/grocery-calendar.toml"}} {
		b, err := os.ReadFile(f[0])
		if err != nil {
			t.Fatal(err)
		}
		p := filepath.Join(root, f[1])
		if err := os.MkdirAll(filepath.Dir(p), 0o755); err != nil {
			t.Fatal(err)
		}
		if err := os.WriteFile(p, b, 0o644); err != nil {
			t.Fatal(err)
		}
	}
	return filepath.Join(root, "demo/checkout.toml"), filepath.Join(root, "library/grocery.toml")
}

// TestCompileCheckNamesSharedMetric checks that compile --check fails with
// the stale-SQL exit code when a used library definition changes, and
// names the metric that uses it (and not the others).
func TestCompileCheckNamesSharedMetric(t *testing.T) {
	spec, lib := copyLibraryDemo(t)
	dir := filepath.Join(t.TempDir(), "sql")
	var out, errb bytes.Buffer
	if code := Run([]string{"compile", "--out", dir, spec}, nil, &out, &errb); code != ExitOK {
		t.Fatalf("compile --out: exit %d\n%s", code, errb.String())
	}
	b, _ := os.ReadFile(lib)
	changed := strings.Replace(string(b), "filter = \"status = 'delivered'\"\nwindow = [\"0d\", \"14d\"]\n\n[metrics.revenue_per_order]",
		"filter = \"status IN ('delivered', 'returned')\"\nwindow = [\"0d\", \"14d\"]\n\n[metrics.revenue_per_order]", 1)
	if changed == string(b) {
		t.Fatal("the library's delivered_orders filter was not found")
	}
	if err := os.WriteFile(lib, []byte(changed), 0o644); err != nil {
		t.Fatal(err)
	}
	out.Reset()
	errb.Reset()
	code := Run([]string{"compile", "--check", dir, spec}, nil, &out, &errb)
	if code != ExitStale {
		t.Fatalf("compile --check: got exit %d, want %d\n%s", code, ExitStale, errb.String())
	}
	if !strings.Contains(errb.String(), "metric orders_28d: shared definition delivered_orders in grocery.toml changed") {
		t.Errorf("stderr does not name orders_28d:\n%s", errb.String())
	}
	if strings.Contains(errb.String(), "basket_28d") || strings.Contains(errb.String(), "cancelled_28d") {
		t.Errorf("stderr names metrics whose definitions did not change:\n%s", errb.String())
	}
}

// TestLibraryCommands checks `check` on a library file, `reach`, and that a
// diagnostic in a library is printed with the library's own line.
func TestLibraryCommands(t *testing.T) {
	spec, lib := copyLibraryDemo(t)
	b, _ := os.ReadFile(lib)
	if err := os.WriteFile(lib, []byte(strings.Replace(string(b), `source = "support"`, `source = "suport"`, 1)), 0o644); err != nil {
		t.Fatal(err)
	}
	cases := []struct {
		name           string
		args           []string
		code           int
		stdout, stderr string
	}{
		{"check library", []string{"check", "../testdata/library/grocery.toml"}, ExitOK, "ok (library: 4 sources, 5 metrics)", ""},
		{"check broken library", []string{"check", lib}, ExitInput, "", "grocery.toml:75:10: source `suport` is not declared in this library; did you mean `support`?"},
		{"snippet from the library", []string{"check", lib}, ExitInput, "", `  75 | source = "suport"`},
		{"spec using a broken library", []string{"check", spec}, ExitInput, "", "has errors; its definitions are not used"},
		{"reach", []string{"reach", "delivered_orders", "../testdata/demo"}, ExitOK, "checkout.toml:50:10: grocery.toml#delivered_orders as orders_28d (secondary) in experiment checkout-shelf-2026-03; overrides", ""},
		{"reach glob", []string{"reach", "cancellations", "../testdata/demo/*.toml"}, ExitOK, "margin 0.03 (library: 0.05)", ""},
		{"reach nothing", []string{"reach", "no_such_metric", checkoutSpec}, ExitOK, "0 use(s) of no_such_metric in 1 spec file(s)", ""},
		{"reach without specs", []string{"reach", "x"}, ExitInput, "", "give a library metric name"},
		{"check place", []string{"check", "--place", "warehouse", checkoutSpec}, ExitOK, ": ok (", ""},
	}
	for _, tc := range cases {
		t.Run(tc.name, func(t *testing.T) {
			var out, errb bytes.Buffer
			code := Run(tc.args, nil, &out, &errb)
			if code != tc.code {
				t.Errorf("exit: got %d, want %d\n%s", code, tc.code, errb.String())
			}
			if tc.stdout != "" && !strings.Contains(out.String(), tc.stdout) {
				t.Errorf("stdout: got %q, want %q", out.String(), tc.stdout)
			}
			if tc.stderr != "" && !strings.Contains(errb.String(), tc.stderr) {
				t.Errorf("stderr: got %q, want %q", errb.String(), tc.stderr)
			}
		})
	}
}

// TestOverridesShown checks that an experiment's overrides of a shared
// definition are visible in the compiled SQL's comment and in the JSON
// report's metric, and that a metric taken as the library has it has none.
func TestOverridesShown(t *testing.T) {
	var sqlText, errb bytes.Buffer
	if code := Run([]string{"compile", "--query", "main", checkoutSpec}, nil, &sqlText, &errb); code != ExitOK {
		t.Fatalf("compile: exit %d\n%s", code, errb.String())
	}
	want := `-- cancelled_28d (guard, mean): mean per unit of count of rows where status = 'cancelled'; window [trigger + 0d, trigger + 28d), mature units only; shared definition cancellations from grocery.toml (definition `
	if !strings.Contains(sqlText.String(), want) || !strings.Contains(sqlText.String(), `margin 0.03 (library: 0.05), window ["0d", "28d"] (library: ["0d", "14d"])`) {
		t.Errorf("compiled SQL: want the shared definition and its overrides in the metric's comment")
	}
	if testing.Short() {
		return
	}
	rep := runJSON(t, "--segments=false", checkoutSpec)
	for _, m := range rep["metrics"].([]any) {
		mm := m.(map[string]any)
		if mm["name"] != "cancelled_28d" {
			continue
		}
		if mm["shared"] != "cancellations (grocery.toml)" || mm["margin"] != 0.03 {
			t.Errorf("report: got shared %v margin %v, want cancellations (grocery.toml) and 0.03", mm["shared"], mm["margin"])
		}
		got, _ := json.Marshal(mm["overrides"])
		if !strings.Contains(string(got), `margin 0.03 (library: 0.05)`) {
			t.Errorf("report overrides: got %s", got)
		}
	}
	demoRep := runJSON(t, "--segments=false", demo)
	for _, m := range demoRep["metrics"].([]any) {
		mm := m.(map[string]any)
		if mm["name"] == "orders_14d" && (mm["shared"] != "delivered_orders (grocery.toml)" || mm["overrides"] != nil) {
			t.Errorf("demo orders_14d: got shared %v overrides %v, want delivered_orders and none", mm["shared"], mm["overrides"])
		}
	}
}
