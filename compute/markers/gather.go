package markers

import (
	"context"
	"math"
	"slices"

	"lodestone/compute/progress"
	"lodestone/compute/sparse"
)

// A worker gathers the values of a range of genes at once, in one pass over
// the cells: at most rangeGenes genes, so that the places their keys are
// written to stay in the cache, and at most rangeEntries entries (keys of 4
// bytes: 64 MiB).
const (
	rangeGenes   = 512
	rangeEntries = 1 << 24
)

// segment is a run of genes [lo, hi) that one worker compares.
type segment struct{ lo, hi int }

// segments splits the genes into at most threads runs of about equal
// numbers of entries.
func (e *Expression) segments(threads int) []segment {
	var total int64
	for _, n := range e.geneNNZ {
		total += n + 1
	}
	var out []segment
	lo := 0
	var acc int64
	for g, n := range e.geneNNZ {
		acc += n + 1
		if len(out) < threads-1 && acc*int64(threads) >= total*int64(len(out)+1) {
			out = append(out, segment{lo, g + 1})
			lo = g + 1
		}
	}
	if lo < e.genes || len(out) == 0 {
		out = append(out, segment{lo, e.genes})
	}
	return out
}

// rankSegment compares the genes of seg, range by range: each range's
// values are gathered in one pass over the cells of both sides, as sort keys
// in one bucket per gene, then each gene is tested.
func (e *Expression) rankSegment(ctx context.Context, seg segment, side []uint8, t *test, res []Result, counter *progress.Counter) error {
	if seg.lo >= seg.hi {
		return nil
	}
	x := e.x
	src, rows, cols := x.Source()
	scale := x.Scale()
	// cursor[c]: where cell c's row continues, from the row's start.
	cursor := make([]int32, e.cells)
	first := cols[seg.lo]
	for c, r := range rows {
		if side[c] != outside {
			cursor[c] = int32(lowerBound(src, r, first))
		}
	}
	var keys, buf []uint32
	fill := make([]int64, 0, 64)
	memo := new(expm1Memo)
	for lo := seg.lo; lo < seg.hi; {
		if err := ctx.Err(); err != nil {
			return err
		}
		// The range: genes lo … hi−1 (at least one gene).
		hi, n := lo, int64(0)
		for hi < seg.hi && (hi == lo || n+e.geneNNZ[hi] <= rangeEntries && hi-lo < rangeGenes) {
			n += e.geneNNZ[hi]
			hi++
		}
		keys = slices.Grow(keys[:0], int(n))[:n]
		fill = fill[:0]
		var off int64
		for g := lo; g < hi; g++ {
			fill = append(fill, off)
			off += e.geneNNZ[g]
		}
		last := cols[hi-1]
		for c, r := range rows {
			s := side[c]
			if s == outside {
				continue
			}
			if c&4095 == 0 && ctx.Err() != nil {
				return ctx.Err()
			}
			start, end := src.RowPtr[r], src.RowPtr[r+1]
			k := start + int64(cursor[c])
			for ; k < end; k++ {
				j := src.Col(k)
				if j > last {
					break
				}
				g := x.ColumnOf(j)
				if g < 0 {
					continue
				}
				v := e.value(src, scale, c, k)
				if v == 0 {
					continue
				}
				b := &fill[g-lo]
				keys[*b] = math.Float32bits(v)<<1 | uint32(s-1)
				*b++
			}
			cursor[c] = int32(k - start)
		}
		var from int64
		for g := lo; g < hi; g++ {
			to := fill[g-lo]
			gk := keys[from:to]
			buf = slices.Grow(buf[:0], len(gk))[:len(gk)]
			t.gene(&res[g], gk, buf, memo)
			res[g].Gene = g
			from += e.geneNNZ[g]
		}
		counter.Add(int64(hi - lo))
		lo = hi
	}
	return nil
}

// value returns the expression of cell c held at entry k of the source.
func (e *Expression) value(src *sparse.Counts, scale []float64, c int, k int64) float32 {
	if e.small != nil {
		if s := src.Small[k]; s <= smallCounts {
			return e.small[c*smallCounts+int(s)-1]
		}
	}
	v := src.Value(k)
	if scale != nil {
		return sparse.LogNorm(v, scale[c])
	}
	return v
}

// lowerBound returns the position, from the start of row r of m, of the
// first entry whose column is at least j.
func lowerBound(m *sparse.Counts, r, j int) int {
	lo, hi := m.RowPtr[r], m.RowPtr[r+1]
	n := int(hi - lo)
	a, b := 0, n
	for a < b {
		h := int(uint(a+b) >> 1)
		if m.Col(lo+int64(h)) < j {
			a = h + 1
		} else {
			b = h
		}
	}
	return a
}

// radixSort sorts keys in ascending order with buf (as long as keys) as
// scratch space and returns the sorted slice, which is keys or buf: a
// least-significant-digit radix sort on bytes that skips the bytes all keys
// share.
func radixSort(keys, buf []uint32) []uint32 {
	if len(keys) < 64 {
		slices.Sort(keys)
		return keys
	}
	var count [4][256]int
	for _, k := range keys {
		count[0][k&255]++
		count[1][k>>8&255]++
		count[2][k>>16&255]++
		count[3][k>>24]++
	}
	for d := range 4 {
		shift := 8 * d
		c := &count[d]
		if c[keys[0]>>shift&255] == len(keys) {
			continue // every key has this byte
		}
		var pos [256]int
		sum := 0
		for b := range 256 {
			pos[b] = sum
			sum += c[b]
		}
		for _, k := range keys {
			b := k >> shift & 255
			buf[pos[b]] = k
			pos[b]++
		}
		keys, buf = buf, keys
	}
	return keys
}
