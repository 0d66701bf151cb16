package sparse

import (
	"fmt"
	"math"
	"slices"
	"sort"

	"lodestone/compute/parallel"
)

// MaxCols16 is the widest matrix whose column indices Counts holds in 16
// bits.
const MaxCols16 = 1 << 16

// LargeMark is the byte of Counts.Small that says an entry's value is held in
// Counts.LargeVal. Counts 1 … LargeMark−1 are held in their byte.
const LargeMark = 255

// Counts is a matrix of counts (cells × genes) in compressed sparse row form,
// stored compactly: most counts are small integers and most matrices have
// fewer than 65,536 columns. Row i holds the entries RowPtr[i] … RowPtr[i+1]−1;
// entry k has the column
//
//	Col16[k]   when Col32 is nil (Cols ≤ MaxCols16)
//	Col32[k]   otherwise
//
// and the value
//
//	Real[k]                            when Real is not nil
//	Small[k]                           when Small[k] < LargeMark
//	LargeVal[t] with LargeAt[t] == k   otherwise
//
// Integer matrices thus take 3 bytes per entry (2 for the column, 1 for the
// count) plus 12 bytes per count of 255 or more; a matrix with any value that
// is not a positive integer keeps every value as a float32 in Real (6
// bytes per entry, 8 with 32-bit columns). Large values are float32, exact for
// counts up to 2^24; larger counts are rounded to float32, as everywhere in
// Lodestone.
//
// Stored values are never zero, and column indices increase strictly within
// a row in a valid matrix (see Validate). Offsets are 64-bit, so a matrix may
// hold more than 2^31 entries. The type is read-only once built: build one
// with a CountsBuilder, FromCSR or SelectRowsCols.
type Counts struct {
	Rows, Cols int
	RowPtr     []int64 // length Rows+1, RowPtr[0] == 0
	Col16      []uint16
	Col32      []int32
	Small      []uint8   // nil when Real is set
	LargeAt    []int64   // ascending positions of the entries marked LargeMark
	LargeVal   []float32 // their values
	Real       []float32 // the values, when they are not all counts

	// Tally, when not nil, holds sums gathered while the matrix was built
	// (CountsBuilder, the Matrix Market reader), so that no later stage
	// needs a pass over the entries for them. It is nil for real values
	// and for matrices made otherwise.
	Tally *Tally
}

// Tally holds statistics of a Counts matrix of counts (not real values),
// gathered as its entries arrive.
type Tally struct {
	// RowTotal[i] is the sum of the counts of row i, taken as
	//
	//	float64(Σ counts below LargeMark, summed as integers) + LargeVal …
	//
	// with the large counts added in column order. Every count is an
	// integer, so a total of at most 2^53 is exact and equals a float64
	// sum of the row in any order.
	RowTotal []float64
	// ColRows[j] is the number of rows that hold an entry in column j.
	ColRows []int64
}

// MaxExact is the largest total of whole numbers that float64 sums
// exactly in any order (2^53).
const MaxExact = 1 << 53

// tally returns the Tally of the counts of m, computed from its entries.
func (m *Counts) tally() *Tally {
	t := &Tally{RowTotal: make([]float64, m.Rows), ColRows: make([]int64, m.Cols)}
	large := 0
	for i := 0; i < m.Rows; i++ {
		var sum int64
		lo, hi := m.RowPtr[i], m.RowPtr[i+1]
		for k := lo; k < hi; k++ {
			t.ColRows[m.Col(k)]++
			if s := m.Small[k]; s != LargeMark {
				sum += int64(s)
			}
		}
		total := float64(sum)
		for ; large < len(m.LargeAt) && m.LargeAt[large] < hi; large++ {
			total += float64(m.LargeVal[large])
		}
		t.RowTotal[i] = total
	}
	return t
}

// NNZ returns the number of stored entries.
func (m *Counts) NNZ() int64 { return m.RowPtr[m.Rows] }

// IsReal reports whether the values are held as float32 (not all counts).
func (m *Counts) IsReal() bool { return m.Real != nil }

// Col returns the column of entry k.
func (m *Counts) Col(k int64) int {
	if m.Col32 != nil {
		return int(m.Col32[k])
	}
	return int(m.Col16[k])
}

// Value returns the value of entry k. A large value is found by binary
// search in LargeAt.
func (m *Counts) Value(k int64) float32 {
	if m.Real != nil {
		return m.Real[k]
	}
	if s := m.Small[k]; s != LargeMark {
		return float32(s)
	}
	return m.LargeVal[m.LargeIndex(k)]
}

// LargeIndex returns the index in LargeAt of the first position ≥ k: for
// an entry k marked LargeMark, the index of its value in LargeVal.
func (m *Counts) LargeIndex(k int64) int {
	return sort.Search(len(m.LargeAt), func(t int) bool { return m.LargeAt[t] >= k })
}

// Row appends the columns and values of row i to cols[:0] and vals[:0] and
// returns them.
func (m *Counts) Row(i int, cols []int32, vals []float32) ([]int32, []float32) {
	lo, hi := m.RowPtr[i], m.RowPtr[i+1]
	n := int(hi - lo)
	cols, vals = slices.Grow(cols[:0], n)[:n], slices.Grow(vals[:0], n)[:n]
	if m.Col32 != nil {
		copy(cols, m.Col32[lo:hi])
	} else {
		for k, c := range m.Col16[lo:hi] {
			cols[k] = int32(c)
		}
	}
	if m.Real != nil {
		copy(vals, m.Real[lo:hi])
		return cols, vals
	}
	large := -1
	for k, s := range m.Small[lo:hi] {
		vals[k] = float32(s)
		if s == LargeMark {
			if large < 0 {
				large = m.LargeIndex(lo + int64(k))
			}
			vals[k] = m.LargeVal[large]
			large++
		}
	}
	return cols, vals
}

// Find returns the position of the entry at (i, j), or −1 when none is
// stored, by binary search in row i.
func (m *Counts) Find(i, j int) int64 {
	lo, hi := m.RowPtr[i], m.RowPtr[i+1]
	if m.Col32 != nil {
		c := m.Col32[lo:hi]
		k := sort.Search(len(c), func(k int) bool { return int(c[k]) >= j })
		if k < len(c) && int(c[k]) == j {
			return lo + int64(k)
		}
		return -1
	}
	if j >= MaxCols16 || j < 0 {
		return -1
	}
	// Genes are spread over the columns about evenly, so the column's
	// share of the columns is a good guess of its place in the row.
	n := hi - lo
	guess := int(uint64(j) * uint64(n) / uint64(max(1, m.Cols)))
	if k := SearchFrom16(m.Col16[lo:hi], uint16(j), guess); k >= 0 {
		return lo + int64(k)
	}
	return -1
}

// SearchFrom16 is Search16 starting from a guess of the position: it
// gallops from the guess (1, 2, 4 … places) to bracket j, then searches the
// bracket, so a good guess touches a cache line or two instead of the log₂
// of the length.
func SearchFrom16(c []uint16, j uint16, guess int) int {
	n := len(c)
	if n == 0 {
		return -1
	}
	g := max(0, min(guess, n-1))
	var lo, hi int // j, if present, lies in c[lo:hi]
	if c[g] < j {
		lo, hi = g+1, g+1
		for step := 1; hi < n && c[hi] < j; step *= 2 {
			lo = hi + 1
			hi = min(n, hi+step)
		}
		hi = min(n, hi+1)
	} else {
		lo, hi = g, g+1
		for step := 1; lo > 0 && c[lo-1] >= j; step *= 2 {
			hi = lo
			lo = max(0, lo-step)
		}
	}
	if k := Search16(c[lo:hi], j); k >= 0 {
		return lo + k
	}
	return -1
}

// Search16 returns the position of j in c, ascending, or −1 when c does not
// hold j. It is a binary search whose loop has no unpredictable branch.
func Search16(c []uint16, j uint16) int {
	lo, n := 0, len(c)
	if n == 0 {
		return -1
	}
	for n > 1 {
		half := n / 2
		if c[lo+half] <= j {
			lo += half
		}
		n -= half
	}
	if c[lo] == j {
		return lo
	}
	return -1
}

// At returns the value at (i, j), zero when none is stored.
func (m *Counts) At(i, j int) float32 {
	if k := m.Find(i, j); k >= 0 {
		return m.Value(k)
	}
	return 0
}

// Bytes returns the memory held by the matrix's row pointers and entries
// (its Tally holds 8 bytes more per row and per column).
func (m *Counts) Bytes() int64 {
	return int64(len(m.RowPtr))*8 + int64(len(m.Col16))*2 + int64(len(m.Col32))*4 +
		int64(len(m.Small)) + int64(len(m.LargeAt))*12 + int64(len(m.Real))*4
}

// Validate checks the structure of m: array lengths, monotone row pointers,
// column indices in range and strictly increasing within each row, values
// finite and not zero, large values marked where they are and nowhere else.
func (m *Counts) Validate() error {
	if m.Rows < 0 || m.Cols < 0 {
		return fmt.Errorf("sparse: negative shape %d×%d", m.Rows, m.Cols)
	}
	if len(m.RowPtr) != m.Rows+1 || m.RowPtr[0] != 0 {
		return fmt.Errorf("sparse: %d row pointers for %d rows", len(m.RowPtr), m.Rows)
	}
	nnz := m.RowPtr[m.Rows]
	wide := m.Cols > MaxCols16
	switch {
	case wide && (m.Col32 == nil && nnz > 0 || m.Col16 != nil):
		return fmt.Errorf("sparse: %d columns need 32-bit indices", m.Cols)
	case wide && int64(len(m.Col32)) != nnz, !wide && int64(len(m.Col16)) != nnz || !wide && m.Col32 != nil:
		return fmt.Errorf("sparse: column indices do not match %d entries", nnz)
	case m.Real != nil && (int64(len(m.Real)) != nnz || m.Small != nil || m.LargeAt != nil):
		return fmt.Errorf("sparse: %d real values for %d entries", len(m.Real), nnz)
	case m.Real == nil && int64(len(m.Small)) != nnz:
		return fmt.Errorf("sparse: %d counts for %d entries", len(m.Small), nnz)
	case len(m.LargeAt) != len(m.LargeVal):
		return fmt.Errorf("sparse: %d large positions, %d values", len(m.LargeAt), len(m.LargeVal))
	}
	for i := 0; i < m.Rows; i++ {
		lo, hi := m.RowPtr[i], m.RowPtr[i+1]
		if hi < lo || hi > nnz {
			return fmt.Errorf("sparse: row %d has bad bounds %d…%d", i, lo, hi)
		}
		prev := -1
		for k := lo; k < hi; k++ {
			c := m.Col(k)
			if c <= prev || c >= m.Cols {
				return fmt.Errorf("sparse: row %d: column %d out of order or out of range (%d columns)", i, c, m.Cols)
			}
			prev = c
		}
	}
	if m.Real != nil {
		if m.Tally != nil {
			return fmt.Errorf("sparse: real values with a tally")
		}
		for k, v := range m.Real {
			if v == 0 || math.IsNaN(float64(v)) || math.IsInf(float64(v), 0) {
				return fmt.Errorf("sparse: entry %d holds %v", k, v)
			}
		}
		return nil
	}
	t := 0
	for k, s := range m.Small {
		switch {
		case s == 0:
			return fmt.Errorf("sparse: entry %d holds 0", k)
		case s != LargeMark:
			continue
		case t >= len(m.LargeAt) || m.LargeAt[t] != int64(k):
			return fmt.Errorf("sparse: entry %d is marked large but not listed", k)
		}
		if v := m.LargeVal[t]; !(v >= LargeMark) || math.IsInf(float64(v), 0) || v != float32(math.Trunc(float64(v))) {
			return fmt.Errorf("sparse: entry %d holds the large value %v", k, v)
		}
		t++
	}
	if t != len(m.LargeAt) {
		return fmt.Errorf("sparse: %d large values listed, %d marked", len(m.LargeAt), t)
	}
	if m.Tally != nil {
		want := m.tally()
		if !slices.Equal(m.Tally.RowTotal, want.RowTotal) || !slices.Equal(m.Tally.ColRows, want.ColRows) {
			return fmt.Errorf("sparse: the tally does not match the entries")
		}
	}
	return nil
}

// IsCount reports whether v is held as a count: a finite integer ≥ 1.
// (Every float32 from 2^24 up is an integer: counts that large arrive
// rounded to float32.)
func IsCount(v float32) bool {
	return v >= 1 && v <= math.MaxFloat32 && v == float32(math.Trunc(float64(v)))
}

// CountsBuilder builds a Counts matrix row by row. Values are held as counts
// until one is not (see IsCount); from then on all are held as float32. The
// matrix's Tally is gathered as the counts arrive.
type CountsBuilder struct {
	m     *Counts
	row   int
	small int64 // sum of the current row's counts below LargeMark
	large int   // index in LargeVal of the current row's first large count
}

// NewCountsBuilder starts a rows × cols matrix with room for capacity
// entries.
func NewCountsBuilder(rows, cols int, capacity int64) *CountsBuilder {
	m := &Counts{Rows: rows, Cols: cols, RowPtr: make([]int64, 1, rows+1)}
	if cols > MaxCols16 {
		m.Col32 = make([]int32, 0, capacity)
	} else {
		m.Col16 = make([]uint16, 0, capacity)
	}
	m.Small = make([]uint8, 0, capacity)
	m.Tally = &Tally{RowTotal: make([]float64, 0, rows), ColRows: make([]int64, cols)}
	return &CountsBuilder{m: m}
}

// Add appends the entry (current row, col) with value v. Columns must
// increase within a row; v must be finite. A zero v is not stored.
func (b *CountsBuilder) Add(col int, v float32) {
	if v == 0 {
		return
	}
	m := b.m
	if m.Col32 != nil {
		m.Col32 = append(m.Col32, int32(col))
	} else {
		m.Col16 = append(m.Col16, uint16(col))
	}
	switch {
	case m.Real != nil:
		m.Real = append(m.Real, v)
	case !IsCount(v):
		m.toReal()
		m.Real = append(m.Real, v)
	case v < LargeMark:
		m.Small = append(m.Small, uint8(v))
		b.small += int64(v)
	default:
		m.LargeAt = append(m.LargeAt, int64(len(m.Small)))
		m.LargeVal = append(m.LargeVal, v)
		m.Small = append(m.Small, LargeMark)
	}
	if m.Tally != nil {
		m.Tally.ColRows[col]++
	}
}

// toReal moves the values of m, which holds counts, into Real.
func (m *Counts) toReal() {
	real := make([]float32, len(m.Small), cap(m.Small))
	t := 0
	for k, s := range m.Small {
		if s == LargeMark {
			real[k] = m.LargeVal[t]
			t++
		} else {
			real[k] = float32(s)
		}
	}
	m.Real, m.Small, m.LargeAt, m.LargeVal = real, nil, nil, nil
	m.Tally = nil
}

// EndRow closes the current row.
func (b *CountsBuilder) EndRow() {
	m := b.m
	n := len(m.Col16) + len(m.Col32)
	m.RowPtr = append(m.RowPtr, int64(n))
	b.row++
	if m.Tally != nil {
		total := float64(b.small)
		for _, v := range m.LargeVal[b.large:] {
			total += float64(v)
		}
		m.Tally.RowTotal = append(m.Tally.RowTotal, total)
	}
	b.small, b.large = 0, len(m.LargeVal)
}

// Counts closes the remaining rows and returns the matrix.
func (b *CountsBuilder) Counts() *Counts {
	for b.row < b.m.Rows {
		b.EndRow()
	}
	return b.m
}

// FromCSR returns the non-zero entries of m as a Counts matrix. m must be a
// valid CSR matrix with finite values.
func FromCSR(m *CSR) *Counts {
	b := NewCountsBuilder(m.Rows, m.Cols, int64(m.NNZ()))
	for i := 0; i < m.Rows; i++ {
		cols, vals := m.Row(i)
		for k, c := range cols {
			b.Add(int(c), vals[k])
		}
		b.EndRow()
	}
	return b.Counts()
}

// ToCSR returns m as a CSR matrix with float32 values.
func (m *Counts) ToCSR() *CSR {
	nnz := m.NNZ()
	out := &CSR{Rows: m.Rows, Cols: m.Cols, RowPtr: append([]int64(nil), m.RowPtr...),
		ColIdx: make([]int32, 0, nnz), Val: make([]float32, 0, nnz)}
	var cols []int32
	var vals []float32
	for i := 0; i < m.Rows; i++ {
		cols, vals = m.Row(i, cols, vals)
		out.ColIdx = append(out.ColIdx, cols...)
		out.Val = append(out.Val, vals...)
	}
	return out
}

// SelectRowsCols returns a new matrix made of the given rows of m, in the
// order given, restricted to the given columns (ascending; nil for all),
// renumbered 0 … len(cols)−1. Values keep their form: counts stay counts,
// with their Tally. The rows are copied on all processors; the result does
// not depend on their number.
func (m *Counts) SelectRowsCols(rows, cols []int) *Counts {
	if cols == nil {
		cols = make([]int, m.Cols)
		for j := range cols {
			cols[j] = j
		}
	}
	newCol := make([]int32, m.Cols)
	for j := range newCol {
		newCol[j] = -1
	}
	for k, j := range cols {
		newCol[j] = int32(k)
	}
	out := &Counts{Rows: len(rows), Cols: len(cols), RowPtr: make([]int64, len(rows)+1)}
	parallel.For(len(rows), 0, func(lo, hi, _ int) {
		for r := lo; r < hi; r++ {
			i := rows[r]
			var n int64
			for k := m.RowPtr[i]; k < m.RowPtr[i+1]; k++ {
				if newCol[m.Col(k)] >= 0 {
					n++
				}
			}
			out.RowPtr[r+1] = n
		}
	})
	for r := range rows {
		out.RowPtr[r+1] += out.RowPtr[r]
	}
	nnz := out.RowPtr[len(rows)]
	wide := len(cols) > MaxCols16
	if wide {
		out.Col32 = make([]int32, nnz)
	} else {
		out.Col16 = make([]uint16, nnz)
	}
	if m.Real != nil {
		out.Real = make([]float32, nnz)
	} else {
		out.Small = make([]uint8, nnz)
		out.Tally = &Tally{RowTotal: make([]float64, len(rows)), ColRows: make([]int64, len(cols))}
	}
	// Each block of rows fills its own part of the arrays, lists its own
	// large counts and counts its own rows per column; the lists are joined
	// and the counts summed in block order.
	blocks := len(parallel.Blocks(len(rows), parallel.Threads(0))) - 1
	largeAt := make([][]int64, max(1, blocks))
	largeVal := make([][]float32, max(1, blocks))
	colRows := make([][]int64, max(1, blocks))
	parallel.For(len(rows), 0, func(lo, hi, b int) {
		var cr []int64
		if out.Tally != nil {
			cr = make([]int64, len(cols))
			colRows[b] = cr
		}
		for r := lo; r < hi; r++ {
			i := rows[r]
			p := out.RowPtr[r]
			large := -1
			var small int64
			firstLarge := len(largeVal[b])
			for k := m.RowPtr[i]; k < m.RowPtr[i+1]; k++ {
				isLarge := m.Real == nil && m.Small[k] == LargeMark
				if isLarge && large < 0 {
					large = m.LargeIndex(k)
				}
				nj := newCol[m.Col(k)]
				if nj >= 0 {
					if wide {
						out.Col32[p] = nj
					} else {
						out.Col16[p] = uint16(nj)
					}
					switch {
					case m.Real != nil:
						out.Real[p] = m.Real[k]
					case isLarge:
						out.Small[p] = LargeMark
						largeAt[b] = append(largeAt[b], p)
						largeVal[b] = append(largeVal[b], m.LargeVal[large])
					default:
						out.Small[p] = m.Small[k]
						small += int64(m.Small[k])
					}
					if cr != nil {
						cr[nj]++
					}
					p++
				}
				if isLarge {
					large++
				}
			}
			if out.Tally != nil {
				total := float64(small)
				for _, v := range largeVal[b][firstLarge:] {
					total += float64(v)
				}
				out.Tally.RowTotal[r] = total
			}
		}
	})
	for b := range largeAt {
		out.LargeAt = append(out.LargeAt, largeAt[b]...)
		out.LargeVal = append(out.LargeVal, largeVal[b]...)
		if out.Tally != nil && colRows[b] != nil {
			for j, c := range colRows[b] {
				out.Tally.ColRows[j] += c
			}
		}
	}
	return out
}
