package neighbors

import "math"

// lists holds one bounded list of the k best (distance, id) entries per
// point in flat arrays: point p owns entries [p·k, (p+1)·k), kept in
// ascending order of distance and, among equal distances, of id, so that
// the arrays can become a Graph's without copying. Empty slots at the end
// hold (+Inf, −1). flag, when not nil, marks entries as new (1) or old (0)
// for nearest-neighbour descent.
//
// A point's own id is never offered to its list by the callers. Because all
// distances of a search come from the same kernel, an id already in a list
// comes back with the same distance, so the binary search that places an
// entry also finds a repeat.
type lists struct {
	k    int
	dist []float32
	idx  []int32
	flag []uint8
}

// newLists returns n empty lists of k entries, with flags when withFlags.
func newLists(n, k int, withFlags bool) *lists {
	l := &lists{k: k, dist: make([]float32, n*k), idx: make([]int32, n*k)}
	l.clear(0, n)
	if withFlags {
		l.flag = make([]uint8, n*k)
	}
	return l
}

// clear empties the lists of points [lo, hi).
func (l *lists) clear(lo, hi int) {
	inf := float32(math.Inf(1))
	for e := lo * l.k; e < hi*l.k; e++ {
		l.dist[e], l.idx[e] = inf, -1
	}
}

// before reports whether entry (d1, i1) ranks before (d2, i2).
func before(d1 float32, i1 int32, d2 float32, i2 int32) bool {
	return d1 < d2 || (d1 == d2 && i1 < i2)
}

// worst returns the distance of the last entry of p's list (+Inf while the
// list is not full).
func (l *lists) worst(p int) float32 { return l.dist[(p+1)*l.k-1] }

// full reports whether p's list has no empty slot.
func (l *lists) full(p int) bool { return l.idx[(p+1)*l.k-1] >= 0 }

// insert offers (d, q) to p's list and reports whether it entered: it must
// rank before the last entry and q must not be in the list already. The new
// entry is flagged new when the lists have flags.
func (l *lists) insert(p int, q int32, d float32) bool {
	base := p * l.k
	dist, idx := l.dist[base:base+l.k], l.idx[base:base+l.k]
	last := l.k - 1
	if !before(d, q, dist[last], idx[last]) {
		return false
	}
	// pos: the first entry that ranks after (d, q).
	lo, hi := 0, last
	for lo < hi {
		m := int(uint(lo+hi) >> 1)
		if before(d, q, dist[m], idx[m]) {
			hi = m
		} else {
			lo = m + 1
		}
	}
	pos := lo
	if pos > 0 && idx[pos-1] == q && dist[pos-1] == d {
		return false
	}
	copy(dist[pos+1:], dist[pos:last])
	copy(idx[pos+1:], idx[pos:last])
	dist[pos], idx[pos] = d, q
	if l.flag != nil {
		flag := l.flag[base : base+l.k]
		copy(flag[pos+1:], flag[pos:last])
		flag[pos] = 1
	}
	return true
}

// has reports whether p's list holds q.
func (l *lists) has(p int, q int32) bool {
	ids := l.idx[p*l.k : (p+1)*l.k]
	if haveAVX2 {
		return containsAVX2(&ids[0], len(ids), q)
	}
	for _, id := range ids {
		if id == q {
			return true
		}
	}
	return false
}
