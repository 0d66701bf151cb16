package window

import (
	"os"
	"time"

	"fyne.io/fyne/v2"
	"fyne.io/fyne/v2/driver/desktop"

	"lodestone/internal/threadcpu"
)

// rescanEvery is how often the meter looks for new threads of the
// graphics library (a software renderer starts its own when the window
// first draws).
const rescanEvery = 2 * time.Second

// frameMeter measures what the window's work costs the processors, for the
// frame pacer. While the optimiser keeps every core busy, the wall time of
// the window's work says little (waiting for a core makes it longer, not
// dearer), so the meter reads processor time where it can.
//
// On Linux, under the desktop driver, the UI runs on the process's main
// thread: the meter then charges each frame with all the time that thread
// and the threads the graphics library started (a software OpenGL
// renderer's rasterisers) used since the previous frame: events, layout,
// drawing the map, painting and presenting the window. Elsewhere it
// measures the sections the window runs (showing a frame, drawing the
// map's points) by their processor time, or by their wall time where
// threads cannot be measured.
type frameMeter struct {
	whole   bool // the UI thread and the library's threads are measured whole
	ui      int  // the UI thread
	threads []threadcpu.Thread
	scanned time.Time
	last    time.Duration
	started bool
}

// newFrameMeter returns the meter; call it on the UI goroutine.
func newFrameMeter() *frameMeter {
	m := &frameMeter{}
	_, desk := fyne.CurrentApp().Driver().(desktop.Driver)
	if id, ok := threadcpu.Self(); ok && desk && id == os.Getpid() {
		if _, ok := threadcpu.Used(id); ok {
			m.whole, m.ui = true, id
		}
	}
	return m
}

// sinceLast returns, when the meter measures whole threads, the processor
// time they used since the previous call (0 at the first).
func (m *frameMeter) sinceLast() (time.Duration, bool) {
	if !m.whole {
		return 0, false
	}
	if now := time.Now(); now.Sub(m.scanned) >= rescanEvery {
		m.threads, m.scanned = threadcpu.Foreign(), now
	}
	total, _ := threadcpu.Used(m.ui)
	for _, t := range m.threads {
		if d, ok := threadcpu.Used(t.ID); ok {
			total += d
		}
	}
	d := total - m.last
	if !m.started || d < 0 { // a library thread ended: start again
		d = 0
	}
	m.last, m.started = total, true
	return d, true
}

// section runs f and returns what it cost: its processor time where
// threads can be measured, else its wall time.
func (m *frameMeter) section(f func()) time.Duration {
	start := time.Now()
	if d, ok := threadcpu.Section(f); ok {
		return d
	}
	return time.Since(start)
}
