package neighbors

import (
	"context"
	"math"
	"math/rand/v2"
	"sort"
	"testing"

	"lodestone/compute/atlas"
)

// randomMatrix returns n×dim standard normal values.
func randomMatrix(n, dim int, seed uint64) *atlas.Dense {
	rng := rand.New(rand.NewPCG(seed, 99))
	x := atlas.NewDense(n, dim)
	for i := range x.Data {
		x.Data[i] = float32(rng.NormFloat64())
	}
	return x
}

// naiveNeighbors is the exact slow computation: every distance in float64,
// sorted by (distance, id). cosine selects 1 − cos instead of ‖x − y‖.
func naiveNeighbors(x *atlas.Dense, k int, cosine bool) ([][]int32, [][]float64) {
	ids := make([][]int32, x.Rows)
	dists := make([][]float64, x.Rows)
	type cand struct {
		d  float64
		id int32
	}
	c := make([]cand, 0, x.Rows)
	for i := 0; i < x.Rows; i++ {
		c = c[:0]
		for j := 0; j < x.Rows; j++ {
			if j == i {
				continue
			}
			var d float64
			if cosine {
				var xy, xx, yy float64
				for t := 0; t < x.Cols; t++ {
					a, b := float64(x.At(i, t)), float64(x.At(j, t))
					xy, xx, yy = xy+a*b, xx+a*a, yy+b*b
				}
				d = 1 - xy/math.Sqrt(xx*yy)
			} else {
				for t := 0; t < x.Cols; t++ {
					e := float64(x.At(i, t)) - float64(x.At(j, t))
					d += e * e
				}
				d = math.Sqrt(d)
			}
			c = append(c, cand{d, int32(j)})
		}
		sort.Slice(c, func(a, b int) bool { return c[a].d < c[b].d || c[a].d == c[b].d && c[a].id < c[b].id })
		for _, e := range c[:k] {
			ids[i] = append(ids[i], e.id)
			dists[i] = append(dists[i], e.d)
		}
	}
	return ids, dists
}

// checkAgainst compares row r of g (the neighbours of point i) with the
// float64 reference: distances to tol (absolute, plus relative), and ids
// equal except where the reference distances of the swapped ids agree to
// tol (float32 rounding may order near-ties differently).
func checkAgainst(t *testing.T, g *Graph, r, i int, want []int32, wantD []float64, tol float64) {
	t.Helper()
	ids, ds := g.Neighbors(r)
	for e := range want {
		if math.Abs(float64(ds[e])-wantD[e]) > tol*(1+wantD[e]) {
			t.Fatalf("point %d neighbour %d: distance %g, float64 reference %g", i, e, ds[e], wantD[e])
		}
		if ids[e] != want[e] {
			// Accept a swap only between reference distances that tie to tol.
			found := false
			for f := range want {
				if want[f] == ids[e] && math.Abs(wantD[f]-wantD[e]) <= tol*(1+wantD[e]) {
					found = true
				}
			}
			if !found {
				t.Fatalf("point %d neighbour %d: id %d, reference %d (distance %g)", i, e, ids[e], want[e], wantD[e])
			}
		}
	}
}

// TestExactAgainstNaive checks Exact and ExactFor against the float64
// brute-force computation above (an exact slow computation), for both
// metrics and dimensions with and without a masked tail.
func TestExactAgainstNaive(t *testing.T) {
	ctx := context.Background()
	for _, dim := range []int{3, 16, 50} {
		x := randomMatrix(400, dim, uint64(dim))
		for _, m := range []Metric{Euclidean, Cosine} {
			const k = 12
			g, err := Exact(ctx, x, Options{K: k, Metric: m, Threads: 2})
			if err != nil {
				t.Fatal(err)
			}
			if g.N != x.Rows || g.K != k {
				t.Fatalf("graph %d×%d, want %d×%d", g.N, g.K, x.Rows, k)
			}
			want, wantD := naiveNeighbors(x, k, m == Cosine)
			for i := 0; i < x.Rows; i++ {
				checkAgainst(t, g, i, i, want[i], wantD[i], 1e-5)
			}
			rows := []int{399, 0, 17, 17, 250}
			s, err := ExactFor(ctx, x, rows, Options{K: k, Metric: m})
			if err != nil {
				t.Fatal(err)
			}
			for r, i := range rows {
				checkAgainst(t, s, r, i, want[i], wantD[i], 1e-5)
			}
		}
	}
}

// TestExactDuplicates checks the tie rules on data made of exact copies:
// zero distances, ties by smaller id, never the point itself, never a
// repeated neighbour — again against the float64 brute force.
func TestExactDuplicates(t *testing.T) {
	base := randomMatrix(20, 5, 7)
	x := atlas.NewDense(200, 5)
	for i := 0; i < 200; i++ {
		copy(x.Row(i), base.Row(i%20)) // ten copies of each point, interleaved
	}
	for _, k := range []int{5, 9, 15} {
		g, err := Exact(context.Background(), x, Options{K: k})
		if err != nil {
			t.Fatal(err)
		}
		want, wantD := naiveNeighbors(x, k, false)
		for i := 0; i < x.Rows; i++ {
			ids, ds := g.Neighbors(i)
			// The nine other copies come first at distance exactly 0; then
			// groups of ten copies at equal distances, ordered by id.
			for e := range ids {
				bad := ids[e] != want[i][e] || math.Abs(float64(ds[e])-wantD[i][e]) > 1e-5*(1+wantD[i][e])
				if e < 9 && ds[e] != 0 || bad {
					t.Fatalf("k=%d point %d neighbour %d: (%d, %g), want (%d, %g)", k, i, e, ids[e], ds[e], want[i][e], wantD[i][e])
				}
			}
			checkValidRow(t, g, i)
		}
	}
}

// checkValidRow checks the structural promises of a graph row: no self, no
// repeated id, ids in range, distances ascending with ties by smaller id.
func checkValidRow(t *testing.T, g *Graph, i int) {
	t.Helper()
	ids, ds := g.Neighbors(i)
	seen := make(map[int32]bool, len(ids))
	for e, id := range ids {
		if int(id) == i || id < 0 || int(id) >= g.N || seen[id] {
			t.Fatalf("point %d: neighbour %d is %d (self, out of range or repeated) in %v", i, e, id, ids)
		}
		seen[id] = true
		if e > 0 && (ds[e] < ds[e-1] || ds[e] == ds[e-1] && id < ids[e-1]) {
			t.Fatalf("point %d: neighbours %d, %d out of order: (%d, %g) after (%d, %g)", i, e-1, e, id, ds[e], ids[e-1], ds[e-1])
		}
	}
}

func posInf() float64 { return math.Inf(1) }
