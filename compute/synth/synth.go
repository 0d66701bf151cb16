// Package synth makes seeded synthetic data with known structure, for tests
// and benchmarks of the numerical stages: point clouds of well separated
// clusters and of a branching continuous path, and sparse counts with group
// structure.
//
// Every generator is deterministic: the same arguments give the same points,
// bit for bit, whatever the number of processors. Points are drawn in chunks
// of fixed size, each chunk from its own PCG stream (math/rand/v2) seeded from
// the seed and the chunk number, so that chunks can be filled in parallel.
package synth

import (
	"math"
	"math/rand/v2"

	"lodestone/compute/atlas"
	"lodestone/compute/parallel"
)

// chunkRows is the number of rows drawn from one random stream.
const chunkRows = 4096

// Stream identifiers: the second word of each PCG seed, so that the streams of
// different purposes never coincide.
const (
	streamLayout = 0x5eed_c0de_0000_0001 // centres, weights, frames
	streamRows   = 0x5eed_c0de_0001_0000 // + chunk number: the rows
	// streamBatches draws BatchMixture's offsets, and (xored into the
	// seed) its batches.
	streamBatches = 0x5eed_c0de_0002_0000
)

// newRand returns the PCG generator of stream for seed.
func newRand(seed int64, stream uint64) *rand.Rand {
	return rand.New(rand.NewPCG(uint64(seed), stream))
}

// fillChunks calls fill(lo, hi, rng) for consecutive chunks of chunkRows rows
// of [0, n), on all processors, giving chunk c its own stream seeded from
// (seed, streamRows+c).
func fillChunks(n int, seed int64, fill func(lo, hi int, rng *rand.Rand)) {
	chunks := (n + chunkRows - 1) / chunkRows
	parallel.For(chunks, 0, func(clo, chi, _ int) {
		for c := clo; c < chi; c++ {
			lo, hi := c*chunkRows, min((c+1)*chunkRows, n)
			fill(lo, hi, newRand(seed, streamRows+uint64(c)))
		}
	})
}

// GaussianMixture returns n points in dim dimensions drawn from a mixture of
// clusters isotropic Gaussians, and the cluster (0 … clusters−1) of each
// point.
//
// The geometry: cluster c has centre μ_c, spread σ_c and weight w_c,
//
//	μ_c ~ N(0, (4/√dim)² I)   redrawn (up to 100 times) while closer than 3 to an earlier centre
//	σ_c ~ U[0.75, 1.25)
//	w_c ∝ 1 + U[0, 1)
//	label_i ~ w,  x_i = μ_label + σ_label · z_i,  z_i ~ N(0, I_dim)
//
// so two centres lie about 4√2 ≈ 5.7 noise deviations apart whatever dim is:
// the clusters are clearly distinct along the line between their centres, yet
// in many dimensions the distance between two points of one cluster
// (≈ √(2·dim)) exceeds the distance between centres, as in real features.
//
// Sizes below their minimum are raised to it: n and dim to 0 and 1,
// clusters to 1.
func GaussianMixture(n, dim, clusters int, seed int64) (*atlas.Dense, []int32) {
	n, dim, clusters = max(n, 0), max(dim, 1), max(clusters, 1)
	rng := newRand(seed, streamLayout)
	spread := 4 / math.Sqrt(float64(dim))
	centres := make([]float64, clusters*dim)
	for c := 0; c < clusters; c++ {
		mu := centres[c*dim : (c+1)*dim]
		for try := 0; try < 100; try++ {
			for j := range mu {
				mu[j] = spread * rng.NormFloat64()
			}
			if nearestCentre(centres[:c*dim], mu) >= 3 {
				break
			}
		}
	}
	sigma := make([]float64, clusters)
	cum := make([]float64, clusters)
	total := 0.0
	for c := range sigma {
		sigma[c] = 0.75 + 0.5*rng.Float64()
		total += 1 + rng.Float64()
		cum[c] = total
	}

	x := atlas.NewDense(n, dim)
	labels := make([]int32, n)
	fillChunks(n, seed, func(lo, hi int, r *rand.Rand) {
		for i := lo; i < hi; i++ {
			u := r.Float64() * total
			c := 0
			for c < clusters-1 && u >= cum[c] {
				c++
			}
			labels[i] = int32(c)
			mu, s := centres[c*dim:(c+1)*dim], sigma[c]
			row := x.Row(i)
			for j := range row {
				row[j] = float32(mu[j] + s*r.NormFloat64())
			}
		}
	})
	return x, labels
}

// BatchMixture returns n points in dim dimensions from GaussianMixture's
// mixture of types clusters (its centres, spreads and weights for the same
// seed), each point also seen in one of batches batches that shifts it by
// the batch's offset, with each point's type and batch:
//
//	δ_b ~ N(0, (shift/√dim)² I)   (two offsets about shift·√2 apart)
//	batch_i uniform,  x_i = μ_type + σ_type · z_i + δ_batch
//
// With shift ≥ 6 the batches lie further apart than the types (about 5.7),
// so neighbours are found within a point's own batch first: the task of a
// batch integration. Sizes below their minimum are raised as by
// GaussianMixture; batches to 1.
func BatchMixture(n, dim, types, batches int, shift float64, seed int64) (x *atlas.Dense, typ, batch []int32) {
	x, typ = GaussianMixture(n, dim, types, seed)
	dim, batches = max(dim, 1), max(batches, 1)
	rng := newRand(seed, streamBatches)
	offsets := make([]float32, batches*dim)
	for i := range offsets {
		offsets[i] = float32(shift / math.Sqrt(float64(dim)) * rng.NormFloat64())
	}
	batch = make([]int32, x.Rows)
	fillChunks(x.Rows, seed^streamBatches, func(lo, hi int, r *rand.Rand) {
		for i := lo; i < hi; i++ {
			b := r.IntN(batches)
			batch[i] = int32(b)
			row := x.Row(i)
			for j, v := range offsets[b*dim : (b+1)*dim] {
				row[j] += v
			}
		}
	})
	return x, typ, batch
}

// nearestCentre returns the smallest Euclidean distance from mu to the
// centres stored consecutively in prev (+Inf when there are none).
func nearestCentre(prev, mu []float64) float64 {
	best := math.Inf(1)
	for o := 0; o < len(prev); o += len(mu) {
		s := 0.0
		for j, m := range mu {
			d := prev[o+j] - m
			s += d * d
		}
		best = min(best, math.Sqrt(s))
	}
	return best
}

// Lengths of the branching path, in units of the noise's standard deviation
// at noise = 1.
const (
	trunkLength  = 20.0
	trunkBend    = 4.0
	branchLength = 15.0
	branchBend   = 5.0
	branches     = 3
	trunkShare   = 0.4 // share of points on the trunk; the rest split evenly
)

// BranchingPath returns n points in dim dimensions scattered about a curve
// that splits into three, the position of each point along the path, and its
// branch: 0 for the trunk, 1, 2, 3 for the branches.
//
// The geometry, in a 3-D space of the curve's own: the trunk runs from the
// origin along a gentle bend,
//
//	c(t) = (20 t, 4 sin(πt), 0),  t ∈ [0, 1],  position t,
//
// and at its end b = c(1) it splits into three curved branches that leave
// forward at 120° from one another,
//
//	c_j(s) = b + 15 s u_j + 5 s² v_j,  s ∈ [0, 1],  position 1 + s,  j = 1, 2, 3,
//
// with unit directions u_j = normalise(τ + 1.2 (cos θ_j e + sin θ_j e₃)),
// θ_j = 2π(j−1)/3, τ the trunk's unit tangent at b, e the unit vector in the
// curve's plane at right angles to τ, and v_j a unit vector at right angles
// to u_j (so each branch bends away from the others' common axis). A point
// lies on the trunk with probability 0.4 and on each branch with probability
// 0.2, at a uniform parameter t or s. The curve is placed in dim dimensions
// by a random orthonormal 3-frame (for dim < 3, the first dim coordinates of
// a random rotation), and isotropic Gaussian noise of standard deviation
// noise is added in all dim coordinates:
//
//	x_i = F c(t_i) + noise · z_i,  z_i ~ N(0, I_dim)
//
// The data are connected, with continuous structure along the path and a
// local dimension set by the noise. Sizes below their minimum are raised to
// it (n to 0, dim to 1); noise ≤ 0 or NaN means no noise.
func BranchingPath(n, dim int, noise float64, seed int64) (*atlas.Dense, []float64, []int32) {
	n, dim = max(n, 0), max(dim, 1)
	if !(noise > 0) {
		noise = 0
	}
	rng := newRand(seed, streamLayout)
	frame := randomFrame(dim, rng) // dim × 3, row-major

	// The branch point, the trunk's tangent there and the branches' axes.
	b := [3]float64{trunkLength, 0, 0}
	tau := unit([3]float64{trunkLength, trunkBend * math.Pi * math.Cos(math.Pi), 0})
	e := [3]float64{-tau[1], tau[0], 0}
	var u, v [branches][3]float64
	for j := 0; j < branches; j++ {
		th := 2 * math.Pi * float64(j) / branches
		side := [3]float64{math.Cos(th) * e[0], math.Cos(th) * e[1], math.Sin(th)}
		u[j] = unit([3]float64{tau[0] + 1.2*side[0], tau[1] + 1.2*side[1], tau[2] + 1.2*side[2]})
		// v_j: the side direction made orthogonal to u_j, so the branch
		// curves further out from the common axis.
		d := dot3(side, u[j])
		v[j] = unit([3]float64{side[0] - d*u[j][0], side[1] - d*u[j][1], side[2] - d*u[j][2]})
	}

	x := atlas.NewDense(n, dim)
	position := make([]float64, n)
	branch := make([]int32, n)
	fillChunks(n, seed, func(lo, hi int, r *rand.Rand) {
		for i := lo; i < hi; i++ {
			var c [3]float64
			w, t := r.Float64(), r.Float64()
			if w < trunkShare {
				c = [3]float64{trunkLength * t, trunkBend * math.Sin(math.Pi*t), 0}
				position[i], branch[i] = t, 0
			} else {
				j := min(int((w-trunkShare)/((1-trunkShare)/branches)), branches-1)
				for a := 0; a < 3; a++ {
					c[a] = b[a] + branchLength*t*u[j][a] + branchBend*t*t*v[j][a]
				}
				position[i], branch[i] = 1+t, int32(j+1)
			}
			row := x.Row(i)
			for k := range row {
				f := frame[k*3 : k*3+3]
				row[k] = float32(f[0]*c[0] + f[1]*c[1] + f[2]*c[2] + noise*r.NormFloat64())
			}
		}
	})
	return x, position, branch
}

// randomFrame returns a dim × 3 row-major matrix whose columns are the first
// three columns of a random orthogonal matrix of order max(dim, 3), with its
// rows cut to dim: orthonormal columns when dim ≥ 3, a projection otherwise.
func randomFrame(dim int, rng *rand.Rand) []float64 {
	m := max(dim, 3)
	cols := make([][]float64, 3)
	for a := range cols {
		for {
			c := make([]float64, m)
			for k := range c {
				c[k] = rng.NormFloat64()
			}
			// Gram–Schmidt against the earlier columns, twice for accuracy.
			for pass := 0; pass < 2; pass++ {
				for _, p := range cols[:a] {
					d := 0.0
					for k := range c {
						d += c[k] * p[k]
					}
					for k := range c {
						c[k] -= d * p[k]
					}
				}
			}
			norm := 0.0
			for _, ck := range c {
				norm += ck * ck
			}
			if norm = math.Sqrt(norm); norm > 1e-6 {
				for k := range c {
					c[k] /= norm
				}
				cols[a] = c
				break
			}
		}
	}
	f := make([]float64, dim*3)
	for k := 0; k < dim; k++ {
		for a := 0; a < 3; a++ {
			f[k*3+a] = cols[a][k]
		}
	}
	return f
}

func dot3(a, b [3]float64) float64 { return a[0]*b[0] + a[1]*b[1] + a[2]*b[2] }

func unit(a [3]float64) [3]float64 {
	n := math.Sqrt(dot3(a, a))
	return [3]float64{a[0] / n, a[1] / n, a[2] / n}
}
