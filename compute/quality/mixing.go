package quality

import (
	"context"
	"errors"
	"fmt"
	"math"

	"lodestone/compute/affinity"
	"lodestone/compute/atlas"
	"lodestone/compute/neighbors"
	"lodestone/compute/parallel"
)

// DefaultMixingPerplexity is the perplexity of the neighbourhoods of the
// mixing scores: the value of Korsunsky et al. (2019), who defined the
// index, and of the t-SNE maps (about 90 neighbours).
const DefaultMixingPerplexity = 30

// ErrOneLevel means a label column has a single level among the cells:
// there is nothing to mix.
var ErrOneLevel = errors.New("labels have a single level")

// MixingOptions says how the mixing scores are computed. Batches is
// required; the zero values of the other fields take the defaults.
type MixingOptions struct {
	// Sample is the number of cells scored, drawn by Sample(N, Sample,
	// Seed); 0 means DefaultFidelitySample, N or more every cell. Their
	// neighbours are taken among all cells.
	Sample int
	// Seed is the seed of the sample (the window and the headless commands
	// pass the atlas's seed).
	Seed int64
	// Perplexity sets the width of each cell's Gaussian neighbourhood; 0
	// means DefaultMixingPerplexity. Each cell looks at its
	// min(⌊3·Perplexity⌋, N−1) nearest neighbours, and the perplexity is
	// lowered to that number when it exceeds it.
	Perplexity float64
	// Threads is the number of goroutines; < 1 means all processors. The
	// scores do not depend on it beyond the last bits.
	Threads int
	// Batches holds one batch (sample) code per cell, −1 for missing.
	Batches []int32
	// Types, when not nil, holds one cell-type code per cell (−1 for
	// missing), and the same index is computed for it.
	Types []int32
}

// MixingScores are the local inverse Simpson's indices of one space (the
// map or the components), on one sample of cells.
type MixingScores struct {
	Cells      int     // sampled cells with a batch label and labelled neighbours
	Neighbours int     // neighbours per cell
	Perplexity float64 // perplexity used
	// Batch is the batch mixing (normalised iLISI): 0 when every cell's
	// neighbourhood holds only its own batch, 1 when it is as mixed as if
	// the batch labels were shuffled (see LISI); it can exceed 1 slightly.
	Batch float64
	// BatchLISI is the mean inverse Simpson's index of the batch labels
	// itself (iLISI), from 1 to the number of batches.
	BatchLISI float64
	// Types and TypesLISI are the same for the type labels (cLISI): here 0
	// is the goal (types stay apart). NaN without Types.
	Types, TypesLISI float64
}

// LISI returns the local inverse Simpson's index of the labels of one
// cell's neighbours under the weights w (Korsunsky et al. 2019, Methods),
// and the same index normalised against chance. Neighbours with label −1
// are left out and the weights of the others rescaled to sum to 1; with p_l
// the total weight of label l,
//
//	D = Σ_l p_l²,   LISI = 1/D,
//
// the effective number of labels among the neighbours. If the labels were
// drawn at random with the shares pi of all cells, the expected D would be
//
//	C = Σ_j w_j² + (1 − Σ_j w_j²) Σ_l pi_l²
//
// (a neighbour with itself, or two different neighbours, with the same
// label), and the normalised index is (1/D − 1)/(1/C − 1): 0 when every
// neighbour has one label, 1 when they are as mixed as chance. ok is false
// when no neighbour has a label or C is 1 (one label in all, or one
// neighbour holding all the weight). labels[j] is the label of neighbour j;
// len(w) = len(labels); pi sums to 1; scratch must hold len(pi) values.
func LISI(w []float64, labels []int32, pi, scratch []float64) (lisi, normalised float64, ok bool) {
	clear(scratch)
	var total float64
	for j, l := range labels {
		if l >= 0 {
			scratch[l] += w[j]
			total += w[j]
		}
	}
	if total <= 0 {
		return 0, 0, false
	}
	var d, w2 float64
	for _, p := range scratch {
		d += (p / total) * (p / total)
	}
	for j, l := range labels {
		if l >= 0 {
			w2 += (w[j] / total) * (w[j] / total)
		}
	}
	var pi2 float64
	for _, p := range pi {
		pi2 += p * p
	}
	c := w2 + (1-w2)*pi2
	if c >= 1-1e-12 {
		return 1 / d, 0, false
	}
	return 1 / d, (1/d - 1) / (1/c - 1), true
}

// MapMixing returns the mixing scores of the labels in the map: each
// sampled cell's neighbourhood is its nearest cells in the layout (2N
// interleaved coordinates), weighted by a Gaussian of the map distance
// calibrated to the perplexity as t-SNE's affinities are
// (affinity.Calibrated). Preconditions: len(layout) = 2N with finite values,
// labels one per cell with at least two levels among the cells, N ≥ 2. It
// returns an error naming the bad input, or ctx.Err().
func MapMixing(ctx context.Context, layout []float32, o MixingOptions) (MixingScores, error) {
	n := len(layout) / 2
	if len(o.Batches) != n {
		return MixingScores{}, &InputError{Input: "batches", Row: -1, Err: fmt.Errorf("%w: %d labels for a layout of %d coordinates", ErrShape, len(o.Batches), len(layout))}
	}
	if err := checkLayout("layout", layout, n); err != nil {
		return MixingScores{}, err
	}
	return mixing(ctx, n, o, func() func(i, k int, ids []int32, d2 []float64) {
		g := newGrid(layout, n)
		var buf []neighbor
		return func(i, k int, ids []int32, d2 []float64) {
			buf = g.nearest(i, k, buf[:0])
			for j, nb := range buf {
				ids[j], d2[j] = nb.id, nb.d
			}
		}
	}, nil)
}

// SpaceMixing returns the mixing scores of the labels in a feature space
// (N cells × d, e.g. the corrected components): neighbourhoods as in
// MapMixing, of exact Euclidean neighbours (neighbors.ExactFor).
// Preconditions as MapMixing's, with high finite.
func SpaceMixing(ctx context.Context, high *atlas.Dense, o MixingOptions) (MixingScores, error) {
	if high == nil || len(high.Data) != high.Rows*high.Cols || high.Cols < 1 {
		return MixingScores{}, &InputError{Input: "high", Row: -1, Err: ErrShape}
	}
	if len(o.Batches) != high.Rows {
		return MixingScores{}, &InputError{Input: "batches", Row: -1, Err: fmt.Errorf("%w: %d labels for %d cells", ErrShape, len(o.Batches), high.Rows)}
	}
	var g *neighbors.Graph
	prepare := func(sample []int, k int) error {
		var err error
		g, err = neighbors.ExactFor(ctx, high, sample, neighbors.Options{K: k, Threads: o.Threads})
		return err
	}
	return mixing(ctx, high.Rows, o, func() func(i, k int, ids []int32, d2 []float64) {
		return func(r, k int, ids []int32, d2 []float64) {
			nb, dist := g.Neighbors(r)
			copy(ids, nb)
			for j, v := range dist {
				d2[j] = float64(v) * float64(v)
			}
		}
	}, prepare)
}

// mixing computes the scores for n cells, with neighbourhoods from the
// finders made by newFinder (one per goroutine; a finder is called with a
// cell, or with its position in the sample when prepare is set) after
// prepare, when set, has seen the sample and k.
func mixing(ctx context.Context, n int, o MixingOptions, newFinder func() func(i, k int, ids []int32, d2 []float64), prepare func(sample []int, k int) error) (MixingScores, error) {
	if o.Sample == 0 {
		o.Sample = DefaultFidelitySample
	}
	if o.Perplexity == 0 {
		o.Perplexity = DefaultMixingPerplexity
	}
	if n < 2 {
		return MixingScores{}, &InputError{Input: "batches", Row: -1, Err: fmt.Errorf("%w: %d cells (want at least 2)", ErrShape, n)}
	}
	if o.Sample < 0 {
		return MixingScores{}, &InputError{Input: "sample", Row: -1, Err: fmt.Errorf("%w: size %d", ErrSample, o.Sample)}
	}
	if !(o.Perplexity >= 1) || math.IsInf(o.Perplexity, 0) {
		return MixingScores{}, &InputError{Input: "perplexity", Row: -1, Err: fmt.Errorf("%w: perplexity %v (want at least 1)", ErrK, o.Perplexity)}
	}
	bshare, err := shares("batches", o.Batches, n)
	if err != nil {
		return MixingScores{}, err
	}
	var tshare []float64
	if o.Types != nil {
		if tshare, err = shares("types", o.Types, n); err != nil {
			return MixingScores{}, err
		}
	}
	k := min(int(3*o.Perplexity), n-1, neighbors.MaxK)
	perp := min(o.Perplexity, float64(k))
	sample := Sample(n, o.Sample, o.Seed)
	if prepare != nil {
		if err := prepare(sample, k); err != nil {
			return MixingScores{}, fmt.Errorf("quality: neighbours: %w", err)
		}
	}
	threads := parallel.Threads(o.Threads)
	type sums struct {
		cells, types            int
		batch, batchLISI        float64
		typeMixing, typeLISIsum float64
	}
	part := make([]sums, threads)
	parallel.For(len(sample), threads, func(lo, hi, b int) {
		find := newFinder()
		ids := make([]int32, k)
		d2 := make([]float64, k)
		w := make([]float64, k)
		labels := make([]int32, k)
		bs, ts := make([]float64, len(bshare)), make([]float64, len(tshare))
		var s sums
		for r := lo; r < hi; r++ {
			if ctx.Err() != nil {
				return
			}
			i := sample[r]
			q := i
			if prepare != nil {
				q = r
			}
			find(q, k, ids, d2)
			affinity.Calibrated(w, d2, perp)
			if o.Batches[i] >= 0 {
				for j, id := range ids {
					labels[j] = o.Batches[id]
				}
				if l, m, ok := LISI(w, labels, bshare, bs); ok {
					s.cells++
					s.batch += m
					s.batchLISI += l
				}
			}
			if o.Types != nil && o.Types[i] >= 0 {
				for j, id := range ids {
					labels[j] = o.Types[id]
				}
				if l, m, ok := LISI(w, labels, tshare, ts); ok {
					s.types++
					s.typeMixing += m
					s.typeLISIsum += l
				}
			}
		}
		part[b] = s
	})
	if err := ctx.Err(); err != nil {
		return MixingScores{}, err
	}
	var tot sums
	for _, s := range part {
		tot.cells += s.cells
		tot.types += s.types
		tot.batch += s.batch
		tot.batchLISI += s.batchLISI
		tot.typeMixing += s.typeMixing
		tot.typeLISIsum += s.typeLISIsum
	}
	out := MixingScores{Cells: tot.cells, Neighbours: k, Perplexity: perp, Types: math.NaN(), TypesLISI: math.NaN()}
	if tot.cells == 0 {
		return out, &InputError{Input: "batches", Row: -1, Err: ErrNoLabels}
	}
	out.Batch = tot.batch / float64(tot.cells)
	out.BatchLISI = tot.batchLISI / float64(tot.cells)
	if tot.types > 0 {
		out.Types = tot.typeMixing / float64(tot.types)
		out.TypesLISI = tot.typeLISIsum / float64(tot.types)
	}
	return out, nil
}

// shares returns the share of each label among the labelled cells, after
// checking the labels: one per cell, −1 or more, at least two levels used.
func shares(name string, labels []int32, n int) ([]float64, error) {
	if len(labels) != n {
		return nil, &InputError{Input: name, Row: -1, Err: fmt.Errorf("%w: %d labels for %d cells", ErrShape, len(labels), n)}
	}
	levels := int32(0)
	for i, l := range labels {
		if l < -1 {
			return nil, &InputError{Input: name, Row: i, Err: fmt.Errorf("%w: label %d (missing is −1)", ErrShape, l)}
		}
		levels = max(levels, l+1)
	}
	counts := make([]float64, levels)
	var total float64
	for _, l := range labels {
		if l >= 0 {
			counts[l]++
			total++
		}
	}
	used := 0
	for l := range counts {
		if counts[l] > 0 {
			used++
		}
		counts[l] /= max(total, 1)
	}
	if used < 2 {
		return nil, &InputError{Input: name, Row: -1, Err: ErrOneLevel}
	}
	return counts, nil
}
