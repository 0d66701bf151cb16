package neighbors

import (
	"context"
	"errors"
	"reflect"
	"slices"
	"sync"
	"testing"
	"time"

	"lodestone/compute/atlas"
	"lodestone/compute/synth"
)

// TestApproximateRecall checks the recall of Approximate against Exact (the
// exhaustive search, itself checked against a float64 brute force and
// scikit-learn) on a 50-dimensional Gaussian mixture and on a noisy
// branching path embedded in 50 dimensions, at k = 15 and k = 90. The target
// recall is 0.98 (the project's benchmark target).
func TestApproximateRecall(t *testing.T) {
	n := 6000
	if testing.Short() {
		n = 3000
	}
	mix, _ := synth.GaussianMixture(n, 50, 10, 1)
	path, _, _ := synth.BranchingPath(n, 50, 1, 2)
	ctx := context.Background()
	for _, c := range []struct {
		name string
		x    *atlas.Dense
	}{{"mixture", mix}, {"path", path}} {
		exact, err := Exact(ctx, c.x, Options{K: 90})
		if err != nil {
			t.Fatal(err)
		}
		for _, k := range []int{15, 90} {
			g, err := Approximate(ctx, c.x, Options{K: k, Seed: 3})
			if err != nil {
				t.Fatal(err)
			}
			for i := 0; i < g.N; i++ {
				checkValidRow(t, g, i)
			}
			r, err := Recall(g, exact.Truncate(k), nil)
			if err != nil {
				t.Fatal(err)
			}
			t.Logf("%s, %d points, k = %d: recall %.4f", c.name, n, k, r)
			if r < 0.98 {
				t.Errorf("%s, k = %d: recall %.4f below 0.98", c.name, k, r)
			}
			// Distances listed by Approximate are exact for the ids it found.
			for i := 0; i < g.N; i += 97 {
				ids, ds := g.Neighbors(i)
				for e, id := range ids {
					want := dist(c.x.Row(i), c.x.Row(int(id)))
					if d := ds[e] * ds[e]; d < want*(1-1e-5) || d > want*(1+1e-5) {
						t.Fatalf("%s point %d: distance to %d is %g, want %g", c.name, i, id, ds[e], want)
					}
				}
			}
		}
	}
}

// TestApproximateDeterministic checks that the same seed gives the same
// graph, on one thread and on four.
func TestApproximateDeterministic(t *testing.T) {
	x, _ := synth.GaussianMixture(3000, 20, 6, 4)
	ctx := context.Background()
	a, err := Approximate(ctx, x, Options{K: 20, Seed: 9, Threads: 1})
	if err != nil {
		t.Fatal(err)
	}
	for _, threads := range []int{1, 4} {
		b, err := Approximate(ctx, x, Options{K: 20, Seed: 9, Threads: threads})
		if err != nil {
			t.Fatal(err)
		}
		if !slices.Equal(a.Index, b.Index) || !slices.Equal(a.Dist, b.Dist) {
			t.Fatalf("seed 9 on %d threads gave a different graph than on 1", threads)
		}
	}
}

// TestApproximateDuplicates checks the structural promises on data with
// many exact copies (zero distances): no self, no repeated neighbour,
// ascending order; each point's copies are all found (k ≥ copies − 1).
func TestApproximateDuplicates(t *testing.T) {
	base := randomMatrix(300, 8, 11)
	const copies = 12
	x := atlas.NewDense(300*copies, 8)
	for i := 0; i < x.Rows; i++ {
		copy(x.Row(i), base.Row(i%300))
	}
	g, err := Approximate(context.Background(), x, Options{K: 15, Seed: 1})
	if err != nil {
		t.Fatal(err)
	}
	for i := 0; i < g.N; i++ {
		checkValidRow(t, g, i)
		ids, ds := g.Neighbors(i)
		for e := 0; e < copies-1; e++ {
			if ds[e] != 0 || int(ids[e])%300 != i%300 {
				t.Fatalf("point %d: neighbour %d is %d at %g, want a copy at 0", i, e, ids[e], ds[e])
			}
		}
	}
}

// TestFindChoosesMethod checks that Find with Auto gives the exhaustive
// result on small data.
func TestFindChoosesMethod(t *testing.T) {
	x := randomMatrix(500, 6, 3)
	ctx := context.Background()
	a, err := Find(ctx, x, Options{K: 10})
	if err != nil {
		t.Fatal(err)
	}
	b, err := Exact(ctx, x, Options{K: 10})
	if err != nil {
		t.Fatal(err)
	}
	if !slices.Equal(a.Index, b.Index) || !slices.Equal(a.Dist, b.Dist) {
		t.Fatal("Find(Auto) on 500 points differs from Exact")
	}
}

// TestErrors checks that bad input gives errors that name the problem and
// wrap the sentinel errors.
func TestErrors(t *testing.T) {
	ctx := context.Background()
	x := randomMatrix(20, 3, 1)
	for _, f := range []func(context.Context, *atlas.Dense, Options) (*Graph, error){Exact, Approximate, Find} {
		for _, c := range []struct {
			opt  Options
			want error
		}{
			{Options{K: 0}, ErrK},
			{Options{K: MaxK + 1}, ErrK},
			{Options{K: 20}, ErrTooFew},
			{Options{K: 3, Metric: 7}, ErrOption},
			{Options{K: 3, Method: 9}, ErrOption},
		} {
			if _, err := f(ctx, x, c.opt); !errors.Is(err, c.want) {
				t.Errorf("options %+v: error %v, want %v", c.opt, err, c.want)
			}
		}
		if _, err := f(ctx, nil, Options{K: 3}); !errors.Is(err, ErrShape) {
			t.Errorf("nil matrix: error %v, want ErrShape", err)
		}
		if _, err := f(ctx, &atlas.Dense{Rows: 5, Cols: 2, Data: make([]float32, 9)}, Options{K: 3}); !errors.Is(err, ErrShape) {
			t.Errorf("short data: error %v, want ErrShape", err)
		}
	}
	bad := randomMatrix(20, 3, 1)
	bad.Data[7*3+2] = float32(posInf())
	_, err := Exact(ctx, bad, Options{K: 3})
	var ie *InputError
	if !errors.As(err, &ie) || ie.Row != 7 || ie.Column != 2 || !errors.Is(err, ErrNotFinite) {
		t.Errorf("Inf at row 7, column 2: error %v", err)
	}
	zero := randomMatrix(20, 3, 1)
	copy(zero.Row(4), []float32{0, 0, 0})
	if _, err := Exact(ctx, zero, Options{K: 3, Metric: Cosine}); !errors.As(err, &ie) || ie.Row != 4 || !errors.Is(err, ErrZeroRow) {
		t.Errorf("zero row 4 under cosine: error %v", err)
	}
	if _, err := ExactFor(ctx, x, []int{0, 20}, Options{K: 3}); !errors.As(err, &ie) || ie.Row != 1 || !errors.Is(err, ErrRowIndex) {
		t.Errorf("row 20 of 20: error %v", err)
	}
	g, _ := Exact(ctx, x, Options{K: 3})
	if _, err := Recall(g, g, []int{1, 2}); !errors.Is(err, ErrMismatch) {
		t.Errorf("recall with wrong row count: error %v", err)
	}
	if _, err := Recall(g.Truncate(2), g, nil); !errors.Is(err, ErrMismatch) {
		t.Errorf("recall of a graph with fewer neighbours: error %v", err)
	}
}

// TestRecallCounts checks Recall on a hand-made case: two points, k = 2,
// one of two neighbours shared on row 0, both on row 1: (1 + 2) / 4.
func TestRecallCounts(t *testing.T) {
	a := &Graph{N: 2, K: 2, Index: []int32{5, 6, 7, 8}, Dist: make([]float32, 4)}
	e := &Graph{N: 2, K: 2, Index: []int32{6, 9, 8, 7}, Dist: make([]float32, 4)}
	r, err := Recall(a, e, nil)
	if err != nil || r != 0.75 {
		t.Fatalf("recall %g, %v; want 0.75", r, err)
	}
	s := &Graph{N: 1, K: 2, Index: []int32{8, 1}, Dist: make([]float32, 2)}
	if r, err := Recall(a, s, []int{1}); err != nil || r != 0.5 {
		t.Fatalf("recall on row 1 only: %g, %v; want 0.5", r, err)
	}
}

// TestCancel checks that a cancelled context stops both searches promptly.
func TestCancel(t *testing.T) {
	x, _ := synth.GaussianMixture(20000, 50, 5, 1)
	for _, f := range []func(context.Context, *atlas.Dense, Options) (*Graph, error){Exact, Approximate} {
		ctx, cancel := context.WithTimeout(context.Background(), 30*time.Millisecond)
		start := time.Now()
		_, err := f(ctx, x, Options{K: 30})
		cancel()
		if !errors.Is(err, context.DeadlineExceeded) {
			t.Fatalf("error %v, want context.DeadlineExceeded", err)
		}
		t.Logf("stopped %v after the deadline", time.Since(start)-30*time.Millisecond)
	}
}

// TestApproximateSmallAndCosine checks the approximate search on the
// smallest input (k + 1 points: everyone is everyone's neighbour) and with
// the cosine metric, against Exact.
func TestApproximateSmallAndCosine(t *testing.T) {
	ctx := context.Background()
	for _, c := range []struct {
		x   *atlas.Dense
		opt Options
	}{
		{randomMatrix(16, 4, 1), Options{K: 15}},
		{randomMatrix(2000, 12, 2), Options{K: 10, Metric: Cosine, Method: ApproximateSearch}},
	} {
		g, err := Find(ctx, c.x, c.opt)
		if err != nil {
			t.Fatal(err)
		}
		e, err := Exact(ctx, c.x, Options{K: c.opt.K, Metric: c.opt.Metric})
		if err != nil {
			t.Fatal(err)
		}
		if r, err := Recall(g, e, nil); err != nil || r < 0.98 {
			t.Fatalf("%d points, %v: recall %v, %v", c.x.Rows, c.opt.Metric, r, err)
		}
		for i := 0; i < g.N; i++ {
			checkValidRow(t, g, i)
		}
	}
}

// TestProgress checks that both searches report progress that never goes
// backwards, never passes the total and ends at the total.
func TestProgress(t *testing.T) {
	x := randomMatrix(3000, 8, 4)
	for _, f := range []func(context.Context, *atlas.Dense, Options) (*Graph, error){Exact, Approximate} {
		var mu sync.Mutex
		var last, total int64 = -1, 0
		_, err := f(context.Background(), x, Options{K: 10, Threads: 1, Progress: func(done, all int64) {
			mu.Lock()
			defer mu.Unlock()
			if done < last || done > all {
				t.Errorf("progress %d of %d after %d", done, all, last)
			}
			last, total = done, all
		}})
		if err != nil {
			t.Fatal(err)
		}
		if last != total || total == 0 {
			t.Fatalf("progress ended at %d of %d", last, total)
		}
	}
}

// TestStages checks the stages an approximate search reports: forest,
// leaves, descent steps 1, 2, … and finish, in order; the leaves fill every
// list (at least N·k entries enter); every step but the last changes at
// least the stop rule's share of entries and the last one less (or is the
// last allowed); and the counts are the same for any number of threads.
func TestStages(t *testing.T) {
	x := randomMatrix(3000, 8, 4)
	const k = 70 // kb = k, above defaults.buildMin
	var runs [][]Stage
	for _, threads := range []int{1, 3} {
		var got []Stage
		if _, err := Approximate(context.Background(), x, Options{K: k, Seed: 5, Threads: threads, Stages: func(s Stage) {
			got = append(got, s)
		}}); err != nil {
			t.Fatal(err)
		}
		runs = append(runs, got)
	}
	got := runs[0]
	if !reflect.DeepEqual(runs[0], runs[1]) {
		t.Fatalf("stages differ with 1 and 3 threads:\n%v\n%v", runs[0], runs[1])
	}
	if len(got) < 4 || got[0].Name != "forest" || got[1].Name != "leaves" || got[len(got)-1].Name != "finish" {
		t.Fatalf("stages %v", got)
	}
	if got[1].Changed < int64(x.Rows*k) || got[1].Distances == 0 {
		t.Errorf("leaves: %+v, want at least %d entries changed", got[1], x.Rows*k)
	}
	steps := got[2 : len(got)-1]
	limit := defaults.stop * float64(x.Rows*k)
	for i, s := range steps {
		if s.Name != "descent" || s.Step != i+1 || s.Distances == 0 {
			t.Fatalf("stage %d: %+v", i+2, s)
		}
		last := i == len(steps)-1
		if !last && float64(s.Changed) < limit || last && float64(s.Changed) >= limit && s.Step < defaults.maxSteps {
			t.Errorf("step %d changed %d entries (stop below %.0f), last %v", s.Step, s.Changed, limit, last)
		}
	}
}
