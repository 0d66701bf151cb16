package sparse

import (
	"fmt"
	"math"
	"slices"
	"sync/atomic"

	"lodestone/compute/parallel"
)

// LogNorm returns the log-normalised value of a count x in a cell whose
// counts are scaled by scale (the target sum divided by the cell's total):
//
//	float32(log(1 + x·scale))
//
// computed in float64 and rounded once. Every reader of normalised values
// calls it, so all of them see the same float32 for the same count and cell.
func LogNorm(x float32, scale float64) float32 {
	return float32(math.Log1p(float64(x) * scale))
}

// sink keeps the loads Column makes ahead of time from being left out.
var sink atomic.Uint32

// normTable is the number of small counts whose normalised value a row
// decoder remembers while it decodes one row.
const normTable = 64

// View is a read-only cells × genes matrix read from a Counts matrix X: the
// rows of X listed in rows (in that order) and the columns listed in cols
// (ascending), renumbered from 0, each stored value x of view row i either
// as stored or log-normalised with the row's factor:
//
//	v = LogNorm(x, scale[i])   when the view has factors
//	v = x                      otherwise
//
// A view holds only its indices and factors; values are computed as they
// are read, so the log-normalised matrix never exists in memory.
type View struct {
	x      *Counts
	rows   []int     // row of X of each row
	cols   []int     // column of X of each column, ascending
	colOf  []int32   // per column of X: its column here or −1; nil when every column is kept
	rowPtr []int64   // prefix sums of the entries of each row within cols
	scale  []float64 // per row; nil: values as stored
}

// NewView returns the view of the given rows and columns of x (nil for all
// rows or all columns). cols must be ascending and every index in range.
// The entries of each row are counted, and their columns checked, on
// threads goroutines (< 1: all processors). x must not change while the
// view is in use.
func NewView(x *Counts, rows, cols []int, threads int) (*View, error) {
	v := &View{x: x, rows: rows, cols: cols}
	if rows == nil {
		v.rows = make([]int, x.Rows)
		for i := range v.rows {
			v.rows[i] = i
		}
	}
	for _, r := range v.rows {
		if r < 0 || r >= x.Rows {
			return nil, fmt.Errorf("sparse: view row %d outside 0…%d", r, x.Rows-1)
		}
	}
	if cols == nil {
		v.cols = make([]int, x.Cols)
		for j := range v.cols {
			v.cols[j] = j
		}
	} else {
		v.colOf = make([]int32, x.Cols)
		for j := range v.colOf {
			v.colOf[j] = -1
		}
		prev := -1
		for k, j := range cols {
			if j <= prev || j >= x.Cols {
				return nil, fmt.Errorf("sparse: view column %d out of order or outside 0…%d", j, x.Cols-1)
			}
			v.colOf[j] = int32(k)
			prev = j
		}
	}
	n := len(v.rows)
	v.rowPtr = make([]int64, n+1)
	bad := make([]int, len(parallel.Blocks(n, parallel.Threads(threads))))
	for b := range bad {
		bad[b] = -1
	}
	parallel.For(n, threads, func(lo, hi, b int) {
		for i := lo; i < hi; i++ {
			r := v.rows[i]
			a, e := x.RowPtr[r], x.RowPtr[r+1]
			var c int64
			if x.Col32 != nil {
				for _, j := range x.Col32[a:e] {
					if j < 0 || int(j) >= x.Cols {
						bad[b] = int(j)
						return
					}
					if v.colOf == nil || v.colOf[j] >= 0 {
						c++
					}
				}
			} else {
				for _, j := range x.Col16[a:e] {
					if int(j) >= x.Cols {
						bad[b] = int(j)
						return
					}
					if v.colOf == nil || v.colOf[j] >= 0 {
						c++
					}
				}
			}
			v.rowPtr[i+1] = c
		}
	})
	for _, j := range bad {
		if j >= 0 {
			return nil, fmt.Errorf("sparse: column index %d outside 0…%d", j, x.Cols-1)
		}
	}
	for i := 0; i < n; i++ {
		v.rowPtr[i+1] += v.rowPtr[i]
	}
	return v, nil
}

// WithScale returns a view of the same entries whose values are
// log-normalised with the factors scale, one per row (nil: values as
// stored). The views share their indices.
func (v *View) WithScale(scale []float64) (*View, error) {
	if scale != nil && len(scale) != len(v.rows) {
		return nil, fmt.Errorf("sparse: %d factors for %d rows", len(scale), len(v.rows))
	}
	w := *v
	w.scale = scale
	return &w, nil
}

// Dims returns the numbers of rows and columns.
func (v *View) Dims() (rows, cols int) { return len(v.rows), len(v.cols) }

// NNZ returns the number of stored entries of the view.
func (v *View) NNZ() int64 { return v.rowPtr[len(v.rows)] }

// RowPtr returns the prefix sums of the entries of each row: row i holds
// RowPtr()[i+1] − RowPtr()[i] entries. The slice must not be modified.
func (v *View) RowPtr() []int64 { return v.rowPtr }

// Source returns the matrix the view reads, the row of it each row reads,
// and the column of it each column reads. The slices must not be modified.
func (v *View) Source() (x *Counts, rows, cols []int) { return v.x, v.rows, v.cols }

// ColumnOf returns the view's column of column j of the source, or −1 when
// the view leaves it out.
func (v *View) ColumnOf(j int) int {
	if v.colOf == nil {
		return j
	}
	return int(v.colOf[j])
}

// ColumnMap returns, per column of the source, the view's column or −1, or
// nil when the view keeps every column. The slice must not be modified.
func (v *View) ColumnMap() []int32 { return v.colOf }

// Scale returns the factor of each row, or nil when values are read as
// stored. The slice must not be modified.
func (v *View) Scale() []float64 { return v.scale }

// Normalized reports whether values are log-normalised.
func (v *View) Normalized() bool { return v.scale != nil }

// Value returns the view's value for a stored value x of row i.
func (v *View) Value(i int, x float32) float32 {
	if v.scale == nil {
		return x
	}
	return LogNorm(x, v.scale[i])
}

// Bytes returns the memory held by the view's own arrays (not its source).
func (v *View) Bytes() int64 {
	return int64(len(v.rows))*8 + int64(len(v.cols))*8 + int64(len(v.colOf))*4 + int64(len(v.rowPtr))*8 + int64(len(v.scale))*8
}

// Row appends the columns and values of row i to cols[:0] and vals[:0] and
// returns them. Columns ascend.
func (v *View) Row(i int, cols []int32, vals []float32) ([]int32, []float32) {
	cols, vals = v.RowCounts(i, cols, vals)
	if v.scale == nil || len(vals) == 0 {
		return cols, vals
	}
	scale := v.scale[i]
	if v.x.Real != nil {
		for k, x := range vals {
			vals[k] = LogNorm(x, scale)
		}
		return cols, vals
	}
	var tab [normTable]float32 // normalised small counts; 0 until computed
	for k, x := range vals {
		if c := int(x); c < normTable {
			y := tab[c]
			if y == 0 {
				y = LogNorm(x, scale)
				tab[c] = y
			}
			vals[k] = y
		} else {
			vals[k] = LogNorm(x, scale)
		}
	}
	return cols, vals
}

// RowCounts is Row without the normalisation: it appends the columns and the
// stored values (counts) of row i to cols[:0] and vals[:0] and returns them.
func (v *View) RowCounts(i int, cols []int32, vals []float32) ([]int32, []float32) {
	x := v.x
	r := v.rows[i]
	lo, hi := x.RowPtr[r], x.RowPtr[r+1]
	n := int(hi - lo)
	cols, vals = slices.Grow(cols[:0], n)[:n], slices.Grow(vals[:0], n)[:n]
	colOf := v.colOf
	w := 0
	if x.Col32 == nil && x.Real == nil {
		// The common case, counts with 16-bit columns, in one tight loop.
		small := x.Small[lo:hi]
		large := -1
		for k, c := range x.Col16[lo:hi] {
			j := int32(c)
			if colOf != nil {
				if j = colOf[c]; j < 0 {
					if small[k] == LargeMark && large >= 0 {
						large++
					}
					continue
				}
			}
			s := small[k]
			val := float32(s)
			if s == LargeMark {
				if large < 0 {
					large = x.LargeIndex(lo + int64(k))
				}
				val = x.LargeVal[large]
				large++
			}
			cols[w], vals[w] = j, val
			w++
		}
		return cols[:w], vals[:w]
	}
	large := -1
	for k := lo; k < hi; k++ {
		j := int32(x.Col(k))
		var val float32
		switch {
		case x.Real != nil:
			val = x.Real[k]
		case x.Small[k] == LargeMark:
			if large < 0 {
				large = x.LargeIndex(k)
			}
			val = x.LargeVal[large]
			large++
		default:
			val = float32(x.Small[k])
		}
		if colOf != nil {
			if j = colOf[j]; j < 0 {
				continue
			}
		}
		cols[w], vals[w] = j, val
		w++
	}
	return cols[:w], vals[:w]
}

// Column writes the values of column j for every row into dst (grown to the
// number of rows when shorter) and returns it: zero where nothing is stored.
// Each row is searched for the column on threads goroutines (< 1: all
// processors).
func (v *View) Column(j int, dst []float32, threads int) []float32 {
	n := len(v.rows)
	if cap(dst) < n {
		dst = make([]float32, n)
	}
	dst = dst[:n]
	src := v.cols[j]
	x := v.x
	// The column's expected place in a row is the share of a row's
	// entries that lie in the columns before it: from the tally of rows
	// per column where the counts have one (genes are stored in very
	// different numbers of cells), else the column's share of the columns.
	num, den := uint64(src), uint64(max(1, x.Cols))
	if t := x.Tally; t != nil && len(t.ColRows) == x.Cols {
		var before, all int64
		for c, rows := range t.ColRows {
			if c < src {
				before += rows
			}
			all += rows
		}
		if all > 0 {
			num, den = uint64(before), uint64(all)
		}
	}
	parallel.For(n, threads, func(lo, hi, _ int) {
		var touched uint16
		for i := lo; i < hi; i++ {
			if x.Col32 != nil {
				dst[i] = 0
				if k := x.Find(v.rows[i], src); k >= 0 {
					dst[i] = v.Value(i, x.Value(k))
				}
				continue
			}
			// Read where the column is likely to be in the row 8 rows
			// ahead: that load waits on memory alongside this row's
			// search instead of after it.
			if a := i + 8; a < hi {
				r := v.rows[a]
				s, e := x.RowPtr[r], x.RowPtr[r+1]
				if e > s {
					touched ^= x.Col16[s+min(int64(uint64(e-s)*num/den), e-s-1)]
				}
			}
			r := v.rows[i]
			s, e := x.RowPtr[r], x.RowPtr[r+1]
			k := int64(SearchFrom16(x.Col16[s:e], uint16(src), int(uint64(e-s)*num/den)))
			if k < 0 {
				dst[i] = 0
				continue
			}
			dst[i] = v.Value(i, x.Value(s+k))
		}
		sink.Store(uint32(touched))
	})
	return dst
}

// Columns returns the given columns of the view (ascending, distinct) as a
// CSR matrix with one row per row of the view and the columns renumbered
// 0 … len(cols)−1.
func (v *View) Columns(cols []int, threads int) (*CSR, error) {
	for k, j := range cols {
		if j < 0 || j >= len(v.cols) || k > 0 && j <= cols[k-1] {
			return nil, fmt.Errorf("sparse: column %d out of order or outside 0…%d", j, len(v.cols)-1)
		}
	}
	n := len(v.rows)
	pos := make([]int64, n*len(cols)) // position of each (row, column), or −1
	parallel.For(n, threads, func(lo, hi, _ int) {
		for i := lo; i < hi; i++ {
			for t, j := range cols {
				pos[i*len(cols)+t] = v.x.Find(v.rows[i], v.cols[j])
			}
		}
	})
	out := &CSR{Rows: n, Cols: len(cols), RowPtr: make([]int64, n+1)}
	for i := 0; i < n; i++ {
		for t := range cols {
			if k := pos[i*len(cols)+t]; k >= 0 {
				out.ColIdx = append(out.ColIdx, int32(t))
				out.Val = append(out.Val, v.Value(i, v.x.Value(k)))
			}
		}
		out.RowPtr[i+1] = int64(len(out.ColIdx))
	}
	return out, nil
}
