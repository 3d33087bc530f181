package timefmt

import (
	"reflect"
	"testing"
)

// TestParseTimeFormat checks accepted and refused time_format values. The
// layout letters follow the C strftime conventions (ISO C 7.27.3.5, from
// memory): %Y year, %m month, %d day, %H hour (24h), %M minute, %S second.
func TestParseTimeFormat(t *testing.T) {
	tests := []struct {
		in      string
		kind    Kind
		per     int64
		layout  []Part
		wantErr string
	}{
		{in: "epoch_seconds", kind: EpochSeconds, per: 1},
		{in: "epoch_millis", kind: EpochMillis, per: 1000},
		{in: "epoch_micros", kind: EpochMicros, per: 1000000},
		{in: "%Y-%m-%d %H:%M:%S", kind: Text, layout: []Part{{Verb: 'Y'}, {Lit: "-"}, {Verb: 'm'}, {Lit: "-"}, {Verb: 'd'}, {Lit: " "}, {Verb: 'H'}, {Lit: ":"}, {Verb: 'M'}, {Lit: ":"}, {Verb: 'S'}}},
		{in: "%Y-%m-%dT%H:%M:%S.%f", kind: Text, layout: []Part{{Verb: 'Y'}, {Lit: "-"}, {Verb: 'm'}, {Lit: "-"}, {Verb: 'd'}, {Lit: "T"}, {Verb: 'H'}, {Lit: ":"}, {Verb: 'M'}, {Lit: ":"}, {Verb: 'F'}}},
		{in: "%d/%m/%Y", kind: Text, layout: []Part{{Verb: 'd'}, {Lit: "/"}, {Verb: 'm'}, {Lit: "/"}, {Verb: 'Y'}}},
		{in: "epoch_nanos", wantErr: `unknown time format "epoch_nanos"`},
		{in: "", wantErr: `unknown time format ""`},
		{in: "%Y-%m", wantErr: `layout "%Y-%m" has no %d: a time needs a full date`},
		{in: "%Y-%m-%d %z", wantErr: `layout "%Y-%m-%d %z": %z is not supported`},
		{in: "%Y-%m-%d'x", wantErr: `layout "%Y-%m-%d'x": character "'" is not allowed between fields`},
		{in: "%Y-%m-%d %f", wantErr: `layout "%Y-%m-%d %f": %f must follow %S. (write %S.%f)`},
		{in: "%Y%Y-%m-%d", wantErr: `layout "%Y%Y-%m-%d": %Y appears twice`},
		{in: "%Y-%m-%d%", wantErr: `layout "%Y-%m-%d%" ends with a lone %`},
	}
	for _, tc := range tests {
		t.Run(tc.in, func(t *testing.T) {
			f, err := Parse(tc.in)
			if tc.wantErr != "" {
				if err == nil || err.Error() != tc.wantErr {
					t.Fatalf("got %v, want error %q", err, tc.wantErr)
				}
				return
			}
			if err != nil {
				t.Fatal(err)
			}
			if f.Kind != tc.kind || f.PerSecond() != tc.per || !reflect.DeepEqual(f.Layout, tc.layout) || f.Text != tc.in {
				t.Errorf("got %+v, want kind %v per %d layout %+v", f, tc.kind, tc.per, tc.layout)
			}
		})
	}
}
