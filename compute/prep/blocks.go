package prep

import (
	"context"
	"sort"

	"lodestone/compute/parallel"
	"lodestone/compute/progress"
)

// Work is split twice: rows into blocks, one goroutine each, and each block
// into chunks, between which a worker looks at its context. A chunk holds at
// most chunkRows rows and, for a sparse matrix, at most about chunkEntries
// stored entries (always at least one row): at tens of nanoseconds per entry
// a chunk takes a few milliseconds, well inside the 50 ms in which a
// cancelled stage must stop.
const (
	chunkRows    = 256
	chunkEntries = 1 << 16
)

// split is a partition of rows [0, n) into blocks and chunks.
type split struct {
	bounds []int   // block b is [bounds[b], bounds[b+1])
	rowPtr []int64 // when not nil, chunks are also cut at chunkEntries entries
	rows   int     // rows per chunk at most
}

// sparseSplit splits the rows of a sparse matrix with row pointers rowPtr
// into at most threads blocks of about equal cost, counting a row's cost as
// one plus its stored entries. The split depends only on rowPtr and threads.
func sparseSplit(rowPtr []int64, threads int) split {
	n := len(rowPtr) - 1
	s := split{rowPtr: rowPtr, rows: chunkRows}
	if n == 0 {
		s.bounds = []int{0}
		return s
	}
	parts := max(1, min(threads, n))
	cost := func(r int) int64 { return rowPtr[r] + int64(r) }
	total := cost(n)
	s.bounds = make([]int, parts+1)
	for b := 1; b < parts; b++ {
		target := total * int64(b) / int64(parts)
		r := sort.Search(n+1, func(r int) bool { return cost(r) >= target })
		s.bounds[b] = max(r, s.bounds[b-1])
	}
	s.bounds[parts] = n
	return s
}

// evenSplit splits n rows into at most threads blocks of equal length, with
// chunks of at most rows rows.
func evenSplit(n, threads, rows int) split {
	return split{bounds: parallel.Blocks(n, threads), rows: max(1, rows)}
}

// blocks returns the number of blocks.
func (s split) blocks() int { return len(s.bounds) - 1 }

// run runs fn on one goroutine per block. Each goroutine walks its block in
// order, chunk by chunk, calling fn(lo, hi, block) for each chunk and
// stopping early once ctx is done. run returns ctx.Err().
func (s split) run(ctx context.Context, fn func(lo, hi, block int)) error {
	nb := s.blocks()
	parallel.For(nb, nb, func(b, _, _ int) {
		for lo, end := s.bounds[b], s.bounds[b+1]; lo < end; {
			if ctx.Err() != nil {
				return
			}
			hi := min(lo+s.rows, end)
			if s.rowPtr != nil {
				limit := s.rowPtr[lo] + chunkEntries
				hi = lo + 1 + sort.Search(hi-lo-1, func(k int) bool { return s.rowPtr[lo+1+k+1] > limit })
			}
			fn(lo, hi, b)
			lo = hi
		}
	})
	return ctx.Err()
}

// firstError returns the first non-nil error of errs (one per block, blocks
// in row order), so that the error reported is the one at the smallest row
// whatever the timing.
func firstError(errs []*Error) error {
	for _, e := range errs {
		if e != nil {
			return e
		}
	}
	return nil
}

// steps splits the progress of a stage made of n passes into n equal parts
// of a thousand units each.
type steps struct {
	f progress.Func
	n int64
}

// pass returns a Counter for pass i (0-based) of rows units that reports
// through s.
func (s steps) pass(i int, rows int) *progress.Counter {
	const unit = 1000
	f := s.f.Scale(int64(i)*unit, int64(i+1)*unit, s.n*unit)
	return progress.NewCounter(f, int64(rows), int64(rows/100))
}

// finish reports the whole stage as done.
func (s steps) finish() {
	s.f.Report(s.n*1000, s.n*1000)
}
