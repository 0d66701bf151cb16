package cluster

import (
	"context"
	"fmt"
	"math"
	"slices"

	"lodestone/compute/neighbors"
	"lodestone/compute/parallel"
	"lodestone/compute/sparse"
)

// FromKNN returns the undirected graph of the first k neighbours of every
// point of g as a symmetric N×N matrix with unit weights:
//
//	A_ij = 1  if j is among the first k neighbours of i, or i among those of j
//	A_ij = 0  otherwise, and on the diagonal
//
// (the union of the directed k-nearest-neighbour relation, common practice
// for graph-based clustering of cells). Column indices are sorted within each
// row. It requires 1 ≤ k ≤ g.K and every neighbour id in [0, g.N) and
// different from its point; otherwise it returns a *GraphError wrapping
// ErrK or ErrNeighbor. Rows are built in parallel on all processors; the
// result does not depend on the number of threads.
func FromKNN(g *neighbors.Graph, k int) (*sparse.CSR, error) {
	if g == nil || g.N < 0 || g.K < 0 || len(g.Index) != g.N*g.K {
		return nil, &GraphError{What: "neighbour graph", Node: -1, Neighbor: -1, Err: ErrMalformed}
	}
	if k < 1 || k > g.K {
		return nil, &GraphError{What: "neighbour graph", Node: -1, Neighbor: -1,
			Err: fmt.Errorf("%w: k = %d with %d neighbours stored", ErrK, k, g.K)}
	}
	n := g.N
	threads := parallel.Threads(0)

	// Out-lists: the first k neighbours of each point, sorted by id, with
	// repeats removed. outLen[i] ≤ k entries start at out[i*k].
	out := make([]int32, n*k)
	outLen := make([]int32, n)
	bounds := parallel.Blocks(n, threads)
	firstErr := make([]error, len(bounds)-1)
	parallel.For(n, threads, func(lo, hi, block int) {
		for i := lo; i < hi; i++ {
			row := out[i*k : (i+1)*k]
			copy(row, g.Index[i*g.K:i*g.K+k])
			for s, j := range row {
				if j < 0 || int(j) >= n || int(j) == i {
					firstErr[block] = &GraphError{What: "neighbour graph", Node: i, Neighbor: s,
						Err: fmt.Errorf("%w: id %d among %d points", ErrNeighbor, j, n)}
					return
				}
			}
			slices.Sort(row)
			outLen[i] = int32(len(slices.Compact(row)))
		}
	})
	for _, err := range firstErr {
		if err != nil {
			return nil, err
		}
	}

	// In-lists: the points that list j, in increasing order.
	inPtr := make([]int, n+1)
	for i := 0; i < n; i++ {
		for _, j := range out[i*k : i*k+int(outLen[i])] {
			inPtr[j+1]++
		}
	}
	for j := 0; j < n; j++ {
		inPtr[j+1] += inPtr[j]
	}
	in := make([]int32, inPtr[n])
	next := slices.Clone(inPtr[:n])
	for i := 0; i < n; i++ {
		for _, j := range out[i*k : i*k+int(outLen[i])] {
			in[next[j]] = int32(i)
			next[j]++
		}
	}

	// Row i of the union merges the two sorted lists; a first pass counts,
	// a second writes.
	a := &sparse.CSR{Rows: n, Cols: n, RowPtr: make([]int64, n+1)}
	merge := func(i int, dst []int32) int {
		x, y := out[i*k:i*k+int(outLen[i])], in[inPtr[i]:inPtr[i+1]]
		m := 0
		for len(x) > 0 || len(y) > 0 {
			var v int32
			switch {
			case len(y) == 0 || (len(x) > 0 && x[0] < y[0]):
				v, x = x[0], x[1:]
			case len(x) == 0 || y[0] < x[0]:
				v, y = y[0], y[1:]
			default:
				v, x, y = x[0], x[1:], y[1:]
			}
			if dst != nil {
				dst[m] = v
			}
			m++
		}
		return m
	}
	parallel.For(n, threads, func(lo, hi, _ int) {
		for i := lo; i < hi; i++ {
			a.RowPtr[i+1] = int64(merge(i, nil))
		}
	})
	for i := 0; i < n; i++ {
		a.RowPtr[i+1] += a.RowPtr[i]
	}
	a.ColIdx = make([]int32, a.RowPtr[n])
	a.Val = make([]float32, a.RowPtr[n])
	parallel.For(n, threads, func(lo, hi, _ int) {
		for i := lo; i < hi; i++ {
			merge(i, a.ColIdx[a.RowPtr[i]:a.RowPtr[i+1]])
		}
		for p := a.RowPtr[lo]; p < a.RowPtr[hi]; p++ {
			a.Val[p] = 1
		}
	})
	return a, nil
}

// graph is the working form of a weighted undirected graph: off-diagonal
// edges with positive weight in adjacency lists (each edge in both lists),
// diagonal weights apart.
type graph struct {
	n     int
	start []int // adjacency of node v: adj[start[v]:start[v+1]], w likewise
	adj   []int32
	w     []float64
	self  []float64 // A_vv
	deg   []float64 // k_v = Σ_u A_vu, diagonal included
	total float64   // 2m = Σ_v k_v
}

// newGraph checks that a is a square, well-formed, symmetric matrix of finite
// non-negative weights and returns it in working form. Zero weights are
// dropped. Rows are checked and copied in parallel; the error reported is
// the one in the first faulty row whatever the number of threads.
func newGraph(ctx context.Context, a *sparse.CSR) (*graph, error) {
	if a == nil {
		return nil, &GraphError{What: "graph", Node: -1, Neighbor: -1, Err: ErrMalformed}
	}
	if a.Rows != a.Cols {
		return nil, &GraphError{What: "graph", Node: -1, Neighbor: -1,
			Err: fmt.Errorf("%w: %d×%d", ErrNotSquare, a.Rows, a.Cols)}
	}
	if err := a.Validate(); err != nil {
		return nil, &GraphError{What: "graph", Node: -1, Neighbor: -1, Err: fmt.Errorf("%w: %v", ErrMalformed, err)}
	}
	n := a.Rows
	g := &graph{n: n, start: make([]int, n+1), self: make([]float64, n), deg: make([]float64, n)}
	const chunk = 2048
	faults := make([]error, (n+chunk-1)/chunk)
	err := parallel.ForChunks(ctx, n, chunk, 0, func(lo, hi, _ int) {
		for i := lo; i < hi; i++ {
			cols, vals := a.Row(i)
			for p, j := range cols {
				v := vals[p]
				if !(v >= 0) || math.IsInf(float64(v), 0) {
					faults[lo/chunk] = &GraphError{What: "graph", Node: i, Neighbor: int(j),
						Err: fmt.Errorf("%w: %v", ErrWeight, v)}
					return
				}
				if int(j) != i && a.At(int(j), i) != v {
					faults[lo/chunk] = &GraphError{What: "graph", Node: i, Neighbor: int(j),
						Err: fmt.Errorf("%w: %v here, %v mirrored", ErrAsymmetric, v, a.At(int(j), i))}
					return
				}
				switch {
				case int(j) == i:
					g.self[i] = float64(v)
				case v > 0:
					g.start[i+1]++
				}
				g.deg[i] += float64(v)
			}
		}
	})
	if err != nil {
		return nil, err
	}
	for _, err := range faults {
		if err != nil {
			return nil, err
		}
	}
	for i := 0; i < n; i++ {
		g.start[i+1] += g.start[i]
		g.total += g.deg[i]
	}
	g.adj = make([]int32, g.start[n])
	g.w = make([]float64, g.start[n])
	parallel.For(n, 0, func(lo, hi, _ int) {
		for i := lo; i < hi; i++ {
			cols, vals := a.Row(i)
			p := g.start[i]
			for q, j := range cols {
				if int(j) != i && vals[q] > 0 {
					g.adj[p], g.w[p] = j, float64(vals[q])
					p++
				}
			}
		}
	})
	if g.total == 0 {
		return nil, &GraphError{What: "graph", Node: -1, Neighbor: -1, Err: ErrNoEdges}
	}
	return g, nil
}
