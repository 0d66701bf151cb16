// Package neighbors finds the k nearest neighbours of every cell in feature
// space, exactly for small inputs and approximately for large ones.
package neighbors

import "fmt"

// Graph is a k-nearest-neighbour graph of N points. Row i lists the K
// neighbours of point i, nearest first, never i itself:
//
//	Index[i*K : (i+1)*K]  neighbour ids
//	Dist[i*K : (i+1)*K]   their distances (Euclidean, or cosine distance 1−cos)
//
// Ties in distance are broken by the smaller id.
type Graph struct {
	N, K  int
	Index []int32
	Dist  []float32
}

// Neighbors returns the ids and distances of point i's neighbours; the slices
// alias g.
func (g *Graph) Neighbors(i int) ([]int32, []float32) {
	return g.Index[i*g.K : (i+1)*g.K], g.Dist[i*g.K : (i+1)*g.K]
}

// Truncate returns a graph holding only the first k neighbours of each point
// (k ≤ g.K). It returns g itself when k == g.K.
func (g *Graph) Truncate(k int) *Graph {
	if k == g.K {
		return g
	}
	if k > g.K || k < 1 {
		panic(fmt.Sprintf("neighbors: Truncate(%d) of a graph with K=%d", k, g.K))
	}
	out := &Graph{N: g.N, K: k, Index: make([]int32, g.N*k), Dist: make([]float32, g.N*k)}
	for i := 0; i < g.N; i++ {
		copy(out.Index[i*k:(i+1)*k], g.Index[i*g.K:i*g.K+k])
		copy(out.Dist[i*k:(i+1)*k], g.Dist[i*g.K:i*g.K+k])
	}
	return out
}
