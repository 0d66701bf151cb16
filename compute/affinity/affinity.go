// Package affinity turns a k-nearest-neighbour graph into the symmetric
// affinity matrix P that neighbour embeddings attract along: Gaussian
// affinities calibrated to a perplexity (van der Maaten & Hinton 2008), or
// uniform weights on the k nearest neighbours.
//
// Both constructions return P as a symmetric *sparse.CSR with float32 values,
// sorted columns, no diagonal, and entries summing to 1.
package affinity

import (
	"context"
	"math"
	"slices"
	"strconv"
	"sync"
	"sync/atomic"

	"lodestone/compute/neighbors"
	"lodestone/compute/parallel"
	"lodestone/compute/sparse"
)

// EntropyTolerance is the largest difference, in bits, that Perplexity allows
// between a point's entropy H(P_i) and log2(perplexity).
const EntropyTolerance = 1e-5

// maxSearchSteps bounds the search on one point's precision. Doubling
// and halving from a scale-aware start reach any reachable entropy to
// EntropyTolerance in far fewer steps.
const maxSearchSteps = 200

// noReverse marks an entry i→j of the conditional matrix without j→i.
const noReverse = 0xffff

// chunkRows is the number of points handed to a worker at a time; small
// enough that a cancelled context is noticed within a few milliseconds.
const chunkRows = 512

// Perplexity returns the symmetric Gaussian affinities of the points of g.
//
// Each point i uses its first k = min(g.K, ⌊3·perplexity⌋) neighbours
// (van der Maaten 2014) and the conditional probabilities
//
//	p_j|i = exp(−β_i d_ij²) / Σ_l exp(−β_i d_il²)
//
// with the precision β_i found by a bracketed search (binary search, van der
// Maaten & Hinton 2008, sped up by Newton steps) so that the entropy
// H(P_i) = −Σ_j p_j|i log2 p_j|i equals log2(perplexity) within
// EntropyTolerance (van der Maaten & Hinton 2008). The result is the
// symmetrised matrix
//
//	p_ij = (p_j|i + p_i|j) / (2N),   Σ_ij p_ij = 1.
//
// Distances of zero (duplicate points) are allowed. A point whose k distances
// are all equal gets uniform weights, and a point with more than perplexity
// neighbours at its smallest distance, whose entropy cannot fall to the
// target, ends with its weight spread evenly over those nearest ties.
//
// perplexity must be finite, at least 1 and at most k; a larger value cannot
// be reached with the neighbours available and returns a *ParamError wrapping
// ErrPerplexity (build the graph with at least ⌈perplexity⌉ neighbours, 3·perplexity
// for the usual accuracy). A malformed graph returns a *GraphError naming the
// first faulty point. threads < 1 means all processors. Perplexity returns
// ctx.Err() when ctx is cancelled.
func Perplexity(ctx context.Context, g *neighbors.Graph, perplexity float64, threads int) (*sparse.CSR, error) {
	if err := checkShape(g); err != nil {
		return nil, err
	}
	if math.IsNaN(perplexity) || math.IsInf(perplexity, 0) || perplexity < 1 {
		return nil, &ParamError{Name: "perplexity", Value: perplexity, Reason: "must be finite and at least 1", Err: ErrPerplexity}
	}
	k := min(g.K, int(3*perplexity))
	if perplexity > float64(k) {
		return nil, &ParamError{Name: "perplexity", Value: perplexity,
			Reason: "exceeds the " + strconv.Itoa(k) + " neighbours available per point", Err: ErrPerplexity}
	}
	target := math.Log2(perplexity)
	weigh := func(p, d2 []float64) {
		calibrate(p, d2, target)
	}
	return build(ctx, g, k, weigh, threads)
}

// Uniform returns the symmetric uniform affinities of the first k neighbours
// of each point of g:
//
//	p_j|i = 1/k for the k nearest j of i, 0 otherwise,
//	p_ij  = (p_j|i + p_i|j) / (2N),   Σ_ij p_ij = 1.
//
// k must lie in [1, g.K]; otherwise Uniform returns a *ParamError wrapping
// ErrNeighborCount. A malformed graph returns a *GraphError. Uniform uses all
// processors.
func Uniform(g *neighbors.Graph, k int) (*sparse.CSR, error) {
	if err := checkShape(g); err != nil {
		return nil, err
	}
	if k < 1 || k > g.K {
		return nil, &ParamError{Name: "k", Value: float64(k), Reason: "must lie in [1, " + strconv.Itoa(g.K) + "]", Err: ErrNeighborCount}
	}
	weigh := func(p, _ []float64) {
		for j := range p {
			p[j] = 1 / float64(len(p))
		}
	}
	return build(context.Background(), g, k, weigh, 0)
}

// calibrate writes to p the Gaussian weights exp(−β d2_j) / Σ_l exp(−β d2_l)
// of one point's neighbours, at squared distances d2, with β chosen so that
// the entropy of p in bits is target within EntropyTolerance, and returns the
// entropy reached. d2 is overwritten.
//
// The entropy H(β) = log Σ_j w_j + β⟨e⟩ (nats; w_j = exp(−β e_j), ⟨·⟩ the
// mean under p) falls monotonically with β, with dH/dβ = −β Var_p(e). The
// search keeps a bracket [lo, hi] around the root, as binary search does
// (van der Maaten & Hinton 2008), but steps by Newton's method whenever the
// step stays inside the bracket, which cuts the steps from about 30 to 5.
func calibrate(p, d2 []float64, target float64) float64 {
	// Shift by the smallest squared distance: p is unchanged and the largest
	// weight is exp(0) = 1, so no weight underflows to give a zero sum.
	lo := slices.Min(d2)
	var mean float64
	for j, v := range d2 {
		d2[j] = v - lo
		mean += d2[j]
	}
	mean /= float64(len(d2))
	if mean == 0 {
		for j := range p {
			p[j] = 1 / float64(len(p))
		}
		return math.Log2(float64(len(p)))
	}
	goal := target * math.Ln2 // nats
	beta, betaLo, betaHi := 1/mean, 0.0, math.Inf(1)
	var sum, h float64
	for step := 0; step < maxSearchSteps; step++ {
		var sumE, sumE2 float64
		sum = 0
		for j, e := range d2 {
			w := math.Exp(-beta * e)
			p[j] = w
			sum += w
			sumE += w * e
			sumE2 += w * e * e
		}
		meanE := sumE / sum
		h = math.Log(sum) + beta*meanE
		diff := h - goal
		if math.Abs(diff) < EntropyTolerance*math.Ln2 {
			break
		}
		if diff > 0 {
			betaLo = beta
		} else {
			betaHi = beta
		}
		next := math.NaN()
		if slope := -beta * (sumE2/sum - meanE*meanE); slope < 0 {
			next = beta - diff/slope
		}
		switch {
		case next > betaLo && next < betaHi:
			beta = next
		case math.IsInf(betaHi, 1):
			beta *= 2
		default:
			beta = (betaLo + betaHi) / 2
		}
	}
	for j := range p {
		p[j] /= sum
	}
	return h / math.Ln2
}

// checkShape checks the sizes of g's arrays.
func checkShape(g *neighbors.Graph) error {
	if g == nil || g.N < 2 || g.K < 1 || len(g.Index) != g.N*g.K || len(g.Dist) != g.N*g.K {
		return &GraphError{Point: -1, Neighbor: -1, Err: ErrShape}
	}
	return nil
}

// rowScratch is one worker's buffers for build.
type rowScratch struct {
	d2, p []float64
	keys  []uint64
}

// build computes the conditional weights of each point's first k neighbours
// with weigh (p receives the weights of the neighbours at squared distances
// d2, nearest first), then symmetrises them:
//
//	p_ij = (p_j|i + p_i|j) / (2N).
//
// It checks every entry of g it reads and reports the faulty entry with the
// smallest point index.
func build(ctx context.Context, g *neighbors.Graph, k int, weigh func(p, d2 []float64), threads int) (*sparse.CSR, error) {
	if k >= noReverse {
		return nil, &ParamError{Name: "neighbours per point", Value: float64(k), Reason: "must be below 65535", Err: ErrNeighborCount}
	}
	threads = parallel.Threads(threads)
	n := g.N
	// Conditional weights, each row sorted by neighbour id so that p_i|j can
	// be found by binary search in row j.
	cols := make([]int32, n*k)
	vals := make([]float32, n*k)
	scratch := make([]rowScratch, threads)
	for w := range scratch {
		scratch[w] = rowScratch{d2: make([]float64, k), p: make([]float64, k), keys: make([]uint64, k)}
	}
	var (
		errMu    sync.Mutex
		firstErr *GraphError
	)
	report := func(e *GraphError) {
		errMu.Lock()
		if firstErr == nil || e.Point < firstErr.Point || (e.Point == firstErr.Point && e.Neighbor < firstErr.Neighbor) {
			firstErr = e
		}
		errMu.Unlock()
	}
	err := parallel.ForChunks(ctx, n, chunkRows, threads, func(lo, hi, w int) {
		s := &scratch[w]
	rows:
		for i := lo; i < hi; i++ {
			ids, dist := g.Neighbors(i)
			for a := 0; a < k; a++ {
				j, d := ids[a], float64(dist[a])
				if j < 0 || int(j) >= n || int(j) == i {
					report(&GraphError{Point: i, Neighbor: a, Err: ErrNeighbor})
					continue rows
				}
				if !(d >= 0) || math.IsInf(d, 1) {
					report(&GraphError{Point: i, Neighbor: a, Err: ErrDistance})
					continue rows
				}
				s.d2[a] = d * d
			}
			weigh(s.p, s.d2)
			// Sort (id, weight) pairs by id: pack the id above the weight's bits.
			for a := 0; a < k; a++ {
				s.keys[a] = uint64(ids[a])<<32 | uint64(math.Float32bits(float32(s.p[a])))
			}
			slices.Sort(s.keys)
			row := cols[i*k : (i+1)*k]
			for a, key := range s.keys {
				row[a] = int32(key >> 32)
				vals[i*k+a] = math.Float32frombits(uint32(key))
				if a > 0 && row[a] == row[a-1] {
					report(&GraphError{Point: i, Neighbor: slices.Index(ids[:k], row[a]), Err: ErrRepeated})
					continue rows
				}
			}
		}
	})
	if err != nil {
		return nil, err
	}
	if firstErr != nil {
		return nil, firstErr
	}
	return symmetrize(ctx, n, k, cols, vals, threads)
}

// symmetrize returns P = (C + Cᵀ)/(2n) for the conditional matrix C whose row
// i holds the k entries cols[i*k:(i+1)*k] (strictly increasing) with values
// vals[i*k:(i+1)*k]. One binary search per entry finds the reverse entry; the
// entries without one become extra entries of the other row.
func symmetrize(ctx context.Context, n, k int, cols []int32, vals []float32, threads int) (*sparse.CSR, error) {
	// rev[e] is the position of i in row j for the entry e = i*k+a naming j,
	// or noReverse.
	rev := make([]uint16, n*k)
	extra := make([]int32, n)
	err := parallel.ForChunks(ctx, n, chunkRows, threads, func(lo, hi, _ int) {
		for i := lo; i < hi; i++ {
			for a, j := range cols[i*k : (i+1)*k] {
				r, ok := slices.BinarySearch(cols[int(j)*k:(int(j)+1)*k], int32(i))
				if ok {
					rev[i*k+a] = uint16(r)
				} else {
					rev[i*k+a] = noReverse
					atomic.AddInt32(&extra[j], 1)
				}
			}
		}
	})
	if err != nil {
		return nil, err
	}
	extraPtr := make([]int64, n+1)
	for i := 0; i < n; i++ {
		extraPtr[i+1] = extraPtr[i] + int64(extra[i])
	}
	// Extra entries of row j: the rows i that name j where j does not name
	// i, sorted once placed, so the result does not depend on scheduling.
	// (Row numbers rather than entry numbers: half the memory, at a million
	// points 290 MB less at the peak of the whole run; the entry is found
	// again by binary search.)
	extraFrom := make([]int32, extraPtr[n])
	fill := make([]int32, n) // next free slot per row, as an offset
	err = parallel.ForChunks(ctx, n, chunkRows, threads, func(lo, hi, _ int) {
		for e := lo * k; e < hi*k; e++ {
			if rev[e] == noReverse {
				j := cols[e]
				slot := atomic.AddInt32(&fill[j], 1) - 1
				extraFrom[extraPtr[j]+int64(slot)] = int32(e / k)
			}
		}
	})
	if err != nil {
		return nil, err
	}
	p := &sparse.CSR{Rows: n, Cols: n, RowPtr: make([]int64, n+1)}
	for i := 0; i < n; i++ {
		p.RowPtr[i+1] = p.RowPtr[i] + int64(k) + int64(extra[i])
	}
	nnz := p.RowPtr[n]
	p.ColIdx = make([]int32, nnz)
	p.Val = make([]float32, nnz)
	scale := 1 / (2 * float64(n))
	err = parallel.ForChunks(ctx, n, chunkRows, threads, func(lo, hi, _ int) {
		for i := lo; i < hi; i++ {
			ext := extraFrom[extraPtr[i]:extraPtr[i+1]]
			slices.Sort(ext)
			own := cols[i*k : (i+1)*k]
			out := p.ColIdx[p.RowPtr[i]:p.RowPtr[i+1]]
			outVal := p.Val[p.RowPtr[i]:p.RowPtr[i+1]]
			a, b := 0, 0
			for o := range out {
				if b == len(ext) || (a < len(own) && own[a] < ext[b]) {
					j, e := own[a], i*k+a
					v := float64(vals[e])
					if r := rev[e]; r != noReverse {
						v += float64(vals[int(j)*k+int(r)])
					}
					out[o], outVal[o] = j, float32(v*scale)
					a++
				} else {
					from := int(ext[b])
					r, _ := slices.BinarySearch(cols[from*k:(from+1)*k], int32(i))
					out[o], outVal[o] = int32(from), float32(float64(vals[from*k+r])*scale)
					b++
				}
			}
		}
	})
	if err != nil {
		return nil, err
	}
	return p, nil
}

// Calibrated writes to p the Gaussian weights of one point's neighbours at
// squared distances d2, with the precision chosen so that the perplexity of
// the weights, 2^H(p), equals perplexity (within EntropyTolerance on H, in
// bits), as Perplexity does for every point, and returns the entropy
// reached, in bits. d2 is overwritten. Preconditions: len(p) = len(d2) ≥ 1,
// distances finite and non-negative, 1 ≤ perplexity ≤ len(p). Other
// measures built on perplexity-calibrated neighbourhoods (the local inverse
// Simpson's index of package quality) use it.
func Calibrated(p, d2 []float64, perplexity float64) float64 {
	return calibrate(p, d2, math.Log2(perplexity))
}
