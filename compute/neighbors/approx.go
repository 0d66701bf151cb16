package neighbors

import (
	"context"
	"math/rand/v2"

	"lodestone/compute/atlas"
	"lodestone/compute/parallel"
)

// Settings of the approximate search, chosen on this package's benchmarks
// (70,000 points in 50 dimensions: a Gaussian mixture and a branching path,
// k = 15 and 90) for recall ≥ 0.98 at the least time.
const (
	forestTrees  = 16    // random-projection trees that seed the lists
	leafMin      = 256   // bound on leaf size: max(leafMin, 2·kb)
	buildMin     = 60    // lists hold kb = max(k, buildMin) neighbours while building
	maxNew       = 80    // new candidates sampled per point and step
	maxOld       = 80    // old candidates sampled per point and step
	maxSteps     = 20    // bound on descent steps
	stopFraction = 0.001 // stop when a step changes fewer than this share of entries (δ)
	pointBatch   = 4096  // points joined between two applications of updates
)

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
// δ = 0.001 of the entries, and keeps the first k. Points whose lists are
// still not full at the end (possible only with many duplicate points) are
// completed by exhaustive search. The result depends only on x, opt.K,
// opt.Metric and opt.Seed: the same graph comes back for any number of
// threads.
//
// Errors are those of Exact.
func Approximate(ctx context.Context, x *atlas.Dense, opt Options) (*Graph, error) {
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
	kb := min(max(k, buildMin), n-1)
	leafSize := max(leafMin, 2*kb)

	// Progress: trees count one unit each, descent steps two each.
	total := int64(forestTrees + 2*maxSteps + 1)
	pf := opt.Progress
	pf.Report(0, total)

	// Build the forest, one tree per goroutine, each from its own stream.
	trees := make([]*rpTree, forestTrees)
	proj := make([][]float32, threads)
	err = parallel.ForChunks(ctx, forestTrees, 1, threads, func(t, _, w int) {
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

	l := newLists(n, kb, true)
	j := newJoiner(y, l, threads, max(leafSize, maxNew+maxOld))
	for t, tree := range trees {
		if err := j.joinLeaves(ctx, tree); err != nil {
			return nil, err
		}
		trees[t] = nil
		pf.Report(int64(t+1), total)
	}
	err = j.descend(ctx, uint64(opt.Seed), maxNew, maxOld, maxSteps, stopFraction, func(s int) {
		pf.Report(int64(forestTrees+2*s), total)
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
	if kb > k {
		g = g.Truncate(k)
	}
	finish(g, opt.Metric, threads)
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
