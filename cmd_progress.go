package main

import (
	"fmt"
	"io"
	"os"
	"sync"
	"time"

	"github.com/formwright/formwright/runtime/problem"
)

// progress shows long work on stderr: a line that rewrites itself where
// stderr is a terminal, plain lines otherwise, at most one a second unless
// the phase changes; --quiet silences it.
type progress struct {
	mu    sync.Mutex
	w     io.Writer
	live  bool // w is a terminal
	quiet bool
	last  time.Time
	what  string
	shown bool // a live line is on screen
}

func newProgress(w io.Writer, quiet bool) *progress {
	p := &progress{w: w, quiet: quiet}
	if f, ok := w.(*os.File); ok {
		if fi, err := f.Stat(); err == nil && fi.Mode()&os.ModeCharDevice != 0 {
			p.live = true
		}
	}
	return p
}

// say shows one progress message; phase groups messages, and a new phase
// is always shown.
func (p *progress) say(phase, format string, args ...any) {
	if p == nil || p.quiet {
		return
	}
	p.mu.Lock()
	defer p.mu.Unlock()
	now := time.Now()
	if phase == p.what && now.Sub(p.last) < time.Second {
		return
	}
	p.what, p.last = phase, now
	msg := fmt.Sprintf(format, args...)
	if p.live {
		fmt.Fprintf(p.w, "\r\033[K  %s", msg)
		p.shown = true
		return
	}
	fmt.Fprintf(p.w, "  %s\n", msg)
}

// done ends a live line, so the next output starts on a fresh line.
func (p *progress) done() {
	if p == nil {
		return
	}
	p.mu.Lock()
	defer p.mu.Unlock()
	if p.shown {
		fmt.Fprint(p.w, "\r\033[K")
		p.shown = false
	}
}

// solveEvents reports the phases of a solve.
func (p *progress) solveEvents(label string) func(problem.Event) {
	return func(e problem.Event) {
		switch e.Phase {
		case "assembly", "solve":
			if e.Step > 1 {
				p.say(e.Phase, "%s%s, nonlinear iteration %d (%d dofs)", label, e.Phase, e.Step, e.Of)
				return
			}
		}
		switch {
		case e.Detail != "":
			p.say(e.Phase, "%s%s: %s", label, e.Phase, e.Detail)
		case e.Phase == "factor" || e.Phase == "amg-setup":
			p.say(e.Phase, "%s%s %d of %d", label, e.Phase, e.Step, e.Of)
		case e.Of > 0:
			p.say(e.Phase, "%s%s (%d dofs)", label, e.Phase, e.Of)
		default:
			p.say(e.Phase, "%s%s", label, e.Phase)
		}
	}
}

// iterations reports the iterations of a linear solver.
func (p *progress) iterations(it int, r float64) {
	p.say("iterations", "iteration %d, relative residual %.3e", it, r)
}
