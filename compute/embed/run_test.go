package embed

import (
	"context"
	"errors"
	"math"
	"slices"
	"testing"
	"time"

	"lodestone/compute/sparse"
	"lodestone/compute/synth"
)

// mixtureAffinity returns the perplexity-30 affinities of n points of a
// 10-D Gaussian mixture with 8 clusters.
func mixtureAffinity(t *testing.T, n int) *sparse.CSR {
	t.Helper()
	x, _ := synth.GaussianMixture(n, 10, 8, 3)
	return affinityOf(t, x, 30)
}

// TestRunDeterministic checks that two runs with the same inputs, seed and
// thread count give the same bytes, on both the exact (small) and the
// interpolated repulsion (common practice for reproducible results).
func TestRunDeterministic(t *testing.T) {
	for _, n := range []int{400, 2500} {
		P := mixtureAffinity(t, n)
		p := DefaultParams()
		p.Iterations, p.EarlyIterations, p.Threads, p.Seed = 300, 100, 2, 7
		a, err := Run(context.Background(), P, nil, p, nil)
		if err != nil {
			t.Fatal(err)
		}
		b, _ := Run(context.Background(), P, nil, p, nil)
		if !slices.Equal(a, b) {
			t.Fatalf("n = %d: two runs with the same seed and threads differ", n)
		}
		p.Seed = 8
		c, _ := Run(context.Background(), P, nil, p, nil)
		if slices.Equal(a, c) {
			t.Fatalf("n = %d: seeds 7 and 8 give the same layout", n)
		}
	}
}

// TestSnapshots checks the publishing contract: the first snapshot after the
// first iteration, then at most one per SnapshotEvery, the last with Done,
// each layout a copy of its own, and a KL estimate that agrees with the exact
// KL of the layout it describes.
func TestSnapshots(t *testing.T) {
	P := mixtureAffinity(t, 3000)
	p := DefaultParams()
	p.Iterations, p.SnapshotEvery = 400, 20*time.Millisecond
	type stamped struct {
		Snapshot
		at time.Time
	}
	var snaps []stamped
	var prev []float32
	start := time.Now()
	final, err := Run(context.Background(), P, nil, p, func(s Snapshot) {
		snaps = append(snaps, stamped{s, time.Now()})
		if prev != nil && &prev[0] == &s.Layout[0] {
			t.Fatal("two snapshots share a layout")
		}
		prev = s.Layout
	})
	if err != nil {
		t.Fatal(err)
	}
	t.Logf("%d snapshots in %v; first after %v", len(snaps), time.Since(start), snaps[0].at.Sub(start))
	if snaps[0].Iteration != 1 {
		t.Errorf("first snapshot at iteration %d, want 1", snaps[0].Iteration)
	}
	last := snaps[len(snaps)-1]
	if !last.Done || last.Iteration != 400 || !slices.Equal(last.Layout, final) {
		t.Errorf("last snapshot: done %v, iteration %d, equal to the result %v", last.Done, last.Iteration, slices.Equal(last.Layout, final))
	}
	for k := 1; k < len(snaps)-1; k++ {
		if gap := snaps[k].at.Sub(snaps[k-1].at); gap < p.SnapshotEvery {
			t.Errorf("snapshots %d and %d only %v apart", k-1, k, gap)
		}
		if snaps[k].Done {
			t.Errorf("snapshot %d marked done", k)
		}
	}
	// The KL estimate is for the layout before the last iteration; after
	// 400 iterations one step changes KL by far less than 1e-3.
	exact, err := KL(P, last.Layout, 1, 0)
	if err != nil {
		t.Fatal(err)
	}
	t.Logf("final KL estimate %.6f, exact %.6f", last.KL, exact)
	if math.Abs(last.KL-exact) > 1e-3*exact {
		t.Errorf("KL estimate %.6f, exact %.6f", last.KL, exact)
	}
}

// TestCancel measures how quickly a run stops once its context is
// cancelled: Run must return ctx.Err() and the last complete layout. The
// latency is logged (the target is 50 ms), not asserted, so the test cannot
// flake on a busy machine.
func TestCancel(t *testing.T) {
	P := mixtureAffinity(t, 5000)
	p := DefaultParams()
	p.Iterations = 100000
	ctx, cancel := context.WithCancel(context.Background())
	started := make(chan struct{}, 1)
	type result struct {
		layout []float32
		err    error
		at     time.Time
	}
	done := make(chan result, 1)
	var snaps int
	go func() {
		layout, err := Run(ctx, P, nil, p, func(s Snapshot) {
			snaps++
			if snaps == 10 {
				started <- struct{}{}
			}
		})
		done <- result{layout, err, time.Now()}
	}()
	<-started
	cancelled := time.Now()
	cancel()
	select {
	case r := <-done:
		t.Logf("returned %v after cancel", r.at.Sub(cancelled))
		if !errors.Is(r.err, context.Canceled) || len(r.layout) != 2*P.Rows {
			t.Fatalf("got %v and %d coordinates; want context.Canceled and %d", r.err, len(r.layout), 2*P.Rows)
		}
	case <-time.After(10 * time.Second):
		t.Fatal("Run did not return within 10 s of cancellation")
	}
}

// TestWarmRestart runs from a given layout without an early phase: the
// initial layout is left untouched and the run improves the objective
// C_ρ = ρ·KL + (1−ρ)·log Z it descends (exact computation).
func TestWarmRestart(t *testing.T) {
	P := mixtureAffinity(t, 2000)
	p := DefaultParams()
	p.Iterations = 300
	init, err := Run(context.Background(), P, nil, p, nil)
	if err != nil {
		t.Fatal(err)
	}
	keep := slices.Clone(init)
	warm := Params{Attraction: 4, Iterations: 150}
	out, err := Run(context.Background(), P, init, warm, nil)
	if err != nil {
		t.Fatal(err)
	}
	if !slices.Equal(init, keep) {
		t.Fatal("Run modified its initial layout")
	}
	before, _ := toFloat64(init, "")
	after, _ := toFloat64(out, "")
	cb, ca := objective(P, before, 4, 1), objective(P, after, 4, 1)
	t.Logf("C_4 from %.5f to %.5f", cb, ca)
	if !(ca < cb) {
		t.Errorf("warm run at ρ = 4 did not lower C_4: %.5f → %.5f", cb, ca)
	}
}

// TestRunInfinity checks the spectral end of the dial: Run returns the
// Laplacian eigenmap matched to the initial layout and publishes it once.
func TestRunInfinity(t *testing.T) {
	P := mixtureAffinity(t, 600)
	init, _ := Run(context.Background(), P, nil, Params{Attraction: 1, Iterations: 50}, nil)
	var snaps []Snapshot
	out, err := Run(context.Background(), P, init, Params{Attraction: math.Inf(1)}, func(s Snapshot) { snaps = append(snaps, s) })
	if err != nil {
		t.Fatal(err)
	}
	spec, _, _ := Spectral(context.Background(), P, 0)
	want, _ := ScaleLike(spec, init)
	if !slices.Equal(out, want) || len(snaps) != 1 || !snaps[0].Done || !math.IsNaN(snaps[0].KL) {
		t.Fatalf("spectral run: equal to ScaleLike(Spectral) %v, %d snapshots", slices.Equal(out, want), len(snaps))
	}
}

func TestRunErrors(t *testing.T) {
	ctx := context.Background()
	P := mixtureAffinity(t, 50)
	for _, p := range []Params{
		{Attraction: 0}, {Attraction: -1}, {Attraction: math.NaN()}, {Attraction: math.Inf(-1)},
		{Attraction: 1, Iterations: -1}, {Attraction: 1, EarlyIterations: 800},
		{Attraction: 1, LearningRate: -2}, {Attraction: 1, EarlyExaggeration: math.Inf(1)},
		{Attraction: 1, SnapshotEvery: -time.Second},
		{Attraction: 1, Tail: -1}, {Attraction: 1, Tail: math.NaN()}, {Attraction: 1, Tail: MinTail / 2},
		{Attraction: 1, Tail: 2 * MaxTail}, {Attraction: 1, Tail: math.Inf(1)},
	} {
		if _, err := Run(ctx, P, nil, p, nil); !errors.Is(err, ErrParam) {
			t.Errorf("%+v: got %v, want ErrParam", p, err)
		}
	}
	ok := Params{Attraction: 1, Iterations: 5}
	if _, err := Run(ctx, P, make([]float32, 10), ok, nil); !errors.Is(err, ErrShape) {
		t.Errorf("short layout: got %v", err)
	}
	bad := make([]float32, 100)
	bad[37] = float32(math.Inf(1))
	var le *LayoutError
	if _, err := Run(ctx, P, bad, ok, nil); !errors.Is(err, ErrNotFinite) || !errors.As(err, &le) || le.Point != 18 {
		t.Errorf("infinite coordinate of point 18: got %v", err)
	}
	edit := func(f func(q *sparse.CSR)) *sparse.CSR {
		q := &sparse.CSR{Rows: P.Rows, Cols: P.Cols, RowPtr: slices.Clone(P.RowPtr), ColIdx: slices.Clone(P.ColIdx), Val: slices.Clone(P.Val)}
		f(q)
		return q
	}
	cases := []struct {
		name       string
		q          *sparse.CSR
		want       error
		row, entry int
	}{
		{"negative", edit(func(q *sparse.CSR) { q.Val[q.RowPtr[3]+1] = -1 }), ErrNegative, 3, 1},
		{"NaN", edit(func(q *sparse.CSR) { q.Val[q.RowPtr[7]] = float32(math.NaN()) }), ErrNotFinite, 7, 0},
		{"order", edit(func(q *sparse.CSR) { q.ColIdx[q.RowPtr[9]+1] = q.ColIdx[q.RowPtr[9]] }), ErrColumn, 9, 1},
		{"range", edit(func(q *sparse.CSR) { q.ColIdx[q.RowPtr[10+1]-1] = 50 }), ErrColumn, 10, int(P.RowPtr[11] - P.RowPtr[10] - 1)},
	}
	for _, c := range cases {
		_, err := Run(ctx, c.q, nil, ok, nil)
		var ae *AffinityError
		if !errors.Is(err, c.want) || !errors.As(err, &ae) || ae.Row != c.row || ae.Entry != c.entry {
			t.Errorf("%s: got %v, want %v at row %d, entry %d", c.name, err, c.want, c.row, c.entry)
		}
	}
	if _, err := Run(ctx, &sparse.CSR{Rows: 3, Cols: 4}, nil, ok, nil); !errors.Is(err, ErrShape) {
		t.Errorf("non-square: got %v", err)
	}
	zero := edit(func(q *sparse.CSR) { clear(q.Val) })
	if _, err := Run(ctx, zero, nil, ok, nil); !errors.Is(err, ErrEmpty) {
		t.Errorf("all zero: got %v", err)
	}
}
