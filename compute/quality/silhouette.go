package quality

import (
	"fmt"
	"math"

	"lodestone/compute/parallel"
)

// Silhouette returns the mean silhouette width of Rousseeuw (1987) of the
// labelled groups in a map, over the sampled cells (nil means all), both the
// cells scored and the cells they are compared with restricted to the
// sample and to cells with a label (labels[i] ≥ 0). For cell i of group A,
// with d the Euclidean distance in the map,
//
//	a(i) = mean_{j ∈ A, j ≠ i} d(i, j),   b(i) = min_{B ≠ A} mean_{j ∈ B} d(i, j),
//	s(i) = (b(i) − a(i)) / max(a(i), b(i)),
//
// and s(i) = 0 when A holds i alone (Rousseeuw's convention, as
// scikit-learn's silhouette_score). The result lies in [−1, 1]: near 1 when
// every group is tight and far from the others, near 0 when groups touch.
// It needs at least two groups among the sampled labelled cells (ErrNoLabels
// otherwise); the cost is O(m²) for m such cells. Per-block sums are added in
// block order, so the result depends on threads (< 1: all processors) only
// in the last bits.
func Silhouette(layout []float32, labels []int32, sample []int, threads int) (float64, error) {
	n := len(labels)
	if err := checkLayout("layout", layout, n); err != nil {
		return 0, err
	}
	sample = orAll(sample, n)
	if err := checkSample(sample, n, 2); err != nil {
		return 0, err
	}
	// The labelled sampled cells, their groups renumbered 0 … g−1.
	var cells []int
	var group []int
	codes := map[int32]int{}
	for _, i := range sample {
		c := labels[i]
		if c < 0 {
			continue
		}
		k, ok := codes[c]
		if !ok {
			k = len(codes)
			codes[c] = k
		}
		cells = append(cells, i)
		group = append(group, k)
	}
	g := len(codes)
	if g < 2 {
		return 0, &InputError{Input: "labels", Row: -1, Err: fmt.Errorf("%w: the silhouette needs two groups, the sample has %d", ErrNoLabels, g)}
	}
	size := make([]int, g)
	for _, k := range group {
		size[k]++
	}
	m := len(cells)
	threads = parallel.Threads(threads)
	part := make([]float64, threads)
	parallel.For(m, threads, func(lo, hi, block int) {
		sum := make([]float64, g)
		var s float64
		for r := lo; r < hi; r++ {
			i := cells[r]
			xi, yi := float64(layout[2*i]), float64(layout[2*i+1])
			clear(sum)
			for t, j := range cells {
				dx, dy := xi-float64(layout[2*j]), yi-float64(layout[2*j+1])
				sum[group[t]] += math.Sqrt(dx*dx + dy*dy)
			}
			own := group[r]
			if size[own] == 1 {
				continue // s(i) = 0
			}
			a := sum[own] / float64(size[own]-1)
			b := math.Inf(1)
			for k, v := range sum {
				if k != own {
					b = min(b, v/float64(size[k]))
				}
			}
			if d := max(a, b); d > 0 {
				s += (b - a) / d
			}
		}
		part[block] = s
	})
	var s float64
	for _, v := range part {
		s += v
	}
	return s / float64(m), nil
}
