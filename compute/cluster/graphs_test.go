package cluster

import (
	"math"
	"math/rand/v2"
	"slices"
	"sort"

	"lodestone/compute/neighbors"
	"lodestone/compute/sparse"
)

// karateEdges is Zachary's karate club network (Zachary 1977, J. Anthropol.
// Res. 33:452–473): 34 members, 78 friendships, each with the number of
// contexts in which the two members interacted as its weight. Copied from
// networkx 2.8.8's karate_club_graph(); TestKarateEdgesMatchNetworkx checks
// the copy against it.
var karateEdges = [][3]int{
	{0, 1, 4}, {0, 2, 5}, {0, 3, 3}, {0, 4, 3}, {0, 5, 3}, {0, 6, 3}, {0, 7, 2}, {0, 8, 2}, {0, 10, 2},
	{0, 11, 3}, {0, 12, 1}, {0, 13, 3}, {0, 17, 2}, {0, 19, 2}, {0, 21, 2}, {0, 31, 2}, {1, 2, 6},
	{1, 3, 3}, {1, 7, 4}, {1, 13, 5}, {1, 17, 1}, {1, 19, 2}, {1, 21, 2}, {1, 30, 2}, {2, 3, 3},
	{2, 7, 4}, {2, 8, 5}, {2, 9, 1}, {2, 13, 3}, {2, 27, 2}, {2, 28, 2}, {2, 32, 2}, {3, 7, 3},
	{3, 12, 3}, {3, 13, 3}, {4, 6, 2}, {4, 10, 3}, {5, 6, 5}, {5, 10, 3}, {5, 16, 3}, {6, 16, 3},
	{8, 30, 3}, {8, 32, 3}, {8, 33, 4}, {9, 33, 2}, {13, 33, 3}, {14, 32, 3}, {14, 33, 2}, {15, 32, 3},
	{15, 33, 4}, {18, 32, 1}, {18, 33, 2}, {19, 33, 1}, {20, 32, 3}, {20, 33, 1}, {22, 32, 2},
	{22, 33, 3}, {23, 25, 5}, {23, 27, 4}, {23, 29, 3}, {23, 32, 5}, {23, 33, 4}, {24, 25, 2},
	{24, 27, 3}, {24, 31, 2}, {25, 31, 7}, {26, 29, 4}, {26, 33, 2}, {27, 33, 4}, {28, 31, 2},
	{28, 33, 2}, {29, 32, 4}, {29, 33, 2}, {30, 32, 3}, {30, 33, 3}, {31, 32, 4}, {31, 33, 4},
	{32, 33, 5},
}

// karateSplit is the club's split into two factions recorded by Zachary
// (1977), as networkx 2.8.8 stores it in the nodes' "club" attribute.
var karateSplit = []int32{0, 0, 0, 0, 0, 0, 0, 0, 0, 1, 0, 0, 0, 0, 1, 1, 0, 0, 1, 0, 1, 0, 1, 1, 1, 1, 1, 1, 1, 1, 1, 1, 1, 1}

// karate returns the karate club graph, with the recorded weights or with
// unit weights.
func karate(weighted bool) *sparse.CSR {
	edges := make([][3]float64, len(karateEdges))
	for e, ed := range karateEdges {
		w := 1.0
		if weighted {
			w = float64(ed[2])
		}
		edges[e] = [3]float64{float64(ed[0]), float64(ed[1]), w}
	}
	return fromEdges(34, edges)
}

// fromEdges builds a symmetric CSR matrix from undirected edges {i, j, w};
// an edge {i, i, w} sets the diagonal entry A_ii = w. Repeated edges add.
func fromEdges(n int, edges [][3]float64) *sparse.CSR {
	rows := make([]map[int32]float32, n)
	for i := range rows {
		rows[i] = map[int32]float32{}
	}
	for _, e := range edges {
		i, j, w := int(e[0]), int(e[1]), float32(e[2])
		rows[i][int32(j)] += w
		if i != j {
			rows[j][int32(i)] += w
		}
	}
	a := &sparse.CSR{Rows: n, Cols: n, RowPtr: make([]int64, n+1)}
	for i, r := range rows {
		cols := make([]int32, 0, len(r))
		for j := range r {
			cols = append(cols, j)
		}
		slices.Sort(cols)
		for _, j := range cols {
			a.ColIdx = append(a.ColIdx, j)
			a.Val = append(a.Val, r[j])
		}
		a.RowPtr[i+1] = int64(len(a.ColIdx))
	}
	return a
}

// planted returns a planted-partition graph (Condon & Karp 2001): groups of
// size nodes each, every pair joined with probability pIn inside a group and
// pOut between groups, and the planted group of every node.
func planted(groups, size int, pIn, pOut float64, seed uint64) (*sparse.CSR, []int32) {
	n := groups * size
	rng := rand.New(rand.NewPCG(seed, 7))
	truth := make([]int32, n)
	for v := range truth {
		truth[v] = int32(v / size)
	}
	var edges [][3]float64
	for i := 0; i < n; i++ {
		for j := i + 1; j < n; j++ {
			p := pOut
			if truth[i] == truth[j] {
				p = pIn
			}
			if rng.Float64() < p {
				edges = append(edges, [3]float64{float64(i), float64(j), 1})
			}
		}
	}
	return fromEdges(n, edges), truth
}

// mixtureKNN draws n points in the plane from a mixture of groups unit
// Gaussian blobs centred on a grid of spacing 12 and returns their exact k-nearest-neighbour graph, found with a
// uniform grid, and the blob of every point.
func mixtureKNN(n, groups, k int, seed uint64) (*neighbors.Graph, []int32) {
	rng := rand.New(rand.NewPCG(seed, 11))
	centres := make([][2]float64, groups)
	for c := range centres {
		centres[c] = [2]float64{float64(c%4) * 12, float64(c/4) * 12}
	}
	xy := make([][2]float64, n)
	truth := make([]int32, n)
	for i := range xy {
		c := rng.IntN(groups)
		truth[i] = int32(c)
		xy[i] = [2]float64{centres[c][0] + rng.NormFloat64(), centres[c][1] + rng.NormFloat64()}
	}
	return gridKNN(xy, k), truth
}

// gridKNN returns the exact k-nearest-neighbour graph of points in the
// plane: points are binned on a grid of about four per cell, and rings of
// cells around each point are searched until no unseen cell can hold a point
// nearer than the k-th found. Ties are broken by the smaller id.
func gridKNN(xy [][2]float64, k int) *neighbors.Graph {
	n := len(xy)
	lo := [2]float64{math.Inf(1), math.Inf(1)}
	hi := [2]float64{math.Inf(-1), math.Inf(-1)}
	for _, p := range xy {
		for d := 0; d < 2; d++ {
			lo[d], hi[d] = min(lo[d], p[d]), max(hi[d], p[d])
		}
	}
	side := math.Sqrt((hi[0] - lo[0]) * (hi[1] - lo[1]) * 4 / float64(n))
	nx := int((hi[0]-lo[0])/side) + 1
	ny := int((hi[1]-lo[1])/side) + 1
	cellOf := func(p [2]float64) (int, int) {
		return int((p[0] - lo[0]) / side), int((p[1] - lo[1]) / side)
	}
	start := make([]int, nx*ny+1)
	for _, p := range xy {
		cx, cy := cellOf(p)
		start[cy*nx+cx+1]++
	}
	for c := 0; c < nx*ny; c++ {
		start[c+1] += start[c]
	}
	members := make([]int32, n)
	next := slices.Clone(start)
	for i, p := range xy {
		cx, cy := cellOf(p)
		members[next[cy*nx+cx]] = int32(i)
		next[cy*nx+cx]++
	}
	g := &neighbors.Graph{N: n, K: k, Index: make([]int32, n*k), Dist: make([]float32, n*k)}
	type cand struct {
		d  float64
		id int32
	}
	var found []cand
	for i, p := range xy {
		cx, cy := cellOf(p)
		found = found[:0]
		for r := 0; ; r++ {
			for y := cy - r; y <= cy+r; y++ {
				for x := cx - r; x <= cx+r; x++ {
					if x < 0 || y < 0 || x >= nx || y >= ny || (max(abs(x-cx), abs(y-cy)) != r) {
						continue
					}
					for _, j := range members[start[y*nx+x]:start[y*nx+x+1]] {
						if int(j) != i {
							dx, dy := xy[j][0]-p[0], xy[j][1]-p[1]
							found = append(found, cand{math.Sqrt(dx*dx + dy*dy), j})
						}
					}
				}
			}
			sort.Slice(found, func(a, b int) bool {
				if found[a].d != found[b].d {
					return found[a].d < found[b].d
				}
				return found[a].id < found[b].id
			})
			if len(found) > k {
				found = found[:k]
			}
			// Every point not yet seen lies at least r·side away.
			if len(found) == k && found[k-1].d <= float64(r)*side {
				break
			}
			if r > nx+ny {
				break
			}
		}
		for s, c := range found {
			g.Index[i*k+s] = c.id
			g.Dist[i*k+s] = float32(c.d)
		}
	}
	return g
}

func abs(x int) int {
	if x < 0 {
		return -x
	}
	return x
}

// connected reports whether the nodes of every community induce a connected
// subgraph of a: a breadth-first search inside the community from its first
// node must reach all its nodes. It returns a node that was not reached.
func connected(a *sparse.CSR, memb []int32) (missed int, ok bool) {
	seen := make([]bool, a.Rows)
	started := map[int32]bool{}
	for s, c := range memb {
		if started[c] {
			continue
		}
		started[c] = true
		queue := []int{s}
		seen[s] = true
		for len(queue) > 0 {
			v := queue[0]
			queue = queue[1:]
			cols, vals := a.Row(v)
			for p, u := range cols {
				if vals[p] > 0 && memb[u] == c && !seen[u] {
					seen[u] = true
					queue = append(queue, int(u))
				}
			}
		}
	}
	for v, ok := range seen {
		if !ok {
			return v, false
		}
	}
	return 0, true
}
