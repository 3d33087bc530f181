// Package timefmt describes how a source stores its time column when the
// column is not a native timestamp: as a number of seconds, milliseconds or
// microseconds since 1970-01-01 UTC, or as text in a strftime-style layout.
// The spec loader parses a source's time_format into a Format; each SQL
// dialect prints the conversion to microseconds for its engine.
package timefmt

import (
	"fmt"
	"strings"
)

// Kind is how a time column is stored.
type Kind uint8

// Storage kinds.
const (
	Native       Kind = iota // a TIMESTAMP (with or without time zone) column
	EpochSeconds             // a number of seconds since 1970-01-01 UTC
	EpochMillis              // a number of milliseconds since 1970-01-01 UTC
	EpochMicros              // a number of microseconds since 1970-01-01 UTC
	Text                     // text in Layout, wall-clock time in the spec's time zone
)

// Format is a parsed time_format. The zero value is Native.
type Format struct {
	Kind   Kind
	Text   string // as written in the spec
	Layout []Part // Text only
}

// Part is one element of a text layout: a field (Verb one of 'Y', 'm',
// 'd', 'H', 'M', 'S', or 'F' for seconds with a six-digit fraction,
// written %S.%f) or, when Verb is 0, literal text.
type Part struct {
	Verb byte
	Lit  string
}

// PerSecond returns how many units of an epoch format make one second
// (1, 1000 or 1000000), or 0 for formats that are not epoch numbers.
func (f Format) PerSecond() int64 {
	switch f.Kind {
	case EpochSeconds:
		return 1
	case EpochMillis:
		return 1000
	case EpochMicros:
		return 1000000
	}
	return 0
}

// Names lists the named formats; any other value is read as a layout.
var Names = []string{"epoch_seconds", "epoch_millis", "epoch_micros"}

// literals are the characters a layout may hold between fields. They mean
// the same in every engine's pattern language once quoted as each needs.
const literals = "-/:. T,_"

// Verbs describes the accepted layout fields, for hints.
const Verbs = "%Y (4-digit year), %m (month 01-12), %d (day 01-31), %H (hour 00-23), %M (minute), %S (second), %S.%f (second with a 6-digit fraction)"

// Parse reads a time_format value: one of Names, or a layout such as
// "%Y-%m-%d %H:%M:%S" that holds at least %Y, %m and %d, each field at
// most once, separated by the characters - / : . space T , _.
func Parse(s string) (Format, error) {
	switch s {
	case "epoch_seconds":
		return Format{Kind: EpochSeconds, Text: s}, nil
	case "epoch_millis":
		return Format{Kind: EpochMillis, Text: s}, nil
	case "epoch_micros":
		return Format{Kind: EpochMicros, Text: s}, nil
	}
	if !strings.Contains(s, "%") {
		return Format{}, fmt.Errorf("unknown time format %q", s)
	}
	f := Format{Kind: Text, Text: s}
	seen := map[byte]bool{}
	for i := 0; i < len(s); {
		c := s[i]
		if c != '%' {
			if !strings.ContainsRune(literals, rune(c)) {
				return Format{}, fmt.Errorf("layout %q: character %q is not allowed between fields", s, string(c))
			}
			if n := len(f.Layout); n > 0 && f.Layout[n-1].Verb == 0 {
				f.Layout[n-1].Lit += string(c)
			} else {
				f.Layout = append(f.Layout, Part{Lit: string(c)})
			}
			i++
			continue
		}
		if i+1 >= len(s) {
			return Format{}, fmt.Errorf("layout %q ends with a lone %%", s)
		}
		v := s[i+1]
		i += 2
		switch v {
		case 'Y', 'm', 'd', 'H', 'M':
		case 'S':
			if strings.HasPrefix(s[i:], ".%f") {
				v = 'F'
				i += 3
			}
		case 'f':
			return Format{}, fmt.Errorf("layout %q: %%f must follow %%S. (write %%S.%%f)", s)
		default:
			return Format{}, fmt.Errorf("layout %q: %%%c is not supported", s, v)
		}
		key := v
		if v == 'F' {
			key = 'S'
		}
		if seen[key] {
			return Format{}, fmt.Errorf("layout %q: %%%c appears twice", s, key)
		}
		seen[key] = true
		f.Layout = append(f.Layout, Part{Verb: v})
	}
	for _, v := range []byte{'Y', 'm', 'd'} {
		if !seen[v] {
			return Format{}, fmt.Errorf("layout %q has no %%%c: a time needs a full date", s, v)
		}
	}
	return f, nil
}

// Render writes the layout in another pattern language: field gives the
// spelling of each verb, lit the spelling of a run of literal characters.
func (f Format) Render(field func(verb byte) string, lit func(s string) string) string {
	var b strings.Builder
	for _, p := range f.Layout {
		if p.Verb == 0 {
			b.WriteString(lit(p.Lit))
		} else {
			b.WriteString(field(p.Verb))
		}
	}
	return b.String()
}
