// Package cluster finds communities of cells in a neighbour graph with the
// Leiden algorithm (Traag, Waltman & van Eck 2019), maximising modularity
// (Newman & Girvan 2004).
package cluster

import (
	"context"
	"fmt"
	"math"
	"math/rand/v2"
	"slices"

	"lodestone/compute/progress"
	"lodestone/compute/sparse"
)

// Options holds the settings of Leiden. The zero value asks for the defaults.
type Options struct {
	// Resolution is γ in the modularity; larger values give more, smaller
	// communities. Zero means 1; it must not be negative.
	Resolution float64

	// Randomness is θ of the refinement phase: a node joins a
	// sub-community with probability proportional to exp(ΔH/θ), where ΔH
	// is the change of m·Q measured in units of the mean edge weight (so
	// that scaling all weights changes nothing). Small values make the
	// refinement nearly greedy. Zero means 0.01; it must not be negative.
	Randomness float64

	// Iterations caps the number of full passes of the algorithm; each
	// pass after the first starts from the partition the previous one
	// found, and the passes stop early once one leaves the partition
	// unchanged. Zero means 10; it must not be negative.
	Iterations int

	// Seed seeds the random node orders and refinement choices. The same
	// seed and graph give the same partition.
	Seed int64

	// Progress, when not nil, receives the number of passes done out of
	// Iterations.
	Progress progress.Func
}

// Defaults of Options.
const (
	DefaultResolution = 1
	DefaultRandomness = 0.01
	DefaultIterations = 10
)

// Leiden partitions the graph a into communities of high modularity with the
// Leiden algorithm (Traag, Waltman & van Eck 2019):
//
//	repeat
//	    fast local moving of nodes between communities, revisiting the
//	        neighbours of moved nodes through a queue
//	    stop when every community is a single node
//	    refine: inside each community, starting from singletons, merge
//	        well-connected nodes into well-connected sub-communities,
//	        chosen at random with probability ∝ exp(ΔH/θ) among ΔH ≥ 0
//	    aggregate: one node per refined sub-community; its starting
//	        community is the unrefined community that holds it
//
// The quality maximised is the modularity (Newman & Girvan 2004) with the
// resolution γ of Reichardt & Bornholdt (2006),
//
//	Q = 1/(2m) Σ_ij [A_ij − γ k_i k_j / (2m)] δ(c_i, c_j),  k_i = Σ_j A_ij, 2m = Σ_i k_i,
//
// a diagonal entry A_ii entering both sums as stored. Every community returned is connected. The algorithm is
// repeated from its own result until it leaves the partition unchanged or
// opt.Iterations passes have run.
//
// a must be square, symmetric, with finite non-negative weights and at least
// one non-zero; otherwise Leiden returns a *GraphError wrapping ErrNotSquare,
// ErrMalformed, ErrWeight, ErrAsymmetric or ErrNoEdges. Leiden returns the
// community of each node, numbered 0, 1, … by decreasing size (ties: the
// community holding the smaller node id first), and the modularity of that
// partition. The result depends only on a and opt. It returns ctx.Err() when
// ctx is cancelled.
func Leiden(ctx context.Context, a *sparse.CSR, opt Options) ([]int32, float64, error) {
	gamma, theta, passes, err := opt.resolve()
	if err != nil {
		return nil, 0, err
	}
	g, err := newGraph(ctx, a)
	if err != nil {
		return nil, 0, err
	}
	// θ applies to gains in units of the mean edge weight.
	var weight float64
	for _, w := range g.w {
		weight += w
	}
	if len(g.w) > 0 {
		theta *= weight / float64(len(g.w))
	}
	s := newLeiden(g.n, gamma, theta, opt.Seed)
	memb := make([]int32, g.n)
	for v := range memb {
		memb[v] = int32(v)
	}
	for p := 0; p < passes; p++ {
		next, err := s.pass(ctx, g, memb)
		if err != nil {
			return nil, 0, err
		}
		opt.Progress.Report(int64(p+1), int64(passes))
		same := slices.Equal(next, memb)
		memb = next
		if same {
			break
		}
	}
	opt.Progress.Report(int64(passes), int64(passes))
	k := bySize(memb)
	return memb, g.modularity(memb, k, gamma), nil
}

// resolve checks the options and fills in the defaults.
func (o Options) resolve() (gamma, theta float64, passes int, err error) {
	gamma, theta, passes = o.Resolution, o.Randomness, o.Iterations
	if !(gamma >= 0) || math.IsInf(gamma, 0) {
		return 0, 0, 0, fmt.Errorf("cluster: Options.Resolution = %v: %w", gamma, ErrOption)
	}
	if !(theta >= 0) || math.IsInf(theta, 0) {
		return 0, 0, 0, fmt.Errorf("cluster: Options.Randomness = %v: %w", theta, ErrOption)
	}
	if passes < 0 {
		return 0, 0, 0, fmt.Errorf("cluster: Options.Iterations = %d: %w", passes, ErrOption)
	}
	if gamma == 0 {
		gamma = DefaultResolution
	}
	if theta == 0 {
		theta = DefaultRandomness
	}
	if passes == 0 {
		passes = DefaultIterations
	}
	return gamma, theta, passes, nil
}

// bySize renumbers the communities of memb in place by decreasing size, ties
// by their smallest node, and returns their number.
func bySize(memb []int32) int {
	canonical(memb)
	k := 0
	for _, c := range memb {
		k = max(k, int(c)+1)
	}
	size := make([]int, k)
	for _, c := range memb {
		size[c]++
	}
	order := make([]int32, k)
	for c := range order {
		order[c] = int32(c)
	}
	slices.SortStableFunc(order, func(x, y int32) int { return size[y] - size[x] })
	rank := make([]int32, k)
	for r, c := range order {
		rank[c] = int32(r)
	}
	for v, c := range memb {
		memb[v] = rank[c]
	}
	return k
}

// canonical renumbers the labels of comm (each in [0, len(comm))) in place
// to 0…k−1 in order of first appearance and returns k.
func canonical(comm []int32) int {
	id := make([]int32, len(comm))
	for c := range id {
		id[c] = -1
	}
	k := int32(0)
	for v, c := range comm {
		if id[c] < 0 {
			id[c] = k
			k++
		}
		comm[v] = id[c]
	}
	return int(k)
}

// checkEvery is the number of edges scanned between two looks at the context.
const checkEvery = 1 << 16

// leiden holds the settings, random source and scratch space of one run.
// Scratch arrays are sized for the input graph, the largest of all levels.
type leiden struct {
	gamma, theta float64
	rng          *rand.Rand
	work         int // edges scanned since the context was last checked

	nbrW    []float64 // weight from the node at hand to each community; zero outside use
	touched []int32   // communities with nbrW ≠ 0
	queue   []int32   // ring buffer of nodes to visit
	queued  []bool
	commDeg []float64 // K_c, the summed degree of community c
	size    []int32   // nodes in community c
	free    []int32   // empty community labels
	order   []int32   // nodes grouped by community
	first   []int     // community c's nodes: order[first[c]:first[c+1]]
	ext     []float64 // refinement: weight from a sub-community to the rest of its community
	single  []bool    // refinement: sub-community is still a singleton
	gain    []float64 // refinement: candidate gains, then weights
	cand    []int32   // refinement: candidate sub-communities
}

func newLeiden(n int, gamma, theta float64, seed int64) *leiden {
	return &leiden{
		gamma: gamma, theta: theta,
		rng:     rand.New(rand.NewPCG(uint64(seed), 0x1e1de4)),
		nbrW:    make([]float64, n),
		touched: make([]int32, 0, n),
		queue:   make([]int32, n),
		queued:  make([]bool, n),
		commDeg: make([]float64, n),
		size:    make([]int32, n),
		free:    make([]int32, 0, n),
		order:   make([]int32, n),
		first:   make([]int, n+1),
		ext:     make([]float64, n),
		single:  make([]bool, n),
		gain:    make([]float64, 0, n),
		cand:    make([]int32, 0, n),
	}
}

// tick counts scanned edges and reports the context's error now and then.
func (s *leiden) tick(ctx context.Context, edges int) error {
	s.work += edges
	if s.work < checkEvery {
		return nil
	}
	s.work = 0
	return ctx.Err()
}

// pass runs the Leiden algorithm once on g starting from the partition start
// of its nodes and returns the partition found, in canonical numbering.
func (s *leiden) pass(ctx context.Context, base *graph, start []int32) ([]int32, error) {
	g := base
	comm := slices.Clone(start)
	node := make([]int32, base.n) // the node of g that holds each input node
	for v := range node {
		node[v] = int32(v)
	}
	for {
		if err := s.moveNodes(ctx, g, comm); err != nil {
			return nil, err
		}
		k := canonical(comm)
		if k == g.n {
			break
		}
		sub, nsub, err := s.refine(ctx, g, comm, k)
		if err != nil {
			return nil, err
		}
		if nsub == g.n {
			// No merge was drawn: split the communities into their
			// connected parts instead, which never lowers the quality
			// and keeps every community connected.
			sub, nsub = s.components(g, comm, k)
			if nsub == g.n {
				comm = sub
				break
			}
		}
		for v, x := range node {
			node[v] = sub[x]
		}
		g, comm = s.aggregate(g, sub, nsub, comm)
	}
	out := make([]int32, base.n)
	for v, x := range node {
		out[v] = comm[x]
	}
	canonical(out)
	return out, nil
}

// groupBy fills s.order and s.first with the nodes of each of the k
// communities of comm, in increasing node order.
func (s *leiden) groupBy(comm []int32, k int) {
	first := s.first[:k+1]
	clear(first)
	for _, c := range comm {
		first[c+1]++
	}
	for c := 0; c < k; c++ {
		first[c+1] += first[c]
	}
	next := s.size[:k] // borrowed as a cursor
	for c := range next {
		next[c] = int32(first[c])
	}
	for v, c := range comm {
		s.order[next[c]] = int32(v)
		next[c]++
	}
}

// moveNodes is the fast local moving phase: nodes are visited from a queue,
// first all in random order, and each moves to the community (or a new,
// empty one) that raises the quality most; the neighbours of a moved node
// outside its new community are queued again. comm is updated in place.
func (s *leiden) moveNodes(ctx context.Context, g *graph, comm []int32) error {
	n := g.n
	scale := s.gamma / g.total
	commDeg, size := s.commDeg[:n], s.size[:n]
	clear(commDeg)
	clear(size)
	for v, c := range comm {
		commDeg[c] += g.deg[v]
		size[c]++
	}
	s.free = s.free[:0]
	for c := n - 1; c >= 0; c-- {
		if size[c] == 0 {
			s.free = append(s.free, int32(c))
		}
	}
	queue, queued := s.queue[:n], s.queued[:n]
	for v := range queue {
		queue[v] = int32(v)
		queued[v] = true
	}
	s.rng.Shuffle(n, func(i, j int) { queue[i], queue[j] = queue[j], queue[i] })
	head, count := 0, n
	for count > 0 {
		v := queue[head]
		head++
		if head == n {
			head = 0
		}
		count--
		queued[v] = false
		lo, hi := g.start[v], g.start[v+1]
		if err := s.tick(ctx, hi-lo+1); err != nil {
			return err
		}

		s.touched = s.touched[:0]
		for p := lo; p < hi; p++ {
			c := comm[g.adj[p]]
			if s.nbrW[c] == 0 {
				s.touched = append(s.touched, c)
			}
			s.nbrW[c] += g.w[p]
		}
		own, kv := comm[v], g.deg[v]
		commDeg[own] -= kv
		stay := s.nbrW[own] - scale*kv*commDeg[own]
		best, to := stay, own
		for _, c := range s.touched {
			if gain := s.nbrW[c] - scale*kv*commDeg[c]; c != own && gain > best {
				best, to = gain, c
			}
		}
		fresh := best < 0 && size[own] > 1 // a new community beats them all
		if fresh {
			best, to = 0, s.free[len(s.free)-1]
		}
		// A move must gain more than rounding can explain.
		if to != own && best-stay <= 1e-12*kv {
			to, fresh = own, false
		}
		commDeg[to] += kv
		if to != own {
			if fresh {
				s.free = s.free[:len(s.free)-1]
			}
			size[own]--
			size[to]++
			if size[own] == 0 {
				s.free = append(s.free, own)
			}
			comm[v] = to
			for p := lo; p < hi; p++ {
				if u := g.adj[p]; comm[u] != to && !queued[u] {
					tail := head + count
					if tail >= n {
						tail -= n
					}
					queue[tail] = u
					queued[u] = true
					count++
				}
			}
		}
		for _, c := range s.touched {
			s.nbrW[c] = 0
		}
	}
	return nil
}

// refine splits each of the k communities of comm into sub-communities:
// starting from singletons, it visits the well-connected nodes of the
// community in random order and lets each node still alone join a
// well-connected sub-community of the same community, drawn with
// probability ∝ exp(ΔH/θ) among those with ΔH ≥ 0 (staying alone, ΔH = 0,
// included). A node or sub-community C of community S is well connected when
//
//	E(C, S−C) ≥ γ K_C (K_S − K_C) / (2m)
//
// with E the edge weight between the two sets and K the summed degrees. It
// returns the sub-community of every node, numbered 0…nsub−1 in order of
// first appearance.
func (s *leiden) refine(ctx context.Context, g *graph, comm []int32, k int) ([]int32, int, error) {
	n := g.n
	scale := s.gamma / g.total
	s.groupBy(comm, k)
	commDeg := s.commDeg[:k]
	clear(commDeg)
	for v, c := range comm {
		commDeg[c] += g.deg[v]
	}
	sub := make([]int32, n)
	subDeg := make([]float64, n)
	ext, single := s.ext[:n], s.single[:n]
	for v := 0; v < n; v++ {
		sub[v] = int32(v)
		subDeg[v] = g.deg[v]
		single[v] = true
		ext[v] = 0
		for p := g.start[v]; p < g.start[v+1]; p++ {
			if comm[g.adj[p]] == comm[v] {
				ext[v] += g.w[p]
			}
		}
	}
	for c := 0; c < k; c++ {
		nodes := s.order[s.first[c]:s.first[c+1]]
		if len(nodes) == 1 {
			continue
		}
		s.rng.Shuffle(len(nodes), func(i, j int) { nodes[i], nodes[j] = nodes[j], nodes[i] })
		kS := commDeg[c]
		for _, v := range nodes {
			kv := g.deg[v]
			if !single[v] || ext[v] < scale*kv*(kS-kv) {
				continue
			}
			lo, hi := g.start[v], g.start[v+1]
			if err := s.tick(ctx, hi-lo+1); err != nil {
				return nil, 0, err
			}
			s.touched = s.touched[:0]
			for p := lo; p < hi; p++ {
				u := g.adj[p]
				if comm[u] != int32(c) {
					continue
				}
				x := sub[u]
				if s.nbrW[x] == 0 {
					s.touched = append(s.touched, x)
				}
				s.nbrW[x] += g.w[p]
			}
			s.cand, s.gain = s.cand[:0], s.gain[:0]
			top := 0.0 // staying alone gains 0
			for _, x := range s.touched {
				kx := subDeg[x]
				if ext[x] < scale*kx*(kS-kx) {
					continue
				}
				if gain := s.nbrW[x] - scale*kv*kx; gain >= 0 {
					s.cand = append(s.cand, x)
					s.gain = append(s.gain, gain)
					top = max(top, gain)
				}
			}
			if len(s.cand) > 0 {
				sum := math.Exp(-top / s.theta)
				for i, gain := range s.gain {
					s.gain[i] = math.Exp((gain - top) / s.theta)
					sum += s.gain[i]
				}
				r := s.rng.Float64() * sum
				for i, x := range s.cand {
					if r -= s.gain[i]; r < 0 {
						sub[v] = x
						single[v], single[x] = false, false
						ext[x] += ext[v] - 2*s.nbrW[x]
						subDeg[x] += kv
						break
					}
				}
			}
			for _, x := range s.touched {
				s.nbrW[x] = 0
			}
		}
	}
	return sub, canonical(sub), nil
}

// components returns the connected parts of the k communities of comm as a
// partition numbered 0…nsub−1 in order of first appearance.
func (s *leiden) components(g *graph, comm []int32, k int) ([]int32, int) {
	sub := make([]int32, g.n)
	for v := range sub {
		sub[v] = -1
	}
	stack := s.queue[:0]
	next := int32(0)
	for v := range sub {
		if sub[v] >= 0 {
			continue
		}
		sub[v] = next
		stack = append(stack[:0], int32(v))
		for len(stack) > 0 {
			x := stack[len(stack)-1]
			stack = stack[:len(stack)-1]
			for p := g.start[x]; p < g.start[x+1]; p++ {
				if u := g.adj[p]; sub[u] < 0 && comm[u] == comm[x] {
					sub[u] = next
					stack = append(stack, u)
				}
			}
		}
		next++
	}
	return sub, int(next)
}

// aggregate returns the graph with one node per sub-community of sub (nsub
// of them) and the community of each new node in comm.
func (s *leiden) aggregate(g *graph, sub []int32, nsub int, comm []int32) (*graph, []int32) {
	s.groupBy(sub, nsub)
	h := &graph{n: nsub, start: make([]int, nsub+1), self: make([]float64, nsub), deg: make([]float64, nsub), total: g.total}
	next := make([]int32, nsub)
	for x := 0; x < nsub; x++ {
		members := s.order[s.first[x]:s.first[x+1]]
		next[x] = comm[members[0]]
		s.touched = s.touched[:0]
		for _, v := range members {
			h.deg[x] += g.deg[v]
			h.self[x] += g.self[v]
			for p := g.start[v]; p < g.start[v+1]; p++ {
				y := sub[g.adj[p]]
				if y == int32(x) {
					h.self[x] += g.w[p]
					continue
				}
				if s.nbrW[y] == 0 {
					s.touched = append(s.touched, y)
				}
				s.nbrW[y] += g.w[p]
			}
		}
		for _, y := range s.touched {
			h.adj = append(h.adj, y)
			h.w = append(h.w, s.nbrW[y])
			s.nbrW[y] = 0
		}
		h.start[x+1] = len(h.adj)
	}
	return h, next
}
