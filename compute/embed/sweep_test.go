package embed

import (
	"context"
	"math"
	"slices"
	"sort"
	"testing"

	"lodestone/compute/parallel"
	"lodestone/compute/synth"
)

// mapNeighbours returns the k nearest neighbours of each point in an
// interleaved 2-D layout, by brute force (ties to the smaller index).
func mapNeighbours(layout []float32, k int) [][]int {
	n := len(layout) / 2
	out := make([][]int, n)
	parallel.For(n, 0, func(lo, hi, _ int) {
		ids, ds := make([]int, 0, k+1), make([]float64, 0, k+1)
		for i := lo; i < hi; i++ {
			ids, ds = ids[:0], ds[:0]
			for j := 0; j < n; j++ {
				if j == i {
					continue
				}
				dx, dy := float64(layout[2*i]-layout[2*j]), float64(layout[2*i+1]-layout[2*j+1])
				d := dx*dx + dy*dy
				if len(ds) == k && d >= ds[k-1] {
					continue
				}
				// Insert keeping ds sorted; equal distances keep index order.
				p := len(ds)
				for p > 0 && ds[p-1] > d {
					p--
				}
				ds, ids = slices.Insert(ds, p, d), slices.Insert(ids, p, j)
				if len(ds) > k {
					ds, ids = ds[:k], ids[:k]
				}
			}
			out[i] = slices.Clone(ids)
		}
	})
	return out
}

// sharedNeighbours returns the mean share of each point's k map neighbours
// in a that are also among its k map neighbours in b.
func sharedNeighbours(a, b [][]int) float64 {
	var s float64
	for i := range a {
		common := 0
		for _, j := range a[i] {
			if slices.Contains(b[i], j) {
				common++
			}
		}
		s += float64(common) / float64(len(a[i]))
	}
	return s / float64(len(a))
}

// distanceCorrelation returns the sample distance correlation of two 2-D
// layouts over the first m points (Székely, Rizzo & Bakirov 2007):
// double-centre both distance matrices, then
// dCor² = mean(A∘B) / sqrt(mean(A∘A) · mean(B∘B)).
func distanceCorrelation(a, b []float32, m int) float64 {
	dist := func(l []float32) [][]float64 {
		d := make([][]float64, m)
		for i := range d {
			d[i] = make([]float64, m)
			for j := range d[i] {
				d[i][j] = math.Hypot(float64(l[2*i]-l[2*j]), float64(l[2*i+1]-l[2*j+1]))
			}
		}
		rows := make([]float64, m)
		var all float64
		for i := range d {
			for j := range d[i] {
				rows[i] += d[i][j]
			}
			all += rows[i]
			rows[i] /= float64(m)
		}
		all /= float64(m * m)
		for i := range d {
			for j := range d[i] {
				d[i][j] += all - rows[i] - rows[j]
			}
		}
		return d
	}
	da, db := dist(a), dist(b)
	var ab, aa, bb float64
	for i := range da {
		for j := range da[i] {
			ab += da[i][j] * db[i][j]
			aa += da[i][j] * da[i][j]
			bb += db[i][j] * db[i][j]
		}
	}
	return math.Sqrt(ab / math.Sqrt(aa*bb))
}

// spread returns the 99th and 99.9th percentiles of the points' distances
// from the layout's coordinate-wise median.
func spread(layout []float32) (float64, float64) {
	n := len(layout) / 2
	xs, ys := make([]float64, n), make([]float64, n)
	for i := 0; i < n; i++ {
		xs[i], ys[i] = float64(layout[2*i]), float64(layout[2*i+1])
	}
	sort.Float64s(xs)
	sort.Float64s(ys)
	mx, my := xs[n/2], ys[n/2]
	d := make([]float64, n)
	for i := 0; i < n; i++ {
		d[i] = math.Hypot(float64(layout[2*i])-mx, float64(layout[2*i+1])-my)
	}
	sort.Float64s(d)
	return d[int(0.99*float64(n-1))], d[int(0.999*float64(n-1))]
}

// TestAttractionSweep turns the dial on a connected dataset, a noisy
// branching path in 50-D (synth.BranchingPath, 3,000 cells), as a user would:
// the t-SNE map (ρ = 1) first, then 0.5 from it, and 4, 30 and 100 each from
// the map before, with warm restarts. Checks:
//   - as ρ grows the map moves toward the Laplacian eigenmap, the ρ → ∞ limit
//     (Linderman & Steinerberger 2019; Arora, Hu & Kothari 2018): the share
//     of each cell's 15 map neighbours it also has in the eigenmap rises from
//     ρ = 1 to 4 to 30; the distance correlation with the eigenmap (Székely,
//     Rizzo & Bakirov 2007, on the first 1,000 cells) is logged;
//   - at every dial value no cell is flung away (99.9th percentile of the
//     distances from the median at most twice the 99th; common practice as
//     an outlier test) and the loss settles: over the last 100 iterations the
//     objective C_ρ (computed exactly) changes by less than 1 % for ρ ≥ 1, and
//     KL(P‖Q) by less than 1 % for ρ < 1, where C_ρ has no minimum.
func TestAttractionSweep(t *testing.T) {
	ctx := context.Background()
	x, _, _ := synth.BranchingPath(3000, 50, 0.5, 11)
	P := affinityOf(t, x, 30)
	spec, info, err := Spectral(ctx, P, 0)
	if err != nil {
		t.Fatal(err)
	}
	if info.Components != 1 {
		t.Fatalf("the branching path's graph has %d components; the test needs a connected one", info.Components)
	}
	specNb := mapNeighbours(spec, 15)
	init, err := InitPCA(x)
	if err != nil {
		t.Fatal(err)
	}
	const warmIterations = 1000
	share := map[float64]float64{}
	for _, rho := range []float64{1, 0.5, 4, 30, 100} {
		var (
			snaps  []Snapshot
			layout []float32
			err    error
		)
		keep := func(s Snapshot) { snaps = append(snaps, s) }
		if rho == 1 {
			p := DefaultParams()
			p.SnapshotEvery = 1
			layout, err = Run(ctx, P, init, p, keep)
		} else {
			layout, err = Run(ctx, P, init, Params{Attraction: rho, Iterations: warmIterations, SnapshotEvery: 1}, keep)
		}
		if err != nil {
			t.Fatal(err)
		}
		if rho != 0.5 {
			init = layout // the next dial value starts from here
		}
		p99, p999 := spread(layout)
		total := snaps[len(snaps)-1].Iterations
		var earlier Snapshot
		for _, s := range snaps {
			if s.Iteration <= total-100 {
				earlier = s
			}
		}
		y0, _ := toFloat64(earlier.Layout, "")
		y1, _ := toFloat64(layout, "")
		c0, c1 := objective(P, y0, rho, 1), objective(P, y1, rho, 1)
		share[rho] = sharedNeighbours(mapNeighbours(layout, 15), specNb)
		t.Logf("ρ = %5g: shared 15-NN with the eigenmap %.3f, distance correlation %.3f; p99 %.2f, p99.9 %.2f; over the last %d iterations C_ρ %.5f → %.5f, KL %.4f → %.4f; settled %v",
			rho, share[rho], distanceCorrelation(layout, spec, 1000), p99, p999, total-earlier.Iteration, c0, c1,
			objective(P, y0, 1, 1), objective(P, y1, 1, 1), snaps[len(snaps)-1].Settled)
		if p999 > 2*p99 {
			t.Errorf("ρ = %g: a cell is flung away: 99.9th percentile %.2f > 2 × 99th %.2f", rho, p999, p99)
		}
		// For ρ ≥ 1 the loss is the objective C_ρ itself. For ρ < 1 it has no
		// minimum (under a uniform scale s it falls as 2(ρ−1)·log s, so the map
		// keeps growing), and the loss that settles is KL(P‖Q), which tends
		// to a limit as the map grows.
		// Both KL values exactly, from the layouts (a snapshot's estimate
		// can lag its layout by a second or 10 iterations).
		kl0, kl1 := objective(P, y0, 1, 1), objective(P, y1, 1, 1)
		if (rho < 1 && math.Abs(kl1-kl0) > 0.01*kl1) || (rho >= 1 && math.Abs(c1-c0) > 0.01*math.Abs(c1)) {
			t.Errorf("ρ = %g: the loss has not settled over the last %d iterations: KL %.5f → %.5f, C_ρ %.5f → %.5f",
				rho, total-earlier.Iteration, kl0, kl1, c0, c1)
		}
	}
	t.Logf("ρ =   Inf: shared 15-NN with the eigenmap 1.000, distance correlation 1.000 (the eigenmap itself)")
	if !(share[1] < share[4] && share[4] < share[30]) {
		t.Errorf("shared neighbours with the eigenmap do not rise with ρ: 1 → %.3f, 4 → %.3f, 30 → %.3f", share[1], share[4], share[30])
	}
}
