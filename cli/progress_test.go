package cli

import (
	"bytes"
	"os"
	"path/filepath"
	"strings"
	"testing"
	"time"
)

// fakeClock advances by step on every reading.
func fakeClock(step time.Duration) func() time.Time {
	t := time.Date(2026, 3, 2, 0, 0, 0, 0, time.UTC)
	return func() time.Time {
		t = t.Add(step)
		return t
	}
}

func TestProgressLines(t *testing.T) {
	for _, tc := range []struct {
		name string
		on   bool
		want string
	}{
		{
			name: "terminal: one line per stage, redrawn in place, then the total",
			on:   true,
			// Each Stage reads the clock for its start and for each draw;
			// with a 100 ms step the elapsed times are multiples of it.
			want: "\rassay: checking 100ms\x1b[K\rassay: checking 200ms\x1b[K\n" +
				"\rassay: querying 100ms\x1b[K\rassay: querying 200ms\x1b[K\n" +
				"assay: done in 700ms\n",
		},
		{name: "not a terminal: silent", on: false, want: ""},
	} {
		t.Run(tc.name, func(t *testing.T) {
			var b bytes.Buffer
			p := &progress{w: &b, on: tc.on, every: 0, now: fakeClock(100 * time.Millisecond)}
			p.Stage("checking")
			p.Stage("querying")
			p.Done()
			p.Done() // a second Done prints nothing more
			if got := b.String(); got != tc.want {
				t.Errorf("got %q\nwant %q", got, tc.want)
			}
		})
	}
}

func TestProgressPauseEndsTheLine(t *testing.T) {
	var b bytes.Buffer
	p := &progress{w: &b, on: true, every: 0, now: fakeClock(time.Millisecond)}
	p.Stage("querying")
	p.Pause()
	b.WriteString("assay: query failed\n")
	if !strings.HasSuffix(b.String(), "\x1b[K\nassay: query failed\n") {
		t.Errorf("an error after Pause should start on a line of its own; got %q", b.String())
	}
}

func TestProgressTicks(t *testing.T) {
	var b bytes.Buffer
	p := &progress{w: &b, on: true, every: time.Millisecond, now: time.Now}
	p.Stage("querying")
	time.Sleep(30 * time.Millisecond)
	p.Done()
	// At least the start, one redraw and the final line.
	if n := strings.Count(b.String(), "\rassay: querying "); n < 3 {
		t.Errorf("got %d draws of the stage line, want at least 3: %q", n, b.String())
	}
}

func TestIsTerminal(t *testing.T) {
	f, err := os.Create(filepath.Join(t.TempDir(), "log"))
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	if isTerminal(f) {
		t.Error("a regular file is not a terminal")
	}
	if isTerminal(&bytes.Buffer{}) {
		t.Error("a buffer is not a terminal")
	}
}
