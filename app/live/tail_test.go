package live

import (
	"context"
	"math"
	"slices"
	"testing"
)

// TestTailTurnsReplay turns both controls of the real optimiser — the tail
// down to 0.5 at attraction 1, the attraction up to 4 at that tail, the
// spectral end, and back to the tail of t-SNE — and checks that the history
// records each run's tail and replays to the layout on screen bit for bit.
func TestTailTurnsReplay(t *testing.T) {
	opt, init := realOptimizer(t)
	e := New(opt, 10, init, func() {})
	if e.Tail() != 1 {
		t.Fatalf("a new engine's tail is %v, want 1", e.Tail())
	}
	e.Restart(1, 150)
	e.Wait()
	e.SetTail(0.5)
	e.Turn(1, 80)
	e.Wait()
	if _, st := e.Latest(); st.Tail != 0.5 {
		t.Fatalf("status tail %v, want 0.5", st.Tail)
	}
	e.Turn(4, 80)
	e.Wait()
	e.Turn(math.Inf(1), 80)
	e.Wait()
	e.SetTail(0)
	e.Turn(1, 60)
	e.Wait()
	h := e.History()
	want := []float64{1, 0.5, 0.5, 0.5, 1}
	if len(h) != len(want) {
		t.Fatalf("history of %d steps, want %d: %+v", len(h), len(want), h)
	}
	for k, s := range h {
		if s.Tail != want[k] {
			t.Fatalf("step %d: tail %v, want %v", k, s.Tail, want[k])
		}
	}
	got, _ := e.Latest()
	replayed, err := Replay(context.Background(), init, h, func(float64) (Optimizer, error) { return opt, nil })
	if err != nil {
		t.Fatal(err)
	}
	if !slices.Equal(got, replayed) {
		t.Fatal("the replayed history differs from the layout on screen")
	}
	// A session's history sets the engine's tail.
	e.SetLayout(got, h[:3])
	if e.Tail() != 0.5 || TailOf(nil) != 1 || TailOf([]Step{{Kind: Warm}}) != 1 {
		t.Fatalf("tails after SetLayout %v, of no history %v, of a step without one %v", e.Tail(), TailOf(nil), TailOf([]Step{{Kind: Warm}}))
	}
}

// TestSweepTailsReplay sweeps the tail at attraction 1 with the real
// optimiser: each map records its tail and its history replays to it bit for
// bit; a tail of 1 gives t-SNE's map, the map the same run without a tail
// gives.
func TestSweepTailsReplay(t *testing.T) {
	opt, init := realOptimizer(t)
	ctx := context.Background()
	base, err := opt.Run(ctx, init, RunOptions{Attraction: 1, Iterations: 200, Early: true}, nil)
	if err != nil {
		t.Fatal(err)
	}
	history := []Step{{Kind: Fresh, Attraction: 1, Iterations: 200, Done: 200, Setting: 10}}
	tails := []float64{0.5, 1, 3}
	var maps []SweepMap
	err = SweepPoints(ctx, opt, base, history, AtAttraction(1, tails), 60, 10, nil, func(m SweepMap) error {
		maps = append(maps, m)
		return nil
	})
	if err != nil {
		t.Fatal(err)
	}
	for k, m := range maps {
		last := m.History[len(m.History)-1]
		if m.Tail != tails[k] || last.Tail != tails[k] || last.Attraction != 1 || last.Kind != Warm || last.Compact {
			t.Fatalf("map %d: tail %v, step %+v", k, m.Tail, last)
		}
		got, err := Replay(ctx, init, m.History, func(float64) (Optimizer, error) { return opt, nil })
		if err != nil {
			t.Fatal(err)
		}
		if !slices.Equal(got, m.Layout) {
			t.Fatalf("map %d: the replayed history differs", k)
		}
	}
	plain, err := opt.Run(ctx, maps[0].Layout, RunOptions{Attraction: 1, Iterations: 60}, nil)
	if err != nil {
		t.Fatal(err)
	}
	if !slices.Equal(plain, maps[1].Layout) {
		t.Fatal("the map at tail 1 differs from a run without a tail")
	}
}
