// Package parallel runs loops over index ranges on several goroutines.
//
// The split of a range into blocks depends only on the length of the range and
// the number of threads, never on timing, so results that are reduced block by
// block in block order are deterministic for a given thread count.
package parallel

import (
	"context"
	"runtime"
	"sync"
)

// Threads returns n when n ≥ 1 and runtime.GOMAXPROCS(0) otherwise.
func Threads(n int) int {
	if n >= 1 {
		return n
	}
	return runtime.GOMAXPROCS(0)
}

// Blocks splits [0, n) into at most parts contiguous blocks of nearly equal
// length and returns their boundaries: block b is [bounds[b], bounds[b+1]).
// It returns a single bound 0 when n is 0.
func Blocks(n, parts int) []int {
	if parts < 1 {
		parts = 1
	}
	if parts > n {
		parts = n
	}
	if n == 0 {
		return []int{0}
	}
	bounds := make([]int, parts+1)
	for b := 0; b <= parts; b++ {
		bounds[b] = int(int64(n) * int64(b) / int64(parts))
	}
	return bounds
}

// For calls fn(lo, hi, block) for the blocks of [0, n) split for threads
// goroutines (threads < 1 means all processors) and waits for all of them.
// Each block runs on its own goroutine; block numbers run from 0 to the
// number of blocks − 1, so callers can keep one accumulator per block.
func For(n, threads int, fn func(lo, hi, block int)) {
	threads = Threads(threads)
	if n <= 0 {
		return
	}
	bounds := Blocks(n, threads)
	nb := len(bounds) - 1
	if nb == 1 {
		fn(0, n, 0)
		return
	}
	var wg sync.WaitGroup
	wg.Add(nb)
	for b := 0; b < nb; b++ {
		go func(b int) {
			defer wg.Done()
			fn(bounds[b], bounds[b+1], b)
		}(b)
	}
	wg.Wait()
}

// ForChunks hands out chunks of chunk indices from [0, n) to threads
// goroutines dynamically (for uneven work) and calls fn(lo, hi, worker) for
// each. It stops handing out chunks once ctx is done and returns ctx.Err() in
// that case. The order in which chunks are processed is not deterministic, so
// fn must write only to per-index outputs or per-worker accumulators whose
// reduction does not depend on order.
func ForChunks(ctx context.Context, n, chunk, threads int, fn func(lo, hi, worker int)) error {
	threads = Threads(threads)
	if chunk < 1 {
		chunk = 1
	}
	if n <= 0 {
		return ctx.Err()
	}
	var (
		mu   sync.Mutex
		next int
		wg   sync.WaitGroup
	)
	take := func() (int, int, bool) {
		mu.Lock()
		defer mu.Unlock()
		if next >= n || ctx.Err() != nil {
			return 0, 0, false
		}
		lo := next
		next += chunk
		if next > n {
			next = n
		}
		return lo, next, true
	}
	if threads > (n+chunk-1)/chunk {
		threads = (n + chunk - 1) / chunk
	}
	wg.Add(threads)
	for w := 0; w < threads; w++ {
		go func(w int) {
			defer wg.Done()
			for {
				lo, hi, ok := take()
				if !ok {
					return
				}
				fn(lo, hi, w)
			}
		}(w)
	}
	wg.Wait()
	return ctx.Err()
}
