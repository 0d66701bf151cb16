// Package sparse holds the sparse matrices shared by every stage of
// Lodestone: CSR, compressed sparse rows with float32 values (affinities,
// graphs, small expression tables); Counts, the compact store of an atlas's
// counts (cells × genes, 3 bytes a count); and View, chosen rows and columns
// of a Counts read as stored or log-normalised as they are read.
package sparse

import (
	"fmt"
	"sort"
)

// CSR is a matrix in compressed sparse row form with float32 values and
// int32 column indices. Row i holds the entries
//
//	ColIdx[RowPtr[i]:RowPtr[i+1]], Val[RowPtr[i]:RowPtr[i+1]]
//
// Column indices within a row are strictly increasing in a valid matrix.
type CSR struct {
	Rows, Cols int
	RowPtr     []int64 // length Rows+1, RowPtr[0] == 0
	ColIdx     []int32
	Val        []float32
}

// NNZ returns the number of stored entries.
func (m *CSR) NNZ() int { return len(m.ColIdx) }

// Dims returns the numbers of rows and columns.
func (m *CSR) Dims() (rows, cols int) { return m.Rows, m.Cols }

// Columns returns the given columns of m (ascending, distinct) as a new
// matrix with the columns renumbered 0 … len(cols)−1, after checking m with
// Validate. threads is not used: it matches View.Columns.
func (m *CSR) Columns(cols []int, threads int) (*CSR, error) {
	if err := m.Validate(); err != nil {
		return nil, err
	}
	for k, j := range cols {
		if j < 0 || j >= m.Cols || k > 0 && j <= cols[k-1] {
			return nil, fmt.Errorf("sparse: column %d out of order or outside 0…%d", j, m.Cols-1)
		}
	}
	return m.SelectCols(cols), nil
}

// Row returns the column indices and values of row i. The slices alias m.
func (m *CSR) Row(i int) ([]int32, []float32) {
	lo, hi := m.RowPtr[i], m.RowPtr[i+1]
	return m.ColIdx[lo:hi], m.Val[lo:hi]
}

// At returns the entry at (i, j), zero when it is not stored.
func (m *CSR) At(i, j int) float32 {
	cols, vals := m.Row(i)
	k := sort.Search(len(cols), func(k int) bool { return int(cols[k]) >= j })
	if k < len(cols) && int(cols[k]) == j {
		return vals[k]
	}
	return 0
}

// Bytes returns the memory held by the matrix's arrays.
func (m *CSR) Bytes() int64 {
	return int64(len(m.RowPtr))*8 + int64(len(m.ColIdx))*4 + int64(len(m.Val))*4
}

// Validate checks the structure of m: array lengths, monotone row pointers,
// column indices in range and strictly increasing within each row.
func (m *CSR) Validate() error {
	if m.Rows < 0 || m.Cols < 0 {
		return fmt.Errorf("sparse: negative shape %d×%d", m.Rows, m.Cols)
	}
	if len(m.RowPtr) != m.Rows+1 {
		return fmt.Errorf("sparse: %d row pointers for %d rows", len(m.RowPtr), m.Rows)
	}
	if m.RowPtr[0] != 0 || m.RowPtr[m.Rows] != int64(len(m.ColIdx)) || len(m.ColIdx) != len(m.Val) {
		return fmt.Errorf("sparse: row pointers end at %d, %d indices, %d values", m.RowPtr[m.Rows], len(m.ColIdx), len(m.Val))
	}
	for i := 0; i < m.Rows; i++ {
		lo, hi := m.RowPtr[i], m.RowPtr[i+1]
		if hi < lo {
			return fmt.Errorf("sparse: row %d has negative length", i)
		}
		prev := int32(-1)
		for _, c := range m.ColIdx[lo:hi] {
			if c <= prev || int(c) >= m.Cols {
				return fmt.Errorf("sparse: row %d: column %d out of order or out of range (%d columns)", i, c, m.Cols)
			}
			prev = c
		}
	}
	return nil
}

// Transpose returns the transpose of m as a new CSR matrix. Column indices of
// the result are sorted within each row when those of m are.
func (m *CSR) Transpose() *CSR {
	t := &CSR{Rows: m.Cols, Cols: m.Rows, RowPtr: make([]int64, m.Cols+1)}
	for _, c := range m.ColIdx {
		t.RowPtr[c+1]++
	}
	for j := 0; j < m.Cols; j++ {
		t.RowPtr[j+1] += t.RowPtr[j]
	}
	t.ColIdx = make([]int32, len(m.ColIdx))
	t.Val = make([]float32, len(m.Val))
	next := make([]int64, m.Cols)
	copy(next, t.RowPtr[:m.Cols])
	for i := 0; i < m.Rows; i++ {
		cols, vals := m.Row(i)
		for k, c := range cols {
			p := next[c]
			t.ColIdx[p] = int32(i)
			t.Val[p] = vals[k]
			next[c]++
		}
	}
	return t
}

// SelectRows returns a new matrix made of the given rows of m, in the order
// given.
func (m *CSR) SelectRows(rows []int) *CSR {
	out := &CSR{Rows: len(rows), Cols: m.Cols, RowPtr: make([]int64, len(rows)+1)}
	var nnz int64
	for k, i := range rows {
		nnz += m.RowPtr[i+1] - m.RowPtr[i]
		out.RowPtr[k+1] = nnz
	}
	out.ColIdx = make([]int32, 0, nnz)
	out.Val = make([]float32, 0, nnz)
	for _, i := range rows {
		cols, vals := m.Row(i)
		out.ColIdx = append(out.ColIdx, cols...)
		out.Val = append(out.Val, vals...)
	}
	return out
}

// SelectCols returns a new matrix holding the given columns of m, renumbered
// 0…len(cols)−1 in the order given. cols must be strictly increasing.
func (m *CSR) SelectCols(cols []int) *CSR {
	newIdx := make([]int32, m.Cols)
	for j := range newIdx {
		newIdx[j] = -1
	}
	for k, j := range cols {
		newIdx[j] = int32(k)
	}
	out := &CSR{Rows: m.Rows, Cols: len(cols), RowPtr: make([]int64, m.Rows+1)}
	for i := 0; i < m.Rows; i++ {
		c, v := m.Row(i)
		for k, j := range c {
			if nj := newIdx[j]; nj >= 0 {
				out.ColIdx = append(out.ColIdx, nj)
				out.Val = append(out.Val, v[k])
			}
		}
		out.RowPtr[i+1] = int64(len(out.ColIdx))
	}
	return out
}
