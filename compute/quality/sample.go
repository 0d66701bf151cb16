package quality

import "math/rand/v2"

// Sample returns size distinct row indices drawn at random from [0, n), in
// increasing order, by selection sampling (Knuth, The Art of Computer
// Programming, vol. 2, §3.4.2, Algorithm S): row i is taken with probability
// (size − taken) / (n − i). The same n, size and seed give the same sample.
// It returns all rows when size ≥ n and none when size ≤ 0.
func Sample(n, size int, seed int64) []int {
	if size >= n {
		all := make([]int, max(n, 0))
		for i := range all {
			all[i] = i
		}
		return all
	}
	if size <= 0 {
		return []int{}
	}
	rng := rand.New(rand.NewPCG(uint64(seed), 0x5a3b1e))
	out := make([]int, 0, size)
	for i := 0; i < n && len(out) < size; i++ {
		if rng.IntN(n-i) < size-len(out) {
			out = append(out, i)
		}
	}
	return out
}
