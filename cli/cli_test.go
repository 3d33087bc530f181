package cli

import (
	"bytes"
	"encoding/json"
	"strings"
	"testing"
)

const demo = "../testdata/demo/reorder.toml"

// TestExitCodes drives whole commands in-process: each row is a command
// line, its documented exit code (README "Exit codes") and what must
// appear on stdout or stderr.
func TestExitCodes(t *testing.T) {
	cases := []struct {
		name      string
		args      []string
		code      int
		stdout    string
		stderr    string
		noStdout  bool
		skipShort bool
	}{
		{name: "no args", args: nil, code: ExitInput, stderr: "Usage:"},
		{name: "help", args: []string{"--help"}, code: ExitOK, stdout: "assay check SPEC.toml"},
		{name: "version", args: []string{"--version"}, code: ExitOK, stdout: "assay 0."},
		{name: "unknown command", args: []string{"frobnicate"}, code: ExitInput, stderr: `unknown command "frobnicate"`},
		{name: "check ok", args: []string{"check", demo}, code: ExitOK, stdout: ": ok ("},
		{name: "check bad spec", args: []string{"check", "../testdata/bad/unknown_key_typo.toml"}, code: ExitInput, stderr: "unknown_key_typo.toml:33:1: unknown key `windwo`", noStdout: true},
		{name: "check missing file", args: []string{"check", "nope.toml"}, code: ExitInput, stderr: "nope.toml: cannot read spec"},
		{name: "check two files", args: []string{"check", demo, demo}, code: ExitInput, stderr: "expected one spec file"},
		{name: "check help", args: []string{"check", "--help"}, code: ExitOK, stderr: "Usage: assay check"},
		{name: "compile", args: []string{"compile", "--query", "main", demo}, code: ExitOK, stdout: "WITH\n"},
		{name: "compile flags after spec", args: []string{"compile", demo, "--query", "health"}, code: ExitOK, stdout: "AS kind"},
		{name: "compile unknown dialect", args: []string{"compile", "--dialect", "nosuchdb", demo}, code: ExitInput, stderr: "unknown dialect"},
		{name: "compile bad as-of", args: []string{"compile", "--as-of", "yesterday", demo}, code: ExitInput, stderr: "--as-of"},
		{name: "compile bad group key", args: []string{"compile", "--by", "colour", demo}, code: ExitInput, stderr: `cannot break down by "colour"`},
		{name: "run text", args: []string{"run", "--segments=false", demo}, code: ExitOK, stdout: "Primary metric", skipShort: true},
		{name: "run bad format", args: []string{"run", "--format", "xml", demo}, code: ExitInput, stderr: "--format"},
		{name: "run bad adjust", args: []string{"run", "--adjust", "magic", demo}, code: ExitInput, stderr: "--adjust"},
		{name: "run missing db", args: []string{"run", "--db", "/nonexistent/dir/x.duckdb", demo}, code: ExitEngine, stderr: "cannot open"},
		{name: "calibrate bad splits", args: []string{"calibrate", "--splits", "0", demo}, code: ExitInput, stderr: "--splits"},
	}
	for _, tc := range cases {
		t.Run(tc.name, func(t *testing.T) {
			if tc.skipShort && testing.Short() {
				t.Skip("runs DuckDB")
			}
			var out, errb bytes.Buffer
			code := Run(tc.args, nil, &out, &errb)
			if code != tc.code {
				t.Errorf("exit code: got %d, want %d\nstderr: %s", code, tc.code, errb.String())
			}
			if tc.stdout != "" && !strings.Contains(out.String(), tc.stdout) {
				t.Errorf("stdout: got %q, want it to contain %q", trim(out.String()), tc.stdout)
			}
			if tc.stderr != "" && !strings.Contains(errb.String(), tc.stderr) {
				t.Errorf("stderr: got %q, want it to contain %q", trim(errb.String()), tc.stderr)
			}
			if tc.noStdout && out.Len() > 0 {
				t.Errorf("stdout: got %q, want nothing (diagnostics go to stderr)", trim(out.String()))
			}
			if strings.Contains(errb.String(), "goroutine ") || strings.Contains(errb.String(), "panic:") {
				t.Errorf("stderr holds a Go panic or stack trace:\n%s", errb.String())
			}
		})
	}
}

func trim(s string) string {
	if len(s) > 300 {
		return s[:300] + "…"
	}
	return s
}

// TestRunJSONContract checks the versioned JSON report: schema_version,
// the documented fields, and no NaN (encoding/json would fail on it).
func TestRunJSONContract(t *testing.T) {
	if testing.Short() {
		t.Skip("runs DuckDB")
	}
	var out, errb bytes.Buffer
	if code := Run([]string{"run", "--format", "json", demo}, nil, &out, &errb); code != ExitOK {
		t.Fatalf("exit %d: %s", code, errb.String())
	}
	var rep map[string]any
	if err := json.Unmarshal(out.Bytes(), &rep); err != nil {
		t.Fatalf("stdout is not JSON: %v", err)
	}
	if v, _ := rep["schema_version"].(float64); v != 2 {
		t.Errorf("schema_version: got %v, want 2", rep["schema_version"])
	}
	for _, key := range []string{"tool_version", "experiment", "alarms", "health", "metrics", "segments", "adjustment", "cautions"} {
		if _, ok := rep[key]; !ok {
			t.Errorf("report lacks %q", key)
		}
	}
	ms, _ := rep["metrics"].([]any)
	if len(ms) != 6 {
		t.Fatalf("metrics: got %d, want 6 (the demo spec's)", len(ms))
	}
	m0 := ms[0].(map[string]any)
	cmp := m0["comparisons"].([]any)[0].(map[string]any)
	for _, key := range []string{"difference", "ci_low", "ci_high", "relative", "relative_ci_low", "relative_ci_high", "p_value", "p_value_adjusted", "method"} {
		if _, ok := cmp[key]; !ok {
			t.Errorf("comparison lacks %q", key)
		}
	}
	v0 := m0["variants"].([]any)[0].(map[string]any)
	for _, key := range []string{"n", "value", "std_error", "immature"} {
		if _, ok := v0[key]; !ok {
			t.Errorf("variant value lacks %q", key)
		}
	}
	if strings.Contains(errb.String(), "{") {
		t.Errorf("stderr carries JSON; results belong on stdout: %s", errb.String())
	}
}

// TestHelpMentionsEveryFlag keeps `assay CMD --help` accurate: every flag
// a command defines is listed in its help output.
func TestHelpMentionsEveryFlag(t *testing.T) {
	for _, cmd := range []struct {
		name  string
		flags []string
	}{
		{"compile", []string{"-dialect", "-as-of", "-by", "-query"}},
		{"run", []string{"-db", "-format", "-threads", "-memory-limit", "-fail-on-harm", "-srm-alpha", "-adjust", "-segments"}},
		{"calibrate", []string{"-splits", "-salt", "-alpha", "-start", "-end", "-db", "-format"}},
	} {
		var out, errb bytes.Buffer
		if code := Run([]string{cmd.name, "--help"}, nil, &out, &errb); code != ExitOK {
			t.Errorf("%s --help: exit %d", cmd.name, code)
		}
		for _, f := range cmd.flags {
			if !strings.Contains(errb.String(), f) {
				t.Errorf("%s --help does not mention %s", cmd.name, f)
			}
		}
	}
}
