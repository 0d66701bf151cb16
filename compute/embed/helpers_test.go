package embed

import (
	"context"
	"math"
	"os"
	"slices"
	"testing"

	"lodestone/compute/affinity"
	"lodestone/compute/atlas"
	"lodestone/compute/neighbors"
	"lodestone/compute/parallel"
	"lodestone/compute/sparse"
)

// bruteKNN returns the exact k-nearest-neighbour graph of the rows of x.
func bruteKNN(x *atlas.Dense, k int) *neighbors.Graph {
	n, d := x.Rows, x.Cols
	g := &neighbors.Graph{N: n, K: k, Index: make([]int32, n*k), Dist: make([]float32, n*k)}
	parallel.For(n, 0, func(lo, hi, _ int) {
		type cand struct {
			d float64
			j int32
		}
		cands := make([]cand, n)
		for i := lo; i < hi; i++ {
			xi := x.Row(i)
			for j := 0; j < n; j++ {
				xj := x.Data[j*d : (j+1)*d]
				var s float64
				for t := range xi {
					v := float64(xi[t]) - float64(xj[t])
					s += v * v
				}
				cands[j] = cand{s, int32(j)}
			}
			cands[i].d = math.Inf(1)
			slices.SortFunc(cands, func(a, b cand) int {
				if a.d != b.d {
					if a.d < b.d {
						return -1
					}
					return 1
				}
				return int(a.j - b.j)
			})
			for a := 0; a < k; a++ {
				g.Index[i*k+a] = cands[a].j
				g.Dist[i*k+a] = float32(math.Sqrt(cands[a].d))
			}
		}
	})
	return g
}

// writeText writes s to path.
func writeText(t *testing.T, path, s string) {
	t.Helper()
	if err := os.WriteFile(path, []byte(s), 0o644); err != nil {
		t.Fatal(err)
	}
}

// affinityOf returns the perplexity-30 affinities of the rows of x.
func affinityOf(t testing.TB, x *atlas.Dense, perplexity float64) *sparse.CSR {
	t.Helper()
	g := bruteKNN(x, min(x.Rows-1, int(3*perplexity)))
	p, err := affinity.Perplexity(context.Background(), g, perplexity, 0)
	if err != nil {
		t.Fatal(err)
	}
	return p
}
