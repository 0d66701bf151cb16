package neighbors

import (
	"context"
	"math/rand/v2"
	"slices"
	"testing"
)

// TestSelectSmallest checks the selection against a full sort: the first m
// candidates after selectSmallest are the m of smallest key.
func TestSelectSmallest(t *testing.T) {
	rng := rand.New(rand.NewPCG(1, 2))
	for _, n := range []int{2, 3, 4, 5, 17, 100, 333} {
		for _, m := range []int{0, 1, n / 2, n - 1} {
			c := make([]candidate, n)
			for i := range c {
				// Few distinct priorities, so that ties fall to the id.
				c[i].id = int32(i)
				c[i].key = uint64(rng.IntN(8))<<32 | uint64(i)
			}
			rng.Shuffle(n, func(a, b int) { c[a], c[b] = c[b], c[a] })
			keys := make([]uint64, n)
			for i := range c {
				keys[i] = c[i].key
			}
			slices.Sort(keys)
			selectSmallest(c, m)
			got := make([]uint64, m)
			for i := range got {
				got[i] = c[i].key
			}
			slices.Sort(got)
			if !slices.Equal(got, keys[:m]) {
				t.Fatalf("n = %d, m = %d: kept %v, want %v", n, m, got, keys[:m])
			}
		}
	}
}

// randomLists returns n lists of k entries with random ids (some slots
// empty) and random flags.
func randomLists(n, k int, seed uint64) *lists {
	rng := rand.New(rand.NewPCG(seed, 5))
	l := newLists(n, k, true)
	for p := 0; p < n; p++ {
		for e := 0; e < k; e++ {
			q := int32(rng.IntN(n))
			if q == int32(p) || rng.IntN(10) == 0 {
				continue
			}
			// An id comes with the same distance whenever it is offered.
			if l.insert(p, q, float32((p*31+int(q)*17)%50)) {
				pos := slices.Index(l.idx[p*k:(p+1)*k], q)
				l.flag[p*k+pos] = uint8(rng.IntN(2))
			}
		}
	}
	return l
}

// TestReverse checks the transpose of the lists against a direct one: for
// every point, the points that list it, in ascending order, with their
// entries' flags; on one thread and on several.
func TestReverse(t *testing.T) {
	const n, k = 600, 9
	l := randomLists(n, k, 3)
	want := make([][]uint32, n)
	for p := 0; p < n; p++ {
		for e := 0; e < k; e++ {
			if q := l.idx[p*k+e]; q >= 0 {
				want[q] = append(want[q], uint32(p)<<1|uint32(l.flag[p*k+e]))
			}
		}
	}
	for _, threads := range []int{1, 3, 8} {
		r := newReverse(n, n*k, threads)
		r.build(l, threads)
		if !slices.Equal(r.idx, l.idx) || !slices.Equal(r.flag, l.flag) {
			t.Fatalf("%d threads: the copy of the lists differs from them", threads)
		}
		for p := 0; p < n; p++ {
			if got := r.of(p); !slices.Equal(got, want[p]) {
				t.Fatalf("%d threads, point %d: reverse %v, want %v", threads, p, got, want[p])
			}
		}
	}
}

// TestCandidates checks a point's candidates against their definition: its
// neighbours and the points that list it, as at the start of the step, each
// once, new when either entry is new, new ones first, at most maxNew new and
// maxOld old ones, and no old ones without a new one. The entries sampled as
// new are flagged old afterwards in the list, which has changed since the
// start of the step.
func TestCandidates(t *testing.T) {
	const n, k = 400, 12
	x := randomMatrix(n, 3, 1)
	for _, caps := range [][2]int{{100, 100}, {5, 7}} {
		l := randomLists(n, k, 7)
		r := newReverse(n, n*k, 2)
		r.build(l, 2)
		// Changes during the step: some entries pushed back or out by new
		// ones (which come flagged new).
		rng := rand.New(rand.NewPCG(2, 2))
		for p := 0; p < n; p += 3 {
			q := int32(rng.IntN(n))
			if q != int32(p) && !slices.Contains(l.idx[p*k:(p+1)*k], q) {
				l.insert(p, q, -1)
			}
		}
		j := newJoiner(x, l, 1, 64)
		for p := 0; p < n; p++ {
			flagsBefore := slices.Clone(l.flag[p*k : (p+1)*k])
			wantNew, wantOld := map[int32]bool{}, map[int32]bool{}
			for e, q := range r.idx[p*k : (p+1)*k] {
				if q >= 0 {
					if r.flag[p*k+e] == 1 {
						wantNew[q] = true
					} else {
						wantOld[q] = true
					}
				}
			}
			for _, v := range r.of(p) {
				if v&1 == 1 {
					wantNew[int32(v>>1)] = true
				} else {
					wantOld[int32(v>>1)] = true
				}
			}
			for q := range wantNew {
				delete(wantOld, q)
			}
			var g group
			nNew := j.candidates(&g, j.work[0], r, p, 9, 0, caps[0], caps[1])
			if nNew != min(len(wantNew), caps[0]) {
				t.Fatalf("caps %v, point %d: %d new, want %d", caps, p, nNew, min(len(wantNew), caps[0]))
			}
			nOld := len(g.cand) - nNew
			if nNew == 0 && nOld != 0 || nNew > 0 && nOld != min(len(wantOld), caps[1]) {
				t.Fatalf("caps %v, point %d: %d old with %d new, want %d", caps, p, nOld, nNew, min(len(wantOld), caps[1]))
			}
			sampled := map[int32]bool{}
			for i, c := range g.cand {
				if sampled[c.id] || (i < nNew) != wantNew[c.id] || (i >= nNew) != wantOld[c.id] {
					t.Fatalf("caps %v, point %d: candidate %d (%d) repeated or in the wrong part", caps, p, i, c.id)
				}
				sampled[c.id] = i < nNew
			}
			// An entry new at the start of the step and sampled as new is
			// old now; every other entry keeps its flag.
			for e, q := range l.idx[p*k : (p+1)*k] {
				at := slices.Index(r.idx[p*k:(p+1)*k], q)
				wasNew := at >= 0 && r.flag[p*k+at] == 1 && l.dist[p*k+e] >= 0
				f, was := l.flag[p*k+e], flagsBefore[e]
				if wasNew && sampled[q] {
					if f != 0 {
						t.Fatalf("caps %v, point %d: entry %d (%d) sampled as new but still flagged new", caps, p, e, q)
					}
				} else if f != was {
					t.Fatalf("caps %v, point %d: entry %d (%d) flagged %d, was %d", caps, p, e, q, f, was)
				}
			}
		}
	}
}

// TestRenumberRestore checks that searching renumbered rows and restoring
// the result gives the graph of the original rows: the exact graph of the
// rows in a random order, restored, equals the exact graph, ties included.
func TestRenumberRestore(t *testing.T) {
	ctx := context.Background()
	x := randomMatrix(700, 5, 8)
	// Repeated rows make ties in distance that restore must reorder.
	copy(x.Row(10), x.Row(20))
	copy(x.Row(30), x.Row(20))
	rng := rand.New(rand.NewPCG(4, 4))
	perm := make([]int32, x.Rows)
	for i := range perm {
		perm[i] = int32(i)
	}
	rng.Shuffle(len(perm), func(a, b int) { perm[a], perm[b] = perm[b], perm[a] })
	tree := &rpTree{perm: slices.Clone(perm), bounds: []int32{0, int32(x.Rows)}}
	z, order := renumber(x, []*rpTree{tree}, 3)
	if !slices.Equal(order, perm) {
		t.Fatal("order is not the tree's order of rows")
	}
	for r, id := range tree.perm {
		if int(id) != r {
			t.Fatalf("tree not renumbered: position %d holds %d", r, id)
		}
	}
	all := make([]int, x.Rows)
	for i := range all {
		all[i] = i
	}
	const k = 12
	want, err := exactSquared(ctx, x, all, k, 2, nil)
	if err != nil {
		t.Fatal(err)
	}
	finish(want, Euclidean, 2)
	g, err := exactSquared(ctx, z, all, k+3, 2, nil)
	if err != nil {
		t.Fatal(err)
	}
	got := restore(g, k, order, 2)
	finish(got, Euclidean, 2)
	if !slices.Equal(got.Index, want.Index) || !slices.Equal(got.Dist, want.Dist) {
		t.Fatal("restored graph of the renumbered rows differs from the graph of the rows")
	}
}
