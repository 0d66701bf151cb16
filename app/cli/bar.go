package cli

import (
	"fmt"
	"io"
	"strings"
	"sync"
	"time"

	"lodestone/internal/term"
)

// plainEvery is how often a long stage writes a line when progress goes to a
// file or a pipe.
const plainEvery = 5 * time.Second

// bar reports a command's progress and notices on its error stream.
//
// On a terminal it draws one line per stage, redrawn in place at most ten
// times a second: the stage, a bar, the percentage and the time since the
// command started. Written to a file or a pipe it writes plain lines
// instead: one when a stage ends, and one every plainEvery while a long
// stage runs, so that a log reads line by line.
//
// Notices (note, warn) are lines of their own between the stages.
type bar struct {
	w     io.Writer
	tty   bool // redraw in place
	quiet bool // report neither progress nor notes (warnings still)

	mu    sync.Mutex
	stage string
	frac  float64
	last  time.Time // last redraw (terminal) or last line (plain)
	start time.Time
	drawn bool // terminal: the current line holds a bar
}

// newBar returns a bar writing to w; quiet keeps it to warnings.
func newBar(w io.Writer, quiet bool) *bar {
	return &bar{w: w, tty: term.IsTerminal(w), quiet: quiet, start: time.Now()}
}

// report shows that stage has done done of total units.
func (b *bar) report(stage string, done, total int64) {
	if b.quiet {
		return
	}
	b.mu.Lock()
	defer b.mu.Unlock()
	frac := 1.0
	if total > 0 {
		frac = min(1, float64(done)/float64(total))
	}
	now := time.Now()
	if stage != b.stage {
		b.endStage()
		b.stage, b.frac, b.last = stage, frac, now
		if b.tty {
			b.draw()
		}
		return
	}
	finished := frac == 1 && b.frac < 1
	b.frac = frac
	switch {
	case b.tty && (now.Sub(b.last) >= 100*time.Millisecond || finished):
		b.last = now
		b.draw()
	case !b.tty && now.Sub(b.last) >= plainEvery:
		b.last = now
		b.line()
	}
}

// endStage closes the current stage's line: the terminal's bar gets its
// final state and a line break, a plain stream one line.
func (b *bar) endStage() {
	if b.stage == "" {
		return
	}
	if b.tty {
		if b.drawn {
			b.draw()
			fmt.Fprintln(b.w)
			b.drawn = false
		}
	} else {
		b.line()
	}
	b.stage = ""
}

func (b *bar) draw() {
	const width = 30
	n := min(int(b.frac*width+0.5), width)
	fmt.Fprintf(b.w, "\r%-20s [%s%s] %3.0f%% %6.1fs", b.stage, strings.Repeat("#", n), strings.Repeat(".", width-n),
		100*b.frac, time.Since(b.start).Seconds())
	b.drawn = true
}

func (b *bar) line() {
	fmt.Fprintf(b.w, "%-20s %3.0f%% %6.1fs\n", b.stage, 100*b.frac, time.Since(b.start).Seconds())
}

// note writes a line that tells what the command chose or did, unless the
// bar is quiet.
func (b *bar) note(format string, args ...any) {
	if !b.quiet {
		b.notice("", format, args...)
	}
}

// warn writes a warning line, also when the bar is quiet.
func (b *bar) warn(format string, args ...any) { b.notice("warning: ", format, args...) }

func (b *bar) notice(prefix, format string, args ...any) {
	b.mu.Lock()
	defer b.mu.Unlock()
	if b.tty && b.drawn {
		fmt.Fprint(b.w, "\r\x1b[K")
	}
	fmt.Fprintf(b.w, "%s%s\n", prefix, oneLine(fmt.Sprintf(format, args...)))
	if b.tty && b.drawn {
		b.draw()
	}
}

// finish ends the current stage. It may be called more than once.
func (b *bar) finish() {
	b.mu.Lock()
	defer b.mu.Unlock()
	b.endStage()
}
