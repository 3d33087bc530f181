package cli

import (
	"encoding/json"
	"math"
	"regexp"
	"strconv"
	"strings"
	"testing"
)

// numberToken finds the numbers a report prints: optional sign, digits,
// decimals, an exponent, a percent sign. Dates, times and durations are
// cut out first (see dateLike).
var numberToken = regexp.MustCompile(`[+-]?\d+(\.\d+)?(e[+-]?\d+)?%?`)

// dateLike matches stamps, days, durations and names with digits in them,
// which are not statistics.
var dateLike = regexp.MustCompile(`\d{4}-\d{2}-\d{2}(T[0-9:.]+Z)?|[+-]?\d+[dhms]\b|\b[0-9a-f]{16}\b|[A-Za-z_]+\d+[A-Za-z_\d]*|\d+\.\d+\.\d+`)

// TestFormatsCarrySameNumbers renders the demo in every format and checks
// that each number of the text report appears in the Markdown (as the same
// text) and in the JSON (as a value that the text's rounding of it
// reproduces: a number shown with k decimals is within half a unit of the
// k-th decimal of a JSON value, a percentage of 100 times one).
func TestFormatsCarrySameNumbers(t *testing.T) {
	if testing.Short() {
		t.Skip("skipped in -short mode: runs the demo")
	}
	render := func(format string) string {
		code, out, stderr := runArgs("run", "--threads", "1", "--format", format, demo)
		if code != ExitOK {
			t.Fatalf("run --format %s exited %d: %s", format, code, stderr)
		}
		return out
	}
	text, md, js := render("text"), render("markdown"), render("json")
	var doc any
	if err := json.Unmarshal([]byte(js), &doc); err != nil {
		t.Fatal(err)
	}
	var values []float64
	var walk func(any)
	walk = func(v any) {
		switch x := v.(type) {
		case map[string]any:
			for _, e := range x {
				walk(e)
			}
		case []any:
			for _, e := range x {
				walk(e)
			}
		case float64:
			values = append(values, x)
		case string:
			// Numbers inside JSON strings (alarm sentences, rules).
			for _, tok := range numberToken.FindAllString(dateLike.ReplaceAllString(x, " "), -1) {
				if f, err := strconv.ParseFloat(strings.TrimSuffix(tok, "%"), 64); err == nil {
					if strings.HasSuffix(tok, "%") {
						f /= 100
					}
					values = append(values, f)
				}
			}
		}
	}
	walk(doc)
	inJSON := func(tok string) bool {
		pctTok := strings.HasSuffix(tok, "%")
		num := strings.TrimSuffix(tok, "%")
		f, err := strconv.ParseFloat(num, 64)
		if err != nil {
			return false
		}
		half := 0.5
		if i := strings.IndexByte(num, '.'); i >= 0 {
			digits := len(num) - i - 1
			if e := strings.IndexByte(num, 'e'); e >= 0 {
				digits = e - i - 1
				exp, _ := strconv.Atoi(num[e+1:])
				half *= math.Pow(10, float64(exp))
			}
			half *= math.Pow(10, -float64(digits))
		}
		for _, v := range values {
			if pctTok {
				v *= 100
			}
			if math.Abs(v-f) <= half*(1+1e-9) || math.Abs(math.Abs(v)-math.Abs(f)) <= half*(1+1e-9) && strings.HasPrefix(tok, "+") {
				return true
			}
		}
		return false
	}
	checked := 0
	for _, line := range strings.Split(text, "\n") {
		clean := dateLike.ReplaceAllString(line, " ")
		for _, tok := range numberToken.FindAllString(clean, -1) {
			checked++
			if !strings.Contains(md, tok) {
				t.Errorf("%q (text line %q) is not in the Markdown report", tok, strings.TrimSpace(line))
			}
			if !inJSON(tok) {
				t.Errorf("%q (text line %q) has no matching value in the JSON report", tok, strings.TrimSpace(line))
			}
		}
	}
	if checked < 300 {
		t.Errorf("checked %d numbers, want the demo's several hundred", checked)
	}
}

// TestBreakdownsLeaveOverallUnchanged: the overall numbers of a run with
// breakdowns (one statement, GROUPING SETS) equal those of the same run
// without them, to 1e-9; only the breakdown-related fields differ.
func TestBreakdownsLeaveOverallUnchanged(t *testing.T) {
	if testing.Short() {
		t.Skip("skipped in -short mode: runs the demo")
	}
	_, with, stderr := runArgs("run", "--format", "json", "--by", "platform,tenure,trigger_day", demo)
	_, without, stderr2 := runArgs("run", "--format", "json", "--segments=false", demo)
	var a, b map[string]any
	if err := json.Unmarshal([]byte(with), &a); err != nil {
		t.Fatalf("%v: %s", err, stderr)
	}
	if err := json.Unmarshal([]byte(without), &b); err != nil {
		t.Fatalf("%v: %s", err, stderr2)
	}
	// The three asked for, and the rollout step that a spec with a
	// [rollout] schedule always gets.
	if segs, _ := a["segments"].([]any); len(segs) != 4 {
		t.Fatalf("got %d breakdowns, want 4", len(segs))
	}
	for _, k := range []string{"metrics", "health", "alarms"} {
		ka, _ := json.Marshal(a[k])
		kb, _ := json.Marshal(b[k])
		if d := jsonDiff(t, string(ka), string(kb)); d != "" {
			t.Errorf("%s differs with breakdowns: %s", k, d)
		}
	}
}
