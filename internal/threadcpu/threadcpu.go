// Package threadcpu reads the processor time of single threads of the
// running process: the window measures with it what drawing costs the
// processors, which the wall time does not tell while the optimiser keeps
// every core busy (a thread that waits for a core takes longer, not more).
//
// Only Linux has per-thread processor clocks that every thread of the
// process may read; elsewhere every function reports that it cannot
// measure, and callers fall back to the wall time.
package threadcpu

import "time"

// Thread is the processor time of one thread of the process.
type Thread struct {
	ID   int    // the kernel's thread id
	Name string // the thread's name (the program's own threads carry the program's)
}

// Section runs f on the calling goroutine, held on its thread, and returns
// the processor time f used; ok is false where it cannot be measured.
func Section(f func()) (used time.Duration, ok bool) {
	return section(f)
}

// Self returns the id of the calling thread; ok is false where unknown.
func Self() (id int, ok bool) { return self() }

// Used returns the processor time thread id of this process has used.
func Used(id int) (time.Duration, bool) { return used(id) }

// Process returns the processor time all threads of the process have
// used; benchmarks report it beside the wall time, which a loaded machine
// stretches.
func Process() (time.Duration, bool) { return process() }

// Foreign returns the threads of the process whose name is not the
// program's: threads that libraries started and named, such as the
// rasterising threads of a software OpenGL renderer ("llvmpipe-0").
// The main thread is not among them.
func Foreign() []Thread { return foreign() }
