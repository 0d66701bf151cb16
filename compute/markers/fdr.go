package markers

import (
	"math"
	"slices"
)

// BenjaminiHochberg returns the false-discovery-rate adjusted p-values
// (q-values) of Benjamini & Hochberg (1995): with the m p-values sorted
// ascending, p_(1) ≤ … ≤ p_(m),
//
//	q_(i) = min(1, min_{j ≥ i} p_(j) · m / j)
//
// so that the hypotheses with q ≤ α are those the step-up procedure rejects
// at false discovery rate α. The q-values are returned in the order of p.
// P-values should lie in [0, 1]; a NaN p-value gets a NaN q-value and is
// not counted in m. Equal p-values get equal q-values.
//
// dst is resliced to len(p) and returned; if its capacity is too small (for
// example when dst is nil) a new slice is allocated. dst may be p itself.
func BenjaminiHochberg(p []float64, dst []float64) []float64 {
	if cap(dst) < len(p) {
		dst = make([]float64, len(p))
	}
	dst = dst[:len(p)]
	order := make([]int, 0, len(p))
	for i, v := range p {
		if !math.IsNaN(v) {
			order = append(order, i)
		}
	}
	slices.SortStableFunc(order, func(a, b int) int {
		switch {
		case p[a] < p[b]:
			return -1
		case p[a] > p[b]:
			return 1
		}
		return 0
	})
	for i, v := range p {
		if math.IsNaN(v) {
			dst[i] = v
		}
	}
	m := float64(len(order))
	running := 1.0
	for r := len(order) - 1; r >= 0; r-- {
		i := order[r]
		running = min(running, p[i]*m/float64(r+1))
		dst[i] = running
	}
	return dst
}
