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
// in one region per gene (keys of values in the dictionary from its start,
// the others from its end), then each gene is tested.
func (e *Expression) rankSegment(ctx context.Context, seg segment, side []uint8, t *test, res []Result, counter *progress.Counter) error {
	if seg.lo >= seg.hi {
		return nil
	}
	x := e.x
	src, rows, cols := x.Source()
	scale := x.Scale()
	colOf := x.ColumnMap()
	d := e.dict
	// cursor[c]: where cell c's row continues, from the row's start.
	cursor := make([]int32, e.cells)
	first := cols[seg.lo]
	for c, r := range rows {
		if side[c] != outside {
			cursor[c] = int32(lowerBound(src, r, first))
		}
	}
	var keys, buf []uint32
	front := make([]int64, 0, rangeGenes) // next key of each gene's dictionary values
	back := make([]int64, 0, rangeGenes)  // last key written of its other values
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
		front, back = front[:0], back[:0]
		var off int64
		for g := lo; g < hi; g++ {
			front = append(front, off)
			off += e.geneNNZ[g]
			back = append(back, off)
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
			var ids []int32 // the numbers of this cell's small counts
			if d != nil && scale[c] > 0 {
				k0 := int(d.classOf[c]) * d.counts
				ids = d.id[k0 : k0+d.counts]
			}
			if ids != nil && src.Col32 == nil {
				// Counts with 16-bit columns: the common case, in a loop
				// of its own.
				col16, small := src.Col16[:end], src.Small[:end]
				for ; k < end; k++ {
					j := col16[k]
					if int(j) > last {
						break
					}
					g := int32(j)
					if colOf != nil {
						if g = colOf[j]; g < 0 {
							continue
						}
					}
					if n := int(small[k]); n <= len(ids) {
						f := &front[int(g)-lo]
						keys[*f] = uint32(ids[n-1])<<1 | uint32(s-1)
						*f++
						continue
					}
					v := sparse.LogNorm(src.Value(k), scale[c])
					back[int(g)-lo]--
					keys[back[int(g)-lo]] = math.Float32bits(v)<<1 | uint32(s-1)
				}
				cursor[c] = int32(k - start)
				continue
			}
			for ; k < end; k++ {
				j := src.Col(k)
				if j > last {
					break
				}
				g := x.ColumnOf(j)
				if g < 0 {
					continue
				}
				if ids != nil {
					if n := int(src.Small[k]); n <= len(ids) {
						keys[front[g-lo]] = uint32(ids[n-1])<<1 | uint32(s-1)
						front[g-lo]++
						continue
					}
				}
				v := src.Value(k)
				if scale != nil {
					v = sparse.LogNorm(v, scale[c])
				}
				if v == 0 {
					continue
				}
				back[g-lo]--
				keys[back[g-lo]] = math.Float32bits(v)<<1 | uint32(s-1)
			}
			cursor[c] = int32(k - start)
		}
		var from int64
		for g := lo; g < hi; g++ {
			to := from + e.geneNNZ[g]
			known, other := keys[from:front[g-lo]], keys[back[g-lo]:to]
			size := len(known) + len(other)
			buf = slices.Grow(buf[:0], size)[:size]
			t.gene(&res[g], known, other, buf, d, memo)
			res[g].Gene = g
			from = to
		}
		counter.Add(int64(hi - lo))
		lo = hi
	}
	return nil
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

// radixSortBits sorts keys below 2^bits in ascending order, as radixSort
// does, in passes of 12 bits: two for keys of up to 24 bits.
func radixSortBits(keys, buf []uint32, bits uint) []uint32 {
	if len(keys) < 64 {
		slices.Sort(keys)
		return keys
	}
	if bits > 24 {
		return radixSort(keys, buf)
	}
	const digit = 12
	var count [2][1 << digit]int
	for _, k := range keys {
		count[0][k&(1<<digit-1)]++
		count[1][k>>digit&(1<<digit-1)]++
	}
	for p := uint(0); p*digit < bits && p < 2; p++ {
		shift := p * digit
		c := &count[p]
		if c[keys[0]>>shift&(1<<digit-1)] == len(keys) {
			continue // every key has this digit
		}
		var pos [1 << digit]int
		sum := 0
		for b := range pos {
			pos[b] = sum
			sum += c[b]
		}
		for _, k := range keys {
			b := k >> shift & (1<<digit - 1)
			buf[pos[b]] = k
			pos[b]++
		}
		keys, buf = buf, keys
	}
	return keys
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
