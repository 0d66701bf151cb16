package raster

import (
	"math"
	"math/rand/v2"
	"slices"
)

// Constants of Shuffle: up to shuffleUniformMax points are shuffled
// uniformly; more are drawn in shuffleSweeps sweeps over chunks of
// shuffleChunk consecutive points.
const (
	shuffleUniformMax = 1 << 16
	shuffleChunk      = 4096
	shuffleSweeps     = 8
)

// Shuffle returns an order to draw n points in (a permutation of 0 … n−1)
// that mixes the points, so that no group of them is drawn under another
// even when the points are stored group by group. It depends only on n and
// seed, and is empty for n ≤ 0; n above math.MaxInt32, which int32 indices
// cannot reach, is taken as math.MaxInt32.
//
// Up to 65 536 points the order is a uniform random permutation (the
// Fisher–Yates shuffle, Knuth, TAOCP vol. 2, §3.4.2, Algorithm P). For more
// points a uniform order would make every draw fetch a point from a random
// place in memory, which costs more than drawing it. The order is then made
// of 8 sweeps: the points are cut into chunks of 4096 consecutive indices,
// each chunk's points are dealt at random into 8 equal parts (sizes differ
// by at most one), and sweep s visits the chunks in a random order of its
// own, taking part s of each in increasing index order. Every group of
// points thus has an eighth of its points (± one per chunk it touches) in
// every sweep, the last sweep included, and within a sweep the chunks, and
// so the groups, come in random order; memory is read in short ascending
// runs, which caches follow.
func Shuffle(n int, seed int64) []int32 {
	if n <= 0 {
		return []int32{}
	}
	n = min(n, math.MaxInt32)
	rng := rand.New(rand.NewPCG(uint64(seed), 0x6c6f6465))
	if n <= shuffleUniformMax {
		p := make([]int32, n)
		for i := range p {
			p[i] = int32(i)
		}
		fisherYates(p, rng)
		return p
	}
	// dealt holds each chunk's indices, shuffled then sorted part by part.
	dealt := make([]int32, n)
	for i := range dealt {
		dealt[i] = int32(i)
	}
	chunks := (n + shuffleChunk - 1) / shuffleChunk
	for c := 0; c < chunks; c++ {
		chunk := dealt[c*shuffleChunk : min((c+1)*shuffleChunk, n)]
		fisherYates(chunk, rng)
		for s := 0; s < shuffleSweeps; s++ {
			slices.Sort(chunk[part(s, len(chunk)):part(s+1, len(chunk))])
		}
	}
	p := make([]int32, 0, n)
	visit := make([]int32, chunks)
	for s := 0; s < shuffleSweeps; s++ {
		for c := range visit {
			visit[c] = int32(c)
		}
		fisherYates(visit, rng)
		for _, c := range visit {
			chunk := dealt[int(c)*shuffleChunk : min((int(c)+1)*shuffleChunk, n)]
			p = append(p, chunk[part(s, len(chunk)):part(s+1, len(chunk))]...)
		}
	}
	return p
}

// part returns where part s of a chunk of length l begins: ⌊s·l/8⌋.
func part(s, l int) int { return s * l / shuffleSweeps }

// fisherYates shuffles p uniformly at random.
func fisherYates(p []int32, rng *rand.Rand) {
	for i := len(p) - 1; i > 0; i-- {
		j := rng.IntN(i + 1)
		p[i], p[j] = p[j], p[i]
	}
}
