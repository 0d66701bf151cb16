package neighbors

import (
	"context"
	"math/rand/v2"
	"unsafe"

	"lodestone/compute/atlas"
)

// treeAhead is the number of rows a tree's projection asks for ahead of
// those it reads.
const treeAhead = 16

// rpTree is one random-projection tree (Dasgupta & Freund 2008) over the rows
// of a matrix, kept only as its leaves: perm lists the row ids leaf by leaf,
// and leaf l holds perm[bounds[l]:bounds[l+1]].
type rpTree struct {
	perm   []int32
	bounds []int32
}

// buildRPTree splits the rows of x recursively until every cell holds at most
// leafSize rows. A cell is split at the median of the rows' projections on a
// random direction, the difference of two of its rows drawn at random (a
// random Gaussian direction when those coincide), so that the split follows
// the spread of the data in the cell. proj is scratch of length x.Rows. It
// returns nil when ctx is done before the tree is complete.
func buildRPTree(ctx context.Context, x *atlas.Dense, leafSize int, rng *rand.Rand, proj []float32) *rpTree {
	n, dim := x.Rows, x.Cols
	t := &rpTree{perm: make([]int32, n), bounds: []int32{0}}
	for i := range t.perm {
		t.perm[i] = int32(i)
	}
	dir := make([]float32, dim)
	type cell struct{ lo, hi int }
	stack := []cell{{0, n}}
	for len(stack) > 0 {
		c := stack[len(stack)-1]
		stack = stack[:len(stack)-1]
		if c.hi-c.lo > 65536 && ctx.Err() != nil {
			return nil
		}
		if c.hi-c.lo <= leafSize {
			t.bounds = append(t.bounds, int32(c.hi))
			continue
		}
		ids := t.perm[c.lo:c.hi]
		a := x.Row(int(ids[rng.IntN(len(ids))]))
		b := x.Row(int(ids[rng.IntN(len(ids))]))
		flat := true
		for j := range dir {
			dir[j] = a[j] - b[j]
			flat = flat && dir[j] == 0
		}
		if flat {
			for j := range dir {
				dir[j] = float32(rng.NormFloat64())
			}
		}
		p := proj[c.lo:c.hi]
		for i, id := range ids {
			// The rows are scattered in memory: ask for those of the
			// next block while this one is projected.
			if i%treeAhead == 0 && i+treeAhead < len(ids) {
				prefetchRows(unsafe.Pointer(&x.Data[0]), ids[i+treeAhead:min(i+2*treeAhead, len(ids))], 4*dim)
			}
			p[i] = dot(dir, x.Row(int(id)))
		}
		mid := len(ids) / 2
		selectNth(p, ids, mid)
		// Push the right half first so that leaves come out left to right.
		stack = append(stack, cell{c.lo + mid, c.hi}, cell{c.lo, c.lo + mid})
	}
	return t
}

// leaves returns the number of leaves.
func (t *rpTree) leaves() int { return len(t.bounds) - 1 }

// leaf returns the row ids of leaf l.
func (t *rpTree) leaf(l int) []int32 { return t.perm[t.bounds[l]:t.bounds[l+1]] }

// dot returns Σ a_j b_j.
func dot(a, b []float32) float32 {
	b = b[:len(a)]
	var s0, s1, s2, s3 float32
	i := 0
	for ; i+4 <= len(a); i += 4 {
		s0 += a[i] * b[i]
		s1 += a[i+1] * b[i+1]
		s2 += a[i+2] * b[i+2]
		s3 += a[i+3] * b[i+3]
	}
	for ; i < len(a); i++ {
		s0 += a[i] * b[i]
	}
	return (s0 + s1) + (s2 + s3)
}

// selectNth reorders key and the parallel slice id so that the element of
// rank nth (by key, then id) is at position nth, smaller ones before it and
// larger ones after it (Hoare's selection with a median-of-three pivot).
func selectNth(key []float32, id []int32, nth int) {
	less := func(i, j int) bool {
		return key[i] < key[j] || (key[i] == key[j] && id[i] < id[j])
	}
	swap := func(i, j int) {
		key[i], key[j] = key[j], key[i]
		id[i], id[j] = id[j], id[i]
	}
	lo, hi := 0, len(key)-1
	for hi > lo {
		mid := lo + (hi-lo)/2
		if less(mid, lo) {
			swap(mid, lo)
		}
		if less(hi, lo) {
			swap(hi, lo)
		}
		if less(hi, mid) {
			swap(hi, mid)
		}
		// Now key[lo] ≤ key[mid] ≤ key[hi]; use mid as the pivot, parked at hi−1.
		if hi-lo < 3 {
			return
		}
		swap(mid, hi-1)
		p := hi - 1
		i, j := lo, hi-1
		for {
			for i++; less(i, p); i++ {
			}
			for j--; less(p, j); j-- {
			}
			if i >= j {
				break
			}
			swap(i, j)
		}
		swap(i, hi-1)
		switch {
		case i == nth:
			return
		case nth < i:
			hi = i - 1
		default:
			lo = i + 1
		}
	}
}
