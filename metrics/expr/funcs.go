package expr

import (
	"sort"
	"strconv"
	"strings"
)

// funcSpec describes one allow-listed function: its arity bounds (max < 0
// means variadic), the kinds its arguments must have, and its result kind.
type funcSpec struct {
	min, max int
	// args gives the required kind of each argument; the last entry repeats
	// for variadic functions. A nil args means "all arguments of one common
	// kind" (coalesce, nullif, greatest, least).
	args   []Kind
	result Kind // for nil args: KindUnknown means "the common argument kind"
}

// funcs is the allow-list. These are the functions with one meaning that
// every mainstream warehouse engine either has under the same name or that a
// dialect printer can spell differently through Style.Func. Semantics assay
// assumes, and which printers must preserve:
//
//   - length is the length in characters, not bytes;
//   - substr(x, start[, len]) counts from 1, in characters;
//   - trim removes leading and trailing spaces;
//   - concat returns NULL if any argument is NULL (as the standard || does);
//   - mod(a, b) and a % b take the sign of a.
//
// Engines disagree on how round breaks ties for DOUBLE PRECISION arguments;
// assay makes no promise there.
var funcs = map[string]funcSpec{
	"abs":      {1, 1, []Kind{KindNumeric}, KindNumeric},
	"ceil":     {1, 1, []Kind{KindNumeric}, KindNumeric},
	"floor":    {1, 1, []Kind{KindNumeric}, KindNumeric},
	"round":    {1, 2, []Kind{KindNumeric, KindNumeric}, KindNumeric},
	"sqrt":     {1, 1, []Kind{KindNumeric}, KindNumeric},
	"ln":       {1, 1, []Kind{KindNumeric}, KindNumeric},
	"exp":      {1, 1, []Kind{KindNumeric}, KindNumeric},
	"power":    {2, 2, []Kind{KindNumeric, KindNumeric}, KindNumeric},
	"mod":      {2, 2, []Kind{KindNumeric, KindNumeric}, KindNumeric},
	"sign":     {1, 1, []Kind{KindNumeric}, KindNumeric},
	"coalesce": {1, -1, nil, KindUnknown},
	"nullif":   {2, 2, nil, KindUnknown},
	"greatest": {2, -1, nil, KindUnknown},
	"least":    {2, -1, nil, KindUnknown},
	"lower":    {1, 1, []Kind{KindString}, KindString},
	"upper":    {1, 1, []Kind{KindString}, KindString},
	"trim":     {1, 1, []Kind{KindString}, KindString},
	"length":   {1, 1, []Kind{KindString}, KindNumeric},
	"substr":   {2, 3, []Kind{KindString, KindNumeric, KindNumeric}, KindString},
	"concat":   {1, -1, []Kind{KindString}, KindString},
	// The local-time functions read a time column in the experiment's
	// time zone (see LocalFuncs).
	"local_date":    {1, 1, []Kind{KindUnknown}, KindTemporal},
	"local_week":    {1, 1, []Kind{KindUnknown}, KindTemporal},
	"local_hour":    {1, 1, []Kind{KindUnknown}, KindNumeric},
	"local_weekday": {1, 1, []Kind{KindUnknown}, KindNumeric},
}

// LocalFuncs are the functions that turn an instant into a calendar
// field as seen in the experiment's time zone, whatever the engine's
// session time zone:
//
//   - local_date(t): the DATE;
//   - local_week(t): the DATE of the Monday that starts t's ISO 8601 week;
//   - local_hour(t): the hour, 0 to 23;
//   - local_weekday(t): the ISO 8601 weekday, 1 (Monday) to 7 (Sunday).
//
// Their one argument is a column name. The spec loader records the zone
// and the column's stored format in Func.Time; dialect printers render
// them through LocalStyle.
var LocalFuncs = []string{"local_date", "local_week", "local_hour", "local_weekday"}

// IsLocal reports whether name is one of LocalFuncs.
func IsLocal(name string) bool {
	for _, f := range LocalFuncs {
		if f == name {
			return true
		}
	}
	return false
}

// funcAliases maps accepted alternative spellings to the canonical name.
var funcAliases = map[string]string{
	"ceiling":          "ceil",
	"pow":              "power",
	"char_length":      "length",
	"character_length": "length",
	"substring":        "substr",
}

// canonicalFunc returns the canonical allow-listed name for name (any case),
// or "" if the function is not allowed.
func canonicalFunc(name string) string {
	l := strings.ToLower(name)
	if a, ok := funcAliases[l]; ok {
		return a
	}
	if _, ok := funcs[l]; ok {
		return l
	}
	return ""
}

// AllowedFuncs returns the canonical names of the allow-listed functions,
// sorted.
func AllowedFuncs() []string {
	out := make([]string, 0, len(funcs))
	for name := range funcs {
		out = append(out, name)
	}
	sort.Strings(out)
	return out
}

// arityText describes the accepted argument counts of spec, e.g. "1 or 2".
func arityText(s funcSpec) string {
	switch {
	case s.max < 0:
		return "at least " + strconv.Itoa(s.min)
	case s.min == s.max:
		return strconv.Itoa(s.min)
	case s.max == s.min+1:
		return strconv.Itoa(s.min) + " or " + strconv.Itoa(s.max)
	}
	return strconv.Itoa(s.min) + " to " + strconv.Itoa(s.max)
}
