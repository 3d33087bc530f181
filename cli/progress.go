package cli

import (
	"fmt"
	"io"
	"os"
	"sync"
	"time"
)

// progress shows which stage a long run is in, and for how long, on
// stderr when stderr is a terminal: one line per stage, redrawn in place
// with the elapsed time while the stage runs and left behind with its
// final time. When stderr is not a terminal (a pipeline, a CI log) it
// writes nothing, so logs and redirected output stay clean.
type progress struct {
	w     io.Writer
	on    bool
	every time.Duration // redraw interval; 0 draws only stage starts and ends
	now   func() time.Time

	mu      sync.Mutex
	stage   string
	started time.Time
	runFrom time.Time
	stop    chan struct{}
	done    chan struct{}
}

// newProgress reports to w when w is a terminal.
func newProgress(w io.Writer) *progress {
	return &progress{w: w, on: isTerminal(w), every: 200 * time.Millisecond, now: time.Now}
}

// isTerminal reports whether w is a character device (a terminal).
func isTerminal(w io.Writer) bool {
	f, ok := w.(*os.File)
	if !ok {
		return false
	}
	fi, err := f.Stat()
	return err == nil && fi.Mode()&os.ModeCharDevice != 0
}

// Stage ends the current stage, if any, and starts the named one.
func (p *progress) Stage(name string) {
	if !p.on {
		return
	}
	p.end()
	p.mu.Lock()
	defer p.mu.Unlock()
	if p.runFrom.IsZero() {
		p.runFrom = p.now()
	}
	p.stage, p.started = name, p.now()
	p.draw()
	if p.every > 0 {
		p.stop, p.done = make(chan struct{}), make(chan struct{})
		go p.tick(p.stop, p.done)
	}
}

// Done ends the current stage and prints the run's total time. Calling
// it again does nothing.
func (p *progress) Done() {
	if !p.on {
		return
	}
	p.end()
	p.mu.Lock()
	defer p.mu.Unlock()
	if !p.runFrom.IsZero() {
		fmt.Fprintf(p.w, "assay: done in %s\n", round(p.now().Sub(p.runFrom)))
		p.runFrom = time.Time{}
	}
}

// Pause ends the current stage's line, so that a message can follow on
// a line of its own.
func (p *progress) Pause() {
	if p.on {
		p.end()
	}
}

// end stops the redraws and leaves the current stage's final line.
func (p *progress) end() {
	p.mu.Lock()
	stop, done := p.stop, p.done
	p.stop, p.done = nil, nil
	p.mu.Unlock()
	if stop != nil {
		close(stop)
		<-done
	}
	p.mu.Lock()
	defer p.mu.Unlock()
	if p.stage != "" {
		p.draw()
		fmt.Fprint(p.w, "\n")
		p.stage = ""
	}
}

func (p *progress) tick(stop, done chan struct{}) {
	defer close(done)
	t := time.NewTicker(p.every)
	defer t.Stop()
	for {
		select {
		case <-stop:
			return
		case <-t.C:
			p.mu.Lock()
			p.draw()
			p.mu.Unlock()
		}
	}
}

// draw rewrites the current line: carriage return, text, clear to the end
// of the line. The caller holds p.mu.
func (p *progress) draw() {
	fmt.Fprintf(p.w, "\rassay: %s %s\x1b[K", p.stage, round(p.now().Sub(p.started)))
}

func round(d time.Duration) time.Duration {
	if d < time.Second {
		return d.Round(time.Millisecond)
	}
	return d.Round(100 * time.Millisecond)
}
