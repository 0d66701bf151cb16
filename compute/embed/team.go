package embed

import (
	"runtime"
	"sync/atomic"
	"time"

	"lodestone/compute/parallel"
)

// team runs the parallel loops of a run on goroutines it keeps for the
// run's length: the caller's and threads − 1 workers. A loop costs no
// allocation when its body is a function value made once (a method value
// stored when the run starts), which is how the optimiser's iterations
// allocate nothing. The blocks of [0, n) are those of parallel.Blocks, so
// sums reduced block by block in block order are those of parallel.For.
//
// A worker that has finished its part waits for the next loop by watching
// the loop counter for up to teamSpin, yielding to other goroutines now and
// then, before it sleeps; the caller waits for the workers the same way. An
// iteration runs some twenty loops with little serial code between them, so
// the workers mostly find the next loop while they watch, without the
// scheduler's hand-over, and a goroutine that wakes meanwhile (a timer, a
// window's) runs in their yields rather than displacing a part of a loop.
type team struct {
	threads int
	workers []teamWorker
	loop    atomic.Uint64 // loops published; a worker's task is valid once it changes
	pending atomic.Int32  // workers yet to report the current loop's task done
	caller  teamSleeper   // the caller, waiting for pending to reach 0

	// The loop of Chunks: its length, chunk size, body and next chunk.
	n, chunk  int
	chunkBody func(lo, hi, worker int)
	next      atomic.Int64
}

// teamWorker is a worker's task for the current loop and its sleeper.
type teamWorker struct {
	task teamTask
	teamSleeper
}

// teamSleeper lets a goroutine sleep until another wakes it: sleeping is
// set before the sleeper's last look at what it waits for, and whoever
// changes that clears it and sends the one wake-up.
type teamSleeper struct {
	sleeping atomic.Bool
	wake     chan struct{} // capacity 1
}

// teamTask is one block of a loop for a worker, with claim a share of the
// chunks of Chunks as worker block, with idle nothing (the loop has fewer
// blocks than the team goroutines), with quit the end of the worker.
type teamTask struct {
	body              func(lo, hi, block int)
	lo, hi, block     int
	claim, idle, quit bool
}

// teamSpin is how long a waiting team goroutine watches before it sleeps.
const teamSpin = 20 * time.Microsecond

// newTeam starts the workers for threads goroutines (threads < 1 means all
// processors). close must be called when the team is no longer needed.
func newTeam(threads int) *team {
	t := &team{threads: parallel.Threads(threads)}
	t.caller.wake = make(chan struct{}, 1)
	t.workers = make([]teamWorker, t.threads-1)
	for w := range t.workers {
		t.workers[w].wake = make(chan struct{}, 1)
		go t.work(&t.workers[w])
	}
	return t
}

// work is a worker's loop: wait for a loop, run its task, count it done.
func (t *team) work(wk *teamWorker) {
	var seen uint64
	for {
		wk.wait(func() bool { return t.loop.Load() != seen })
		seen = t.loop.Load()
		task := wk.task
		switch {
		case task.quit:
			return
		case task.idle:
		case task.claim:
			t.claim(task.block)
		default:
			task.body(task.lo, task.hi, task.block)
		}
		if t.pending.Add(-1) == 0 {
			t.caller.rouse()
		}
	}
}

// wait returns once ready reports true: it watches for teamSpin, then
// sleeps until rouse wakes it.
func (s *teamSleeper) wait(ready func() bool) {
	for {
		start := time.Now()
		for i := 1; ; i++ {
			if ready() {
				return
			}
			if i%64 == 0 {
				if time.Since(start) > teamSpin {
					break
				}
				runtime.Gosched()
			}
		}
		s.sleeping.Store(true)
		if ready() {
			if s.sleeping.CompareAndSwap(true, false) {
				return
			}
			<-s.wake // rouse took the flag: take its wake-up
			return
		}
		<-s.wake
	}
}

// rouse wakes the sleeper if it sleeps or is about to; call it after
// changing what the sleeper waits for.
func (s *teamSleeper) rouse() {
	if s.sleeping.CompareAndSwap(true, false) {
		s.wake <- struct{}{}
	}
}

// start publishes the workers' tasks, set in their task fields, and wakes
// the sleeping workers. Every worker, idle or not, reports its task done,
// so that none still reads its task when finish returns.
func (t *team) start() {
	t.pending.Store(int32(len(t.workers)))
	t.loop.Add(1)
	for w := range t.workers {
		t.workers[w].rouse()
	}
}

// finish waits until the workers have done their tasks.
func (t *team) finish() {
	t.caller.wait(func() bool { return t.pending.Load() == 0 })
}

// blockBound returns the start of block b of [0, n) split into parts
// blocks, as parallel.Blocks computes it.
func blockBound(n, b, parts int) int {
	return int(int64(n) * int64(b) / int64(parts))
}

// For calls body(lo, hi, block) for the blocks of [0, n) split for the
// team's goroutines, as parallel.For does, and waits for all of them. Block
// 0 runs on the caller's goroutine.
func (t *team) For(n int, body func(lo, hi, block int)) {
	if n <= 0 {
		return
	}
	parts := min(t.threads, n)
	if parts == 1 {
		body(0, n, 0)
		return
	}
	for w := range t.workers {
		if b := w + 1; b < parts {
			t.workers[w].task = teamTask{body: body, lo: blockBound(n, b, parts), hi: blockBound(n, b+1, parts), block: b}
		} else {
			t.workers[w].task = teamTask{idle: true}
		}
	}
	t.start()
	body(0, blockBound(n, 1, parts), 0)
	t.finish()
}

// Split calls body(bounds[b], bounds[b+1], b) for each block b of the given
// boundaries, at most as many blocks as the team has goroutines, and waits
// for all of them. Block 0 runs on the caller's goroutine.
func (t *team) Split(bounds []int, body func(lo, hi, block int)) {
	parts := len(bounds) - 1
	if parts <= 0 {
		return
	}
	if parts == 1 {
		body(bounds[0], bounds[1], 0)
		return
	}
	for w := range t.workers {
		if b := w + 1; b < parts {
			t.workers[w].task = teamTask{body: body, lo: bounds[b], hi: bounds[b+1], block: b}
		} else {
			t.workers[w].task = teamTask{idle: true}
		}
	}
	t.start()
	body(bounds[0], bounds[1], 0)
	t.finish()
}

// Chunks calls body(lo, hi, worker) for the chunks [k·chunk, (k+1)·chunk)
// of [0, n), handed out to the team's goroutines as they come free
// (worker numbers the goroutine: 0 the caller's, 1 … threads − 1 the
// workers'), and waits for all of them. On a machine whose cores run at
// unequal speed, or are shared, the fast ones take more chunks. Which
// goroutine takes a chunk depends on timing, so body must write only to
// outputs of its own indices and to per-worker scratch: then the results
// do not depend on it.
func (t *team) Chunks(n, chunk int, body func(lo, hi, worker int)) {
	if n <= 0 {
		return
	}
	workers := min(t.threads, (n+chunk-1)/chunk)
	t.n, t.chunk, t.chunkBody = n, chunk, body
	t.next.Store(0)
	for w := range t.workers {
		if b := w + 1; b < workers {
			t.workers[w].task = teamTask{block: b, claim: true}
		} else {
			t.workers[w].task = teamTask{idle: true}
		}
	}
	t.start()
	t.claim(0)
	t.finish()
	t.chunkBody = nil
}

// claim runs the chunks of Chunks that are left, as worker.
func (t *team) claim(worker int) {
	for {
		lo := int(t.next.Add(int64(t.chunk))) - t.chunk
		if lo >= t.n {
			return
		}
		t.chunkBody(lo, min(lo+t.chunk, t.n), worker)
	}
}

// close ends the workers. The team must not be used afterwards.
func (t *team) close() {
	for w := range t.workers {
		t.workers[w].task = teamTask{quit: true}
	}
	t.start()
}
