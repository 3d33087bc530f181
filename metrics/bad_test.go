package metrics_test

// Catalogue of bad specs. Each file under testdata/bad is a spec with
// mistakes; the expected diagnostics sit beside the offending lines as
// TOML comments, the way go/types test files mark errors:
//
//	windwo = ["0d", "14d"]   # ERROR "unknown-key.*did you mean `window`"
//
// The pattern is a regular expression matched against "code: summary" of a
// diagnostic reported on that line. When the comment cannot sit on the line
// itself (a syntax error, say), `# ERROR-AT 12 "pattern"` names the line;
// `# ERROR-AT 12:7 "pattern"` also names the column (in characters, 1-based)
// where the diagnostic must start. Every diagnostic must be expected and
// every expectation met. A file's first line may be a comment saying what
// the case is about.
//
// The expectations were written by hand from the spec format's rules in
// DEVELOPERS.md and the TOML 1.0 specification (toml.io), not copied from
// the loader's output.

import (
	"fmt"
	"go/ast"
	"go/parser"
	"go/token"
	"os"
	"path/filepath"
	"reflect"
	"regexp"
	"sort"
	"strconv"
	"strings"
	"testing"
	"unicode"

	"github.com/assay-dev/assay/metrics"
)

var errorMark = regexp.MustCompile(`#\s*ERROR(?:-AT\s+(\d+)(?::(\d+))?)?\s+"((?:[^"\\]|\\.)*)"`)

// minCatalogue is the smallest catalogue the project accepts (issue 5 asks
// for at least 60 cases).
const minCatalogue = 120

type want struct {
	line, col int // col 0: any column
	rx        *regexp.Regexp
	hit       bool
}

// readWants returns the expectations marked in src.
func readWants(t *testing.T, src []byte) []*want {
	t.Helper()
	var wants []*want
	for i, line := range strings.Split(string(src), "\n") {
		for _, m := range errorMark.FindAllStringSubmatch(line, -1) {
			w := &want{line: i + 1}
			if m[1] != "" {
				w.line, _ = strconv.Atoi(m[1])
			}
			if m[2] != "" {
				w.col, _ = strconv.Atoi(m[2])
			}
			pat := strings.ReplaceAll(m[3], `\"`, `"`)
			rx, err := regexp.Compile(pat)
			if err != nil {
				t.Fatalf("line %d: bad pattern %q: %v", i+1, pat, err)
			}
			w.rx = rx
			wants = append(wants, w)
		}
	}
	return wants
}

func catalogue(t *testing.T) []string {
	t.Helper()
	files, err := filepath.Glob("../testdata/bad/*.toml")
	if err != nil {
		t.Fatal(err)
	}
	if len(files) < minCatalogue {
		t.Fatalf("catalogue has %d bad specs, want at least %d", len(files), minCatalogue)
	}
	return files
}

func TestBadSpecs(t *testing.T) {
	for _, f := range catalogue(t) {
		t.Run(filepath.Base(f), func(t *testing.T) {
			src, err := os.ReadFile(f)
			if err != nil {
				t.Fatal(err)
			}
			wants := readWants(t, src)
			if len(wants) == 0 {
				t.Fatal("no # ERROR expectations in file")
			}
			_, ds := metrics.Load(f, src)
			if !ds.HasErrors() {
				t.Fatalf("got no errors, want %d", len(wants))
			}
			for _, d := range ds {
				if d.Code == "" {
					t.Errorf("diagnostic without a code: %s", d.Short())
				}
				if d.Subject.Start.Line == 0 || d.Subject.Start.Column == 0 {
					t.Errorf("diagnostic without a position: %s", d.Short())
				}
				text := fmt.Sprintf("%s: %s", d.Code, d.Summary)
				matched := false
				for _, w := range wants {
					if w.line == d.Subject.Start.Line && (w.col == 0 || w.col == d.Subject.Start.Column) && w.rx.MatchString(text) {
						w.hit, matched = true, true
					}
				}
				if !matched {
					t.Errorf("unexpected diagnostic at %d:%d: %s", d.Subject.Start.Line, d.Subject.Start.Column, text)
				}
			}
			for _, w := range wants {
				if !w.hit {
					at := strconv.Itoa(w.line)
					if w.col > 0 {
						at += ":" + strconv.Itoa(w.col)
					}
					t.Errorf("%s: no diagnostic matching %q; got:\n%s", at, w.rx, ds.Error())
				}
			}
		})
	}
}

// TestBadSpecsRender checks the long form of every catalogue diagnostic:
// the short form first, then the offending line under a gutter and carets
// under the range, with no control characters that could corrupt a
// terminal (the snippet comes from the user's file).
func TestBadSpecsRender(t *testing.T) {
	for _, f := range catalogue(t) {
		src, err := os.ReadFile(f)
		if err != nil {
			t.Fatal(err)
		}
		_, ds := metrics.Load(f, src)
		for _, d := range ds {
			long := d.Long(src)
			name := fmt.Sprintf("%s/%d:%d", filepath.Base(f), d.Subject.Start.Line, d.Subject.Start.Column)
			lines := strings.Split(strings.TrimSuffix(long, "\n"), "\n")
			if got, want := lines[0], d.Short(); got != want {
				t.Errorf("%s: got first line %q, want %q", name, got, want)
			}
			if want := fmt.Sprintf("%s:%d:%d: ", f, d.Subject.Start.Line, d.Subject.Start.Column); !strings.HasPrefix(lines[0], want) {
				t.Errorf("%s: got %q, want prefix %q", name, lines[0], want)
			}
			if len(lines) < 3 {
				t.Errorf("%s: got %d lines, want the message, the source line and carets:\n%s", name, len(lines), long)
				continue
			}
			if want := fmt.Sprintf("%4d | ", d.Subject.Start.Line); !strings.HasPrefix(lines[1], want) {
				t.Errorf("%s: got snippet %q, want prefix %q", name, lines[1], want)
			}
			caret := strings.TrimLeft(strings.TrimPrefix(lines[2], "     | "), " ")
			if caret == "" || strings.Trim(caret, "^") != "" {
				t.Errorf("%s: got caret line %q, want carets", name, lines[2])
			}
			// Carets start under the reported column.
			if got, want := strings.Index(lines[2], "^")-len("     | ")+1, d.Subject.Start.Column; got != want {
				t.Errorf("%s: got carets at column %d, want %d", name, got, want)
			}
			for _, r := range long {
				if r != '\n' && (unicode.IsControl(r) || r == '\u202e') {
					t.Errorf("%s: long form holds control character %U", name, r)
					break
				}
			}
		}
	}
}

// TestBadSpecsDeterministic checks that loading a bad spec twice gives the
// same diagnostics in the same order.
func TestBadSpecsDeterministic(t *testing.T) {
	for _, f := range catalogue(t) {
		src, err := os.ReadFile(f)
		if err != nil {
			t.Fatal(err)
		}
		_, a := metrics.Load(f, src)
		_, b := metrics.Load(f, src)
		if !reflect.DeepEqual(a, b) {
			t.Errorf("%s: got\n%s\nthen\n%s\nwant the same twice", filepath.Base(f), a.Error(), b.Error())
		}
	}
}

// declaredCodes reads the Code* constants of codes.go with go/parser, so the
// list does not come from the package under test.
func declaredCodes(t *testing.T) map[string]bool {
	t.Helper()
	fset := token.NewFileSet()
	file, err := parser.ParseFile(fset, "codes.go", nil, 0)
	if err != nil {
		t.Fatal(err)
	}
	codes := map[string]bool{}
	ast.Inspect(file, func(n ast.Node) bool {
		vs, ok := n.(*ast.ValueSpec)
		if !ok {
			return true
		}
		for i, id := range vs.Names {
			if strings.HasPrefix(id.Name, "Code") && i < len(vs.Values) {
				if lit, ok := vs.Values[i].(*ast.BasicLit); ok && lit.Kind == token.STRING {
					v, _ := strconv.Unquote(lit.Value)
					codes[v] = true
				}
			}
		}
		return true
	})
	if len(codes) == 0 {
		t.Fatal("found no Code constants in codes.go")
	}
	return codes
}

// TestCatalogueCoversCodes checks that every diagnostic in the catalogue
// uses a code declared in codes.go, and that every declared code has at
// least one case in the catalogue.
func TestCatalogueCoversCodes(t *testing.T) {
	declared := declaredCodes(t)
	seen := map[string]bool{}
	for _, f := range catalogue(t) {
		src, err := os.ReadFile(f)
		if err != nil {
			t.Fatal(err)
		}
		_, ds := metrics.Load(f, src)
		for _, d := range ds {
			if !declared[d.Code] {
				t.Errorf("%s: got code %q, want one declared in codes.go", filepath.Base(f), d.Code)
			}
			seen[d.Code] = true
		}
	}
	var missing []string
	for c := range declared {
		if !seen[c] {
			missing = append(missing, c)
		}
	}
	sort.Strings(missing)
	if len(missing) > 0 {
		t.Errorf("got no catalogue case for codes %v, want one case per code", missing)
	}
}

// TestLongForm checks the rendering of a diagnostic with its snippet and
// carets against hand-written expected texts: the carets sit under the
// value's characters (not the spaces before a trailing comment), and
// columns count characters, not bytes.
func TestLongForm(t *testing.T) {
	tests := []struct {
		name, src, code, want string
	}{
		{"unknown key", "[experiment]\nid = \"x\"\nwindwo = 3\n", metrics.CodeUnknownKey,
			"spec.toml:3:1: unknown key `windwo` in [experiment] [unknown-key]\n" +
				"   3 | windwo = 3\n" +
				"     | ^^^^^^\n"},
		{"value before a comment", "[experiment]\nconfidence = 7   # percent\n", metrics.CodeValue,
			"spec.toml:2:14: confidence must be between 0.5 and 1 (exclusive), got 7 [bad-value]\n" +
				"   2 | confidence = 7   # percent\n" +
				"     |              ^\n" +
				"     = hint: write it as a fraction, e.g. 0.95\n"},
		{"characters, not bytes", "[experiment]\nid = \"é\"\ntime_zone = \"Mars\"\n", metrics.CodeTime,
			"spec.toml:3:13: unknown time zone \"Mars\" [time]\n" +
				"   3 | time_zone = \"Mars\"\n" +
				"     |             ^^^^^^\n"},
		{"after non-ASCII text on the line", "[experiment]\n\"né\" = 1\n", metrics.CodeUnknownKey,
			"spec.toml:2:1: unknown key `né` in [experiment] [unknown-key]\n" +
				"   2 | \"né\" = 1\n" +
				"     | ^^^^\n"},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			src := []byte(tc.src)
			_, ds := metrics.Load("spec.toml", src)
			var got string
			for _, d := range ds {
				if d.Code == tc.code {
					got = d.Long(src)
					break
				}
			}
			if !strings.HasPrefix(got, tc.want) {
				t.Errorf("got\n%s\nwant prefix\n%s", got, tc.want)
			}
		})
	}
}
