package integrate

import (
	"context"
	"math"
	"math/rand/v2"

	"lodestone/compute/parallel"
)

// Initial centroids.
const (
	// kmeansCellsPerCluster and kmeansMinSample size the sample the
	// initial centroids are found on: min(N, max(kmeansCellsPerCluster·K,
	// kmeansMinSample)) cells.
	kmeansCellsPerCluster = 100
	kmeansMinSample       = 10000
	// kmeansIterations bounds the Lloyd iterations.
	kmeansIterations = 25
)

// initCentroids sets the centroids to those of spherical k-means (cosine
// similarity, unit centroids) of the scaled components on a sample of cells:
// k-means++ seeding (Arthur & Vassilvitskii 2007, with the squared distance
// 2 − 2 cos between unit vectors), then Lloyd iterations until no cell
// changes cluster or kmeansIterations have run. Harmony starts from k-means
// centroids of the scaled components (Korsunsky et al. 2019); the sample
// keeps that start cheap at a million cells. The sample is the first cells of
// the storage order, which is random.
func (h *harmony) initCentroids(ctx context.Context) error {
	m := min(h.n, max(kmeansCellsPerCluster*h.k, kmeansMinSample))
	K, d, dz, kp := h.k, h.d, h.dz, h.kp
	rng := rand.New(rand.NewPCG(uint64(h.o.Seed), streamCentres))
	row := func(i int) []float32 { return h.zcos[i*dz : i*dz+d] }
	setCentre := func(k int, src []float32) {
		for j, v := range src {
			h.yt[j*kp+k] = v
		}
	}
	best := make([]float64, m)
	closer := func(c []float32, first bool) {
		parallel.For(m, h.threads, func(lo, hi, _ int) {
			for i := lo; i < hi; i++ {
				var dot float64
				for j, v := range row(i) {
					dot += float64(v) * float64(c[j])
				}
				dist := max(0, 2-2*dot)
				if first || dist < best[i] {
					best[i] = dist
				}
			}
		})
	}
	pick := rng.IntN(m)
	setCentre(0, row(pick))
	closer(row(pick), true)
	for k := 1; k < K; k++ {
		if err := ctx.Err(); err != nil {
			return err
		}
		var total float64
		for _, v := range best {
			total += v
		}
		pick = rng.IntN(m)
		if total > 0 {
			u := rng.Float64() * total
			for i, v := range best {
				u -= v
				if u < 0 {
					pick = i
					break
				}
			}
		}
		setCentre(k, row(pick))
		closer(row(pick), false)
	}

	// Lloyd iterations.
	assign := make([]int32, m)
	for i := range assign {
		assign[i] = -1
	}
	type acc struct {
		sum     []float64
		changed int
	}
	accs := make([]acc, h.threads)
	for t := range accs {
		accs[t].sum = make([]float64, K*d)
	}
	for it := 0; it < kmeansIterations; it++ {
		if err := ctx.Err(); err != nil {
			return err
		}
		parallel.For(m, h.threads, func(lo, hi, t int) {
			wk := &h.workers[t]
			a := &accs[t]
			clear(a.sum)
			a.changed = 0
			for s := lo; s < hi; s += chunkCells {
				e := min(s+chunkCells, hi)
				for g := s; g < e; g += tileRows {
					mm6x16(h.zcos[g*dz:], dz, 1, h.yt, kp, wk.dots[(g-s)*kp:], kp, d, kp/tileCols)
				}
				for i := s; i < e; i++ {
					dots := wk.dots[(i-s)*kp : (i-s)*kp+K]
					b := 0
					for k, v := range dots {
						if v > dots[b] {
							b = k
						}
					}
					if assign[i] != int32(b) {
						assign[i] = int32(b)
						a.changed++
					}
					dst := a.sum[b*d : (b+1)*d]
					for j, v := range row(i) {
						dst[j] += float64(v)
					}
				}
			}
		})
		changed := 0
		sum := accs[0].sum
		for t := range accs {
			changed += accs[t].changed
			if t > 0 {
				for e, v := range accs[t].sum {
					sum[e] += v
				}
			}
		}
		if changed == 0 {
			break
		}
		for k := 0; k < K; k++ {
			c := sum[k*d : (k+1)*d]
			var s float64
			for _, v := range c {
				s += v * v
			}
			if s == 0 {
				continue // an empty cluster keeps its centroid
			}
			inv := 1 / math.Sqrt(s)
			for j, v := range c {
				h.yt[j*kp+k] = float32(v * inv)
			}
		}
	}
	return nil
}
