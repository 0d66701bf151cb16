package embed

import (
	"context"
	"errors"
	"slices"
	"testing"
	"time"
)

// TestStartGivesTheSameRun checks PrepareStart against runs without it: a
// warm run handed the Start of its own initial layout gives the same
// snapshots and layout, bit for bit, as the same run without (through the
// grid repulsion at 2500 points and the exact one at 600), also in the
// early phase of a fresh run. That it is used is shown by spoiling its
// forces, which then changes the run; a Start made for another layout,
// tail or number of threads is ignored, spoilt or not.
func TestStartGivesTheSameRun(t *testing.T) {
	ctx := context.Background()
	for _, n := range []int{2500, 600} {
		P := mixtureAffinity(t, n)
		c, err := CheckAffinities(P, 2)
		if err != nil {
			t.Fatal(err)
		}
		p := DefaultParams()
		p.Threads, p.Iterations, p.EarlyIterations = 2, 200, 100
		from, err := RunChecked(ctx, c, nil, p, nil)
		if err != nil {
			t.Fatal(err)
		}
		run := func(p Params, init []float32) ([]float32, []Snapshot) {
			var snaps []Snapshot
			got, err := RunChecked(ctx, c, init, p, func(s Snapshot) { snaps = append(snaps, s) })
			if err != nil {
				t.Fatal(err)
			}
			return got, snaps
		}
		warm := p
		warm.Attraction, warm.Iterations, warm.EarlyIterations = 4, 60, 0
		warm.StopSettled, warm.SnapshotEvery = true, time.Nanosecond
		fresh := p
		fresh.Iterations, fresh.EarlyIterations, fresh.SnapshotEvery = 40, 20, time.Nanosecond
		for _, tc := range []struct {
			what string
			p    Params
		}{{"warm", warm}, {"fresh, early phase", fresh}} {
			want, wantSnaps := run(tc.p, from)
			st, err := PrepareStart(ctx, c, from, tc.p)
			if err != nil {
				t.Fatal(err)
			}
			with := tc.p
			with.Start = st
			got, gotSnaps := run(with, from)
			if !slices.Equal(got, want) || len(gotSnaps) != len(wantSnaps) {
				t.Fatalf("n=%d %s: the run with its Start differs from the run without", n, tc.what)
			}
			for k := range gotSnaps {
				if !slices.Equal(gotSnaps[k].Layout, wantSnaps[k].Layout) || gotSnaps[k].Iteration != wantSnaps[k].Iteration {
					t.Fatalf("n=%d %s: snapshot %d differs", n, tc.what, k)
				}
			}
			spoilt := *st
			spoilt.attr = slices.Clone(st.attr)
			for i := range spoilt.attr {
				spoilt.attr[i] *= 3
			}
			with.Start = &spoilt
			if got, _ := run(with, from); slices.Equal(got, want) {
				t.Fatalf("n=%d %s: a spoilt Start did not change the run: it was not used", n, tc.what)
			}
			other := slices.Clone(from)
			other[0] += 1e-3
			for _, mismatch := range []struct {
				what   string
				p      Params
				layout []float32
			}{
				{"another layout", with, other},
				{"another tail", func() Params { q := with; q.Tail = 0.5; return q }(), from},
				{"other threads", func() Params { q := with; q.Threads = 3; return q }(), from},
			} {
				q := mismatch.p
				q.Start = nil
				want, _ := run(q, mismatch.layout)
				q.Start = &spoilt
				if got, _ := run(q, mismatch.layout); !slices.Equal(got, want) {
					t.Fatalf("n=%d %s: a Start made for %s was used", n, tc.what, mismatch.what)
				}
			}
		}
	}
}

// TestPrepareStartErrors checks that PrepareStart refuses a layout of the
// wrong size and returns the context's error when cancelled.
func TestPrepareStartErrors(t *testing.T) {
	P := mixtureAffinity(t, 1200)
	c, err := CheckAffinities(P, 2)
	if err != nil {
		t.Fatal(err)
	}
	var le *LayoutError
	if _, err := PrepareStart(context.Background(), c, make([]float32, 10), DefaultParams()); !errors.As(err, &le) {
		t.Fatalf("a layout of 5 points for 1200: %v", err)
	}
	ctx, cancel := context.WithCancel(context.Background())
	cancel()
	if _, err := PrepareStart(ctx, c, randomLayout32(1200), DefaultParams()); !errors.Is(err, context.Canceled) {
		t.Fatalf("cancelled: %v", err)
	}
}

// randomLayout32 returns randomLayout in float32.
func randomLayout32(n int) []float32 {
	y := randomLayout(n, 1)
	out := make([]float32, len(y))
	for i, v := range y {
		out[i] = float32(v)
	}
	return out
}
