package metrics_test

// Catalogue of bad specs. Each file under testdata/bad is a spec with
// mistakes; the expected diagnostics sit beside the offending lines as
// TOML comments, the way go/types test files mark errors:
//
//	windwo = ["0d", "14d"]   # ERROR "unknown-key.*did you mean `window`"
//
// The pattern is a regular expression matched against "code: summary" of a
// diagnostic reported on that line. When the comment cannot sit on the line
// itself (a syntax error, say), `# ERROR-AT 12 "pattern"` names the line.
// Every diagnostic must be expected and every expectation met.

import (
	"fmt"
	"os"
	"path/filepath"
	"regexp"
	"strconv"
	"strings"
	"testing"

	"github.com/assay-dev/assay/metrics"
)

var errorMark = regexp.MustCompile(`#\s*ERROR(?:-AT\s+(\d+))?\s+"((?:[^"\\]|\\.)*)"`)

type want struct {
	line int
	rx   *regexp.Regexp
	hit  bool
}

func TestBadSpecs(t *testing.T) {
	files, err := filepath.Glob("../testdata/bad/*.toml")
	if err != nil {
		t.Fatal(err)
	}
	if len(files) < 30 {
		t.Fatalf("catalogue has %d bad specs, want at least 30", len(files))
	}
	for _, f := range files {
		t.Run(filepath.Base(f), func(t *testing.T) {
			src, err := os.ReadFile(f)
			if err != nil {
				t.Fatal(err)
			}
			var wants []*want
			for i, line := range strings.Split(string(src), "\n") {
				for _, m := range errorMark.FindAllStringSubmatch(line, -1) {
					ln := i + 1
					if m[1] != "" {
						ln, _ = strconv.Atoi(m[1])
					}
					pat := strings.ReplaceAll(m[2], `\"`, `"`)
					wants = append(wants, &want{line: ln, rx: regexp.MustCompile(pat)})
				}
			}
			if len(wants) == 0 {
				t.Fatal("no # ERROR expectations in file")
			}
			_, ds := metrics.Load(f, src)
			if !ds.HasErrors() {
				t.Fatalf("no errors reported")
			}
			for _, d := range ds {
				if d.Code == "" {
					t.Errorf("diagnostic without a code: %s", d.Short())
				}
				if d.Subject.Start.Line == 0 {
					t.Errorf("diagnostic without a position: %s", d.Short())
				}
				text := fmt.Sprintf("%s: %s", d.Code, d.Summary)
				matched := false
				for _, w := range wants {
					if w.line == d.Subject.Start.Line && w.rx.MatchString(text) {
						w.hit, matched = true, true
					}
				}
				if !matched {
					t.Errorf("unexpected diagnostic at line %d: %s", d.Subject.Start.Line, text)
				}
			}
			for _, w := range wants {
				if !w.hit {
					t.Errorf("line %d: no diagnostic matching %q; got:\n%s", w.line, w.rx, ds.Error())
				}
			}
		})
	}
}

// TestLongForm checks the rendering of a diagnostic with its snippet and
// carets.
func TestLongForm(t *testing.T) {
	src := []byte("[experiment]\nid = \"x\"\nwindwo = 3\n")
	_, ds := metrics.Load("spec.toml", src)
	var got string
	for _, d := range ds {
		if d.Code == metrics.CodeUnknownKey {
			got = d.Long(src)
		}
	}
	want := "spec.toml:3:1: unknown key `windwo` in [experiment] [unknown-key]\n" +
		"   3 | windwo = 3\n" +
		"     | ^^^^^^\n"
	if !strings.HasPrefix(got, want) {
		t.Errorf("got\n%s\nwant prefix\n%s", got, want)
	}
}
