package embed

import (
	"slices"
	"sync"
	"sync/atomic"
	"testing"
	"time"

	"lodestone/compute/parallel"
)

// TestTeamBlocks checks that a team splits a range into the blocks of
// parallel.Blocks, each passed once with its block number, so that sums
// reduced in block order are those of parallel.For.
func TestTeamBlocks(t *testing.T) {
	for _, threads := range []int{1, 2, 3, 8} {
		tm := testTeam(t, threads)
		for _, n := range []int{0, 1, 2, 5, 7, 1000, 4097} {
			var mu sync.Mutex
			var got [][3]int
			tm.For(n, func(lo, hi, block int) {
				mu.Lock()
				got = append(got, [3]int{lo, hi, block})
				mu.Unlock()
			})
			slices.SortFunc(got, func(a, b [3]int) int { return a[2] - b[2] })
			var want [][3]int
			if n > 0 {
				bounds := parallel.Blocks(n, threads)
				for b := 0; b+1 < len(bounds); b++ {
					want = append(want, [3]int{bounds[b], bounds[b+1], b})
				}
			}
			if !slices.Equal(got, want) {
				t.Fatalf("threads %d, n %d: blocks %v, want %v", threads, n, got, want)
			}
		}
	}
}

// TestIterationAllocatesNothing checks that an iteration of the optimiser
// allocates nothing once its buffers fit the map: with the exact repulsion
// (under exactBelow points), the grid alone and the grid with the near
// field, with and without the KL estimate. The learning rate is 0 so that
// the map, and with it the grid, stays as it is between the measured
// iterations (a grid that grows must grow its buffers); every stage of the
// iteration still runs.
func TestIterationAllocatesNothing(t *testing.T) {
	cases := []struct {
		name   string
		n      int
		extent float64
		near   bool
	}{
		{"exact", 600, 30, false},
		{"grid", 3000, 6, false},
		{"near field", 5000, 60, true},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			P := mixtureAffinity(t, c.n)
			a, err := checkAffinity(P, c.n, 2)
			if err != nil {
				t.Fatal(err)
			}
			p := Params{Attraction: 1, Threads: 2}
			if err := p.check(); err != nil {
				t.Fatal(err)
			}
			o := newOptimizer(a, clusteredLayout(c.n, c.extent, 4), p)
			defer o.close()
			for _, kl := range []bool{false, true} {
				o.iterate(1, lateMomentum, 0, kl, never)
				if o.fft != nil && o.fft.near != c.near {
					t.Fatalf("near field %v, want %v", o.fft.near, c.near)
				}
				if allocs := testing.AllocsPerRun(5, func() { o.iterate(1, lateMomentum, 0, kl, never) }); allocs != 0 {
					t.Errorf("KL %v: %g allocations per iteration", kl, allocs)
				}
			}
		})
	}
}

// TestRowBlocks checks that the attraction's blocks of rows cover the rows
// in order and hold about equal numbers of stored entries: each block's
// count is within one row's entries of the even share.
func TestRowBlocks(t *testing.T) {
	P := mixtureAffinity(t, 3000)
	var widest int64
	for i := 0; i < P.Rows; i++ {
		widest = max(widest, P.RowPtr[i+1]-P.RowPtr[i])
	}
	for _, parts := range []int{1, 2, 3, 7} {
		b := rowBlocks(P, parts)
		if len(b) != parts+1 || b[0] != 0 || b[parts] != P.Rows {
			t.Fatalf("%d parts: bounds %v", parts, b)
		}
		share := P.RowPtr[P.Rows] / int64(parts)
		for k := 0; k < parts; k++ {
			if b[k+1] < b[k] {
				t.Fatalf("%d parts: bounds %v out of order", parts, b)
			}
			if got := P.RowPtr[b[k+1]] - P.RowPtr[b[k]]; got < share-widest || got > share+widest {
				t.Errorf("%d parts: block %d holds %d entries, share %d (widest row %d)", parts, k, got, share, widest)
			}
		}
	}
}

// TestTeamChunks checks that Chunks passes every index of [0, n) once, in
// chunks of the given size, with worker numbers below the team's size.
func TestTeamChunks(t *testing.T) {
	for _, threads := range []int{1, 2, 3} {
		tm := testTeam(t, threads)
		for _, c := range []struct{ n, chunk int }{{0, 4}, {1, 4}, {4, 4}, {5, 4}, {1000, 7}, {70000, 1024}} {
			seen := make([]int32, c.n)
			var bad atomic.Bool
			tm.Chunks(c.n, c.chunk, func(lo, hi, worker int) {
				if worker < 0 || worker >= threads || lo%c.chunk != 0 || hi != min(lo+c.chunk, c.n) {
					bad.Store(true)
				}
				for i := lo; i < hi; i++ {
					atomic.AddInt32(&seen[i], 1)
				}
			})
			if bad.Load() {
				t.Fatalf("threads %d, n %d: a chunk or worker out of range", threads, c.n)
			}
			for i, v := range seen {
				if v != 1 {
					t.Fatalf("threads %d, n %d: index %d passed %d times", threads, c.n, i, v)
				}
			}
		}
	}
}

// TestTeamSleepers runs loops of every kind on teams whose workers find the
// next loop while they watch for it (no pause), after they have gone to
// sleep (a pause of several teamSpin), and in between, and checks that
// every index is passed once and that the caller returns only after its
// workers' blocks: the sums written by the blocks are complete when For,
// Split and Chunks return. Run with -race it also checks the hand-over of
// the tasks.
func TestTeamSleepers(t *testing.T) {
	for _, threads := range []int{2, 3, 5} {
		tm := testTeam(t, threads)
		for round, pause := range []time.Duration{0, 10 * teamSpin, teamSpin, 0, 3 * teamSpin} {
			time.Sleep(pause)
			for kind := 0; kind < 3; kind++ {
				n := 1000 + 37*round
				sums := make([]int64, threads)
				body := func(lo, hi, block int) {
					if kind == 2 && round%2 == 1 {
						time.Sleep(teamSpin) // the caller sleeps while it waits
					}
					for i := lo; i < hi; i++ {
						sums[block] += int64(i)
					}
				}
				switch kind {
				case 0:
					tm.For(n, body)
				case 1:
					tm.Split(parallel.Blocks(n, threads), body)
				case 2:
					var mu sync.Mutex
					tm.Chunks(n, 64, func(lo, hi, worker int) {
						mu.Lock()
						defer mu.Unlock()
						body(lo, hi, worker)
					})
				}
				var total int64
				for _, s := range sums {
					total += s
				}
				if want := int64(n) * int64(n-1) / 2; total != want {
					t.Fatalf("threads %d, pause %v, loop kind %d: sum %d, want %d", threads, pause, kind, total, want)
				}
			}
		}
	}
}
