package neighbors

import (
	"context"
	"math"

	"lodestone/compute/atlas"
	"lodestone/compute/parallel"
)

// ownerRun is the length of the runs of consecutive ids that one thread
// owns in the apply phase.
const ownerRun = 64

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
// join phase that computes distances on all threads, reading the lists but
// not writing them, and keeps the offers that would enter a list in
// per-block buffers; and an apply phase in which each thread owns a range of
// points and applies, in block order, the offers made to them. Work is cut
// into batches of fixed size whatever the number of threads, and each
// batch's offers are applied in the order a single thread would have made
// them, so the result depends only on the seed.
type joiner struct {
	x       *atlas.Dense
	l       *lists
	thr     []float32 // per point: the distance a new entry must not exceed
	threads int
	bufs    [][]update  // per block: offers of the current batch
	ids     [][]int32   // per block: ids of a candidate group
	rows    [][]float32 // per block or worker: gathered rows
	dist    [][]float32 // per block or worker: distances from one row
	applied []int64     // per block: entries changed in the apply phase
}

// newJoiner returns a joiner for groups of at most maxGroup points.
func newJoiner(x *atlas.Dense, l *lists, threads, maxGroup int) *joiner {
	j := &joiner{x: x, l: l, thr: make([]float32, x.Rows), threads: threads,
		bufs: make([][]update, threads), ids: make([][]int32, threads), rows: make([][]float32, threads),
		dist: make([][]float32, threads), applied: make([]int64, threads)}
	for p := range j.thr {
		j.thr[p] = l.worst(p)
	}
	for b := range j.rows {
		j.rows[b] = make([]float32, maxGroup*x.Cols)
		j.dist[b] = make([]float32, maxGroup)
	}
	return j
}

// gather copies the rows of ids into the scratch of block or worker w and
// returns it.
func (j *joiner) gather(w int, ids []int32) []float32 {
	dim := j.x.Cols
	buf := j.rows[w][:len(ids)*dim]
	for r, id := range ids {
		copy(buf[r*dim:(r+1)*dim], j.x.Data[int(id)*dim:int(id+1)*dim])
	}
	return buf
}

// joinLeaves offers every pair of rows that share a leaf of t to both lists.
func (j *joiner) joinLeaves(ctx context.Context, t *rpTree) error {
	dim := j.x.Cols
	return parallel.ForChunks(ctx, t.leaves(), 1, j.threads, func(l, _, w int) {
		ids := t.leaf(l)
		rows := j.gather(w, ids)
		for a := 1; a < len(ids); a++ {
			dist := j.dist[w][:a]
			sqDistRows(rows[a*dim:(a+1)*dim], rows[:a*dim], dist)
			p := ids[a]
			for b, d := range dist {
				q := ids[b]
				if d <= j.thr[p] && j.l.insert(int(p), q, d) {
					j.thr[p] = j.l.worst(int(p))
				}
				if d <= j.thr[q] && j.l.insert(int(q), p, d) {
					j.thr[q] = j.l.worst(int(q))
				}
			}
		}
	})
}

// run calls join(item, block, buf) for items [0, n) in batches of batch
// items, and applies the offers after each batch. It returns the number of
// list entries that changed, or ctx.Err().
func (j *joiner) run(ctx context.Context, n, batch int, join func(item, block int, buf []update) []update) (int64, error) {
	var total int64
	for b0 := 0; b0 < n; b0 += batch {
		if err := ctx.Err(); err != nil {
			return total, err
		}
		b1 := min(b0+batch, n)
		parallel.For(b1-b0, j.threads, func(lo, hi, blk int) {
			buf := j.bufs[blk][:0]
			for it := b0 + lo; it < b0+hi; it++ {
				buf = join(it, blk, buf)
			}
			j.bufs[blk] = buf
		})
		nb := len(parallel.Blocks(b1-b0, j.threads)) - 1
		// Owners take interleaved runs of ownerRun ids, so that the work
		// spreads evenly even when a batch's offers crowd in one region.
		parallel.For(j.threads, j.threads, func(o, _, _ int) {
			var c int64
			for _, buf := range j.bufs[:nb] {
				for _, u := range buf {
					if int(u.to/ownerRun)%j.threads == o && j.l.insert(int(u.to), u.from, u.d) {
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

// candidates holds, for each point, a bounded random sample of the ids to
// be joined in one step of nearest-neighbour descent. An id offered to
// point p is kept when the hash of the pair falls below p's share
// c / (number of offers p will receive), so that about c of them are kept
// whatever the order of the offers; at most c are stored.
type candidates struct {
	c     int
	id    []int32
	size  []int32  // per point: filled slots
	share []uint32 // per point: keep an offer when its priority is below this
}

func newCandidates(n, c int) *candidates {
	return &candidates{c: c, id: make([]int32, n*c), size: make([]int32, n), share: make([]uint32, n)}
}

// setShare sets p's share for offers offers: all when they are at most c.
func (s *candidates) setShare(p int, offers int32) {
	if int(offers) <= s.c {
		s.share[p] = math.MaxUint32
		return
	}
	s.share[p] = uint32(uint64(s.c) << 32 / uint64(offers))
}

// offer adds q with priority pr to the list of p when pr is below p's share
// (a share of 0 takes nothing), the list has room and q is not there yet. It
// reports whether q is in the list afterwards.
func (s *candidates) offer(p int, q int32, pr uint32) bool {
	n := int(s.size[p])
	if s.share[p] == 0 || pr > s.share[p] {
		return false
	}
	list := s.id[p*s.c : p*s.c+n]
	for _, v := range list {
		if v == q {
			return true
		}
	}
	if n == s.c {
		return false
	}
	s.id[p*s.c+n] = q
	s.size[p]++
	return true
}

// list returns the ids of p's list.
func (s *candidates) list(p int) []int32 { return s.id[p*s.c : p*s.c+int(s.size[p])] }

// filters holds one small Bloom filter (Bloom 1970) per point, a picture of
// the ids in its list taken at the start of a descent step: two bits of
// filterWords·64 set per id. The join skips a pair whose id the filter may
// hold. Such pairs are mostly in the list already; the few that are not
// (false positives, about 3% with 90 ids) or that left it during the step
// are dropped for this step only, and the step's sampling is random anyway.
// One filter's 128 bytes stay in cache while its point meets the others of
// a candidate group, where a look-up in the list itself would cost a binary
// search over two arrays.
type filters struct {
	bits []uint64
}

// filterWords is the size of one filter in 64-bit words.
const filterWords = 16

func newFilters(n int) *filters { return &filters{bits: make([]uint64, n*filterWords)} }

// filterBits returns the two bit positions of id.
func filterBits(id int32) (uint32, uint32) {
	z := uint64(uint32(id)) * 0x9e3779b97f4a7c15
	z ^= z >> 29
	z *= 0xbf58476d1ce4e5b9
	const mask = filterWords*64 - 1
	return uint32(z>>32) & mask, uint32(z>>48) & mask
}

// set makes p's filter hold exactly ids (empty slots, −1, skipped).
func (f *filters) set(p int, ids []int32) {
	w := f.bits[p*filterWords : (p+1)*filterWords]
	clear(w)
	for _, id := range ids {
		if id >= 0 {
			a, b := filterBits(id)
			w[a>>6] |= 1 << (a & 63)
			w[b>>6] |= 1 << (b & 63)
		}
	}
}

// maybe reports whether p's filter may hold id.
func (f *filters) maybe(p int, id int32) bool {
	a, b := filterBits(id)
	w := f.bits[p*filterWords : (p+1)*filterWords]
	return w[a>>6]&(1<<(a&63)) != 0 && w[b>>6]&(1<<(b&63)) != 0
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
// step changes fewer than delta·N·k list entries or after maxSteps steps,
// and reports each step to step(done).
func (j *joiner) descend(ctx context.Context, seed uint64, maxNew, maxOld, maxSteps int, delta float64, step func(int)) error {
	n, k := j.x.Rows, j.l.k
	fresh, old := newCandidates(n, maxNew), newCandidates(n, maxOld)
	// scan calls f(p, q, e) for every entry e = (p, q) whose flag is want
	// and for which p or q lies in [lo, hi). It stops early when ctx is
	// done.
	scan := func(lo, hi int, want uint8, f func(p, q int32, e int, pIn, qIn bool)) {
		l, h := int32(lo), int32(hi)
		for p := int32(0); p < int32(n); p++ {
			if p%16384 == 0 && ctx.Err() != nil {
				return
			}
			base := int(p) * k
			pIn := p >= l && p < h
			for e, q := range j.l.idx[base : base+k] {
				if j.l.flag[base+e] != want || q < 0 {
					continue
				}
				if qIn := q >= l && q < h; pIn || qIn {
					f(p, q, base+e, pIn, qIn)
				}
			}
		}
	}
	// sample fills to with a sample of the ids joined to each point of
	// [lo, hi) by an entry flagged want, in either direction, for the
	// points where wanted is true. For new entries it sets sampled[e] for
	// the entries e of points in [lo, hi) whose id was sampled.
	count := make([][]int32, j.threads)
	sampled := make([]uint8, n*k)
	sample := func(s, lo, hi int, want uint8, to *candidates, wanted func(p int32) bool, c []int32) {
		clear(c)
		scan(lo, hi, want, func(p, q int32, _ int, pIn, qIn bool) {
			if pIn {
				c[p-int32(lo)]++
			}
			if qIn {
				c[q-int32(lo)]++
			}
		})
		for p := lo; p < hi; p++ {
			to.size[p] = 0
			to.setShare(p, c[p-lo])
			if !wanted(int32(p)) {
				to.share[p] = 0
			}
		}
		scan(lo, hi, want, func(p, q int32, e int, pIn, qIn bool) {
			pr := pairPriority(seed, s, p, q)
			if pIn && to.offer(int(p), q, pr) && want == 1 {
				sampled[e] = 1
			}
			if qIn {
				to.offer(int(q), p, pr)
			}
		})
	}
	all := func(int32) bool { return true }
	members := newFilters(n)
	for s := 0; s < maxSteps; s++ {
		parallel.For(n, j.threads, func(lo, hi, blk int) {
			if len(count[blk]) < hi-lo {
				count[blk] = make([]int32, hi-lo)
			}
			c := count[blk][:hi-lo]
			sample(s, lo, hi, 1, fresh, all, c)
			sample(s, lo, hi, 0, old, func(p int32) bool { return fresh.size[p] > 0 }, c)
		})
		if err := ctx.Err(); err != nil {
			return err
		}
		// Entries sampled as new are old from now on (once every owner has
		// read the flags). The filters take a picture of the lists.
		parallel.For(n, j.threads, func(lo, hi, _ int) {
			for e := lo * k; e < hi*k; e++ {
				if sampled[e] == 1 {
					j.l.flag[e], sampled[e] = 0, 0
				}
			}
			for p := lo; p < hi; p++ {
				members.set(p, j.l.idx[p*k:(p+1)*k])
			}
		})
		changed, err := j.run(ctx, n, pointBatch, func(p, blk int, buf []update) []update {
			// Gather the valid new candidates, then the valid old ones.
			ids := j.ids[blk][:0]
			ids = append(ids, fresh.list(p)...)
			nNew := len(ids)
			ids = append(ids, old.list(p)...)
			j.ids[blk] = ids
			rows := j.gather(blk, ids)
			dim := j.x.Cols
			// Each new candidate meets the later new ones and all old ones.
			for a := 0; a < nNew; a++ {
				dist := j.dist[blk][:len(ids)-a-1]
				sqDistRows(rows[a*dim:(a+1)*dim], rows[(a+1)*dim:], dist)
				u := ids[a]
				for b, d := range dist {
					v := ids[a+1+b]
					if v == u {
						continue
					}
					if d <= j.thr[u] && !members.maybe(int(u), v) {
						buf = append(buf, update{u, v, d})
					}
					if d <= j.thr[v] && !members.maybe(int(v), u) {
						buf = append(buf, update{v, u, d})
					}
				}
			}
			return buf
		})
		if err != nil {
			return err
		}
		step(s + 1)
		if float64(changed) < delta*float64(n)*float64(k) {
			break
		}
	}
	return nil
}
