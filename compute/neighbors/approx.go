package neighbors

import (
	"context"
	"math/rand/v2"

	"lodestone/compute/atlas"
	"lodestone/compute/parallel"
)

// params are the settings of the approximate search.
type params struct {
	trees    int     // random-projection trees that seed the lists
	leafMin  int     // bound on leaf size: max(leafMin, 2·kb)
	buildMin int     // lists hold kb = max(k, buildMin) neighbours while building
	maxNew   int     // new candidates sampled per point and step
	maxOld   int     // old candidates sampled per point and step
	maxSteps int     // bound on descent steps
	stop     float64 // stop when a step changes fewer than this share of entries (δ)
	renumber bool    // search on a copy of the rows in the order of the first tree's leaves
}

// defaults are the settings Approximate uses, chosen on this package's
// benchmarks (70,000 points in 50 dimensions: a Gaussian mixture and a
// branching path, k = 15 and 90) and on a million points of the mixture
// (k = 90, two cores), where sampling up to 180 new and 180 old candidates
// per point and step instead of 80 and 80 raised the recall from 0.946 to
// 0.980 in the same time: the descent converges in 6 steps instead of 7.
// Up to 1,000 old candidates instead of 180 raised it from 0.9791 to 0.9851
// (5,000 sampled points) for 6 % more processor time: an old candidate left
// out of a step meets that step's new ones never again, and the old sets
// cut are those of hubs, points listed by many others, whose candidates are
// many (most of them in the third and later steps). 150 new candidates and
// 12 trees then gave 0.9833 in 404 s of processor time, against 414 s for
// 180/180 with 16 trees (one run each).
var defaults = params{trees: 12, leafMin: 256, buildMin: 60, maxNew: 150, maxOld: 1000, maxSteps: 20, stop: 0.0005, renumber: true}

// pointBatch is the number of points joined between two applications of
// updates.
const pointBatch = 4096

// Find returns the k-nearest-neighbour graph of the rows of x, searching
// exhaustively (Exact) when opt.Method is ExactSearch, or Auto with at most
// ExactLimit rows, and approximately (Approximate) otherwise. Errors are
// those of Exact.
func Find(ctx context.Context, x *atlas.Dense, opt Options) (*Graph, error) {
	switch {
	case x == nil:
		return nil, &InputError{Row: -1, Column: -1, Err: ErrShape}
	case opt.Method == ExactSearch || opt.Method == Auto && x.Rows <= ExactLimit:
		return Exact(ctx, x, opt)
	}
	return Approximate(ctx, x, opt)
}

// Approximate returns an approximate k-nearest-neighbour graph of the rows of
// x, in the form Exact returns (nearest first, ties by smaller id, no self,
// no repeated neighbour), with each listed distance exact.
//
// It seeds one bounded list of kb = max(k, buildMin) neighbours per point
// with the pairs that share a leaf in a forest of random-projection trees
// (Dasgupta & Freund 2008), then refines the lists by nearest-neighbour
// descent (Dong, Charikar & Li 2011) until a step changes fewer than
// δ = 0.0005 of the entries, and keeps the first k. Points whose lists are
// still not full at the end (possible only with many duplicate points) are
// completed by exhaustive search. The result depends only on x, opt.K,
// opt.Metric and opt.Seed: the same graph comes back for any number of
// threads.
//
// Errors are those of Exact.
func Approximate(ctx context.Context, x *atlas.Dense, opt Options) (*Graph, error) {
	return approximate(ctx, x, opt, defaults)
}

// approximate is Approximate with settings par.
func approximate(ctx context.Context, x *atlas.Dense, opt Options, par params) (*Graph, error) {
	if x == nil {
		return nil, &InputError{Row: -1, Column: -1, Err: ErrShape}
	}
	if err := checkOptions(x.Rows, &opt); err != nil {
		return nil, err
	}
	y, err := prepare(x, &opt)
	if err != nil {
		return nil, err
	}
	threads := parallel.Threads(opt.Threads)
	n, k := y.Rows, opt.K
	kb := min(max(k, par.buildMin), n-1)
	leafSize := max(par.leafMin, 2*kb)

	// Progress: each tree counts one unit built and one joined, each
	// descent step two.
	total := int64(2*par.trees + 2*par.maxSteps + 1)
	pf := opt.Progress
	pf.Report(0, total)

	// Build the forest, one tree per goroutine, each from its own stream.
	trees := make([]*rpTree, par.trees)
	proj := make([][]float32, threads)
	err = parallel.ForChunks(ctx, par.trees, 1, threads, func(t, _, w int) {
		if proj[w] == nil {
			proj[w] = make([]float32, n)
		}
		rng := rand.New(rand.NewPCG(uint64(opt.Seed), uint64(t)+1))
		trees[t] = buildRPTree(ctx, y, leafSize, rng, proj[w])
	})
	if err != nil {
		return nil, err
	}
	proj = nil
	var order []int32
	if par.renumber {
		y, order = renumber(y, trees, threads)
	}
	pf.Report(int64(par.trees), total)
	stage := func(st Stage) {
		if opt.Stages != nil {
			opt.Stages(st)
		}
	}
	stage(Stage{Name: "forest"})

	l := newLists(n, kb, true)
	j := newJoiner(y, l, threads, max(leafSize, par.maxNew+par.maxOld))
	for t, tree := range trees {
		if err := j.joinLeaves(ctx, tree); err != nil {
			return nil, err
		}
		trees[t] = nil
		pf.Report(int64(par.trees+t+1), total)
	}
	dists, changed, _ := j.counts()
	stage(Stage{Name: "leaves", Changed: changed, Distances: dists})
	err = j.descend(ctx, uint64(opt.Seed), par, func(s int, changed int64) {
		pf.Report(int64(2*par.trees+2*s), total)
		dists, _, cut := j.counts()
		stage(Stage{Name: "descent", Step: s, Changed: changed, Distances: dists, Cut: cut})
	})
	if err != nil {
		return nil, err
	}
	j = nil
	l.flag = nil
	if err := completeShort(ctx, y, l, threads); err != nil {
		return nil, err
	}
	g := &Graph{N: n, K: kb, Index: l.idx, Dist: l.dist}
	if order != nil {
		g = restore(g, k, order, threads)
	} else if kb > k {
		g = g.Truncate(k)
	}
	finish(g, opt.Metric, threads)
	stage(Stage{Name: "finish"})
	pf.Report(total, total)
	return g, nil
}

// completeShort replaces the lists that still hold empty slots by the exact
// neighbours of their points.
func completeShort(ctx context.Context, x *atlas.Dense, l *lists, threads int) error {
	var short []int
	for p := 0; p < x.Rows; p++ {
		if !l.full(p) {
			short = append(short, p)
		}
	}
	if len(short) == 0 {
		return nil
	}
	g, err := exactSquared(ctx, x, short, l.k, threads, nil)
	if err != nil {
		return err
	}
	for r, p := range short {
		copy(l.dist[p*l.k:(p+1)*l.k], g.Dist[r*l.k:(r+1)*l.k])
		copy(l.idx[p*l.k:(p+1)*l.k], g.Index[r*l.k:(r+1)*l.k])
	}
	return nil
}

// renumber returns a copy of the rows of x in the order in which the leaves
// of trees[0] list them, so that points close in space are mostly close in
// memory, and order, where new id r stands for old id order[r]. The trees'
// ids are rewritten to the new numbering in place.
func renumber(x *atlas.Dense, trees []*rpTree, threads int) (*atlas.Dense, []int32) {
	n, dim := x.Rows, x.Cols
	order := make([]int32, n)
	copy(order, trees[0].perm)
	pos := make([]int32, n) // old id → new id
	for r, id := range order {
		pos[id] = int32(r)
	}
	z := atlas.NewDense(n, dim)
	parallel.For(n, threads, func(lo, hi, _ int) {
		for r := lo; r < hi; r++ {
			copy(z.Data[r*dim:(r+1)*dim], x.Row(int(order[r])))
		}
	})
	parallel.For(len(trees), threads, func(lo, hi, _ int) {
		for _, t := range trees[lo:hi] {
			for i, id := range t.perm {
				t.perm[i] = pos[id]
			}
		}
	})
	return z, order
}

// restore turns g, a graph over renumbered points, into the graph of its
// first k neighbours in the original numbering, in place (its arrays are
// reused): row order[r] of the result is row r of g, with every id mapped
// through order, and entries of equal distance put back in order of their
// original ids before the row is cut to k.
func restore(g *Graph, k int, order []int32, threads int) *Graph {
	n, kb := g.N, g.K
	parallel.For(n, threads, func(lo, hi, _ int) {
		for r := lo; r < hi; r++ {
			idx, dist := g.Index[r*kb:(r+1)*kb], g.Dist[r*kb:(r+1)*kb]
			for e, id := range idx {
				if id >= 0 {
					idx[e] = order[id]
				}
				// Insertion among entries of equal distance only.
				for m := e; m > 0 && dist[m-1] == dist[m] && idx[m-1] > idx[m]; m-- {
					idx[m-1], idx[m] = idx[m], idx[m-1]
				}
			}
		}
	})
	if k < kb {
		// Rows move towards the front only, so each is read before it
		// is written over.
		for r := 1; r < n; r++ {
			copy(g.Index[r*k:(r+1)*k], g.Index[r*kb:r*kb+k])
			copy(g.Dist[r*k:(r+1)*k], g.Dist[r*kb:r*kb+k])
		}
		g.Index, g.Dist, g.K = g.Index[:n*k], g.Dist[:n*k], k
	}
	// Move row r to order[r], one cycle of the permutation at a time.
	done := make([]bool, n)
	idx, dist := make([]int32, k), make([]float32, k)
	for s := range done {
		if done[s] {
			continue
		}
		copy(idx, g.Index[s*k:(s+1)*k])
		copy(dist, g.Dist[s*k:(s+1)*k])
		// idx and dist hold row r, not yet in place; the cycle closes when
		// it reaches s again.
		for r := s; ; {
			next := int(order[r])
			for e := range k {
				idx[e], g.Index[next*k+e] = g.Index[next*k+e], idx[e]
				dist[e], g.Dist[next*k+e] = g.Dist[next*k+e], dist[e]
			}
			done[next] = true
			if next == s {
				break
			}
			r = next
		}
	}
	return g
}
