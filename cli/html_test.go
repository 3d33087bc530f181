package cli

import (
	"flag"
	"os"
	"regexp"
	"strings"
	"testing"

	"github.com/assay-dev/assay/compiler"
)

// The demo's HTML report is compared with testdata/demo/reorder.html.golden
// as a tag skeleton (see skeleton), so that DuckDB's last-digit noise and
// plot coordinates do not break it. Refresh it with
//
//	go test ./cli/ -run TestHTMLGolden -update
var update = flag.Bool("update", false, "rewrite testdata/demo/reorder.html.golden")

const htmlGolden = "../testdata/demo/reorder.html.golden"

var (
	styleRE = regexp.MustCompile(`(?s)<style>.*?</style>`)
	tagRE   = regexp.MustCompile(`<(/?)([a-zA-Z][a-zA-Z0-9]*)([^>]*)>`)
	idRE    = regexp.MustCompile(`\b(id|class)="([^"]*)"`)
)

// skeleton is the page's structure: one line per element, indented by
// depth, with its id and class; text, other attributes and the inside of
// each <svg> (coordinates) are left out, and digits in ids are kept (they
// come from names and counts of blocks, not from measured values).
func skeleton(page string) string {
	page = styleRE.ReplaceAllString(page, "<style></style>")
	void := map[string]bool{"meta": true, "br": true, "hr": true, "input": true, "col": true}
	var b strings.Builder
	depth, inSVG := 0, 0
	for _, m := range tagRE.FindAllStringSubmatch(page, -1) {
		closing, name, attrs := m[1] == "/", strings.ToLower(m[2]), m[3]
		if inSVG > 0 {
			if name == "svg" {
				if closing {
					inSVG--
				} else {
					inSVG++
				}
			}
			continue
		}
		if closing {
			depth--
			continue
		}
		line := strings.Repeat("  ", max(depth, 0)) + name
		for _, a := range idRE.FindAllStringSubmatch(attrs, -1) {
			line += " " + a[1] + "=" + a[2]
		}
		b.WriteString(line + "\n")
		if name == "svg" && !strings.HasSuffix(attrs, "/") {
			inSVG = 1
			continue
		}
		if !void[name] && !strings.HasSuffix(attrs, "/") {
			depth++
		}
	}
	return b.String()
}

// TestHTMLGolden renders the demo with the trigger_day breakdown as HTML
// and compares its structure with the golden skeleton.
func TestHTMLGolden(t *testing.T) {
	if testing.Short() {
		t.Skip("skipped in -short mode: runs the demo")
	}
	code, out, stderr := runArgs("run", "--threads", "1", "--by", "platform,tenure,"+compiler.KeyTriggerDay, "--format", "html", demo)
	if code != ExitOK {
		t.Fatalf("run --format html exited %d: %s", code, stderr)
	}
	if !strings.HasPrefix(out, "<!DOCTYPE html>") || !strings.Contains(out, "</html>") {
		t.Fatalf("not an HTML page:\n%.300s", out)
	}
	got := skeleton(out)
	if *update {
		if err := os.WriteFile(htmlGolden, []byte(got), 0o644); err != nil {
			t.Fatal(err)
		}
		return
	}
	want, err := os.ReadFile(htmlGolden)
	if err != nil {
		t.Fatalf("%v (run go test ./cli/ -run TestHTMLGolden -update)", err)
	}
	if got != string(want) {
		gl, wl := strings.Split(got, "\n"), strings.Split(string(want), "\n")
		for i := 0; i < len(gl) || i < len(wl); i++ {
			var g, w string
			if i < len(gl) {
				g = gl[i]
			}
			if i < len(wl) {
				w = wl[i]
			}
			if g != w {
				t.Fatalf("structure differs from %s at line %d:\n got %q\nwant %q\n(refresh with -update if the change is intended)", htmlGolden, i+1, g, w)
			}
		}
	}
}

// TestHTMLFormatFlag checks that analyze writes the same page from
// exported results, SQL and links included, and that an unknown format is
// refused on both commands.
func TestHTMLFormatFlag(t *testing.T) {
	if testing.Short() {
		t.Skip("skipped in -short mode: runs the demo")
	}
	files := exportDemo(t, compiler.Options{})
	code, out, stderr := runArgs("analyze", "--format", "html", "--aggregates", files["main.csv"], "--health", files["health.csv"], demo)
	if code != ExitOK {
		t.Fatalf("analyze --format html exited %d: %s", code, stderr)
	}
	for _, want := range []string{`id="col-orders_14d__mean"`, `href="#col-orders_14d__mean"`, `id="cte-main-unit_values"`, "Summary"} {
		if !strings.Contains(out, want) {
			t.Errorf("analyze page lacks %s", want)
		}
	}
	for _, args := range [][]string{{"run", "--format", "pdf", demo}, {"analyze", "--format", "pdf", "--aggregates", files["main.csv"], demo}} {
		code, _, stderr := runArgs(args...)
		if code != ExitInput || !strings.Contains(stderr, "html") {
			t.Errorf("%s --format pdf: exit %d, stderr %q; want %d naming html", args[0], code, stderr, ExitInput)
		}
	}
}
