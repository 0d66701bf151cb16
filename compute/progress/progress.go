// Package progress defines how long computations report how far they have got.
//
// Every stage of Lodestone (reading files, preparing features, finding
// neighbours, embedding) accepts a Func and calls it from time to time with the
// units done so far and the units in all. Units depend on the stage: bytes for
// readers, iterations for the optimiser. A nil Func is allowed and ignored.
package progress

import "sync/atomic"

// Func receives the progress of a computation: done units of total.
// It may be called from any goroutine and must return quickly.
type Func func(done, total int64)

// Report calls f with done and total when f is not nil.
func (f Func) Report(done, total int64) {
	if f != nil {
		f(done, total)
	}
}

// Scale returns a Func that maps the progress of one step onto the range
// [from, to) of a larger task of total units, so that several steps can report
// through one bar. It returns nil when f is nil.
func (f Func) Scale(from, to, total int64) Func {
	if f == nil {
		return nil
	}
	return func(done, stepTotal int64) {
		if stepTotal <= 0 {
			f(from, total)
			return
		}
		f(from+(to-from)*done/stepTotal, total)
	}
}

// Counter accumulates progress from several goroutines and forwards it to a
// Func at most once every Every units, so that hot loops can count cheaply.
type Counter struct {
	f     Func
	total int64
	every int64
	done  atomic.Int64
	last  atomic.Int64
}

// NewCounter returns a Counter that reports to f out of total units, at most
// once every every units (every ≥ 1).
func NewCounter(f Func, total, every int64) *Counter {
	if every < 1 {
		every = 1
	}
	return &Counter{f: f, total: total, every: every}
}

// Add records n more units done and reports when at least every units have
// passed since the last report.
func (c *Counter) Add(n int64) {
	d := c.done.Add(n)
	if c.f == nil {
		return
	}
	last := c.last.Load()
	if d-last >= c.every && c.last.CompareAndSwap(last, d) {
		c.f(d, c.total)
	}
}

// Finish reports the total as done.
func (c *Counter) Finish() {
	c.f.Report(c.total, c.total)
}
