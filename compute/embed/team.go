package embed

import (
	"sync"
	"sync/atomic"

	"lodestone/compute/parallel"
)

// team runs the parallel loops of a run on goroutines it keeps for the
// run's length: the caller's and threads − 1 workers. A loop costs no
// allocation when its body is a function value made once (a method value
// stored when the run starts), which is how the optimiser's iterations
// allocate nothing. The blocks of [0, n) are those of parallel.Blocks, so
// sums reduced block by block in block order are those of parallel.For.
type team struct {
	threads int
	work    []chan teamTask
	done    *sync.WaitGroup

	// The loop of Chunks: its length, chunk size, body and next chunk.
	n, chunk  int
	chunkBody func(lo, hi, worker int)
	next      atomic.Int64
}

// teamTask is one block of a loop for a worker, or with claim, a share of
// the chunks of Chunks as worker block.
type teamTask struct {
	body          func(lo, hi, block int)
	lo, hi, block int
	claim         bool
}

// newTeam starts the workers for threads goroutines (threads < 1 means all
// processors). close must be called when the team is no longer needed.
func newTeam(threads int) *team {
	t := &team{threads: parallel.Threads(threads), done: new(sync.WaitGroup)}
	t.work = make([]chan teamTask, t.threads-1)
	for w := range t.work {
		work := make(chan teamTask)
		t.work[w] = work
		go func() {
			for task := range work {
				if task.claim {
					t.claim(task.block)
				} else {
					task.body(task.lo, task.hi, task.block)
				}
				t.done.Done()
			}
		}()
	}
	return t
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
	t.done.Add(parts - 1)
	for b := 1; b < parts; b++ {
		t.work[b-1] <- teamTask{body: body, lo: blockBound(n, b, parts), hi: blockBound(n, b+1, parts), block: b}
	}
	body(0, blockBound(n, 1, parts), 0)
	t.done.Wait()
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
	t.done.Add(parts - 1)
	for b := 1; b < parts; b++ {
		t.work[b-1] <- teamTask{body: body, lo: bounds[b], hi: bounds[b+1], block: b}
	}
	body(bounds[0], bounds[1], 0)
	t.done.Wait()
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
	t.done.Add(workers - 1)
	for w := 1; w < workers; w++ {
		t.work[w-1] <- teamTask{block: w, claim: true}
	}
	t.claim(0)
	t.done.Wait()
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
	for _, w := range t.work {
		close(w)
	}
}
