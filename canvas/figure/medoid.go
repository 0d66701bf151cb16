package figure

import (
	"context"
	"math"

	"lodestone/compute/parallel"
)

// MedoidSample is the largest number of a category's points whose distances
// Medoids sums; a category with at most this many points gets its exact
// medoid.
const MedoidSample = 256

// medoidCheck is how many candidates a worker of Medoids scores between
// looks at its context.
const medoidCheck = 256

// Medoids returns, for each category c in [0, k), the index of a central
// point of c for placing its label, or −1 when c has no point with finite
// coordinates. Point i (coordinates layout[2i], layout[2i+1]) is in
// category codes[i]; code −1 and non-finite points are left out. The
// central point is the point m of c minimising the sum of Euclidean
// distances to a sample S_c of c's points:
//
//	m = argmin_{i ∈ c} Σ_{j ∈ S_c} ‖y_i − y_j‖
//
// ties going to the smaller index. S_c is all of c when c has at most
// MedoidSample points, which makes m the exact medoid; otherwise it is
// MedoidSample points spread evenly over c in index order (the
// ⌊(s + ½)·n_c / MedoidSample⌋-th, s = 0, 1, …), which keeps the cost at
// MedoidSample distances per point. Unlike the mean, the result is a point
// of the category, inside it even when the category is curved or split.
//
// Medoids returns an *InputError wrapping ErrOddLength, ErrLength or
// ErrIndex (for a code outside [−1, k)), and ctx.Err() when ctx is
// cancelled. The work is spread over all processors; the result does not
// depend on their number.
func Medoids(ctx context.Context, layout []float32, codes []int32, k int) ([]int, error) {
	if len(layout)%2 != 0 {
		return nil, inputError("layout", -1, ErrOddLength)
	}
	if len(codes) != len(layout)/2 {
		return nil, inputError("codes", -1, ErrLength)
	}
	if k < 0 {
		return nil, inputError("k", -1, ErrIndex)
	}
	// members lists each category's finite points, category by category.
	start := make([]int, k+1)
	for i, c := range codes {
		if c < -1 || int(c) >= k {
			return nil, inputError("codes", i, ErrIndex)
		}
		if c >= 0 && finitePoint(layout, i) {
			start[c+1]++
		}
	}
	for c := 0; c < k; c++ {
		start[c+1] += start[c]
	}
	members := make([]int32, start[k])
	next := append([]int(nil), start[:k]...)
	for i, c := range codes {
		if c >= 0 && finitePoint(layout, i) {
			members[next[c]] = int32(i)
			next[c]++
		}
	}
	// samples holds each category's sample as coordinates, x and y
	// interleaved.
	sampleStart := make([]int, k+1)
	for c := 0; c < k; c++ {
		sampleStart[c+1] = sampleStart[c] + min(start[c+1]-start[c], MedoidSample)
	}
	samples := make([]float64, 2*sampleStart[k])
	for c := 0; c < k; c++ {
		m := members[start[c]:start[c+1]]
		ns := sampleStart[c+1] - sampleStart[c]
		for s := 0; s < ns; s++ {
			i := m[s]
			if len(m) > MedoidSample {
				i = m[int((int64(2*s+1)*int64(len(m)))/(2*MedoidSample))]
			}
			samples[2*(sampleStart[c]+s)] = float64(layout[2*i])
			samples[2*(sampleStart[c]+s)+1] = float64(layout[2*i+1])
		}
	}
	// score[p] is the sum of distances of member p to its category's sample.
	score := make([]float64, len(members))
	category := make([]int32, len(members))
	for c := 0; c < k; c++ {
		for p := start[c]; p < start[c+1]; p++ {
			category[p] = int32(c)
		}
	}
	err := parallel.ForChunks(ctx, len(members), medoidCheck, 0, func(lo, hi, _ int) {
		for p := lo; p < hi; p++ {
			c := category[p]
			i := members[p]
			x, y := float64(layout[2*i]), float64(layout[2*i+1])
			sample := samples[2*sampleStart[c] : 2*sampleStart[c+1]]
			var sum float64
			for s := 0; s+1 < len(sample); s += 2 {
				dx, dy := x-sample[s], y-sample[s+1]
				sum += math.Sqrt(dx*dx + dy*dy)
			}
			score[p] = sum
		}
	})
	if err != nil {
		return nil, err
	}
	out := make([]int, k)
	for c := 0; c < k; c++ {
		out[c] = -1
		best := math.Inf(1)
		for p := start[c]; p < start[c+1]; p++ { // members are in index order
			if score[p] < best {
				best, out[c] = score[p], int(members[p])
			}
		}
	}
	return out, nil
}

// finitePoint reports whether point i has finite coordinates.
func finitePoint(layout []float32, i int) bool {
	x, y := float64(layout[2*i]), float64(layout[2*i+1])
	return !math.IsNaN(x) && !math.IsInf(x, 0) && !math.IsNaN(y) && !math.IsInf(y, 0)
}
