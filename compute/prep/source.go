package prep

import (
	"math"
	"slices"

	"lodestone/compute/sparse"
)

// source is a sparse matrix read row by row: a CSR matrix, whose rows are
// slices of its arrays, or a view of counts, whose values are computed as
// they are read. Every stage that visits stored entries reads them through
// it, so both give the same sums in the same order.
type source interface {
	dims() (rows, cols int)
	// ptr returns the prefix sums of the entries of each row.
	ptr() []int64
	// row returns the columns (ascending) and values of row i, appended to
	// cols[:0] and vals[:0] or aliasing the matrix.
	row(i int, cols []int32, vals []float32) ([]int32, []float32)
}

// csrSource reads a CSR matrix.
type csrSource struct{ m *sparse.CSR }

func (s csrSource) dims() (int, int) { return s.m.Rows, s.m.Cols }
func (s csrSource) ptr() []int64     { return s.m.RowPtr }
func (s csrSource) row(i int, _ []int32, _ []float32) ([]int32, []float32) {
	return s.m.Row(i)
}

// viewSource reads a view of counts.
type viewSource struct{ v *sparse.View }

func (s viewSource) dims() (int, int) { return s.v.Dims() }
func (s viewSource) ptr() []int64     { return s.v.RowPtr() }
func (s viewSource) row(i int, cols []int32, vals []float32) ([]int32, []float32) {
	return s.v.Row(i, cols, vals)
}

// rowBuffers holds one pair of decoding buffers per block of a split.
type rowBuffers struct {
	cols [][]int32
	vals [][]float32
}

func newRowBuffers(blocks int) *rowBuffers {
	return &rowBuffers{cols: make([][]int32, blocks), vals: make([][]float32, blocks)}
}

// row reads row i of src with block b's buffers.
func (r *rowBuffers) row(src source, i, b int) ([]int32, []float32) {
	c, v := src.row(i, r.cols[b], r.vals[b])
	if _, ok := src.(viewSource); ok {
		r.cols[b], r.vals[b] = c, v
	}
	return c, v
}

// counts reads row i of m with block b's buffers.
func (r *rowBuffers) counts(m *sparse.Counts, i, b int) ([]int32, []float32) {
	c, v := m.Row(i, r.cols[b], r.vals[b])
	r.cols[b], r.vals[b] = c, v
	return c, v
}

// linearRows reads the rows of a source of log-normalised values y as
// exp(y) − 1, the normalised expression before the logarithm, with one set
// of buffers per block. For a view of counts the value of each small count
// is computed once per row: the same float64 operations on the same float32
// y, so the same result as computing it for every entry.
type linearRows struct {
	src  source
	bufs *rowBuffers
	xs   [][]float64

	// For a log-normalised view of counts with 16-bit columns: the
	// matrix, the view's rows, its column map (nil: all columns) and
	// factors. x is nil otherwise.
	x     *sparse.Counts
	rows  []int
	colOf []int32
	scale []float64
}

func newLinearRows(src source, blocks int) *linearRows {
	l := &linearRows{src: src, bufs: newRowBuffers(blocks), xs: make([][]float64, blocks)}
	if v, ok := src.(viewSource); ok && v.v.Normalized() {
		if x, rows, _ := v.v.Source(); !x.IsReal() && x.Col32 == nil {
			l.x, l.rows, l.colOf, l.scale = x, rows, v.v.ColumnMap(), v.v.Scale()
		}
	}
	return l
}

// row returns the columns of row i and exp(y)−1 of their values.
func (l *linearRows) row(i, b int) ([]int32, []float64) {
	if l.x != nil {
		return l.countsRow(i, b)
	}
	v, counts := l.src.(viewSource)
	counts = counts && v.v.Normalized()
	if counts {
		x, _, _ := v.v.Source()
		counts = !x.IsReal()
	}
	var cols []int32
	var vals []float32
	if counts {
		cols, vals = v.v.RowCounts(i, l.bufs.cols[b], l.bufs.vals[b])
	} else {
		cols, vals = l.bufs.row(l.src, i, b)
	}
	if counts {
		l.bufs.cols[b], l.bufs.vals[b] = cols, vals
	}
	xs := slices.Grow(l.xs[b][:0], len(vals))[:len(vals)]
	l.xs[b] = xs
	if !counts {
		for k, y := range vals {
			xs[k] = math.Expm1(float64(y))
		}
		return cols, xs
	}
	scale := v.v.Scale()[i]
	var tab [64]float64 // exp(y)−1 of small counts; 0 until computed
	for k, c := range vals {
		if n := int(c); n < len(tab) {
			x := tab[n]
			if x == 0 {
				x = math.Expm1(float64(sparse.LogNorm(c, scale)))
				tab[n] = x
			}
			xs[k] = x
		} else {
			xs[k] = math.Expm1(float64(sparse.LogNorm(c, scale)))
		}
	}
	return cols, xs
}

// countsRow is row for a log-normalised view of counts with 16-bit
// columns, read straight from the matrix's arrays: each stored count goes
// through its column map and a table of exp(y)−1 of the counts below
// sparse.LargeMark met in the row, each computed once per row by the same
// float64 operations on the same float32 y as the general path.
func (l *linearRows) countsRow(i, b int) ([]int32, []float64) {
	x := l.x
	r := l.rows[i]
	lo, hi := x.RowPtr[r], x.RowPtr[r+1]
	n := int(hi - lo)
	cols := slices.Grow(l.bufs.cols[b][:0], n)[:n]
	xs := slices.Grow(l.xs[b][:0], n)[:n]
	l.bufs.cols[b], l.xs[b] = cols, xs
	scale := l.scale[i]
	var tab [sparse.LargeMark]float64 // 0 until computed
	small := x.Small[lo:hi]
	colOf := l.colOf
	large := -1
	w := 0
	for k, c := range x.Col16[lo:hi] {
		s := small[k]
		j := int32(c)
		if colOf != nil {
			if j = colOf[c]; j < 0 {
				if s == sparse.LargeMark && large >= 0 {
					large++
				}
				continue
			}
		}
		var v float64
		if s != sparse.LargeMark {
			if v = tab[s]; v == 0 {
				v = math.Expm1(float64(sparse.LogNorm(float32(s), scale)))
				tab[s] = v
			}
		} else {
			if large < 0 {
				large = x.LargeIndex(lo + int64(k))
			}
			v = math.Expm1(float64(sparse.LogNorm(x.LargeVal[large], scale)))
			large++
		}
		cols[w], xs[w] = j, v
		w++
	}
	return cols[:w], xs[:w]
}
