package cluster

import "fmt"

// AdjustedRandIndex returns the adjusted Rand index of two partitions of the
// same n items (Hubert & Arabie 1985): with n_ij the number of items in class
// i of a and class j of b, a_i and b_j the class sizes and C(x) = x(x−1)/2,
//
//	index    = Σ_ij C(n_ij)
//	expected = Σ_i C(a_i) · Σ_j C(b_j) / C(n)
//	maximum  = (Σ_i C(a_i) + Σ_j C(b_j)) / 2
//	ARI      = (index − expected) / (maximum − expected)
//
// It is 1 for identical partitions (up to renaming the labels), about 0 for
// independent ones, and may be negative. Where the formula reads 0/0 (both
// partitions put all items together, or all apart) it returns 1. Labels may
// be any int32 values. It returns a *GraphError wrapping ErrLabels when the
// lengths differ or n is 0.
func AdjustedRandIndex(a, b []int32) (float64, error) {
	if len(a) != len(b) || len(a) == 0 {
		return 0, &GraphError{What: "labels", Node: -1, Neighbor: -1,
			Err: fmt.Errorf("%w: %d and %d labels", ErrLabels, len(a), len(b))}
	}
	pairs := func(x int) float64 { return float64(x) * float64(x-1) / 2 }
	na := make(map[int32]int)
	nb := make(map[int32]int)
	nab := make(map[[2]int32]int)
	for i := range a {
		na[a[i]]++
		nb[b[i]]++
		nab[[2]int32{a[i], b[i]}]++
	}
	// Sum the counts in a fixed order so that the result does not depend on
	// the order in which the maps are walked.
	var index, sa, sb float64
	for i := range a {
		if c := nab[[2]int32{a[i], b[i]}]; c > 0 {
			index += pairs(c)
			nab[[2]int32{a[i], b[i]}] = 0
		}
		if c := na[a[i]]; c > 0 {
			sa += pairs(c)
			na[a[i]] = 0
		}
		if c := nb[b[i]]; c > 0 {
			sb += pairs(c)
			nb[b[i]] = 0
		}
	}
	// In pair counts (pairs together in both, in a only, in b only, in
	// neither) the index reads ARI = 2(tp·tn − fn·fp) /
	// ((tp+fn)(fn+tn) + (tp+fp)(fp+tn)); all counts are whole numbers, exact
	// in float64 up to n ≈ 10⁸.
	tp := index
	fn, fp := sa-tp, sb-tp
	tn := pairs(len(a)) - tp - fn - fp
	if fn == 0 && fp == 0 {
		return 1, nil
	}
	return 2 * (tp*tn - fn*fp) / ((tp+fn)*(fn+tn) + (tp+fp)*(fp+tn)), nil
}
