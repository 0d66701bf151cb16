package quality

import (
	"errors"
	"math"
	"math/rand/v2"
	"strconv"
	"testing"
)

// sklearnSilhouette prints sklearn.metrics.silhouette_score(X, labels) for
// each pair of files X, labels given.
const sklearnSilhouette = `
from sklearn.metrics import silhouette_score
for i in range(1, len(sys.argv), 2):
    x = numpy.loadtxt(sys.argv[i], ndmin=2)
    lab = numpy.loadtxt(sys.argv[i + 1], dtype=int, ndmin=1)
    print(repr(float(silhouette_score(x, lab))))
`

// TestSilhouetteSklearn compares Silhouette with scikit-learn's
// sklearn.metrics.silhouette_score (Debian python3-sklearn) to 1e-9, on a
// map of five overlapping groups of unequal sizes, one of them a single
// cell (s = 0 by the convention both follow), with some cells unlabelled
// (left out of both computations); once on all cells and once on a sample,
// for which scikit-learn gets the sampled labelled rows. scikit-learn forms
// the distances by the expansion |x|² + |y|² − 2x·y, good to about 1e-8
// relative on these values, which bounds the agreement.
func TestSilhouetteSklearn(t *testing.T) {
	rng := rand.New(rand.NewPCG(5, 1))
	const n = 300
	xy := make([]float32, 2*n)
	labels := make([]int32, n)
	for i := 0; i < n; i++ {
		g := int32(rng.IntN(4))
		switch {
		case i == 17:
			g = 9 // a group of one
		case i%23 == 0:
			g = -1 // unlabelled
		}
		labels[i] = g
		xy[2*i] = float32(1.5*float64(g%2) + rng.NormFloat64())
		xy[2*i+1] = float32(1.2*float64(g/2) + rng.NormFloat64())
	}
	sub := Sample(n, 120, 4)
	keep := func(s []int) []int {
		var out []int
		for _, i := range s {
			if labels[i] >= 0 {
				out = append(out, i)
			}
		}
		return out
	}
	all := keep(orAll(nil, n))
	part := keep(sub)
	files := []string{}
	for _, rows := range [][]int{all, part} {
		files = append(files,
			writeRows(t, "map"+strconv.Itoa(len(rows)), len(rows), 2, func(i, j int) float32 { return xy[2*rows[i]+j] }),
			writeRows(t, "labels"+strconv.Itoa(len(rows)), len(rows), 1, func(i, _ int) float32 { return float32(labels[rows[i]]) }))
	}
	ref := runSklearn(t, sklearnSilhouette, files...)
	for c, s := range [][]int{nil, sub} {
		got, err := Silhouette(xy, labels, s, 3)
		if err != nil {
			t.Fatal(err)
		}
		t.Logf("case %d: silhouette %.12f, scikit-learn %.12f", c, got, ref[c])
		if math.Abs(got-ref[c]) > 1e-9 {
			t.Errorf("case %d: silhouette %.12f, scikit-learn %.12f", c, got, ref[c])
		}
	}
}

// TestSilhouetteByHand checks a case worked out by hand: groups {0, 1} and
// {4} on a line (points 0, 1 and 4). Point 0: a = 1, b = 4, s = 3/4; point
// 1: a = 1, b = 3, s = 2/3; point 4 is alone, s = 0. Mean (3/4 + 2/3)/3 =
// 17/36.
func TestSilhouetteByHand(t *testing.T) {
	got, err := Silhouette([]float32{0, 0, 1, 0, 4, 0}, []int32{0, 0, 1}, nil, 1)
	if err != nil {
		t.Fatal(err)
	}
	if want := 17.0 / 36; math.Abs(got-want) > 1e-15 {
		t.Fatalf("silhouette %v, want 17/36 = %v", got, want)
	}
	if _, err := Silhouette([]float32{0, 0, 1, 0, 4, 0}, []int32{2, 2, -1}, nil, 1); !errors.Is(err, ErrNoLabels) {
		t.Fatalf("one group: got %v, want ErrNoLabels", err)
	}
	if _, err := Silhouette([]float32{0, 0, 1, 0}, []int32{0, 1, 1}, nil, 1); !errors.Is(err, ErrShape) {
		t.Fatalf("short layout: got %v, want ErrShape", err)
	}
}
