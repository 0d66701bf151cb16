package parallel

import (
	"context"
	"sync/atomic"
	"testing"
)

func TestBlocksCoverRange(t *testing.T) {
	for _, n := range []int{0, 1, 2, 7, 100, 1001} {
		for _, parts := range []int{0, 1, 2, 3, 8, 2000} {
			b := Blocks(n, parts)
			if b[0] != 0 || b[len(b)-1] != n {
				t.Fatalf("Blocks(%d,%d) = %v: does not span [0,%d)", n, parts, b, n)
			}
			for i := 1; i < len(b); i++ {
				if n > 0 && b[i] <= b[i-1] {
					t.Fatalf("Blocks(%d,%d) = %v: empty or reversed block", n, parts, b)
				}
			}
		}
	}
}

func TestForVisitsEveryIndexOnce(t *testing.T) {
	const n = 10007
	seen := make([]int32, n)
	For(n, 3, func(lo, hi, _ int) {
		for i := lo; i < hi; i++ {
			atomic.AddInt32(&seen[i], 1)
		}
	})
	for i, s := range seen {
		if s != 1 {
			t.Fatalf("index %d visited %d times", i, s)
		}
	}
}

func TestForChunksStopsOnCancel(t *testing.T) {
	ctx, cancel := context.WithCancel(context.Background())
	var visited atomic.Int64
	err := ForChunks(ctx, 1000, 10, 2, func(lo, hi, _ int) {
		visited.Add(int64(hi - lo))
		cancel()
	})
	if err == nil {
		t.Fatal("ForChunks returned nil after cancel")
	}
	if visited.Load() >= 1000 {
		t.Fatalf("ForChunks kept going after cancel: %d visited", visited.Load())
	}
}
