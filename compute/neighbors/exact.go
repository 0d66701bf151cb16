package neighbors

import (
	"context"
	"fmt"
	"math"
	"math/bits"

	"lodestone/compute/atlas"
	"lodestone/compute/parallel"
	"lodestone/compute/progress"
)

// queryChunk is the number of queries a worker compares with each tile of
// the data before it moves on to the next tile.
const queryChunk = 32

// Exact returns the exact k-nearest-neighbour graph of the rows of x by
// comparing every pair of rows,
//
//	N_k(i) = the k rows j ≠ i with the smallest (d(x_i, x_j), j)
//
// with d the metric of opt. Ties in distance go to the smaller id. Queries
// are processed in chunks on opt.Threads goroutines, each chunk against
// small transposed tiles of the data held in cache; distances are summed
// directly as Σ (a_j − b_j)² in float32, which has no cancellation error.
// The cost is O(N² · dim).
//
// Exact returns an error wrapping ErrK, ErrTooFew, ErrShape, ErrNotFinite,
// ErrZeroRow (cosine only) or ErrOption for bad input, and ctx.Err() when ctx
// is cancelled.
func Exact(ctx context.Context, x *atlas.Dense, opt Options) (*Graph, error) {
	if x == nil {
		return nil, &InputError{Row: -1, Column: -1, Err: ErrShape}
	}
	rows := make([]int, x.Rows)
	for i := range rows {
		rows[i] = i
	}
	return ExactFor(ctx, x, rows, opt)
}

// ExactFor returns the exact k nearest neighbours, among all rows of x, of
// the given rows only: row r of the result (N = len(rows)) lists the
// neighbours of x's row rows[r], never rows[r] itself, with ids that refer to
// x. It serves to measure the recall of an approximate graph on a sample.
// Rows may repeat and need not be sorted.
//
// Errors are those of Exact, and an *InputError wrapping ErrRowIndex for a
// row outside [0, x.Rows).
func ExactFor(ctx context.Context, x *atlas.Dense, rows []int, opt Options) (*Graph, error) {
	if x == nil {
		return nil, &InputError{Row: -1, Column: -1, Err: ErrShape}
	}
	if err := checkOptions(x.Rows, &opt); err != nil {
		return nil, err
	}
	for r, i := range rows {
		if i < 0 || i >= x.Rows {
			return nil, &InputError{Row: r, Column: -1, Err: fmt.Errorf("%w: %d not in [0, %d)", ErrRowIndex, i, x.Rows)}
		}
	}
	y, err := prepare(x, &opt)
	if err != nil {
		return nil, err
	}
	g, err := exactSquared(ctx, y, rows, opt.K, opt.Threads, opt.Progress)
	if err != nil {
		return nil, err
	}
	finish(g, opt.Metric, opt.Threads)
	return g, nil
}

// exactSquared is the exhaustive search of ExactFor on prepared data; the
// graph it returns holds squared Euclidean distances. The data are copied
// once into transposed tiles of 16 rows; each worker takes queryChunk
// queries at a time and runs them against every tile, four queries by 16
// references per kernel call, and offers to the queries' lists only the
// distances that do not exceed their current worst.
func exactSquared(ctx context.Context, x *atlas.Dense, rows []int, k, threads int, pf progress.Func) (*Graph, error) {
	threads = parallel.Threads(threads)
	g := &Graph{N: len(rows), K: k, Index: make([]int32, len(rows)*k), Dist: make([]float32, len(rows)*k)}
	tiles := transposeTiles(x, threads)
	scratch := make([]*scanner, threads)
	count := progress.NewCounter(pf, int64(len(rows)), queryChunk)
	err := parallel.ForChunks(ctx, len(rows), queryChunk, threads, func(lo, hi, w int) {
		s := scratch[w]
		if s == nil {
			s = newScanner(x.Cols, k)
			scratch[w] = s
		}
		if !s.scan(ctx, x, tiles, rows[lo:hi]) {
			return
		}
		copy(g.Index[lo*k:hi*k], s.lists.idx[:(hi-lo)*k])
		copy(g.Dist[lo*k:hi*k], s.lists.dist[:(hi-lo)*k])
		count.Add(int64(hi - lo))
	})
	if err != nil {
		return nil, err
	}
	count.Finish()
	return g, nil
}

// transposeTiles returns the rows of x in tiles of tileRows rows, each
// stored transposed: element j of row 16t+r at tiles[(16t)·dim + 16j + r].
// The last tile is padded with zero rows.
func transposeTiles(x *atlas.Dense, threads int) []float32 {
	dim, nt := x.Cols, (x.Rows+tileRows-1)/tileRows
	tiles := make([]float32, nt*tileRows*dim)
	parallel.For(nt, threads, func(lo, hi, _ int) {
		for t := lo; t < hi; t++ {
			tile := tiles[t*tileRows*dim : (t+1)*tileRows*dim]
			for r := 0; r < tileRows && t*tileRows+r < x.Rows; r++ {
				for j, v := range x.Row(t*tileRows + r) {
					tile[j*tileRows+r] = v
				}
			}
		}
	})
	return tiles
}

// scanner is one worker's scratch for the exhaustive search.
type scanner struct {
	lists *lists
	q     []float32 // queries, gathered and padded to a multiple of 4
	thr   []float32 // per query: its list's current worst distance
	out   []float32 // one kernel call's 4×16 distances
	mask  [4]uint32
}

func newScanner(dim, k int) *scanner {
	return &scanner{lists: newLists(queryChunk, k, false), q: make([]float32, queryChunk*dim),
		thr: make([]float32, queryChunk), out: make([]float32, 4*tileRows)}
}

// scan fills list i of s with the k nearest rows of x to row queries[i]
// (at most queryChunk queries), excluding the query's own row. It returns
// false when ctx was cancelled on the way.
func (s *scanner) scan(ctx context.Context, x *atlas.Dense, tiles []float32, queries []int) bool {
	dim, nq := x.Cols, len(queries)
	n4 := (nq + 3) &^ 3
	for i := 0; i < n4; i++ {
		copy(s.q[i*dim:(i+1)*dim], x.Row(queries[min(i, nq-1)]))
	}
	s.lists.clear(0, nq)
	inf := float32(math.Inf(1))
	for i := range s.thr {
		s.thr[i] = inf
	}
	nt := len(tiles) / (tileRows * dim)
	for t := 0; t < nt; t++ {
		if t%64 == 0 && ctx.Err() != nil {
			return false
		}
		tile := tiles[t*tileRows*dim : (t+1)*tileRows*dim]
		for g := 0; g < n4; g += 4 {
			sqDistTile(s.q[g*dim:(g+4)*dim], dim, tile, s.thr[g:g+4], s.out, &s.mask)
			for i := g; i < min(g+4, nq); i++ {
				for m := s.mask[i-g]; m != 0; m &= m - 1 {
					r := bits.TrailingZeros32(m)
					id := t*tileRows + r
					if id >= x.Rows || id == queries[i] {
						continue
					}
					if s.lists.insert(i, int32(id), s.out[(i-g)*tileRows+r]) {
						s.thr[i] = s.lists.worst(i)
					}
				}
			}
		}
	}
	return true
}
