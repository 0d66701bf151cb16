package live

import (
	"context"
	"math"
	"slices"
	"testing"
	"time"

	"lodestone/compute/affinity"
	"lodestone/compute/embed"
	"lodestone/compute/neighbors"
	"lodestone/compute/synth"
)

// realOptimizer returns the window's optimiser on the affinities of a small
// Gaussian mixture, and its PCA initial layout.
func realOptimizer(t *testing.T) (*TSNE, []float32) {
	t.Helper()
	x, _ := synth.GaussianMixture(1500, 10, 5, 3)
	g, err := neighbors.Exact(context.Background(), x, neighbors.Options{K: 30})
	if err != nil {
		t.Fatal(err)
	}
	P, err := affinity.Perplexity(context.Background(), g, 10, 0)
	if err != nil {
		t.Fatal(err)
	}
	init, err := embed.InitPCA(x)
	if err != nil {
		t.Fatal(err)
	}
	return &TSNE{P: P, Seed: 1}, init
}

// TestRapidTurnsOfTheRealOptimiser turns the dial 50 times while the
// optimiser runs, as a user spinning it would, with the spectral end among
// the values; run with -race. Afterwards the history replays to the layout
// on screen.
func TestRapidTurnsOfTheRealOptimiser(t *testing.T) {
	opt, init := realOptimizer(t)
	e := New(opt, 10, init, func() {})
	e.Restart(1, 300)
	values := []float64{1, 2, 4, 10, 30, 100, math.Inf(1), 0.5}
	for i := 0; i < 50; i++ {
		e.Turn(values[i%len(values)], 200)
		time.Sleep(time.Duration(i%4) * time.Millisecond)
		e.Latest()
	}
	e.Turn(4, 100)
	e.Wait()
	got, st := e.Latest()
	if st.Running || st.Err != nil || st.Iteration > 100 || st.Iteration < 100 && !st.Settled {
		t.Fatalf("status after the last turn: %+v", st)
	}
	for _, v := range got {
		if math.IsNaN(float64(v)) || math.IsInf(float64(v), 0) {
			t.Fatal("the layout holds a value that is not finite")
		}
	}
	replayed, err := Replay(context.Background(), init, e.History(), func(float64) (Optimizer, error) { return opt, nil })
	if err != nil {
		t.Fatal(err)
	}
	for i := range got {
		if math.Float32bits(got[i]) != math.Float32bits(replayed[i]) {
			t.Fatalf("replayed layout differs at %d: %v vs %v", i, replayed[i], got[i])
		}
	}
}

// TestSettledTurnStopsEarlyAndReplays turns the dial of a finished map with
// a generous ceiling: the run ends once the layout has settled, well before
// the ceiling, the history records where, and replaying the history gives
// the layout on screen bit for bit.
func TestSettledTurnStopsEarlyAndReplays(t *testing.T) {
	opt, init := realOptimizer(t)
	e := New(opt, 10, init, nil)
	e.Restart(1, embed.DefaultIterations)
	e.Wait()
	const ceiling = 5000
	for _, a := range []float64{4, 1.5} { // raising (compacted), then lowering
		e.Turn(a, ceiling)
		e.Wait()
		_, st := e.Latest()
		if st.Running || st.Err != nil || !st.Settled || st.Iteration >= ceiling/5 {
			t.Fatalf("turn to %v: status %+v; want settled within %d iterations", a, st, ceiling/5)
		}
		h := e.History()
		last := h[len(h)-1]
		if !last.Settled || last.Done != st.Iteration || last.Iterations != ceiling {
			t.Fatalf("turn to %v recorded as %+v after %d iterations", a, last, st.Iteration)
		}
		t.Logf("turn to %v settled after %d of at most %d iterations", a, st.Iteration, ceiling)
	}
	got, _ := e.Latest()
	replayed, err := Replay(context.Background(), init, e.History(), func(float64) (Optimizer, error) { return opt, nil })
	if err != nil {
		t.Fatal(err)
	}
	for i := range got {
		if math.Float32bits(got[i]) != math.Float32bits(replayed[i]) {
			t.Fatalf("replayed layout differs at %d: %v vs %v", i, replayed[i], got[i])
		}
	}
	// A fresh run goes the whole way.
	e.Restart(1, 400)
	e.Wait()
	if _, st := e.Latest(); st.Iteration != 400 {
		t.Fatalf("a fresh run of 400 iterations ended after %d", st.Iteration)
	}
}

// TestStopReturnsQuickly measures how long the optimiser takes to return
// after Stop (the requirement is 50 ms; the figure is logged, not timed as
// a pass/fail, since the machine may be loaded).
func TestStopReturnsQuickly(t *testing.T) {
	opt, init := realOptimizer(t)
	e := New(opt, 10, init, nil)
	e.Restart(1, 100000)
	time.Sleep(50 * time.Millisecond)
	start := time.Now()
	e.Stop()
	e.Wait()
	t.Logf("the run returned %v after Stop", time.Since(start))
	if _, st := e.Latest(); st.Running {
		t.Fatal("still running after Stop and Wait")
	}
}

// TestTurnsArePrepared checks the preparation of turns: once a run has
// ended, the optimiser holds the first iteration of runs from the layout
// on screen and from its compacted form, and a turn from it (raising the
// attraction, so from the compacted form; then lowering it) gives the
// layout, bit for bit, of the same run on an optimiser that prepared
// nothing.
func TestTurnsArePrepared(t *testing.T) {
	opt, init := realOptimizer(t)
	plain := &TSNE{P: opt.P, Seed: opt.Seed}
	e := New(opt, 10, init, nil)
	e.Restart(1, 300)
	e.Wait()
	for _, a := range []float64{4, 1.5} {
		from, _ := e.Latest()
		opt.startMu.Lock()
		starts := opt.starts
		opt.startMu.Unlock()
		if len(starts) != 2 || !slices.Equal(starts[0].layout, Compact(from)) || !slices.Equal(starts[1].layout, from) {
			t.Fatalf("before the turn to %v: %d runs prepared, not those from the compacted map and the map", a, len(starts))
		}
		e.Turn(a, 300)
		e.Wait()
		got, st := e.Latest()
		if st.Err != nil {
			t.Fatal(st.Err)
		}
		init := from
		if a == 4 {
			init = Compact(from)
		}
		want, err := plain.Run(context.Background(), init, RunOptions{Attraction: a, Iterations: 300, Settle: true}, nil)
		if err != nil {
			t.Fatal(err)
		}
		if !slices.Equal(got, want) {
			t.Fatalf("the prepared turn to %v differs from the same run unprepared", a)
		}
	}
}
