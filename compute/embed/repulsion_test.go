package embed

import (
	"context"
	"math"
	"math/rand/v2"
	"testing"

	"lodestone/compute/synth"
)

// clusteredLayout returns n points in seven Gaussian clusters spread over a
// square of side about extent, like a t-SNE map of a few groups.
func clusteredLayout(n int, extent float64, seed uint64) []float64 {
	rng := rand.New(rand.NewPCG(seed, 2))
	const clusters = 7
	var cx, cy, sd [clusters]float64
	for c := range cx {
		cx[c], cy[c] = (rng.Float64()-0.5)*extent*0.8, (rng.Float64()-0.5)*extent*0.8
		sd[c] = extent * (0.02 + 0.05*rng.Float64())
	}
	y := make([]float64, 2*n)
	for i := 0; i < n; i++ {
		c := rng.IntN(clusters)
		y[2*i] = cx[c] + sd[c]*rng.NormFloat64()
		y[2*i+1] = cy[c] + sd[c]*rng.NormFloat64()
	}
	return y
}

// bbox returns xmin, xmax, ymin, ymax of an interleaved layout.
func bbox(y []float64) [4]float64 {
	b := [4]float64{math.Inf(1), math.Inf(-1), math.Inf(1), math.Inf(-1)}
	for i := 0; i < len(y); i += 2 {
		b[0], b[1] = min(b[0], y[i]), max(b[1], y[i])
		b[2], b[3] = min(b[2], y[i+1]), max(b[3], y[i+1])
	}
	return b
}

func never() bool { return false }

// tsneLayout returns a t-SNE map of 5,000 points of a 10-D Gaussian mixture
// after the early phase and 250 further iterations: the dense, tightly
// clustered kind of layout the repulsion meets in practice.
func tsneLayout(t *testing.T) []float64 {
	t.Helper()
	x, _ := synth.GaussianMixture(5000, 10, 12, 1)
	P := affinityOf(t, x, 30)
	p := DefaultParams()
	p.Iterations = 500
	layout, err := Run(context.Background(), P, nil, p, nil)
	if err != nil {
		t.Fatal(err)
	}
	y, _ := toFloat64(layout, "layout")
	return y
}

// TestFFTRepulsionAgainstExact compares the interpolated repulsion with the
// exact O(N²) sums of ExactRepulsion at 5,000 points: the relative error of
// the forces, ‖F_fft − F_exact‖ / ‖F_exact‖ over all points, and of Z must
// stay within 1e-3 (the accuracy the method is meant to deliver; Linderman et
// al. 2019) on clustered layouts of extent 4 (the largest the coarse grid
// alone covers) to 100, on a t-SNE map, and on a tiny layout of extent 1e-3
// as at initialisation, for t-SNE's kernel (α = 1) and heavier (0.5) and
// lighter (3) tails, and the ends of the tail's range (on the layout of
// extent 4, where the grid alone must suffice, and the t-SNE map).
func TestFFTRepulsionAgainstExact(t *testing.T) {
	const n = 5000
	cases := []struct {
		name string
		y    []float64
	}{
		{"clusters, extent 100", clusteredLayout(n, 100, 2)},
		{"clusters, extent 50", clusteredLayout(n, 50, 1)},
		{"clusters, extent 10", clusteredLayout(n, 10, 3)},
		{"clusters, extent 4", clusteredLayout(n, 4, 6)},
		{"tiny, extent 1e-3", clusteredLayout(n, 1e-3, 4)},
		{"t-SNE map", tsneLayout(t)},
	}
	for _, tail := range []float64{1, 0.5, 3, MinTail, MaxTail} {
		for k, c := range cases {
			if (tail == MinTail || tail == MaxTail) && k != 3 && k != 5 {
				continue // the ends of the range on two layouts, for time
			}
			exact := make([]float64, 2*n)
			zExact := ExactRepulsion(exact, c.y, tail, 0)
			r := newFFTRepulsion(testTeam(t, 0), tail)
			got := make([]float64, 2*n)
			z, ok := r.compute(got, c.y, bbox(c.y), never)
			if !ok {
				t.Fatal("stopped without being asked")
			}
			var num, den float64
			for i := range got {
				num += (got[i] - exact[i]) * (got[i] - exact[i])
				den += exact[i] * exact[i]
			}
			b := bbox(c.y)
			fErr, zErr := math.Sqrt(num/den), math.Abs(z-zExact)/zExact
			t.Logf("α = %g, %s (%.3g × %.3g): cells %d×%d of width %.3g, FFT %d×%d, near field %v: force error %.2e, Z error %.2e",
				tail, c.name, b[1]-b[0], b[3]-b[2], r.nx, r.ny, r.h, r.lx, r.ly, r.near, fErr, zErr)
			if fErr > 1e-3 || zErr > 1e-3 {
				t.Errorf("α = %g, %s: force error %.2e, Z error %.2e; want ≤ 1e-3", tail, c.name, fErr, zErr)
			}
		}
	}
}

// TestFFTRepulsionOnNodes checks the convolution itself: when every point
// sits on a grid node the interpolation is exact, so the result must equal
// ExactRepulsion to rounding (exact slow computation as reference).
func TestFFTRepulsionOnNodes(t *testing.T) {
	rng := rand.New(rand.NewPCG(5, 5))
	const n = 1500
	r := newFFTRepulsion(testTeam(t, 0), 1)
	// A layout of extent 2 uses the grid alone with 8 cells of width 1/4
	// (a power of 2^(1/8), so not rounded); nodes lie 1/16 apart.
	y := make([]float64, 2*n)
	y[0], y[1], y[2], y[3] = 0, 0, 2, 2
	for i := 4; i < len(y); i++ {
		y[i] = float64(rng.IntN(33)) / 16
	}
	exact := make([]float64, 2*n)
	zExact := ExactRepulsion(exact, y, 1, 0)
	got := make([]float64, 2*n)
	z, _ := r.compute(got, y, bbox(y), never)
	if r.near || r.delta != 1.0/16 {
		t.Fatalf("grid: near %v, node spacing %g; the test expects the grid alone at spacing 1/16", r.near, r.delta)
	}
	for i := range got {
		if math.Abs(got[i]-exact[i]) > 1e-9*(1+math.Abs(exact[i])) {
			t.Fatalf("component %d: %g, exact %g", i, got[i], exact[i])
		}
	}
	if math.Abs(z-zExact) > 1e-9*zExact {
		t.Fatalf("Z = %g, exact %g", z, zExact)
	}
}

// TestFFTRepulsionDeterministic checks that repeated calls, also after the
// grid has changed size, give identical results (common practice for
// reproducible parallel code).
func TestFFTRepulsionDeterministic(t *testing.T) {
	a, b := clusteredLayout(3000, 40, 7), clusteredLayout(3000, 90, 8)
	r := newFFTRepulsion(testTeam(t, 3), 1)
	first := make([]float64, len(a))
	z1, _ := r.compute(first, a, bbox(a), never)
	other := make([]float64, len(b))
	r.compute(other, b, bbox(b), never)
	again := make([]float64, len(a))
	z2, _ := r.compute(again, a, bbox(a), never)
	if z1 != z2 {
		t.Fatalf("Z changed between identical calls: %v, %v", z1, z2)
	}
	for i := range first {
		if first[i] != again[i] {
			t.Fatalf("component %d changed between identical calls", i)
		}
	}
}

// TestKernelSpectraSymmetry checks that the kernel spectra, built from a
// quarter of the kernel's samples and half of the row transforms by the
// kernels' symmetries, equal bit for bit those of every sample evaluated and
// transformed (rows, then columns, with the same transforms), for tails 1, 0.5
// and 3 on grids of unequal sides.
func TestKernelSpectraSymmetry(t *testing.T) {
	for _, tail := range []float64{1, 0.5, 3} {
		y := clusteredLayout(5000, 60, 9)
		y[0], y[1] = 45, -10 // a wider than high bounding box
		r := newFFTRepulsion(testTeam(t, 2), tail)
		r.compute(make([]float64, len(y)), y, bbox(y), never)
		lx, ly, hw := r.lx, r.ly, r.lx/2+1
		if lx == ly {
			t.Fatalf("tail %g: square grid %d × %d", tail, lx, ly)
		}
		offset := func(i, l int) float64 {
			if i > l/2 {
				i -= l
			}
			return float64(i) * r.delta
		}
		rows, cols := newRPlan(lx), newCPlan(ly)
		spec := make([]complex128, ly*hw)
		line, col, work := make([]float64, lx), make([]complex128, ly), make([]complex128, max(lx, ly))
		for k, got := range [][]float64{r.kxIm, r.kyIm, r.kw} {
			for row := 0; row < ly; row++ {
				for c := range line {
					kx, ky, kw := r.tail.at(offset(c, lx), offset(row, ly))
					line[c] = [3]float64{kx, ky, kw}[k]
					if c == lx/2 || row == ly/2 {
						line[c] = 0
					}
				}
				rows.coefficients(spec[row*hw:(row+1)*hw], line, work)
			}
			scale := 1 / float64(lx*ly)
			for c := 0; c < hw; c++ {
				for row := range col {
					col[row] = spec[row*hw+c]
				}
				cols.transform(col, work, false)
				for row, v := range col {
					want := imag(v) * scale
					if k == 2 {
						want = real(v) * scale
					}
					if got[row*hw+c] != want {
						t.Fatalf("tail %g, kernel %d, row %d, column %d: %v, want %v", tail, k, row, c, got[row*hw+c], want)
					}
				}
			}
		}
	}
}

// TestLagrange checks the interpolation weights against their defining
// properties: L_a(t_b) = δ_ab at the nodes, and Σ_a L_a(t)·p(t_a) = p(t) for
// every polynomial p of degree < interpNodes (here the monomials), at points
// inside and just outside [0, 1].
func TestLagrange(t *testing.T) {
	const d = interpNodes - 1
	for b := 0; b < interpNodes; b++ {
		w := lagrange(float64(b) / d)
		for a, v := range w {
			want := 0.0
			if a == b {
				want = 1
			}
			if math.Abs(v-want) > 1e-14 {
				t.Fatalf("L_%d(t_%d) = %v, want %v", a, b, v, want)
			}
		}
	}
	for _, x := range []float64{-0.01, 0.1, 0.37, 0.5, 0.81, 1.0001} {
		w := lagrange(x)
		for deg := 0; deg < interpNodes; deg++ {
			var got float64
			for a, v := range w {
				got += v * math.Pow(float64(a)/d, float64(deg))
			}
			if want := math.Pow(x, float64(deg)); math.Abs(got-want) > 1e-13 {
				t.Fatalf("t = %v, degree %d: %v, want %v", x, deg, got, want)
			}
		}
	}
}
