package cluster

import (
	"errors"
	"math/rand/v2"
	"testing"

	"lodestone/compute/neighbors"
)

func TestFromKNN(t *testing.T) {
	// Reference: the union of the directed kNN relation built entry by entry
	// in a dense n×n table (exact slow computation), for every k ≤ K.
	g, _ := mixtureKNN(400, 3, 12, 1)
	for _, k := range []int{1, 5, 12} {
		a, err := FromKNN(g, k)
		if err != nil {
			t.Fatal(err)
		}
		if err := a.Validate(); err != nil {
			t.Fatal(err)
		}
		want := make([][]bool, g.N)
		for i := range want {
			want[i] = make([]bool, g.N)
		}
		for i := 0; i < g.N; i++ {
			ids, _ := g.Neighbors(i)
			for _, j := range ids[:k] {
				want[i][j], want[j][i] = true, true
			}
		}
		for i := 0; i < g.N; i++ {
			for j := 0; j < g.N; j++ {
				w := a.At(i, j)
				if (w != 0) != want[i][j] || (w != 0 && w != 1) {
					t.Fatalf("k=%d: A[%d][%d] = %v, want edge %v", k, i, j, w, want[i][j])
				}
			}
		}
	}
}

func TestFromKNNRepeatedIDs(t *testing.T) {
	// An approximate search may list a neighbour twice; the edge is still
	// one edge of weight 1 (common practice).
	g := &neighbors.Graph{N: 3, K: 2, Index: []int32{1, 1, 0, 0, 1, 1}, Dist: make([]float32, 6)}
	a, err := FromKNN(g, 2)
	if err != nil {
		t.Fatal(err)
	}
	for _, e := range [][3]int{{0, 1, 1}, {1, 0, 1}, {2, 1, 1}, {1, 2, 1}, {0, 2, 0}, {0, 0, 0}} {
		if got := a.At(e[0], e[1]); got != float32(e[2]) {
			t.Errorf("A[%d][%d] = %v, want %d", e[0], e[1], got, e[2])
		}
	}
	if a.NNZ() != 4 {
		t.Errorf("%d entries, want 4", a.NNZ())
	}
}

func TestFromKNNErrors(t *testing.T) {
	ok := &neighbors.Graph{N: 3, K: 1, Index: []int32{1, 2, 0}, Dist: make([]float32, 3)}
	self := &neighbors.Graph{N: 3, K: 1, Index: []int32{1, 1, 0}, Dist: make([]float32, 3)}
	far := &neighbors.Graph{N: 3, K: 1, Index: []int32{1, 2, 3}, Dist: make([]float32, 3)}
	short := &neighbors.Graph{N: 3, K: 2, Index: []int32{1, 2, 0}}
	for _, tc := range []struct {
		name string
		g    *neighbors.Graph
		k    int
		want error
		node int
	}{
		{"k too large", ok, 2, ErrK, -1},
		{"k zero", ok, 0, ErrK, -1},
		{"self", self, 1, ErrNeighbor, 1},
		{"out of range", far, 1, ErrNeighbor, 2},
		{"short index", short, 1, ErrMalformed, -1},
		{"nil", nil, 1, ErrMalformed, -1},
	} {
		_, err := FromKNN(tc.g, tc.k)
		var ge *GraphError
		if !errors.Is(err, tc.want) || !errors.As(err, &ge) || ge.Node != tc.node {
			t.Errorf("%s: err = %v, want %v at node %d", tc.name, err, tc.want, tc.node)
		}
	}
}

func TestGridKNN(t *testing.T) {
	// The test helper's grid search against brute force (exact slow
	// computation): same neighbours, same order.
	rng := rand.New(rand.NewPCG(2, 3))
	xy := make([][2]float64, 500)
	for i := range xy {
		xy[i] = [2]float64{rng.NormFloat64() * 3, rng.Float64()}
	}
	g := gridKNN(xy, 7)
	for i := range xy {
		ids, _ := g.Neighbors(i)
		for s, j := range ids {
			dj := dist2(xy[i], xy[j])
			closer := 0
			for m := range xy {
				if dm := dist2(xy[i], xy[m]); m != i && (dm < dj || (dm == dj && m < int(j))) {
					closer++
				}
			}
			if closer != s {
				t.Fatalf("point %d: neighbour %d (id %d) has %d points before it", i, s, j, closer)
			}
		}
	}
}

func dist2(p, q [2]float64) float64 {
	dx, dy := p[0]-q[0], p[1]-q[1]
	return dx*dx + dy*dy
}
