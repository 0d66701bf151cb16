package cli

import (
	"fmt"
	"io"
	"strings"
	"sync"
	"time"
)

// bar draws a one-line progress bar on a terminal stream: the stage, a bar,
// the percentage and the time since the command started. It redraws at most
// ten times a second and starts a new line when the stage changes.
type bar struct {
	w     io.Writer
	mu    sync.Mutex
	stage string
	frac  float64
	last  time.Time
	start time.Time
}

// newBar returns a bar writing to w, or nil (which reports nothing) when
// quiet is set.
func newBar(w io.Writer, quiet bool) *bar {
	if quiet {
		return nil
	}
	return &bar{w: w, start: time.Now()}
}

// report shows that stage has done done of total units.
func (b *bar) report(stage string, done, total int64) {
	if b == nil {
		return
	}
	b.mu.Lock()
	defer b.mu.Unlock()
	frac := 1.0
	if total > 0 {
		frac = float64(done) / float64(total)
	}
	now := time.Now()
	if stage == b.stage && now.Sub(b.last) < 100*time.Millisecond && frac < 1 {
		b.frac = frac
		return
	}
	if stage != b.stage && b.stage != "" {
		b.draw(b.frac)
		fmt.Fprintln(b.w)
	}
	b.stage, b.frac, b.last = stage, frac, now
	b.draw(frac)
}

func (b *bar) draw(frac float64) {
	const width = 30
	n := int(frac*width + 0.5)
	if n > width {
		n = width
	}
	fmt.Fprintf(b.w, "\r%-16s [%s%s] %3.0f%% %6.1fs", b.stage, strings.Repeat("#", n), strings.Repeat(".", width-n),
		100*frac, time.Since(b.start).Seconds())
}

// finish ends the bar's line.
func (b *bar) finish() {
	if b == nil {
		return
	}
	b.mu.Lock()
	defer b.mu.Unlock()
	if b.stage != "" {
		b.draw(b.frac)
		fmt.Fprintln(b.w)
	}
}
