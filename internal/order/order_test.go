package order

import (
	"math"
	"math/rand/v2"
	"sort"
	"testing"
)

// TestNthAgainstSort checks Nth against a full sort (sort.Float64s, NaN
// first) on random slices with repeated values and NaNs, at every rank of
// small slices and at random ranks of large ones, and checks the partition
// it leaves: nothing larger before s[k], nothing smaller after.
func TestNthAgainstSort(t *testing.T) {
	rng := rand.New(rand.NewPCG(1, 2))
	for _, n := range []int{1, 2, 3, 16, 17, 18, 100, 1000, 10000} {
		for trial := 0; trial < 20; trial++ {
			values := make([]float64, n)
			for i := range values {
				switch r := rng.IntN(20); {
				case r == 0:
					values[i] = math.NaN()
				case r < 5:
					values[i] = float64(rng.IntN(4)) // repeated values
				default:
					values[i] = rng.NormFloat64()
				}
			}
			sorted := append([]float64(nil), values...)
			sort.Float64s(sorted)
			ranks := []int{0, n - 1, rng.IntN(n), rng.IntN(n)}
			if n <= 100 {
				ranks = ranks[:0]
				for k := range n {
					ranks = append(ranks, k)
				}
			}
			for _, k := range ranks {
				s := append([]float64(nil), values...)
				got := Nth(s, k)
				if !same(got, sorted[k]) || !same(s[k], got) {
					t.Fatalf("n %d, rank %d: got %v (s[k] %v), sorted %v", n, k, got, s[k], sorted[k])
				}
				for i := range s {
					if (i < k && less(got, s[i])) || (i > k && less(s[i], got)) {
						t.Fatalf("n %d, rank %d: s[%d] = %v on the wrong side of %v", n, k, i, s[i], got)
					}
				}
			}
		}
	}
}

// same reports whether a and b are equal or both NaN.
func same(a, b float64) bool { return a == b || (a != a && b != b) }
