package prep

import (
	"context"
	"sync"
	"testing"
)

// The chunks of a sparse split cover every row once, in order within each
// block, and none exceeds chunkRows rows or chunkEntries entries unless it is
// a single row.
func TestSparseSplitChunks(t *testing.T) {
	// Rows of 0, 1, 1000, 70000, 3, … entries.
	sizes := []int64{0, 1, 1000, 70000, 3, 0, 0, 40000, 40000, 5}
	for i := 0; i < 2000; i++ {
		sizes = append(sizes, int64(i%300))
	}
	rowPtr := make([]int64, len(sizes)+1)
	for i, s := range sizes {
		rowPtr[i+1] = rowPtr[i] + s
	}
	for _, threads := range []int{1, 2, 5} {
		sp := sparseSplit(rowPtr, threads)
		if sp.bounds[0] != 0 || sp.bounds[sp.blocks()] != len(sizes) {
			t.Fatalf("bounds %v do not cover %d rows", sp.bounds, len(sizes))
		}
		var mu sync.Mutex
		seen := make([]int, len(sizes))
		next := make(map[int]int)
		err := sp.run(context.Background(), func(lo, hi, b int) {
			mu.Lock()
			defer mu.Unlock()
			if want, ok := next[b]; ok && lo != want {
				t.Errorf("block %d: chunk starts at %d, want %d", b, lo, want)
			}
			next[b] = hi
			if hi-lo > chunkRows || (hi-lo > 1 && rowPtr[hi]-rowPtr[lo] > chunkEntries) {
				t.Errorf("chunk [%d, %d) holds %d rows, %d entries", lo, hi, hi-lo, rowPtr[hi]-rowPtr[lo])
			}
			for i := lo; i < hi; i++ {
				seen[i]++
			}
		})
		if err != nil {
			t.Fatal(err)
		}
		for i, n := range seen {
			if n != 1 {
				t.Fatalf("threads=%d: row %d visited %d times", threads, i, n)
			}
		}
	}
}
