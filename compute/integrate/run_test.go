package integrate

import (
	"context"
	"errors"
	"math"
	"slices"
	"strings"
	"sync/atomic"
	"testing"

	"lodestone/compute/atlas"
)

// TestDeterministic checks that a seed and a thread count give the same
// result bit for bit, and that other thread counts and seeds give results
// that differ only slightly (float64 sums added in another order, another
// start).
func TestDeterministic(t *testing.T) {
	p := newPlanted(3000, 20, 6, 3, 6, 0.8, 9)
	run := func(seed int64, threads int) *Result {
		res, err := Harmony(context.Background(), p.z, []Covariate{p.covariate()}, Options{Seed: seed, Threads: threads})
		if err != nil {
			t.Fatal(err)
		}
		return res
	}
	a, b := run(4, 3), run(4, 3)
	if !slices.Equal(a.Corrected.Data, b.Corrected.Data) || !slices.Equal(a.Objective, b.Objective) {
		t.Fatal("same seed and thread count, different results")
	}
	before := displacement(p.z, p.types, p.batch, p.nt, p.nb)
	for _, c := range []struct {
		name string
		res  *Result
	}{{"one thread", run(4, 1)}, {"another seed", run(5, 3)}} {
		if slices.Equal(c.res.Corrected.Data, a.Corrected.Data) && c.name == "another seed" {
			t.Errorf("%s: identical result", c.name)
		}
		// Both are corrections of the same data: the cells end up in
		// nearly the same places relative to the batch offsets removed.
		var diff float64
		for i, v := range c.res.Corrected.Data {
			diff += math.Abs(float64(v - a.Corrected.Data[i]))
		}
		diff /= float64(p.z.Rows)
		if diff > 0.1*before {
			t.Errorf("%s: cells moved by %.3f on average from the first run (batch displacement %.3f)", c.name, diff, before)
		}
	}
}

// TestPortableHarmony runs Harmony with the portable kernels and compares
// it with the assembly kernels' run: the same rounds, objectives within
// single-precision rounding, corrected components within 1e-3.
func TestPortableHarmony(t *testing.T) {
	if !haveAVX2 {
		t.Skip("the portable kernels are the only ones here and are tested everywhere")
	}
	p := newPlanted(1500, 12, 5, 3, 6, 0.8, 31)
	o := Options{Seed: 2, Clusters: 10, Rounds: 3, Iterations: 8}
	a, err := Harmony(context.Background(), p.z, []Covariate{p.covariate()}, o)
	if err != nil {
		t.Fatal(err)
	}
	setAVX2(false)
	b, err := Harmony(context.Background(), p.z, []Covariate{p.covariate()}, o)
	setAVX2(true)
	if err != nil {
		t.Fatal(err)
	}
	if len(a.Objective) != len(b.Objective) {
		t.Fatalf("%d iterations with AVX2, %d portable", len(a.Objective), len(b.Objective))
	}
	for i := range a.Objective {
		if math.Abs(a.Objective[i]-b.Objective[i]) > 1e-4*math.Abs(a.Objective[i]) {
			t.Fatalf("iteration %d: objective %v with AVX2, %v portable", i, a.Objective[i], b.Objective[i])
		}
	}
	for i, v := range a.Corrected.Data {
		if math.Abs(float64(v-b.Corrected.Data[i])) > 1e-3 {
			t.Fatalf("value %d: %v with AVX2, %v portable", i, v, b.Corrected.Data[i])
		}
	}
}

// TestBadBatchColumns checks NewCovariate's messages: each names the
// column and the problem.
func TestBadBatchColumns(t *testing.T) {
	codes := func(n int, f func(i int) int32) []int32 {
		c := make([]int32, n)
		for i := range c {
			c[i] = f(i)
		}
		return c
	}
	for _, tc := range []struct {
		col  atlas.Column
		err  error
		want string
	}{
		{atlas.Column{Name: "depth", Kind: atlas.Continuous, Values: []float64{1, 2, 3}}, ErrNotCategorical, `"depth"`},
		{atlas.Column{Name: "donor", Kind: atlas.Categorical, Levels: []string{"a", "b"},
			Codes: codes(40, func(i int) int32 { return int32(i%3) - 1 })}, ErrMissing, "14 of 40 cells"},
		{atlas.Column{Name: "run", Kind: atlas.Categorical, Levels: []string{"only", "unused"},
			Codes: codes(40, func(int) int32 { return 0 })}, ErrOneBatch, `every cell is "only"`},
		{atlas.Column{Name: "lane", Kind: atlas.Categorical, Levels: []string{"a", "b", "c"},
			Codes: codes(40, func(i int) int32 { return int32(min(i/16, 2)) })}, ErrSmallBatch, `"c" has 8`},
	} {
		_, err := NewCovariate(&tc.col)
		if !errors.Is(err, tc.err) || !strings.Contains(err.Error(), tc.col.Name) || !strings.Contains(err.Error(), tc.want) {
			t.Errorf("column %q: %v (want %v, mentioning %s)", tc.col.Name, err, tc.err, tc.want)
		}
	}
	// Levels without cells are dropped; the rest are renumbered.
	c, err := NewCovariate(&atlas.Column{Name: "day", Kind: atlas.Categorical, Levels: []string{"d1", "d2", "d3"},
		Codes: codes(30, func(i int) int32 { return int32(2 * (i % 2)) })})
	if err != nil || !slices.Equal(c.Levels, []string{"d1", "d3"}) || c.Codes[1] != 1 || c.Theta != DefaultTheta || c.Lambda != DefaultLambda {
		t.Fatalf("covariate %+v, %v", c, err)
	}
}

// TestBadParameters checks that Harmony refuses bad shapes and parameters
// with errors naming them, and stops when cancelled.
func TestBadParameters(t *testing.T) {
	p := newPlanted(300, 5, 3, 2, 3, 1, 1)
	good := p.covariate()
	ctx := context.Background()
	for _, tc := range []struct {
		name string
		z    *atlas.Dense
		covs []Covariate
		o    Options
		err  error
		want string
	}{
		{"no cells", atlas.NewDense(1, 5), []Covariate{good}, Options{}, ErrShape, "components"},
		{"no column", p.z, nil, Options{}, ErrParam, "no batch column"},
		{"short column", p.z, []Covariate{{Name: "b", Levels: []string{"x"}, Codes: []int32{0}, Lambda: 1}}, Options{}, ErrShape, `"b"`},
		{"negative theta", p.z, []Covariate{{Name: "b", Levels: good.Levels, Codes: good.Codes, Theta: -1, Lambda: 1}}, Options{}, ErrParam, "theta"},
		{"zero lambda", p.z, []Covariate{{Name: "b", Levels: good.Levels, Codes: good.Codes, Theta: 1}}, Options{}, ErrParam, "lambda"},
		{"too many clusters", p.z, []Covariate{good}, Options{Clusters: 301}, ErrParam, "clusters"},
		{"negative sigma", p.z, []Covariate{good}, Options{Sigma: -1}, ErrParam, "sigma"},
		{"tolerance", p.z, []Covariate{good}, Options{Tolerance: 2}, ErrParam, "tolerance"},
	} {
		_, err := Harmony(ctx, tc.z, tc.covs, tc.o)
		if !errors.Is(err, tc.err) || !strings.Contains(err.Error(), tc.want) {
			t.Errorf("%s: %v (want %v mentioning %q)", tc.name, err, tc.err, tc.want)
		}
	}
	nan := atlas.NewDense(300, 5)
	copy(nan.Data, p.z.Data)
	nan.Data[7*5+2] = float32(math.NaN())
	if _, err := Harmony(ctx, nan, []Covariate{good}, Options{}); !errors.Is(err, ErrNotFinite) || !strings.Contains(err.Error(), "cell 7") {
		t.Errorf("NaN: %v", err)
	}
	cancelled, cancel := context.WithCancel(ctx)
	var calls atomic.Int64
	_, err := Harmony(cancelled, p.z, []Covariate{good}, Options{Progress: func(done, total int64) {
		if calls.Add(1) == 3 {
			cancel()
		}
	}})
	if !errors.Is(err, context.Canceled) {
		t.Errorf("cancelled run: %v", err)
	}
}

// TestProgress checks that progress runs from 0 to the total and never
// backwards.
func TestProgress(t *testing.T) {
	p := newPlanted(600, 8, 3, 2, 4, 1, 3)
	var last, total int64 = -1, 0
	_, err := Harmony(context.Background(), p.z, []Covariate{p.covariate()}, Options{Seed: 1, Progress: func(done, tot int64) {
		if done < last || done > tot {
			t.Errorf("progress %d of %d after %d", done, tot, last)
		}
		last, total = done, tot
	}})
	if err != nil {
		t.Fatal(err)
	}
	if last != total || total != DefaultRounds*(DefaultIter+1) {
		t.Fatalf("progress ended at %d of %d", last, total)
	}
}
