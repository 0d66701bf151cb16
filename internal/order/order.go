// Package order finds order statistics of float64 values without sorting
// them all.
package order

import "sort"

// less orders float64 values as sort.Float64s does: NaN first.
func less(a, b float64) bool { return a < b || (a != a && b == b) }

// Nth reorders s so that s[k] is the value sort.Float64s would put there
// (NaN first), with no larger value before it and no smaller one after, and
// returns it; 0 ≤ k < len(s). It runs in expected linear time: Hoare's FIND
// (Communications of the ACM 4, 1961) with the median of three as the pivot,
// the last range of 16 or fewer values sorted.
func Nth(s []float64, k int) float64 {
	lo, hi := 0, len(s)-1
	for hi-lo > 16 {
		// Median of three as the pivot, then Hoare's partition.
		mid := int(uint(lo+hi) >> 1)
		if less(s[mid], s[lo]) {
			s[mid], s[lo] = s[lo], s[mid]
		}
		if less(s[hi], s[lo]) {
			s[hi], s[lo] = s[lo], s[hi]
		}
		if less(s[hi], s[mid]) {
			s[hi], s[mid] = s[mid], s[hi]
		}
		pivot := s[mid]
		i, j := lo, hi
		for i <= j {
			for less(s[i], pivot) {
				i++
			}
			for less(pivot, s[j]) {
				j--
			}
			if i <= j {
				s[i], s[j] = s[j], s[i]
				i++
				j--
			}
		}
		switch {
		case k <= j:
			hi = j
		case k >= i:
			lo = i
		default:
			return s[k]
		}
	}
	sub := s[lo : hi+1]
	sort.Float64s(sub)
	return s[k]
}
