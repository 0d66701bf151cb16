package embed

import (
	"context"
	"errors"
	"fmt"
	"math"
	"math/rand/v2"
	"os/exec"
	"path/filepath"
	"strconv"
	"strings"
	"testing"

	"lodestone/compute/affinity"
	"lodestone/compute/atlas"
	"lodestone/compute/sparse"
	"lodestone/internal/pyref"
)

// rectangleAffinity returns the uniform 15-NN affinities of n random points
// in the rectangle [0, 3] × [0, 1.7]: a connected graph whose Laplacian
// eigenvalues are well apart (for the continuous rectangle they go as
// (k/3)² + (l/1.7)²: 0.11, 0.35, 0.44, …), so each eigenvector is well defined.
func rectangleAffinity(t *testing.T, n int, seed uint64) *sparse.CSR {
	t.Helper()
	rng := rand.New(rand.NewPCG(seed, 3))
	x := atlas.NewDense(n, 2)
	for i := 0; i < n; i++ {
		x.Data[2*i], x.Data[2*i+1] = float32(3*rng.Float64()), float32(1.7*rng.Float64())
	}
	p, err := affinity.Uniform(exactKNN(t, x, 15), 15)
	if err != nil {
		t.Fatal(err)
	}
	return p
}

// eigshReference returns scipy's Laplacian eigenmap of P: the eigenvectors
// u2, u3 of the 2nd and 3rd largest eigenvalues of A = D^{-1/2} P D^{-1/2}
// (scipy.sparse.linalg.eigsh, which="LA"), divided by D^{1/2}, and the
// eigenvalues.
func eigshReference(t *testing.T, p *sparse.CSR) ([2][]float64, [2]float64) {
	py := pyref.Require(t, "numpy, scipy, sklearn")
	dir := t.TempDir()
	var b strings.Builder
	for i := 0; i < p.Rows; i++ {
		cols, vals := p.Row(i)
		for k, j := range cols {
			fmt.Fprintf(&b, "%d %d %.17g\n", i, j, vals[k])
		}
	}
	writeText(t, filepath.Join(dir, "p"), b.String())
	script := fmt.Sprintf(`
import sys, numpy as np, scipy, scipy.sparse as sp
from scipy.sparse.linalg import eigsh
e = np.loadtxt(sys.argv[1])
n = %d
P = sp.csr_matrix((e[:, 2], (e[:, 0].astype(int), e[:, 1].astype(int))), shape=(n, n))
d = np.asarray(P.sum(axis=1)).ravel()
s = sp.diags(1 / np.sqrt(d))
A = s @ P @ s
vals, vecs = eigsh(A, k=3, which="LA", tol=1e-12, v0=np.ones(n))
order = np.argsort(-vals)
vals, vecs = vals[order], vecs[:, order]
print("%%.17g %%.17g %%.17g" %% tuple(vals))
for k in (1, 2):
    print(" ".join("%%.17g" %% v for v in vecs[:, k] / np.sqrt(d)))
`, p.Rows)
	out, err := exec.Command(py, "-c", script, filepath.Join(dir, "p")).CombinedOutput()
	if err != nil {
		t.Fatalf("reference script: %v\n%s", err, out)
	}
	lines := strings.Split(strings.TrimSpace(string(out)), "\n")
	var vals [2]float64
	for k, f := range strings.Fields(lines[0])[1:] {
		vals[k], _ = strconv.ParseFloat(f, 64)
	}
	var vecs [2][]float64
	for k := 0; k < 2; k++ {
		for _, f := range strings.Fields(lines[1+k]) {
			v, _ := strconv.ParseFloat(f, 64)
			vecs[k] = append(vecs[k], v)
		}
	}
	return vecs, vals
}

// correlation returns Pearson's correlation of a and the k-th interleaved
// coordinate of layout.
func correlation(a []float64, layout []float32, k int) float64 {
	n := len(a)
	var ma, mb float64
	for i := 0; i < n; i++ {
		ma += a[i]
		mb += float64(layout[2*i+k])
	}
	ma, mb = ma/float64(n), mb/float64(n)
	var sab, saa, sbb float64
	for i := 0; i < n; i++ {
		x, y := a[i]-ma, float64(layout[2*i+k])-mb
		sab += x * y
		saa += x * x
		sbb += y * y
	}
	return sab / math.Sqrt(saa*sbb)
}

// TestSpectralAgainstEigsh compares the Laplacian eigenmap (Belkin & Niyogi
// 2003) with scipy.sparse.linalg.eigsh on the same graph, up to sign:
// |correlation| ≥ 0.999 per coordinate, and the eigenvalues to 1e-8. The
// small graph goes through the dense solver, the larger one through Lanczos.
func TestSpectralAgainstEigsh(t *testing.T) {
	for _, n := range []int{300, 2000} {
		p := rectangleAffinity(t, n, uint64(n))
		layout, info, err := Spectral(context.Background(), p, 0)
		if err != nil {
			t.Fatal(err)
		}
		vecs, vals := eigshReference(t, p)
		for k := 0; k < 2; k++ {
			c := correlation(vecs[k], layout, k)
			t.Logf("n = %d: coordinate %d: λ = %.10f (scipy %.10f), |correlation| %.8f; %d products, residual %.2g",
				n, k, info.Eigenvalues[k], vals[k], math.Abs(c), info.Products, info.Residual)
			if math.Abs(c) < 0.999 {
				t.Errorf("n = %d, coordinate %d: |correlation| with scipy %.6f < 0.999", n, k, math.Abs(c))
			}
			if math.Abs(info.Eigenvalues[k]-vals[k]) > 1e-8 {
				t.Errorf("n = %d: eigenvalue %d = %.12f, scipy %.12f", n, k, info.Eigenvalues[k], vals[k])
			}
		}
		if !info.Converged || info.Components != 1 {
			t.Errorf("n = %d: info %+v", n, info)
		}
	}
}

// TestSpectralComponents checks the documented handling of a disconnected
// graph: components found, each laid out as its own eigenmap (compared with
// Spectral of the component alone, |correlation| ≥ 0.999, exact slow
// computation as reference), and placed without overlap.
func TestSpectralComponents(t *testing.T) {
	a, b := rectangleAffinity(t, 500, 1), rectangleAffinity(t, 450, 2)
	// Block-diagonal union with one isolated point: components of 500, 450, 1.
	n := a.Rows + b.Rows + 1
	p := &sparse.CSR{Rows: n, Cols: n, RowPtr: make([]int64, n+1)}
	for i := 0; i < n; i++ {
		switch {
		case i < a.Rows:
			cols, vals := a.Row(i)
			p.ColIdx = append(p.ColIdx, cols...)
			p.Val = append(p.Val, vals...)
		case i < a.Rows+b.Rows:
			cols, vals := b.Row(i - a.Rows)
			for k, j := range cols {
				p.ColIdx = append(p.ColIdx, j+int32(a.Rows))
				p.Val = append(p.Val, vals[k])
			}
		}
		p.RowPtr[i+1] = int64(len(p.ColIdx))
	}
	layout, info, err := Spectral(context.Background(), p, 2)
	if err != nil {
		t.Fatal(err)
	}
	if info.Components != 3 || info.Sizes[0] != 500 || info.Sizes[1] != 450 || info.Sizes[2] != 1 {
		t.Fatalf("components %d, sizes %v; want 3: 500, 450, 1", info.Components, info.Sizes)
	}
	var boxes [2][4]float64
	for c, part := range []struct {
		m      *sparse.CSR
		offset int
	}{{a, 0}, {b, a.Rows}} {
		alone, _, err := Spectral(context.Background(), part.m, 2)
		if err != nil {
			t.Fatal(err)
		}
		sub := layout[2*part.offset : 2*(part.offset+part.m.Rows)]
		boxes[c] = [4]float64{math.Inf(1), math.Inf(-1), math.Inf(1), math.Inf(-1)}
		for i := 0; i < part.m.Rows; i++ {
			x, y := float64(sub[2*i]), float64(sub[2*i+1])
			boxes[c] = [4]float64{min(boxes[c][0], x), max(boxes[c][1], x), min(boxes[c][2], y), max(boxes[c][3], y)}
		}
		for k := 0; k < 2; k++ {
			ref := make([]float64, part.m.Rows)
			for i := range ref {
				ref[i] = float64(alone[2*i+k])
			}
			if r := correlation(ref, sub, k); r < 0.999 {
				t.Errorf("component %d, coordinate %d: correlation %.6f with its own eigenmap", c, k, r)
			}
		}
	}
	overlap := boxes[0][0] < boxes[1][1] && boxes[1][0] < boxes[0][1] && boxes[0][2] < boxes[1][3] && boxes[1][2] < boxes[0][3]
	if overlap {
		t.Errorf("components overlap: %v and %v", boxes[0], boxes[1])
	}
}

// TestSpectralDeterministic checks that two calls give the same bytes.
func TestSpectralDeterministic(t *testing.T) {
	p := rectangleAffinity(t, 900, 5)
	a, _, err := Spectral(context.Background(), p, 2)
	if err != nil {
		t.Fatal(err)
	}
	b, _, _ := Spectral(context.Background(), p, 2)
	for i := range a {
		if a[i] != b[i] {
			t.Fatalf("coordinate %d differs between identical calls", i)
		}
	}
}

// TestSpectralInit checks the scaling of the spectral initial layout: the
// eigenmap times 1e-4, so standard deviation 1e-4 over all coordinates
// (common practice for initial layouts).
func TestSpectralInit(t *testing.T) {
	p := rectangleAffinity(t, 500, 6)
	spec, _, err := Spectral(context.Background(), p, 0)
	if err != nil {
		t.Fatal(err)
	}
	init, err := SpectralInit(context.Background(), p, 0)
	if err != nil {
		t.Fatal(err)
	}
	var ss float64
	for i, v := range init {
		if v != spec[i]*1e-4 {
			t.Fatalf("coordinate %d: %g, want %g", i, v, spec[i]*1e-4)
		}
		ss += float64(v) * float64(v)
	}
	if sd := math.Sqrt(ss / float64(len(init))); math.Abs(sd-1e-4) > 1e-9 {
		t.Errorf("standard deviation %.6g, want 1e-4", sd)
	}
}

// TestScaleLike checks orthogonal Procrustes on a constructed case: a layout
// that is a rotated, reflected, scaled and shifted copy of the reference is
// mapped back onto it (exact computation as reference).
func TestScaleLike(t *testing.T) {
	rng := rand.New(rand.NewPCG(4, 4))
	const n = 200
	ref := make([]float32, 2*n)
	for i := range ref {
		ref[i] = float32(10 + 3*rng.NormFloat64())
	}
	// layout = s · R · reflect · (ref − centre) + shift
	c, s := math.Cos(1.1), math.Sin(1.1)
	layout := make([]float32, 2*n)
	for i := 0; i < n; i++ {
		x, y := float64(ref[2*i])-10, -(float64(ref[2*i+1]) - 10)
		layout[2*i] = float32(0.01*(c*x-s*y) - 5)
		layout[2*i+1] = float32(0.01*(s*x+c*y) + 7)
	}
	got, err := ScaleLike(layout, ref)
	if err != nil {
		t.Fatal(err)
	}
	var mean float64
	for _, v := range ref {
		mean += float64(v)
	}
	mean /= 2 * n
	for i := range got {
		if math.Abs(float64(got[i]-ref[i])) > 1e-4*math.Abs(mean) {
			t.Fatalf("coordinate %d: %g, want %g", i, got[i], ref[i])
		}
	}
	if _, err := ScaleLike(layout, ref[:10]); !errors.Is(err, ErrShape) {
		t.Errorf("mismatched lengths: got %v", err)
	}
}
