package prep

import (
	"context"
	"sort"

	"lodestone/compute/parallel"
	"lodestone/compute/progress"
)

// chunkRows is the number of rows a worker handles between two looks at its
// context. At a few thousand stored entries per row and tens of nanoseconds
// per entry, a chunk takes a few milliseconds, well inside the 50 ms in which
// a cancelled stage must stop.
const chunkRows = 256

// costBounds splits the rows of a sparse matrix with row pointers rowPtr into
// at most parts contiguous blocks of about equal cost, counting a row's cost
// as one plus its stored entries. Block b is [bounds[b], bounds[b+1]). The
// split depends only on rowPtr and parts.
func costBounds(rowPtr []int64, parts int) []int {
	n := len(rowPtr) - 1
	if n == 0 {
		return []int{0}
	}
	parts = max(1, min(parts, n))
	cost := func(r int) int64 { return rowPtr[r] + int64(r) }
	total := cost(n)
	bounds := make([]int, parts+1)
	for b := 1; b < parts; b++ {
		target := total * int64(b) / int64(parts)
		r := sort.Search(n+1, func(r int) bool { return cost(r) >= target })
		bounds[b] = max(r, bounds[b-1])
	}
	bounds[parts] = n
	return bounds
}

// runBlocks runs fn on one goroutine per block of bounds (as made by
// costBounds or parallel.Blocks). Each goroutine walks its block in order in
// chunks of at most chunkRows rows, calling fn(lo, hi, block) for each chunk
// and stopping early once ctx is done. It returns ctx.Err().
func runBlocks(ctx context.Context, bounds []int, fn func(lo, hi, block int)) error {
	nb := len(bounds) - 1
	parallel.For(nb, nb, func(b, _, _ int) {
		for lo := bounds[b]; lo < bounds[b+1]; lo += chunkRows {
			if ctx.Err() != nil {
				return
			}
			fn(lo, min(lo+chunkRows, bounds[b+1]), b)
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
