package quality

import (
	"context"
	"errors"
	"lodestone/internal/pyref"
	"math"
	"math/rand/v2"
	"os"
	"path/filepath"
	"slices"
	"sort"
	"strconv"
	"strings"
	"testing"

	"lodestone/compute/atlas"
)

func randomData(n, dim int, seed uint64) *atlas.Dense {
	rng := rand.New(rand.NewPCG(seed, 5))
	x := atlas.NewDense(n, dim)
	for i := range x.Data {
		x.Data[i] = float32(rng.NormFloat64())
	}
	return x
}

// noisyLayout returns the first two coordinates of x plus noise, a map that
// keeps some but not all of the structure.
func noisyLayout(x *atlas.Dense, noise float64, seed uint64) []float32 {
	rng := rand.New(rand.NewPCG(seed, 6))
	out := make([]float32, 2*x.Rows)
	for i := 0; i < x.Rows; i++ {
		out[2*i] = x.At(i, 0) + float32(noise*rng.NormFloat64())
		out[2*i+1] = x.At(i, 1) + float32(noise*rng.NormFloat64())
	}
	return out
}

// naiveKNN is the exact slow computation: the k nearest of point i among
// points (rows of a function giving squared float64 distances), sorted by
// (distance, id), i excluded.
func naiveKNN(n, i, k int, d func(i, j int) float64) []int32 {
	ids := make([]int32, 0, n-1)
	for j := 0; j < n; j++ {
		if j != i {
			ids = append(ids, int32(j))
		}
	}
	sort.Slice(ids, func(a, b int) bool {
		da, db := d(i, int(ids[a])), d(i, int(ids[b]))
		return da < db || da == db && ids[a] < ids[b]
	})
	return ids[:k]
}

func layoutDist(xy []float32) func(i, j int) float64 {
	return func(i, j int) float64 {
		dx, dy := float64(xy[2*i])-float64(xy[2*j]), float64(xy[2*i+1])-float64(xy[2*j+1])
		return dx*dx + dy*dy
	}
}

// TestGridNearest checks the grid search against brute force (an exact
// slow computation) on spread, clumped, collinear and duplicated layouts.
func TestGridNearest(t *testing.T) {
	rng := rand.New(rand.NewPCG(1, 1))
	spread := make([]float32, 2*700)
	for i := range spread {
		spread[i] = float32(rng.NormFloat64() * 10)
	}
	clumped := make([]float32, 2*700)
	for i := 0; i < 700; i++ {
		c := float32(i%3) * 100
		clumped[2*i], clumped[2*i+1] = c+float32(rng.NormFloat64()), float32(rng.NormFloat64()*0.01)
	}
	line := make([]float32, 2*300)
	for i := 0; i < 300; i++ {
		line[2*i] = float32(rng.IntN(40)) // many exact ties
	}
	same := make([]float32, 2*50)
	for _, c := range []struct {
		name string
		xy   []float32
	}{{"spread", spread}, {"clumped", clumped}, {"line", line}, {"same", same}} {
		n := len(c.xy) / 2
		g := newGrid(c.xy, n)
		for _, k := range []int{1, 7, 30} {
			for i := 0; i < n; i++ {
				got := g.nearest(i, k, nil)
				want := naiveKNN(n, i, k, layoutDist(c.xy))
				for e := range want {
					if got[e].id != want[e] {
						t.Fatalf("%s k=%d point %d: neighbour %d is %d, want %d", c.name, k, i, e, got[e].id, want[e])
					}
				}
			}
		}
	}
}

// TestKNNPreservationNaive checks KNNPreservation against a naive float64
// computation of the same definition.
func TestKNNPreservationNaive(t *testing.T) {
	x := randomData(500, 6, 2)
	xy := noisyLayout(x, 0.3, 3)
	const k = 10
	sample := Sample(x.Rows, 120, 4)
	got, err := KNNPreservation(context.Background(), x, xy, k, sample, 2)
	if err != nil {
		t.Fatal(err)
	}
	highDist := func(i, j int) float64 {
		s := 0.0
		for c := 0; c < x.Cols; c++ {
			d := float64(x.At(i, c)) - float64(x.At(j, c))
			s += d * d
		}
		return s
	}
	shared := 0
	for _, i := range sample {
		hi := naiveKNN(x.Rows, i, k, highDist)
		lo := naiveKNN(x.Rows, i, k, layoutDist(xy))
		for _, a := range hi {
			if slices.Contains(lo, a) {
				shared++
			}
		}
	}
	want := float64(shared) / float64(len(sample)*k)
	if math.Abs(got-want) > 1e-12 {
		t.Fatalf("KNNPreservation = %v, naive = %v", got, want)
	}
	if want <= 0.05 || want >= 0.95 {
		t.Fatalf("test layout not informative: preservation %v", want)
	}
	// A map that is the data itself keeps every neighbour (2-D data).
	flat := randomData(300, 2, 9)
	p, err := KNNPreservation(context.Background(), flat, flat.Data, 15, nil, 0)
	if err != nil || p != 1 {
		t.Fatalf("identity map: preservation %v, %v; want 1", p, err)
	}
}

// importCheck starts every reference script with its imports.
const importCheck = `
import sys
import numpy, sklearn
from sklearn.manifold import trustworthiness
`

// sklearnTrust prints sklearn.manifold.trustworthiness(X, Y, n_neighbors=k)
// for each pair of files X, Y and each k given: arguments X1 Y1 X2 Y2 k….
const sklearnTrust = `
pairs = [(numpy.loadtxt(sys.argv[i], ndmin=2), numpy.loadtxt(sys.argv[i + 1], ndmin=2)) for i in (1, 3)]
for x, y in pairs:
    for k in sys.argv[5:]:
        print(repr(float(trustworthiness(x, y, n_neighbors=int(k)))))
`

func writeRows(t *testing.T, name string, rows, cols int, at func(i, j int) float32) string {
	t.Helper()
	var b strings.Builder
	for i := 0; i < rows; i++ {
		for j := 0; j < cols; j++ {
			if j > 0 {
				b.WriteByte(' ')
			}
			b.WriteString(strconv.FormatFloat(float64(at(i, j)), 'g', -1, 32))
		}
		b.WriteByte('\n')
	}
	path := filepath.Join(t.TempDir(), name)
	if err := os.WriteFile(path, []byte(b.String()), 0o644); err != nil {
		t.Fatal(err)
	}
	return path
}

// TestTrustworthinessSklearn compares Trustworthiness with scikit-learn's
// sklearn.manifold.trustworthiness (Debian python3-sklearn) on random data
// and a noisy map, to 1e-6. sklearn ranks the data's neighbours by argsort
// and excludes each point from its own neighbours, as here; the sample is
// all points, and a second case passes sklearn only the sampled rows.
func TestTrustworthinessSklearn(t *testing.T) {
	x := randomData(150, 5, 7)
	xy := noisyLayout(x, 0.5, 8)
	sub := Sample(x.Rows, 80, 3)
	hp := writeRows(t, "high.txt", x.Rows, x.Cols, x.At)
	lp := writeRows(t, "map.txt", x.Rows, 2, func(i, j int) float32 { return xy[2*i+j] })
	hs := writeRows(t, "high-sub.txt", len(sub), x.Cols, func(i, j int) float32 { return x.At(sub[i], j) })
	ls := writeRows(t, "map-sub.txt", len(sub), 2, func(i, j int) float32 { return xy[2*sub[i]+j] })
	ks := []int{1, 5, 12, 30}
	args := []string{}
	for _, k := range ks {
		args = append(args, strconv.Itoa(k))
	}
	ref := runSklearn(t, sklearnTrust, append([]string{hp, lp, hs, ls}, args...)...)
	full, part := ref[:len(ks)], ref[len(ks):]
	for e, k := range ks {
		got, err := Trustworthiness(context.Background(), x, xy, k, nil, 2)
		if err != nil {
			t.Fatal(err)
		}
		if math.Abs(got-full[e]) > 1e-6 {
			t.Errorf("k=%d, all points: %v, sklearn %v", k, got, full[e])
		}
		got, err = Trustworthiness(context.Background(), x, xy, k, sub, 3)
		if err != nil {
			t.Fatal(err)
		}
		if math.Abs(got-part[e]) > 1e-6 {
			t.Errorf("k=%d, sample of %d: %v, sklearn %v", k, len(sub), got, part[e])
		}
	}
}

// runSklearn runs a script under the reference interpreter and parses one
// number a line; it skips the test when scikit-learn is missing.
func runSklearn(t *testing.T, script string, args ...string) []float64 {
	t.Helper()
	out := pyref.Output(t, "numpy, sklearn", importCheck+script, args...)
	var vals []float64
	for _, f := range strings.Fields(string(out)) {
		v, err := strconv.ParseFloat(f, 64)
		if err != nil {
			t.Fatal(err)
		}
		vals = append(vals, v)
	}
	return vals
}

// TestDistanceCorrelationByHand checks the sample distance correlation of
// Székely, Rizzo & Bakirov (2007) on four points worked out by hand.
//
// a: (0,0) (1,0) (2,0) (3,0), distances a_kl = |k − l|:
//
//	0 1 2 3 / 1 0 1 2 / 2 1 0 1 / 3 2 1 0, row means 1.5 1 1 1.5, mean 1.25
//
// b: (0,0) (1,0) (3,0) (2,0), distances:
//
//	0 1 3 2 / 1 0 2 1 / 3 2 0 1 / 2 1 1 0, row means 1.5 1 1.5 1, mean 1.25
//
// Double centring A_kl = a_kl − ā_k − ā_l + 1.25 gives
//
//	A = −1.75 −.25 .75 1.25 / −.25 −.75 .25 .75 / .75 .25 −.75 −.25 / 1.25 .75 −.25 −1.75
//	B = −1.75 −.25 1.25 .75 / −.25 −.75 .75 .25 / 1.25 .75 −1.75 −.25 / .75 .25 −.25 −.75
//
// Σ A∘B = 5 + 1 + 2.5 + 2.5 = 11, Σ A∘A = 5.25 + 1.25 + 1.25 + 5.25 = 13,
// Σ B∘B = 13, so R² = (11/16) / √((13/16)(13/16)) = 11/13 and R = √(11/13).
func TestDistanceCorrelationByHand(t *testing.T) {
	a := []float32{0, 0, 1, 0, 2, 0, 3, 0}
	b := []float32{0, 0, 1, 0, 3, 0, 2, 0}
	got, err := DistanceCorrelation(a, b, nil)
	if err != nil {
		t.Fatal(err)
	}
	if want := math.Sqrt(11.0 / 13); math.Abs(got-want) > 1e-12 {
		t.Fatalf("R = %v, want √(11/13) = %v", got, want)
	}
	// A map and a rotated, scaled, shifted copy have the same distances up
	// to scale: R = 1 (Székely et al. 2007, Theorem 3: R is invariant to
	// scale and shift and equals 1 for similar sets).
	x := randomData(200, 2, 4)
	y := make([]float32, len(x.Data))
	c, s := math.Cos(0.7), math.Sin(0.7)
	for i := 0; i < 200; i++ {
		px, py := float64(x.Data[2*i]), float64(x.Data[2*i+1])
		y[2*i], y[2*i+1] = float32(3*(c*px-s*py)+5), float32(3*(s*px+c*py)-2)
	}
	if r, err := DistanceCorrelation(x.Data, y, Sample(200, 150, 1)); err != nil || math.Abs(r-1) > 1e-6 {
		t.Fatalf("similar sets: R = %v, %v; want 1", r, err)
	}
}

// TestLabelAccuracyConstructed checks LabelAccuracy on a hand-made map: two
// tight groups far apart, labelled by group except for one intruder.
func TestLabelAccuracyConstructed(t *testing.T) {
	// Group 0: points 0–4 near (0, 0); group 1: points 5–9 near (100, 0).
	var xy []float32
	for i := 0; i < 10; i++ {
		x := float32(0)
		if i >= 5 {
			x = 100
		}
		xy = append(xy, x+float32(i%5)*0.1, float32(i%5)*0.01)
	}
	labels := []int32{0, 0, 0, 0, 1, 1, 1, 1, 1, -1}
	// k = 3 from each point: its three nearest lie in its own group.
	// Points 0–3 (label 0) see three of {0,1,2,3,4}: at most one 1 → right.
	// Point 4 (label 1, an intruder) sees 1, 2, 3 (label 0) → wrong.
	// Points 5–8 (label 1) see three of {5,…,9}, 9 unlabelled: right.
	// Point 9 has no label and is left out: 8 right of 9 asked.
	got, err := LabelAccuracy(xy, labels, 3, nil)
	if err != nil {
		t.Fatal(err)
	}
	if want := 8.0 / 9; math.Abs(got-want) > 1e-15 {
		t.Fatalf("accuracy %v, want 8/9", got)
	}
	// Ties: k = 2 from point 1 of a line 0 1 2 with labels 5, ?, 7: one vote
	// each, the nearer neighbour (point 0 at distance 1 < point 2 at 1.5)
	// wins, so point 1 labelled 5 is right and labelled 7 is wrong.
	line := []float32{0, 0, 1, 0, 2.5, 0}
	for _, c := range []struct {
		label int32
		want  float64
	}{{5, 1}, {7, 0}} {
		got, err := LabelAccuracy(line, []int32{5, c.label, 7}, 2, []int{1})
		if err != nil || got != c.want {
			t.Fatalf("tie, label %d: %v, %v; want %v", c.label, got, err, c.want)
		}
	}
}

func TestSample(t *testing.T) {
	a := Sample(1000, 100, 3)
	if len(a) != 100 || !sort.IntsAreSorted(a) {
		t.Fatalf("sample of 100: %d rows, sorted %v", len(a), sort.IntsAreSorted(a))
	}
	for i := 1; i < len(a); i++ {
		if a[i] == a[i-1] || a[i] < 0 || a[i] >= 1000 {
			t.Fatalf("bad sample %v", a)
		}
	}
	if !slices.Equal(a, Sample(1000, 100, 3)) || slices.Equal(a, Sample(1000, 100, 4)) {
		t.Fatal("same seed must repeat the sample, another seed must not")
	}
	if len(Sample(10, 50, 1)) != 10 || len(Sample(10, 0, 1)) != 0 {
		t.Fatal("size ≥ n must give all rows, size 0 none")
	}
	// Every row is equally likely (Knuth's Algorithm S): over 2000 seeds,
	// each of 20 rows is drawn about 2000·5/20 = 500 times (binomial sd ≈ 19).
	count := make([]int, 20)
	for s := int64(0); s < 2000; s++ {
		for _, i := range Sample(20, 5, s) {
			count[i]++
		}
	}
	for i, c := range count {
		if c < 500-5*19 || c > 500+5*19 {
			t.Fatalf("row %d drawn %d times of 2000, want about 500", i, c)
		}
	}
}

func TestErrors(t *testing.T) {
	ctx := context.Background()
	x := randomData(50, 3, 1)
	xy := noisyLayout(x, 0.1, 2)
	var ie *InputError
	if _, err := KNNPreservation(ctx, x, xy[:98], 5, nil, 0); !errors.Is(err, ErrShape) {
		t.Errorf("short layout: %v", err)
	}
	bad := slices.Clone(xy)
	bad[2*17+1] = float32(math.NaN())
	if _, err := Trustworthiness(context.Background(), x, bad, 5, nil, 0); !errors.As(err, &ie) || ie.Row != 17 || !errors.Is(err, ErrNotFinite) {
		t.Errorf("NaN in layout row 17: %v", err)
	}
	if _, err := Trustworthiness(context.Background(), x, xy, 25, nil, 0); !errors.Is(err, ErrK) {
		t.Errorf("k = n/2: %v", err)
	}
	if _, err := KNNPreservation(ctx, x, xy, 5, []int{3, 3}, 0); !errors.As(err, &ie) || ie.Row != 1 || !errors.Is(err, ErrSample) {
		t.Errorf("repeated sample row: %v", err)
	}
	if _, err := LabelAccuracy(xy, make([]int32, 50), 5, []int{60}); !errors.Is(err, ErrSample) {
		t.Errorf("sample row out of range: %v", err)
	}
	none := make([]int32, 50)
	for i := range none {
		none[i] = -1
	}
	if _, err := LabelAccuracy(xy, none, 5, nil); !errors.Is(err, ErrNoLabels) {
		t.Errorf("no labels: %v", err)
	}
	if _, err := DistanceCorrelation(xy, xy[:10], nil); !errors.Is(err, ErrShape) {
		t.Errorf("unequal layouts: %v", err)
	}
	if _, err := KNNPreservation(ctx, x, xy, 0, nil, 0); !errors.Is(err, ErrK) {
		t.Errorf("k = 0: %v", err)
	}
}
