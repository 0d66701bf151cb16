package neighbors

import (
	"context"
	"math/bits"
	"unsafe"

	"lodestone/compute/atlas"
	"lodestone/compute/parallel"
)

// ownerRun is the length of the runs of consecutive ids that one thread
// owns in the apply phase.
const ownerRun = 64

// chunkPoints is the number of points a worker joins at a time; a batch is
// cut into chunks of this size whatever the number of threads.
const chunkPoints = 64

// applyAhead is how many offers ahead the apply phase asks for the list
// that an offer will read.
const applyAhead = 8

// update proposes from as a neighbour of to at squared distance d.
type update struct {
	to, from int32
	d        float32
}

// joiner computes distances between groups of points and offers them to the
// shared lists.
//
// Leaves of one tree are disjoint, so each leaf's pairs are offered directly
// to lists that no other goroutine touches. The steps of nearest-neighbour
// descent join overlapping candidate lists, so they run in two phases: a
// join phase that computes distances on all threads, reading the lists of
// other points but not writing them, and keeps the offers that would enter
// a list in per-chunk buffers; and an apply phase in which each thread owns
// a range of points and applies, in chunk order, the offers made to them.
// Work is cut into batches and chunks of fixed size whatever the number of
// threads, and each batch's offers are applied in the order a single thread
// would have made them, so the result depends only on the seed.
type joiner struct {
	x       *atlas.Dense
	l       *lists
	thr     []float32 // per point: the distance a new entry must not exceed
	threads int
	work    []*scratch // per worker
	bufs    [][]update // per chunk of a batch: its offers
	applied []int64    // per owner: entries changed in the apply phase
}

// scratch is one worker's memory.
type scratch struct {
	groups [2]group  // the group being joined and the next one
	rows   []float32 // rows of a group, gathered
	dist   []float32 // distances from one row
	thr    []float32 // thresholds of a group's points
	below  []uint8   // pairs that may enter a list, four to a byte
	slot   []int32   // open-addressing table: index in cand + 1, or 0
	// Counts for Stage reports, summed and cleared by counts.
	dists, changed, cut int64
}

// group is the candidates of one point in a descent step.
type group struct {
	cand []candidate
	ids  []int32 // ids of cand, new ones first
	nNew int     // number of new ones
}

// newJoiner returns a joiner for groups of at most maxGroup points.
func newJoiner(x *atlas.Dense, l *lists, threads, maxGroup int) *joiner {
	j := &joiner{x: x, l: l, thr: make([]float32, x.Rows), threads: threads,
		work: make([]*scratch, threads), applied: make([]int64, threads)}
	for p := range j.thr {
		j.thr[p] = l.worst(p)
	}
	for w := range j.work {
		j.work[w] = &scratch{rows: make([]float32, maxGroup*x.Cols), dist: make([]float32, maxGroup)}
	}
	return j
}

// gather copies the rows of ids into the scratch of worker w and returns
// them.
func (j *joiner) gather(w int, ids []int32) []float32 {
	dim := j.x.Cols
	s := j.work[w]
	if need := len(ids) * dim; len(s.rows) < need {
		s.rows = make([]float32, need)
	}
	buf := s.rows[:len(ids)*dim]
	for r, id := range ids {
		copy(buf[r*dim:(r+1)*dim], j.x.Data[int(id)*dim:int(id+1)*dim])
	}
	return buf
}

// joinLeaves offers every pair of rows that share a leaf of t to both lists.
func (j *joiner) joinLeaves(ctx context.Context, t *rpTree) error {
	dim := j.x.Cols
	k := j.l.k
	return parallel.ForChunks(ctx, t.leaves(), 1, j.threads, func(l, _, w int) {
		ids := t.leaf(l)
		// The leaf's lists are scattered in memory: ask for them all
		// before the rows are gathered.
		prefetchRows(unsafe.Pointer(&j.l.dist[0]), ids, 4*k)
		prefetchRows(unsafe.Pointer(&j.l.idx[0]), ids, 4*k)
		prefetchRows(unsafe.Pointer(&j.thr[0]), ids, 4)
		rows := j.gather(w, ids)
		for a := 1; a < len(ids); a++ {
			s := j.work[w]
			dist := s.dist[:a]
			sqDistRows(rows[a*dim:(a+1)*dim], rows[:a*dim], dist)
			s.dists += int64(a)
			p := ids[a]
			for b, d := range dist {
				q := ids[b]
				if d <= j.thr[p] && j.l.insert(int(p), q, d) {
					j.thr[p] = j.l.worst(int(p))
					s.changed++
				}
				if d <= j.thr[q] && j.l.insert(int(q), p, d) {
					j.thr[q] = j.l.worst(int(q))
					s.changed++
				}
			}
		}
	})
}

// counts returns the workers' counts of distances, changed entries and cut
// candidate sets since the last call, and clears them.
func (j *joiner) counts() (dists, changed, cut int64) {
	for _, s := range j.work {
		dists, changed, cut = dists+s.dists, changed+s.changed, cut+s.cut
		s.dists, s.changed, s.cut = 0, 0, 0
	}
	return dists, changed, cut
}

// run calls join(lo, hi, worker, buf) for items [0, n) in batches of batch
// items, cut into chunks [lo, hi) of chunkPoints that the workers take in
// turn, and applies the offers after each batch. It returns the number of list
// entries that changed, or ctx.Err().
func (j *joiner) run(ctx context.Context, n, batch int, join func(lo, hi, worker int, buf []update) []update) (int64, error) {
	var total int64
	if need := (batch + chunkPoints - 1) / chunkPoints; len(j.bufs) < need {
		j.bufs = make([][]update, need)
	}
	for b0 := 0; b0 < n; b0 += batch {
		b1 := min(b0+batch, n)
		nc := (b1 - b0 + chunkPoints - 1) / chunkPoints
		err := parallel.ForChunks(ctx, nc, 1, j.threads, func(c, _, w int) {
			j.bufs[c] = join(b0+c*chunkPoints, min(b0+(c+1)*chunkPoints, b1), w, j.bufs[c][:0])
		})
		if err != nil {
			return total, err
		}
		// Owners take interleaved runs of ownerRun ids, so that the work
		// spreads evenly even when a batch's offers crowd in one region.
		parallel.For(j.threads, j.threads, func(o, _, _ int) {
			var c int64
			k := j.l.k
			for _, buf := range j.bufs[:nc] {
				for i, u := range buf {
					if i+applyAhead < len(buf) {
						if v := buf[i+applyAhead].to; int(v/ownerRun)%j.threads == o {
							prefetchSpan(unsafe.Pointer(&j.l.dist[int(v)*k]), 4*k)
						}
					}
					if int(u.to/ownerRun)%j.threads == o && u.d <= j.thr[u.to] && j.l.insert(int(u.to), u.from, u.d) {
						j.thr[u.to] = j.l.worst(int(u.to))
						c++
					}
				}
			}
			j.applied[o] = c
		})
		for _, c := range j.applied {
			total += c
		}
	}
	return total, nil
}

// reverse holds a copy of the lists' ids and flags as they were at the
// start of a descent step, and their transpose: the points whose lists
// held p are revs[start[p]:start[p+1]], in ascending order, each stored as
// id<<1 | flag of its entry.
type reverse struct {
	idx   []int32
	flag  []uint8
	start []int
	revs  []uint32
	count [][]int32 // per block of sources: per point, entries that name it
}

func newReverse(n, entries, threads int) *reverse {
	r := &reverse{idx: make([]int32, entries), flag: make([]uint8, entries),
		start: make([]int, n+1), revs: make([]uint32, entries), count: make([][]int32, threads)}
	for b := range r.count {
		r.count[b] = make([]int32, n)
	}
	return r
}

// build fills r from the lists l. Sources are
// cut into blocks, one per thread; each block counts the entries that name
// each point, and then writes them after those of the blocks before it, so
// the order within a point's range is that of the sources whatever the
// number of threads.
func (r *reverse) build(l *lists, threads int) {
	n, k := len(r.start)-1, l.k
	nb := len(parallel.Blocks(n, threads)) - 1
	parallel.For(n, threads, func(lo, hi, b int) {
		copy(r.idx[lo*k:hi*k], l.idx[lo*k:hi*k])
		copy(r.flag[lo*k:hi*k], l.flag[lo*k:hi*k])
		c := r.count[b]
		clear(c)
		for _, q := range l.idx[lo*k : hi*k] {
			if q >= 0 {
				c[q]++
			}
		}
	})
	// count[b][p] becomes the position of block b's first entry naming p.
	s := 0
	for p := 0; p < n; p++ {
		r.start[p] = s
		for _, c := range r.count[:nb] {
			v := int(c[p])
			c[p] = int32(s)
			s += v
		}
	}
	r.start[n] = s
	parallel.For(n, threads, func(lo, hi, b int) {
		c := r.count[b]
		for p := lo; p < hi; p++ {
			base := p * k
			for e, q := range l.idx[base : base+k] {
				if q >= 0 {
					r.revs[c[q]] = uint32(p)<<1 | uint32(l.flag[base+e])
					c[q]++
				}
			}
		}
	})
}

// of returns the reverse entries of p.
func (r *reverse) of(p int) []uint32 { return r.revs[r.start[p]:r.start[p+1]] }

// candidate is one point to be joined in a descent step, with the position
// of its entry in the list of the point whose candidates it is (−1 if it is
// there only as a reverse neighbour) and its sampling priority.
type candidate struct {
	key   uint64 // priority<<32 | id, unique
	id    int32
	entry int32
	fresh bool
}

// selectSmallest reorders c so that its first m elements are those of
// smallest key (Hoare's selection with a median-of-three pivot); m < len(c).
func selectSmallest(c []candidate, m int) {
	lo, hi := 0, len(c)-1
	for hi > lo {
		mid := lo + (hi-lo)/2
		if c[mid].key < c[lo].key {
			c[mid], c[lo] = c[lo], c[mid]
		}
		if c[hi].key < c[lo].key {
			c[hi], c[lo] = c[lo], c[hi]
		}
		if c[hi].key < c[mid].key {
			c[hi], c[mid] = c[mid], c[hi]
		}
		if hi-lo < 3 {
			return
		}
		c[mid], c[hi-1] = c[hi-1], c[mid]
		pivot := c[hi-1].key
		i, j := lo, hi-1
		for {
			for i++; c[i].key < pivot; i++ {
			}
			for j--; c[j].key > pivot; j-- {
			}
			if i >= j {
				break
			}
			c[i], c[j] = c[j], c[i]
		}
		c[i], c[hi-1] = c[hi-1], c[i]
		switch {
		case i == m:
			return
		case m < i:
			hi = i - 1
		default:
			lo = i + 1
		}
	}
}

// candidates collects in g.cand the candidates of p for step step: its
// neighbours and the points that list it, as they were at the start of the
// step, each once, flagged new when either entry is. It returns the number
// of new ones, which come first, at most maxNew of them, followed by at
// most maxOld old ones; when there are more, those of smallest priority (a
// hash of the pair and the step) are kept. The old ones are dropped when no
// candidate is new. Entries of p sampled as new are flagged old in its
// list, where they are found at their position at the start of the step
// or further on (entries only move back), if they are still there.
func (j *joiner) candidates(g *group, s *scratch, rev *reverse, p int, seed uint64, step, maxNew, maxOld int) int {
	k := j.l.k
	base := p * k
	idx, flag := rev.idx[base:base+k], rev.flag[base:base+k]
	rv := rev.of(p)
	size := 1
	for size < 2*(k+len(rv)) {
		size <<= 1
	}
	if len(s.slot) < size {
		s.slot = make([]int32, size)
	}
	slot := s.slot[:size]
	mask := uint32(size - 1)
	cand := g.cand[:0]
	// add records q, or marks it new when it is there already.
	add := func(q int32, entry int32, fresh bool) {
		h := uint32(q) * 0x9e3779b1 >> 7 & mask
		for slot[h] != 0 {
			if c := &cand[slot[h]-1]; c.id == q {
				c.fresh = c.fresh || fresh
				if entry >= 0 {
					c.entry = entry
				}
				return
			}
			h = (h + 1) & mask
		}
		cand = append(cand, candidate{id: q, entry: entry, fresh: fresh})
		slot[h] = int32(len(cand))
	}
	for e, q := range idx {
		if q >= 0 {
			add(q, int32(e), flag[e] == 1)
		}
	}
	for _, v := range rv {
		add(int32(v>>1), -1, v&1 == 1)
	}
	clear(slot)
	// New ones first, then old ones.
	nNew := 0
	for i := range cand {
		if cand[i].fresh {
			cand[i], cand[nNew] = cand[nNew], cand[i]
			nNew++
		}
	}
	if nNew == 0 {
		g.cand = cand[:0]
		return 0
	}
	cut := false
	keep := func(part []candidate, m int) []candidate {
		if len(part) <= m {
			return part
		}
		cut = true
		for i := range part {
			part[i].key = uint64(pairPriority(seed, step, int32(p), part[i].id))<<32 | uint64(uint32(part[i].id))
		}
		selectSmallest(part, m)
		return part[:m]
	}
	fresh := keep(cand[:nNew], maxNew)
	old := keep(cand[nNew:], maxOld)
	if cut {
		s.cut++
	}
	cur, curFlag := j.l.idx[base:base+k], j.l.flag[base:base+k]
	for _, c := range fresh {
		if c.entry < 0 || flag[c.entry] != 1 {
			continue
		}
		for e := int(c.entry); e < k; e++ {
			if cur[e] == c.id {
				if curFlag[e] == 1 {
					curFlag[e] = 0
				}
				break
			}
		}
	}
	n := copy(cand, fresh)
	n += copy(cand[n:], old)
	g.cand = cand[:n]
	return len(fresh)
}

// pairPriority is a hash of the unordered pair {a, b} and the step, the same
// whichever end offers it, so that sampling does not depend on the order in
// which candidates are offered.
func pairPriority(seed uint64, step int, a, b int32) uint32 {
	if a > b {
		a, b = b, a
	}
	z := seed ^ uint64(step)<<56 ^ uint64(uint32(a))<<28 ^ uint64(uint32(b))
	// SplitMix64 finaliser (Steele, Lea & Flood 2014).
	z += 0x9e3779b97f4a7c15
	z = (z ^ z>>30) * 0xbf58476d1ce4e5b9
	z = (z ^ z>>27) * 0x94d049bb133111eb
	return uint32((z ^ z>>31) >> 32)
}

// descend refines the lists by nearest-neighbour descent (Dong, Charikar &
// Li 2011): in each step every point joins its sampled new candidates with
// each other and with its old ones, where a point's candidates are its
// neighbours and the points that list it as a neighbour ("a neighbour of a
// neighbour is likely a neighbour"). Entries sampled as new are flagged old,
// so each pair is joined about once. Old candidates are gathered only for
// points that have new ones, since only those are joined. It stops when a
// step changes fewer than par.stop·N·k list entries or after par.maxSteps steps,
// and reports each step to step(done, changed).
//
// Points are joined in batches in order of id, each batch's offers applied
// before the next batch is joined; candidates are drawn from the lists as
// they stood at the start of the step.
func (j *joiner) descend(ctx context.Context, seed uint64, par params, step func(done int, changed int64)) error {
	n, k := j.x.Rows, j.l.k
	rev := newReverse(n, n*k, j.threads)
	for s := 0; s < par.maxSteps; s++ {
		rev.build(j.l, j.threads)
		if err := ctx.Err(); err != nil {
			return err
		}
		// prepare finds the candidates of p and asks for their rows and
		// lists to be fetched while the previous group is joined.
		prepare := func(g *group, p, w int) {
			g.nNew = j.candidates(g, j.work[w], rev, p, seed, s, par.maxNew, par.maxOld)
			g.ids = g.ids[:0]
			if g.nNew == 0 {
				return
			}
			for _, c := range g.cand {
				g.ids = append(g.ids, c.id)
			}
			prefetchRows(unsafe.Pointer(&j.x.Data[0]), g.ids, 4*j.x.Cols)
			prefetchRows(unsafe.Pointer(&j.l.idx[0]), g.ids, 4*k)
			prefetchRows(unsafe.Pointer(&j.thr[0]), g.ids, 4)
		}
		changed, err := j.run(ctx, n, pointBatch, func(lo, hi, w int, buf []update) []update {
			sc := j.work[w]
			cur, next := &sc.groups[0], &sc.groups[1]
			prepare(cur, lo, w)
			for p := lo; p < hi; p++ {
				if p+1 < hi {
					prepare(next, p+1, w)
				}
				buf = j.localJoin(cur, w, buf)
				cur, next = next, cur
			}
			return buf
		})
		if err != nil {
			return err
		}
		step(s+1, changed)
		if float64(changed) < par.stop*float64(n)*float64(k) {
			break
		}
	}
	return nil
}

// localJoin computes the distances between each new candidate of g and the
// later ones, and appends to buf an offer for each end whose list the other
// end would enter and does not hold yet.
func (j *joiner) localJoin(g *group, w int, buf []update) []update {
	ids, nNew := g.ids, g.nNew
	if nNew == 0 {
		return buf
	}
	sc := j.work[w]
	if len(sc.thr) < len(ids) {
		sc.dist = make([]float32, len(ids))
		sc.thr = make([]float32, len(ids))
		sc.below = make([]uint8, (len(ids)+3)/4)
	}
	thr := sc.thr[:len(ids)]
	for i, id := range ids {
		thr[i] = j.thr[id]
	}
	rows := j.gather(w, ids)
	dim := j.x.Cols
	// Each new candidate meets the later new ones and all old ones; only
	// the pairs marked below may enter a list.
	for a := 0; a < nNew; a++ {
		u, tu := ids[a], thr[a]
		vs, tv := ids[a+1:], thr[a+1:]
		dist := sc.dist[:len(vs)]
		sc.dists += int64(len(vs))
		below := sc.below[:(len(vs)+3)/4]
		sqDistRowsBelow(rows[a*dim:(a+1)*dim], rows[(a+1)*dim:], dist, tu, tv, below)
		for g, m := range below {
			for ; m != 0; m &= m - 1 {
				b := 4*g + bits.TrailingZeros8(m)
				v, d := vs[b], dist[b]
				if d <= tu && !j.l.has(int(u), v) {
					buf = append(buf, update{u, v, d})
				}
				if d <= tv[b] && !j.l.has(int(v), u) {
					buf = append(buf, update{v, u, d})
				}
			}
		}
	}
	return buf
}
