package quality

import (
	"context"
	"fmt"
	"math"
	"sort"

	"lodestone/compute/atlas"
	"lodestone/compute/neighbors"
	"lodestone/compute/parallel"
)

// KNNPreservation returns the share of each sampled cell's k nearest
// neighbours in the high-dimensional data that are also among its k nearest
// neighbours in the map, averaged over the sample:
//
//	P(k) = (1/|S|) Σ_{i ∈ S} |N_k^high(i) ∩ N_k^map(i)| / k
//
// Both neighbour sets are exact and taken among all cells (Euclidean
// distance, the cell itself excluded, ties by smaller id): the high ones by
// neighbors.ExactFor, the map ones by a search of a grid of the layout.
// high is N×d, layout holds 2N coordinates, 1 ≤ k ≤ neighbors.MaxK,
// N ≥ k+1, and sample holds distinct rows (nil means all). threads < 1 means
// all processors. It returns a value in [0, 1], or an error naming the bad
// input, or ctx.Err().
func KNNPreservation(ctx context.Context, high *atlas.Dense, layout []float32, k int, sample []int, threads int) (float64, error) {
	if high == nil {
		return 0, &InputError{Input: "high", Row: -1, Err: ErrShape}
	}
	n := high.Rows
	if err := checkLayout("layout", layout, n); err != nil {
		return 0, err
	}
	if k < 1 || k > neighbors.MaxK || k >= n {
		return 0, &InputError{Input: "k", Row: -1, Err: fmt.Errorf("%w: k = %d for %d cells (want 1 … min(%d, cells − 1))", ErrK, k, n, neighbors.MaxK)}
	}
	sample = orAll(sample, n)
	if err := checkSample(sample, n, 1); err != nil {
		return 0, err
	}
	hi, err := neighbors.ExactFor(ctx, high, sample, neighbors.Options{K: k, Threads: threads})
	if err != nil {
		return 0, fmt.Errorf("quality: neighbours in the data: %w", err)
	}
	g := newGrid(layout, n)
	threads = parallel.Threads(threads)
	shared := make([]int, threads)
	parallel.For(len(sample), threads, func(lo, hi2, b int) {
		buf := make([]neighbor, 0, k)
		c := 0
		for r := lo; r < hi2; r++ {
			buf = g.nearest(sample[r], k, buf)
			ids, _ := hi.Neighbors(r)
			for _, m := range buf {
				for _, id := range ids {
					if id == m.id {
						c++
						break
					}
				}
			}
		}
		shared[b] = c
	})
	total := 0
	for _, c := range shared {
		total += c
	}
	return float64(total) / float64(len(sample)*k), nil
}

// orAll returns sample, or all rows 0 … n−1 when sample is nil.
func orAll(sample []int, n int) []int {
	if sample != nil {
		return sample
	}
	return Sample(n, n, 0)
}

// Trustworthiness returns the trustworthiness of the map on the sampled
// cells (Venna & Kaski 2001): with both spaces restricted to the sample S of
// n cells,
//
//	T(k) = 1 − 2 / (n k (2n − 3k − 1)) · Σ_{i ∈ S} Σ_{j ∈ U_k(i)} (r(i, j) − k)
//
// where U_k(i) holds the cells among i's k nearest in the map that are not
// among its k nearest in the data, and r(i, j) is the rank of j among i's
// neighbours in the data (1 for the nearest). Distances are Euclidean (in
// the data, squared and summed in float32 by neighbors.SquaredDistances;
// in the map, in float64); ties in rank go to the smaller id, ties among the map's
// neighbours to the earlier row of the sample (the smaller id when the
// sample is sorted, as Sample returns it).
// It equals scikit-learn's sklearn.manifold.trustworthiness of the sampled
// rows when no distances tie. Preconditions: 1 ≤ k < n/2 (the formula's
// normalisation needs 2n − 3k − 1 > 0), sample distinct rows (nil means
// all). A value of 1 means no map neighbour is a stranger in the data.
// threads < 1 means all processors; the result does not depend on it. It
// returns ctx.Err() when ctx is cancelled (checked before each sampled
// cell).
func Trustworthiness(ctx context.Context, high *atlas.Dense, layout []float32, k int, sample []int, threads int) (float64, error) {
	if high == nil || len(high.Data) != high.Rows*high.Cols {
		return 0, &InputError{Input: "high", Row: -1, Err: ErrShape}
	}
	n := high.Rows
	if err := checkLayout("layout", layout, n); err != nil {
		return 0, err
	}
	sample = orAll(sample, n)
	if err := checkSample(sample, n, 1); err != nil {
		return 0, err
	}
	m := len(sample)
	if k < 1 || 2*k >= m {
		return 0, &InputError{Input: "k", Row: -1, Err: fmt.Errorf("%w: k = %d for a sample of %d (want 1 ≤ k < %d/2)", ErrK, k, m, m)}
	}
	for r, i := range sample {
		for _, v := range high.Row(i) {
			if math.IsNaN(float64(v)) || math.IsInf(float64(v), 0) {
				return 0, &InputError{Input: "high", Row: sample[r], Err: ErrNotFinite}
			}
		}
	}
	// The layout of the sample alone, for its own map neighbours.
	sub := make([]float32, 2*m)
	for r, i := range sample {
		sub[2*r], sub[2*r+1] = layout[2*i], layout[2*i+1]
	}
	g := newGrid(sub, m)
	threads = parallel.Threads(threads)
	sums := make([]float64, threads)
	// The sampled rows, gathered for the distance kernel.
	dim := high.Cols
	rows := make([]float32, m*dim)
	for r, i := range sample {
		copy(rows[r*dim:(r+1)*dim], high.Row(i))
	}
	parallel.For(m, threads, func(lo, hi, b int) {
		d := make([]float32, m)
		buf := make([]neighbor, 0, k)
		keys := make([]rankKey, 0, k)
		before := make([]int, k+1)
		var sum float64
		for r := lo; r < hi; r++ {
			if ctx.Err() != nil {
				return
			}
			neighbors.SquaredDistances(d, rows[r*dim:(r+1)*dim], rows)
			// The ranks in the data of i's map neighbours: sort their keys,
			// then count, in one pass over the others, how many rank before
			// each key (binary search into the sorted keys and a running
			// sum).
			buf = g.nearest(r, k, buf)
			keys = keys[:0]
			for _, nb := range buf {
				keys = append(keys, rankKey{d[nb.id], sample[nb.id]})
			}
			sort.Slice(keys, func(a, b int) bool { return keys[a].less(keys[b]) })
			clear(before)
			for l, dl := range d {
				if l == r {
					continue
				}
				key := rankKey{dl, sample[l]}
				// Keys after position p rank after l.
				p := sort.Search(len(keys), func(e int) bool { return key.less(keys[e]) })
				before[p]++
			}
			// rank of keys[e] = 1 + #{l ranking before it} = 1 + Σ_{p ≤ e} before[p].
			ahead := 0
			for e := range keys {
				ahead += before[e]
				if rank := 1 + ahead; rank > k {
					sum += float64(rank - k)
				}
			}
		}
		sums[b] = sum
	})
	if err := ctx.Err(); err != nil {
		return 0, err
	}
	total := 0.0
	for _, s := range sums {
		total += s
	}
	nf, kf := float64(m), float64(k)
	return 1 - 2/(nf*kf*(2*nf-3*kf-1))*total, nil
}

// rankKey orders the data's neighbours of a cell: by distance, then id.
type rankKey struct {
	d  float32
	id int
}

func (a rankKey) less(b rankKey) bool { return a.d < b.d || a.d == b.d && a.id < b.id }

// LabelAccuracy returns how often a sampled cell's label is the majority
// label of its k nearest neighbours in the map:
//
//	A(k) = #{i ∈ S, label_i ≥ 0 : vote_k(i) = label_i} / #{i ∈ S : label_i ≥ 0}
//
// Neighbours are exact among all cells (the cell itself excluded, ties by
// smaller id); neighbours without a label (−1) do not vote, and a cell none
// of whose neighbours has a label counts as wrong. Ties between labels with
// equal votes go to the label of the nearest neighbour among them. Sampled
// cells without a label are left out. Preconditions: len(layout) =
// 2·len(labels), 1 ≤ k < len(labels), sample distinct rows (nil means all).
// It returns an error wrapping ErrNoLabels when no sampled cell has a label.
func LabelAccuracy(layout []float32, labels []int32, k int, sample []int) (float64, error) {
	n := len(labels)
	if err := checkLayout("layout", layout, n); err != nil {
		return 0, err
	}
	if k < 1 || k >= n {
		return 0, &InputError{Input: "k", Row: -1, Err: fmt.Errorf("%w: k = %d for %d cells", ErrK, k, n)}
	}
	sample = orAll(sample, n)
	if err := checkSample(sample, n, 1); err != nil {
		return 0, err
	}
	for i, l := range labels {
		if l < -1 {
			return 0, &InputError{Input: "labels", Row: i, Err: fmt.Errorf("%w: label %d (missing is −1)", ErrShape, l)}
		}
	}
	g := newGrid(layout, n)
	threads := parallel.Threads(0)
	right, asked := make([]int, threads), make([]int, threads)
	parallel.For(len(sample), threads, func(lo, hi, b int) {
		buf := make([]neighbor, 0, k)
		votes := map[int32]int{}
		for _, i := range sample[lo:hi] {
			if labels[i] < 0 {
				continue
			}
			asked[b]++
			buf = g.nearest(i, k, buf)
			clear(votes)
			best, bestVotes := int32(-1), 0
			for _, nb := range buf {
				if l := labels[nb.id]; l >= 0 {
					votes[l]++
				}
			}
			// Walk nearest first, so that among tied labels the one met
			// first wins.
			for _, nb := range buf {
				if l := labels[nb.id]; l >= 0 && votes[l] > bestVotes {
					best, bestVotes = l, votes[l]
				}
			}
			if best == labels[i] {
				right[b]++
			}
		}
	})
	r, a := 0, 0
	for b := range right {
		r, a = r+right[b], a+asked[b]
	}
	if a == 0 {
		return 0, &InputError{Input: "labels", Row: -1, Err: ErrNoLabels}
	}
	return float64(r) / float64(a), nil
}

// layoutRows returns a maker of row functions for distanceCorrelation: the
// map distances from sampled row r to every sampled row.
func layoutRows(xy []float32, sample []int) func() func(r int, dst []float64) {
	return func() func(r int, dst []float64) {
		return func(r int, dst []float64) {
			i := sample[r]
			xi, yi := float64(xy[2*i]), float64(xy[2*i+1])
			for t, j := range sample {
				dx, dy := xi-float64(xy[2*j]), yi-float64(xy[2*j+1])
				dst[t] = math.Sqrt(dx*dx + dy*dy)
			}
		}
	}
}

// denseRows returns a maker of row functions for distanceCorrelation: the
// Euclidean distances in the data from sampled row r to every sampled row
// (squares summed in float32 by neighbors.SquaredDistances, the root taken
// in float64). rows holds the sampled rows, gathered, dim values each.
func denseRows(rows []float32, dim int) func() func(r int, dst []float64) {
	return func() func(r int, dst []float64) {
		d := make([]float32, len(rows)/dim)
		return func(r int, dst []float64) {
			neighbors.SquaredDistances(d, rows[r*dim:(r+1)*dim], rows)
			for t, v := range d {
				dst[t] = math.Sqrt(float64(v))
			}
		}
	}
}

// distanceCorrelation computes the sample distance correlation of Székely,
// Rizzo & Bakirov (2007): with a_kl the distance between points k and l and
// its double centring A_kl = a_kl − ā_k· − ā_·l + ā_··, likewise B from b,
// V²(a, b) = (1/n²) Σ_kl A_kl B_kl and R(a, b) = √(V²(a, b) / √(V²(a, a) V²(b, b))),
// 0 when the denominator is 0. The sums use the identity
// Σ A_kl B_kl = Σ a_kl b_kl − 2n Σ_k ā_k b̄_k + n² ā b̄, so no n×n matrix is
// stored. It computes R for
// m points whose distance matrices are given row by row: each block of rows
// calls the makers once for row functions of its own (so that they may keep
// scratch space), and a row function fills dst[t] with the distance between
// points r and t. Per-block sums are added in block order, so the result is
// the same for the same thread count. It returns ctx.Err() when cancelled.
func distanceCorrelation(ctx context.Context, m, threads int, makeA, makeB func() func(r int, dst []float64)) (float64, error) {
	rowA, rowB := make([]float64, m), make([]float64, m)
	threads = parallel.Threads(threads)
	type sums struct{ ab, aa, bb float64 }
	part := make([]sums, threads)
	parallel.For(m, threads, func(lo, hi, blk int) {
		fa, fb := makeA(), makeB()
		da, db := make([]float64, m), make([]float64, m)
		var s sums
		for r := lo; r < hi; r++ {
			if ctx.Err() != nil {
				return
			}
			fa(r, da)
			fb(r, db)
			var sa, sb float64
			for t := 0; t < m; t++ {
				sa, sb = sa+da[t], sb+db[t]
				s.ab += da[t] * db[t]
				s.aa += da[t] * da[t]
				s.bb += db[t] * db[t]
			}
			rowA[r], rowB[r] = sa/float64(m), sb/float64(m)
		}
		part[blk] = s
	})
	if err := ctx.Err(); err != nil {
		return 0, err
	}
	var tot sums
	for _, s := range part {
		tot.ab, tot.aa, tot.bb = tot.ab+s.ab, tot.aa+s.aa, tot.bb+s.bb
	}
	var ra, rb, rab, raa, rbb float64
	for r := 0; r < m; r++ {
		ra, rb = ra+rowA[r], rb+rowB[r]
		rab += rowA[r] * rowB[r]
		raa += rowA[r] * rowA[r]
		rbb += rowB[r] * rowB[r]
	}
	mf := float64(m)
	ma, mb := ra/mf, rb/mf
	vab := tot.ab - 2*mf*rab + mf*mf*ma*mb
	vaa := tot.aa - 2*mf*raa + mf*mf*ma*ma
	vbb := tot.bb - 2*mf*rbb + mf*mf*mb*mb
	if vaa <= 0 || vbb <= 0 {
		return 0, nil
	}
	r2 := vab / math.Sqrt(vaa*vbb)
	return math.Sqrt(max(r2, 0)), nil
}
