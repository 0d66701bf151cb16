package ingest

import (
	"context"
	"io"
	"math"
	"slices"
	"sort"

	"lodestone/compute/parallel"
	"lodestone/compute/sparse"
)

// colType and valType are the element types of the entry arrays.
type (
	colType interface{ ~uint16 | ~int32 }
	valType interface{ ~uint8 | ~float32 }
)

// assemble turns the entries read into a Counts matrix: it groups them by
// row when they did not arrive so, sorts each row by column and checks for
// duplicates (recorded in p.dup).
func (p *mtxParser) assemble() (*sparse.Counts, error) {
	rowPtr := p.perRow
	for r := 0; r < p.outRows; r++ {
		rowPtr[r+1] += rowPtr[r]
	}
	if err := p.arrange(rowPtr); err != nil || p.dup != nil {
		return nil, err
	}
	p.rowOf = nil
	if c := p.capacity(); c-p.n > p.n/4 {
		p.resize(p.n) // let go of the room the entries do not use
	}
	n := p.n
	m := &sparse.Counts{Rows: p.outRows, Cols: p.outCols, RowPtr: rowPtr}
	if p.wide {
		m.Col32 = p.col32[:n]
	} else {
		m.Col16 = p.col16[:n]
	}
	if p.real != nil {
		m.Real = p.real[:n]
		return m, nil
	}
	m.Small = p.small[:n]
	m.Tally = &sparse.Tally{RowTotal: make([]float64, p.outRows), ColRows: p.colRows}
	for r, s := range p.rowSmall {
		m.Tally.RowTotal[r] = float64(s)
	}
	p.rowSmall = nil
	if len(p.large) > 0 {
		m.LargeAt = make([]int64, len(p.large))
		m.LargeVal = make([]float32, len(p.large))
		for t, e := range p.large {
			m.LargeAt[t], m.LargeVal[t] = e.k, e.v
			// In position order: each row's large counts in column order.
			m.Tally.RowTotal[e.row] += float64(e.v)
		}
	}
	return m, nil
}

// checkDuplicates groups the entries stored so far by row and sorts each
// row, recording the first duplicate in p.dup. The entries stay grouped.
func (p *mtxParser) checkDuplicates() {
	rowPtr := make([]int64, p.outRows+1)
	copy(rowPtr, p.perRow)
	for r := 0; r < p.outRows; r++ {
		rowPtr[r+1] += rowPtr[r]
	}
	if err := p.arrange(rowPtr); err != nil {
		p.s.err = err // the context's error, reported when reading stops
	}
}

// arrange groups the p.n entries stored by row (when their rows are kept
// beside them), sorts each row by column, records the first duplicate in
// p.dup and updates the positions of the large counts. rowPtr holds the
// rows' bounds among the entries.
func (p *mtxParser) arrange(rowPtr []int64) error {
	n := p.n
	var rowOf []uint32
	if p.rowOf != nil {
		rowOf = p.rowOf[:n]
	}
	var d *duplicate
	var err error
	switch {
	case p.wide && p.real != nil:
		d, err = arrange(p.ctx, rowOf, p.col32[:n], p.real[:n], rowPtr)
	case p.wide:
		d, err = arrange(p.ctx, rowOf, p.col32[:n], p.small[:n], rowPtr)
	case p.real != nil:
		d, err = arrange(p.ctx, rowOf, p.col16[:n], p.real[:n], rowPtr)
	default:
		d, err = arrange(p.ctx, rowOf, p.col16[:n], p.small[:n], rowPtr)
	}
	if err != nil {
		return err
	}
	if d != nil {
		d.file(p.transpose)
		p.dup = d
		return nil
	}
	for t := range p.large {
		e := &p.large[t]
		lo, hi := rowPtr[e.row], rowPtr[e.row+1]
		if p.wide {
			e.k = lo + int64(sort.Search(int(hi-lo), func(k int) bool { return p.col32[lo+int64(k)] >= e.col }))
		} else {
			e.k = lo + int64(sort.Search(int(hi-lo), func(k int) bool { return int32(p.col16[lo+int64(k)]) >= e.col }))
		}
	}
	slices.SortFunc(p.large, func(a, b largeEntry) int { return int(a.k - b.k) })
	return nil
}

// arrange groups entries by row when rowOf is not nil and sorts each row by
// column, returning the first row that holds a column twice.
func arrange[C colType, V valType](ctx context.Context, rowOf []uint32, col []C, val []V, rowPtr []int64) (*duplicate, error) {
	if rowOf != nil {
		if err := groupByRow(ctx, rowOf, col, val, rowPtr); err != nil {
			return nil, err
		}
	}
	return sortRows(ctx, col, val, rowPtr)
}

// A duplicate is a position given twice.
type duplicate struct {
	row, col int    // in the result
	i, j     int    // 1-based row and column in the file
	lines    [2]int // the lines of both entries, when known
}

// file sets the duplicate's position in the file from its position in the
// result.
func (d *duplicate) file(transpose bool) {
	d.i, d.j = d.row+1, d.col+1
	if transpose {
		d.i, d.j = d.j, d.i
	}
}

// error names the duplicate's lines, when known.
func (d *duplicate) error(name string) error {
	if d.lines[1] == 0 {
		return errorf(name, 0, 0, ErrDuplicateEntry, "row %d, column %d is given twice (the input cannot be read again to find the lines)", d.i, d.j)
	}
	return errorf(name, d.lines[1], 0, ErrDuplicateEntry, "row %d, column %d already given on line %d", d.i, d.j, d.lines[0])
}

// findLines reads the input again to find the lines of the first two
// entries at d's position.
func findLines(ctx context.Context, r io.ReadSeeker, name string, d *duplicate) {
	if _, err := r.Seek(0, io.SeekStart); err != nil {
		return
	}
	src, closeSrc, _, err := decompress(r)
	if err != nil {
		return
	}
	defer closeSrc()
	s := newLineScanner(ctx, src)
	if _, err := readMatrixHeader(s, name); err != nil {
		return
	}
	found := 0
	for found < 2 && s.next() {
		ti, q := field(s.text, 0)
		tj, _ := field(s.text, q)
		i, ok1 := parseUint(ti, math.MaxInt32)
		j, ok2 := parseUint(tj, math.MaxInt32)
		if ok1 && ok2 && int(i) == d.i && int(j) == d.j {
			d.lines[found] = s.line
			found++
		}
	}
	if found < 2 {
		d.lines = [2]int{}
	}
}

// flagBuckets bounds the buckets of one pass of groupByRow. Each bucket
// is a place where the pass writes; with few of them the places stay in
// the cache and the page tables' cache (measured: 64 buckets make a pass
// over 10^7 entries 3–5 times faster than 1,024).
const flagBuckets = 64

// groupByRow moves the entries to their rows' ranges of rowPtr in place:
// a most-significant-digit radix sort on the row, each pass an American
// flag sort (McIlroy, Bostic & McIlroy, "Engineering radix sort",
// Computing Systems 6, 1993). The order within a row is not kept.
func groupByRow[C colType, V valType](ctx context.Context, rowOf []uint32, col []C, val []V, rowPtr []int64) error {
	rows := len(rowPtr) - 1
	shift := bucketShift(rows)
	if err := flagPass(ctx, rowOf, col, val, rowPtr, 0, rows, shift); err != nil {
		return err
	}
	if shift == 0 {
		return nil
	}
	// The buckets of the first pass are independent: finish them on all
	// cores.
	nb := (rows-1)>>shift + 1
	errs := make([]error, len(parallel.Blocks(nb, parallel.Threads(0))))
	parallel.For(nb, 0, func(lo, hi, b int) {
		for k := lo; k < hi && errs[b] == nil; k++ {
			r0 := k << shift
			errs[b] = groupRange(ctx, rowOf, col, val, rowPtr, r0, min(rows, r0+1<<shift))
		}
	})
	for _, err := range errs {
		if err != nil {
			return err
		}
	}
	return nil
}

// bucketShift returns the smallest shift that splits n rows into at most
// flagBuckets buckets of 1<<shift rows.
func bucketShift(n int) uint {
	shift := uint(0)
	for n > 0 && (n-1)>>shift >= flagBuckets {
		shift++
	}
	return shift
}

// groupRange groups by row the entries of rows [r0, r1), which lie in
// rowPtr[r0]…rowPtr[r1].
func groupRange[C colType, V valType](ctx context.Context, rowOf []uint32, col []C, val []V, rowPtr []int64, r0, r1 int) error {
	if r1-r0 <= 1 {
		return nil
	}
	shift := bucketShift(r1 - r0)
	if err := flagPass(ctx, rowOf, col, val, rowPtr, r0, r1, shift); err != nil {
		return err
	}
	if shift == 0 {
		return nil
	}
	for b := r0; b < r1; b += 1 << shift {
		if err := groupRange(ctx, rowOf, col, val, rowPtr, b, min(r1, b+1<<shift)); err != nil {
			return err
		}
	}
	return nil
}

// flagPass moves the entries of rows [r0, r1) into buckets of 1<<shift
// consecutive rows, in place.
func flagPass[C colType, V valType](ctx context.Context, rowOf []uint32, col []C, val []V, rowPtr []int64, r0, r1 int, shift uint) error {
	nb := (r1-r0-1)>>shift + 1
	var next, end [flagBuckets]int64
	for b := 0; b < nb; b++ {
		next[b] = rowPtr[r0+b<<shift]
		end[b] = rowPtr[min(r1, r0+(b+1)<<shift)]
	}
	base := uint32(r0)
	moves := 0
	for b := 0; b < nb; b++ {
		for next[b] < end[b] {
			k := next[b]
			r, c, v := rowOf[k], col[k], val[k]
			for d := int((r - base) >> shift); d != b; d = int((r - base) >> shift) {
				t := next[d]
				next[d]++
				r, rowOf[t] = rowOf[t], r
				c, col[t] = col[t], c
				v, val[t] = val[t], v
				if moves++; moves&(1<<20-1) == 0 {
					if err := ctx.Err(); err != nil {
						return err
					}
				}
			}
			rowOf[k], col[k], val[k] = r, c, v
			next[b]++
		}
	}
	return nil
}

// sortRows sorts each row of the entries by column, on all cores. It
// returns the first row (lowest number) holding a column twice, or nil.
func sortRows[C colType, V valType](ctx context.Context, col []C, val []V, rowPtr []int64) (*duplicate, error) {
	rows := len(rowPtr) - 1
	blocks := len(parallel.Blocks(rows, parallel.Threads(0)))
	found := make([]*duplicate, blocks)
	errs := make([]error, blocks)
	parallel.For(rows, 0, func(lo, hi, b int) {
		var packed []uint64
		var tc []C
		var tv []V
		for r := lo; r < hi; r++ {
			if (r-lo)&4095 == 0 {
				if errs[b] = ctx.Err(); errs[b] != nil {
					return
				}
			}
			start, end := rowPtr[r], rowPtr[r+1]
			cols, vals := col[start:end], val[start:end]
			if increasing(cols) {
				continue
			}
			// Sort (column, position) pairs, then move the entries.
			packed = packed[:0]
			for k, c := range cols {
				packed = append(packed, uint64(c)<<32|uint64(k))
			}
			slices.Sort(packed)
			tc = append(tc[:0], cols...)
			tv = append(tv[:0], vals...)
			for k, x := range packed {
				cols[k], vals[k] = tc[uint32(x)], tv[uint32(x)]
			}
			for k := 1; k < len(cols); k++ {
				if cols[k] == cols[k-1] {
					found[b] = &duplicate{row: r, col: int(cols[k])}
					return
				}
			}
		}
	})
	for b := range found {
		if errs[b] != nil {
			return nil, errs[b]
		}
		if found[b] != nil {
			return found[b], nil
		}
	}
	return nil, nil
}

// increasing reports whether cols is strictly increasing.
func increasing[C colType](cols []C) bool {
	for k := 1; k < len(cols); k++ {
		if cols[k] <= cols[k-1] {
			return false
		}
	}
	return true
}
