package synth

import (
	"math"
	"runtime"
	"slices"
	"testing"
)

func TestGaussianMixtureDeterministic(t *testing.T) {
	a, la := GaussianMixture(10000, 7, 5, 42)
	prev := runtime.GOMAXPROCS(1)
	b, lb := GaussianMixture(10000, 7, 5, 42)
	runtime.GOMAXPROCS(prev)
	if !slices.Equal(a.Data, b.Data) || !slices.Equal(la, lb) {
		t.Fatal("same seed gave different points on 1 and all processors")
	}
	c, _ := GaussianMixture(10000, 7, 5, 43)
	if slices.Equal(a.Data, c.Data) {
		t.Fatal("seeds 42 and 43 gave the same points")
	}
}

// TestGaussianMixtureGeometry checks the documented geometry with sample
// moments (common practice): per-cluster spread within [0.75, 1.25), centres
// at least 3 apart, and every cluster's share within the bounds implied by
// weights w_c ∈ [1, 2).
func TestGaussianMixtureGeometry(t *testing.T) {
	const n, dim, k = 40000, 10, 6
	x, lab := GaussianMixture(n, dim, k, 7)
	if x.Rows != n || x.Cols != dim || len(lab) != n {
		t.Fatalf("shape %d×%d with %d labels", x.Rows, x.Cols, len(lab))
	}
	count := make([]float64, k)
	mean := make([]float64, k*dim)
	for i := 0; i < n; i++ {
		c := int(lab[i])
		if c < 0 || c >= k {
			t.Fatalf("label %d out of range", c)
		}
		count[c]++
		for j, v := range x.Row(i) {
			mean[c*dim+j] += float64(v)
		}
	}
	for c := 0; c < k; c++ {
		// Weights lie in [1, 2) before normalising, so each share lies in
		// (1/(2k−1), 2/(k+1)); allow 4 binomial standard deviations.
		share := count[c] / n
		slack := 4 * math.Sqrt(share*(1-share)/n)
		if share < 1/float64(2*k-1)-slack || share > 2/float64(k+1)+slack {
			t.Errorf("cluster %d holds share %.4f", c, share)
		}
		for j := 0; j < dim; j++ {
			mean[c*dim+j] /= count[c]
		}
	}
	vari := make([]float64, k)
	for i := 0; i < n; i++ {
		c := int(lab[i])
		for j, v := range x.Row(i) {
			d := float64(v) - mean[c*dim+j]
			vari[c] += d * d
		}
	}
	for c := 0; c < k; c++ {
		sd := math.Sqrt(vari[c] / (count[c]*dim - dim))
		if sd < 0.75*0.97 || sd > 1.25*1.03 {
			t.Errorf("cluster %d: noise deviation %.3f outside [0.75, 1.25)", c, sd)
		}
		for d := 0; d < c; d++ {
			s := 0.0
			for j := 0; j < dim; j++ {
				e := mean[c*dim+j] - mean[d*dim+j]
				s += e * e
			}
			if math.Sqrt(s) < 3*0.95 {
				t.Errorf("centres %d and %d only %.3f apart", c, d, math.Sqrt(s))
			}
		}
	}
}

func TestGaussianMixtureSmallSizes(t *testing.T) {
	x, lab := GaussianMixture(-3, 0, 0, 1)
	if x.Rows != 0 || x.Cols != 1 || len(lab) != 0 {
		t.Fatalf("got %d×%d with %d labels, want 0×1 with none", x.Rows, x.Cols, len(lab))
	}
	x, lab = GaussianMixture(5, 2, 0, 1)
	for i, l := range lab {
		if l != 0 {
			t.Fatalf("point %d in cluster %d of 1", i, l)
		}
	}
	if x.Rows != 5 {
		t.Fatalf("%d rows, want 5", x.Rows)
	}
}

// curvePoint recomputes the documented curve from its own formula, for the
// exact check below.
func curvePoint(pos float64, branch int32) [3]float64 {
	if branch == 0 {
		return [3]float64{trunkLength * pos, trunkBend * math.Sin(math.Pi*pos), 0}
	}
	s := pos - 1
	tau := unit([3]float64{trunkLength, -trunkBend * math.Pi, 0})
	e := [3]float64{-tau[1], tau[0], 0}
	th := 2 * math.Pi * float64(branch-1) / 3
	side := [3]float64{math.Cos(th) * e[0], math.Cos(th) * e[1], math.Sin(th)}
	u := unit([3]float64{tau[0] + 1.2*side[0], tau[1] + 1.2*side[1], tau[2] + 1.2*side[2]})
	d := dot3(side, u)
	v := unit([3]float64{side[0] - d*u[0], side[1] - d*u[1], side[2] - d*u[2]})
	var c [3]float64
	for a := range c {
		c[a] = []float64{trunkLength, 0, 0}[a] + branchLength*s*u[a] + branchBend*s*s*v[a]
	}
	return c
}

// TestBranchingPathIsometric checks, without noise, that the embedding keeps
// every distance of the 3-D curve (an orthonormal frame is an isometry): an
// exact computation from the documented formula.
func TestBranchingPathIsometric(t *testing.T) {
	const n, dim = 600, 20
	x, pos, br := BranchingPath(n, dim, 0, 3)
	perBranch := make([]int, 4)
	for i := 0; i < n; i++ {
		perBranch[br[i]]++
		lo, hi := 0.0, 1.0
		if br[i] > 0 {
			lo, hi = 1, 2
		}
		if br[i] < 0 || br[i] > 3 || pos[i] < lo || pos[i] > hi {
			t.Fatalf("point %d: branch %d at position %g", i, br[i], pos[i])
		}
	}
	for b, c := range perBranch {
		if c == 0 {
			t.Fatalf("branch %d is empty", b)
		}
	}
	worst := 0.0
	for i := 0; i < n; i++ {
		ci := curvePoint(pos[i], br[i])
		for j := 0; j < i; j++ {
			cj := curvePoint(pos[j], br[j])
			want := math.Sqrt((ci[0]-cj[0])*(ci[0]-cj[0]) + (ci[1]-cj[1])*(ci[1]-cj[1]) + (ci[2]-cj[2])*(ci[2]-cj[2]))
			got := 0.0
			for k := 0; k < dim; k++ {
				d := float64(x.At(i, k)) - float64(x.At(j, k))
				got += d * d
			}
			worst = max(worst, math.Abs(math.Sqrt(got)-want))
		}
	}
	// Float32 storage of coordinates up to ~40 in size: about 1e-5 absolute.
	if worst > 1e-4 {
		t.Fatalf("embedded distances differ from the curve's by up to %g", worst)
	}
}

// TestBranchingPathNoise checks the noise level: the residual from the
// noise-free curve (same seed, same draws) has variance noise² per coordinate
// (sample variance, common practice), and branches meet at the split.
func TestBranchingPathNoise(t *testing.T) {
	const n, dim, noise = 20000, 12, 0.5
	clean, _, _ := BranchingPath(n, dim, 0, 11)
	x, pos, br := BranchingPath(n, dim, noise, 11)
	s := 0.0
	for i, v := range x.Data {
		d := float64(v) - float64(clean.Data[i])
		s += d * d
	}
	sd := math.Sqrt(s / float64(len(x.Data)))
	if math.Abs(sd-noise) > 0.01 {
		t.Fatalf("noise deviation %.4f, want %.2f", sd, noise)
	}
	// Near the split (position within 0.01 of 1) all branches are close to
	// the trunk's end.
	end := curvePoint(1, 0)
	for i := range pos {
		if math.Abs(pos[i]-1) < 0.01 {
			c := curvePoint(pos[i], br[i])
			d := math.Sqrt((c[0]-end[0])*(c[0]-end[0]) + (c[1]-end[1])*(c[1]-end[1]) + (c[2]-end[2])*(c[2]-end[2]))
			if d > 0.3 {
				t.Fatalf("point %d at position %g of branch %d is %g from the split", i, pos[i], br[i], d)
			}
		}
	}
}

func TestBranchingPathSmallDim(t *testing.T) {
	x, _, _ := BranchingPath(100, 2, 0.1, 5)
	if x.Rows != 100 || x.Cols != 2 {
		t.Fatalf("shape %d×%d", x.Rows, x.Cols)
	}
	for i, v := range x.Data {
		if math.IsNaN(float64(v)) || math.IsInf(float64(v), 0) {
			t.Fatalf("element %d is %g", i, v)
		}
	}
	a, _, _ := BranchingPath(5000, 30, 1, 9)
	prev := runtime.GOMAXPROCS(1)
	b, _, _ := BranchingPath(5000, 30, 1, 9)
	runtime.GOMAXPROCS(prev)
	if !slices.Equal(a.Data, b.Data) {
		t.Fatal("same seed gave different points on 1 and all processors")
	}
}

// TestBatchMixture checks BatchMixture against its definition: the same
// types and points as GaussianMixture for the seed, each moved by one
// offset per batch (the difference is constant within a batch, up to
// float32 rounding), batches about equally frequent (binomial, 5 standard
// deviations), offsets of about shift in length, and the same points for
// any number of processors.
func TestBatchMixture(t *testing.T) {
	const n, dim, types, batches, shift = 20000, 12, 4, 3, 6.0
	x, typ, batch := BatchMixture(n, dim, types, batches, shift, 5)
	base, lab := GaussianMixture(n, dim, types, 5)
	if !slices.Equal(typ, lab) {
		t.Fatal("types differ from GaussianMixture's")
	}
	offset := make([][]float64, batches)
	count := make([]float64, batches)
	for i := 0; i < n; i++ {
		b := batch[i]
		if b < 0 || int(b) >= batches {
			t.Fatalf("batch %d out of range", b)
		}
		count[b]++
		d := make([]float64, dim)
		for j := range d {
			d[j] = float64(x.At(i, j) - base.At(i, j))
		}
		if offset[b] == nil {
			offset[b] = d
			continue
		}
		for j := range d {
			if math.Abs(d[j]-offset[b][j]) > 1e-5*(1+math.Abs(float64(base.At(i, j)))) {
				t.Fatalf("point %d: shift %v differs from its batch's %v", i, d, offset[b])
			}
		}
	}
	p := 1.0 / batches
	for b, c := range count {
		if math.Abs(c-n*p) > 5*math.Sqrt(n*p*(1-p)) {
			t.Errorf("batch %d has %v points of %d", b, c, n)
		}
		var s float64
		for _, v := range offset[b] {
			s += v * v
		}
		// ‖δ‖² / (shift²/dim) is χ² with dim degrees of freedom: within
		// [dim/4, 3·dim] for all practical purposes.
		if r := s / (shift * shift / dim); r < dim/4.0 || r > 3*dim {
			t.Errorf("batch %d: offset length %.3f for shift %v", b, math.Sqrt(s), shift)
		}
	}
	prev := runtime.GOMAXPROCS(1)
	y, _, batch1 := BatchMixture(n, dim, types, batches, shift, 5)
	runtime.GOMAXPROCS(prev)
	if !slices.Equal(x.Data, y.Data) || !slices.Equal(batch, batch1) {
		t.Fatal("same seed gave different points on 1 and all processors")
	}
}
