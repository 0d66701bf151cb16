package neighbors

import (
	"errors"
	"fmt"
	"math"

	"lodestone/compute/atlas"
	"lodestone/compute/parallel"
	"lodestone/compute/progress"
)

// MaxK is the largest number of neighbours Find, Exact and Approximate
// accept.
const MaxK = 150

// ExactLimit is the largest number of points for which Find with Method Auto
// searches exhaustively; above it Find uses Approximate. Measured on two
// cores (a 50-D Gaussian mixture, k = 90): at 100,000 points the exhaustive
// search takes 30 s of processor time, the approximate one 34 s (recall
// 0.996); at 150,000 points 55.5 s and 54 s (recall 0.994). The exhaustive
// search's cost grows as N², the approximate one's about as N, so the two
// meet near 150,000 points, where the exhaustive search takes about 28 s
// on two free cores and gives the exact graph for the same time.
const ExactLimit = 150000

// Metric is the distance between two points.
type Metric int

const (
	// Euclidean is the ordinary distance ‖x − y‖₂.
	Euclidean Metric = iota
	// Cosine is the cosine distance 1 − x·y / (‖x‖ ‖y‖). Rows are scaled to
	// unit length once, where ‖x̂ − ŷ‖² = 2 (1 − cos), so the neighbours are
	// the Euclidean neighbours of the scaled rows.
	Cosine
)

// String returns "euclidean" or "cosine".
func (m Metric) String() string {
	switch m {
	case Euclidean:
		return "euclidean"
	case Cosine:
		return "cosine"
	}
	return fmt.Sprintf("Metric(%d)", int(m))
}

// Method chooses how Find searches.
type Method int

const (
	// Auto searches exhaustively up to ExactLimit points, approximately above.
	Auto Method = iota
	// ExactSearch compares every pair of points.
	ExactSearch
	// ApproximateSearch builds a random-projection forest and refines it by
	// nearest-neighbour descent.
	ApproximateSearch
)

// String returns "auto", "exact" or "approximate".
func (m Method) String() string {
	switch m {
	case Auto:
		return "auto"
	case ExactSearch:
		return "exact"
	case ApproximateSearch:
		return "approximate"
	}
	return fmt.Sprintf("Method(%d)", int(m))
}

// Options controls a neighbour search. The zero value of every field but K
// is a sensible default.
type Options struct {
	K        int           // neighbours per point, 1 … MaxK
	Metric   Metric        // Euclidean (default) or Cosine
	Method   Method        // Auto (default), ExactSearch or ApproximateSearch
	Seed     int64         // seed of the approximate search's random choices
	Threads  int           // goroutines; < 1 means all processors
	Progress progress.Func // called from time to time; may be nil
	// Stages, when not nil, is called as each stage of an approximate
	// search ends, from the goroutine that called the search, so that a
	// benchmark can tell where the time goes.
	Stages func(Stage)
}

// Stage describes one finished stage of an approximate search.
type Stage struct {
	Name      string // "forest" (trees built, rows renumbered), "leaves" (pairs of each leaf joined), "descent" or "finish" (lists put back in the input's numbering)
	Step      int    // descent step, from 1; 0 for the other stages
	Changed   int64  // list entries that changed
	Distances int64  // distances computed
	Cut       int64  // descent: points with more candidates than the sample keeps
}

// Sentinel errors wrapped by the errors this package returns; test for them
// with errors.Is.
var (
	ErrK         = errors.New("number of neighbours out of range")
	ErrTooFew    = errors.New("fewer points than neighbours + 1")
	ErrShape     = errors.New("matrix data length does not match its shape")
	ErrNotFinite = errors.New("value is NaN or infinite")
	ErrZeroRow   = errors.New("row has length zero, so its cosine distance is undefined")
	ErrRowIndex  = errors.New("row index out of range")
	ErrOption    = errors.New("unknown option value")
	ErrMismatch  = errors.New("graphs do not match")
)

// InputError reports a problem with the input of a search. Row and Column
// locate it (−1 when they do not apply), Err is one of the sentinel errors.
type InputError struct {
	Row    int // row of the matrix, or position in a list of rows; −1 if none
	Column int // column of the matrix; −1 if none
	Err    error
}

func (e *InputError) Error() string {
	switch {
	case e.Row >= 0 && e.Column >= 0:
		return fmt.Sprintf("neighbors: row %d, column %d: %v", e.Row, e.Column, e.Err)
	case e.Row >= 0:
		return fmt.Sprintf("neighbors: row %d: %v", e.Row, e.Err)
	}
	return "neighbors: " + e.Err.Error()
}

// Unwrap returns the sentinel error.
func (e *InputError) Unwrap() error { return e.Err }

// checkOptions validates opt against n points.
func checkOptions(n int, opt *Options) error {
	if opt.K < 1 || opt.K > MaxK {
		return fmt.Errorf("neighbors: k = %d, want 1 … %d: %w", opt.K, MaxK, ErrK)
	}
	if n < opt.K+1 {
		return fmt.Errorf("neighbors: %d points for k = %d neighbours each (need at least %d): %w", n, opt.K, opt.K+1, ErrTooFew)
	}
	if opt.Metric != Euclidean && opt.Metric != Cosine {
		return fmt.Errorf("neighbors: metric %v: %w", opt.Metric, ErrOption)
	}
	if opt.Method < Auto || opt.Method > ApproximateSearch {
		return fmt.Errorf("neighbors: method %v: %w", opt.Method, ErrOption)
	}
	return nil
}

// prepare checks X for shape and finite values and returns the matrix the
// search runs on: X itself for Euclidean, a copy with unit rows for Cosine.
func prepare(x *atlas.Dense, opt *Options) (*atlas.Dense, error) {
	if x == nil || x.Rows < 0 || x.Cols < 1 || len(x.Data) != x.Rows*x.Cols {
		if x == nil {
			return nil, &InputError{Row: -1, Column: -1, Err: ErrShape}
		}
		return nil, fmt.Errorf("neighbors: %d×%d matrix with %d values: %w", x.Rows, x.Cols, len(x.Data), ErrShape)
	}
	threads := parallel.Threads(opt.Threads)
	bad := make([]int, threads) // first bad row of each block, or −1
	parallel.For(x.Rows, threads, func(lo, hi, b int) {
		bad[b] = -1
		for i := lo; i < hi; i++ {
			for _, v := range x.Row(i) {
				if math.IsNaN(float64(v)) || math.IsInf(float64(v), 0) {
					bad[b] = i
					return
				}
			}
		}
	})
	for _, i := range bad {
		if i >= 0 {
			for j, v := range x.Row(i) {
				if math.IsNaN(float64(v)) || math.IsInf(float64(v), 0) {
					return nil, &InputError{Row: i, Column: j, Err: ErrNotFinite}
				}
			}
		}
	}
	if opt.Metric != Cosine {
		return x, nil
	}
	u := atlas.NewDense(x.Rows, x.Cols)
	zero := make([]int, threads)
	parallel.For(x.Rows, threads, func(lo, hi, b int) {
		zero[b] = -1
		for i := lo; i < hi; i++ {
			s := 0.0
			for _, v := range x.Row(i) {
				s += float64(v) * float64(v)
			}
			if s == 0 {
				zero[b] = i
				return
			}
			inv := 1 / math.Sqrt(s)
			dst := u.Row(i)
			for j, v := range x.Row(i) {
				dst[j] = float32(float64(v) * inv)
			}
		}
	})
	for _, i := range zero {
		if i >= 0 {
			return nil, &InputError{Row: i, Column: -1, Err: ErrZeroRow}
		}
	}
	return u, nil
}

// finish turns squared Euclidean distances into the metric's distances, in
// place: the square root for Euclidean, half the square (1 − cos) for Cosine.
// Both are monotone, but distinct squares can round to one distance, so each
// row is then re-sorted by (distance, id): an insertion sort that moves only
// entries within runs of equal distances.
func finish(g *Graph, metric Metric, threads int) {
	parallel.For(g.N, threads, func(lo, hi, _ int) {
		for i := lo; i < hi; i++ {
			idx, d := g.Neighbors(i)
			for e, v := range d {
				if metric == Cosine {
					v /= 2
				} else {
					v = float32(math.Sqrt(float64(v)))
				}
				id := idx[e]
				m := e
				for m > 0 && d[m-1] == v && idx[m-1] > id {
					idx[m], d[m] = idx[m-1], d[m-1]
					m--
				}
				idx[m], d[m] = id, v
			}
		}
	})
}
