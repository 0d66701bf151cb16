package affinity

import (
	"context"
	"encoding/binary"
	"errors"
	"fmt"
	"math"
	"math/rand/v2"
	"os"
	"os/exec"
	"path/filepath"
	"slices"
	"strings"
	"testing"

	"lodestone/compute/atlas"
	"lodestone/compute/neighbors"
	"lodestone/compute/sparse"
	"lodestone/internal/pyref"
)

// testGraph returns the exact k-nearest-neighbour graph (neighbors.Exact) of
// n points drawn from a mixture of four Gaussian clusters in dim dimensions.
func testGraph(t *testing.T, n, dim, k int, seed uint64) *neighbors.Graph {
	rng := rand.New(rand.NewPCG(seed, 1))
	x := atlas.NewDense(n, dim)
	for i := 0; i < n; i++ {
		c := float64(i % 4)
		for d := 0; d < dim; d++ {
			x.Data[i*dim+d] = float32(rng.NormFloat64() + 3*c*float64(d%2))
		}
	}
	g, err := neighbors.Exact(context.Background(), x, neighbors.Options{K: k})
	if err != nil {
		t.Fatal(err)
	}
	return g
}

// referenceConditional computes p_j|i for the first k neighbours of point i
// the slow way: bisection on log β over [−50, 50] until the entropy in bits is
// within 1e-12 of log2(perplexity), straight from the definition in
// van der Maaten & Hinton (2008), Section 2.
func referenceConditional(g *neighbors.Graph, i, k int, perplexity float64) []float64 {
	_, dist := g.Neighbors(i)
	p := make([]float64, k)
	entropy := func(beta float64) float64 {
		var s float64
		for a := 0; a < k; a++ {
			d := float64(dist[a])
			p[a] = math.Exp(-beta * (d*d - float64(dist[0])*float64(dist[0])))
			s += p[a]
		}
		var h float64
		for a := range p {
			p[a] /= s
			if p[a] > 0 {
				h -= p[a] * math.Log2(p[a])
			}
		}
		return h
	}
	lo, hi := -50.0, 50.0
	for step := 0; step < 200; step++ {
		mid := (lo + hi) / 2
		h := entropy(math.Exp(mid))
		if math.Abs(h-math.Log2(perplexity)) < 1e-12 {
			break
		}
		if h > math.Log2(perplexity) {
			lo = mid
		} else {
			hi = mid
		}
	}
	return p
}

// dense returns P as a dense matrix.
func dense(p *sparse.CSR) [][]float64 {
	m := make([][]float64, p.Rows)
	for i := range m {
		m[i] = make([]float64, p.Cols)
		cols, vals := p.Row(i)
		for a, j := range cols {
			m[i][j] = float64(vals[a])
		}
	}
	return m
}

// checkStructure verifies what every affinity matrix promises: valid CSR,
// sorted columns, no diagonal, symmetric, non-negative, sum 1.
func checkStructure(t *testing.T, p *sparse.CSR) {
	t.Helper()
	if err := p.Validate(); err != nil {
		t.Fatal(err)
	}
	var sum float64
	for i := 0; i < p.Rows; i++ {
		cols, vals := p.Row(i)
		for a, j := range cols {
			if int(j) == i {
				t.Fatalf("diagonal entry in row %d", i)
			}
			if !(vals[a] > 0) {
				t.Fatalf("entry (%d,%d) = %g, want > 0", i, j, vals[a])
			}
			if p.At(int(j), i) != vals[a] {
				t.Fatalf("P(%d,%d) = %g but P(%d,%d) = %g", i, j, vals[a], j, i, p.At(int(j), i))
			}
			sum += float64(vals[a])
		}
	}
	if math.Abs(sum-1) > 1e-5 {
		t.Fatalf("entries sum to %.8f, want 1", sum)
	}
}

// TestCalibrationEntropy checks the definition of perplexity in
// van der Maaten & Hinton (2008), Section 2: Perp(P_i) = 2^H(P_i) with
// H(P_i) = −Σ_j p_j|i log2 p_j|i. Every point's conditional distribution must
// have entropy log2(perplexity) within 1e-4 bits.
func TestCalibrationEntropy(t *testing.T) {
	g := testGraph(t, 400, 6, 90, 1)
	for _, perp := range []float64{5, 30} {
		k := min(g.K, int(3*perp))
		p, d2 := make([]float64, k), make([]float64, k)
		for i := 0; i < g.N; i++ {
			_, dist := g.Neighbors(i)
			for a := 0; a < k; a++ {
				d2[a] = float64(dist[a]) * float64(dist[a])
			}
			calibrate(p, d2, math.Log2(perp))
			var h, s float64
			for _, v := range p {
				s += v
				if v > 0 {
					h -= v * math.Log2(v)
				}
			}
			if math.Abs(s-1) > 1e-12 {
				t.Fatalf("perplexity %g, point %d: weights sum to %g", perp, i, s)
			}
			if math.Abs(h-math.Log2(perp)) > 1e-4 {
				t.Fatalf("perplexity %g, point %d: entropy %.7f bits, want %.7f", perp, i, h, math.Log2(perp))
			}
		}
	}
}

// TestPerplexityAgainstDefinition compares Perplexity with a slow dense
// computation from the definitions in van der Maaten & Hinton (2008):
// conditional probabilities by bisection to 1e-12 bits and
// p_ij = (p_j|i + p_i|j)/(2N). The calibration stops within 1e-5 bits of the
// target, which moves each weight by a relative amount of order 1e-5 times the
// spread of β·d²; 1e-3 relative bounds it with room for float32 storage.
func TestPerplexityAgainstDefinition(t *testing.T) {
	const perp = 10
	g := testGraph(t, 300, 5, 40, 2)
	p, err := Perplexity(context.Background(), g, perp, 2)
	if err != nil {
		t.Fatal(err)
	}
	checkStructure(t, p)
	k := 30
	ref := make([][]float64, g.N)
	for i := range ref {
		ref[i] = make([]float64, g.N)
	}
	for i := 0; i < g.N; i++ {
		cond := referenceConditional(g, i, k, perp)
		ids, _ := g.Neighbors(i)
		for a := 0; a < k; a++ {
			ref[i][ids[a]] += cond[a] / (2 * float64(g.N))
			ref[ids[a]][i] += cond[a] / (2 * float64(g.N))
		}
	}
	got := dense(p)
	var worst float64
	for i := range ref {
		for j := range ref[i] {
			if (ref[i][j] == 0) != (got[i][j] == 0) {
				t.Fatalf("P(%d,%d) = %g, reference %g: sparsity pattern differs", i, j, got[i][j], ref[i][j])
			}
			if ref[i][j] != 0 {
				worst = max(worst, math.Abs(got[i][j]-ref[i][j])/ref[i][j])
			}
		}
	}
	t.Logf("largest relative difference from the dense reference: %.3g", worst)
	if worst > 1e-3 {
		t.Fatalf("largest relative difference %.3g > 1e-3", worst)
	}
}

// TestPerplexityAgainstSklearn compares P with the joint probabilities that
// scikit-learn's Barnes–Hut t-SNE builds from the same neighbour distances
// (sklearn.manifold._t_sne._joint_probabilities_nn: binary search to an
// entropy tolerance of 1e-5, then (P + Pᵀ)/ΣP). Both searches stop within
// 1e-5 of the target entropy, so entries agree to about 1e-3 relative.
func TestPerplexityAgainstSklearn(t *testing.T) {
	py := pyref.Require(t, "numpy, scipy, sklearn")
	const perp = 30
	g := testGraph(t, 500, 8, 90, 3)
	p, err := Perplexity(context.Background(), g, perp, 0)
	if err != nil {
		t.Fatal(err)
	}
	dir := t.TempDir()
	idx := make([]int32, len(g.Index))
	copy(idx, g.Index)
	writeBin(t, filepath.Join(dir, "idx"), idx)
	writeBin(t, filepath.Join(dir, "dist"), g.Dist)
	script := fmt.Sprintf(`
import numpy as np, scipy.sparse as sp, sklearn
from sklearn.manifold._t_sne import _joint_probabilities_nn
n, k = %d, %d
idx = np.fromfile(%q, dtype='<i4').reshape(n, k)
d = np.fromfile(%q, dtype='<f4').astype(np.float64).reshape(n, k)
D = sp.csr_matrix(((d**2).ravel(), idx.ravel(), np.arange(0, n*k+1, k)), shape=(n, n))
P = _joint_probabilities_nn(D, %g, 0).tocsr()
P.sort_indices()
P.indptr.astype('<i8').tofile(%q)
P.indices.astype('<i4').tofile(%q)
P.data.astype('<f8').tofile(%q)
print(sklearn.__version__)
`, g.N, g.K, filepath.Join(dir, "idx"), filepath.Join(dir, "dist"), float64(perp),
		filepath.Join(dir, "ptr"), filepath.Join(dir, "cols"), filepath.Join(dir, "vals"))
	out, err := exec.Command(py, "-c", script).CombinedOutput()
	if err != nil {
		t.Fatalf("reference script failed: %v\n%s", err, out)
	}
	ptr := readBin[int64](t, filepath.Join(dir, "ptr"))
	cols := readBin[int32](t, filepath.Join(dir, "cols"))
	vals := readBin[float64](t, filepath.Join(dir, "vals"))
	if !slices.Equal(ptr, p.RowPtr) || !slices.Equal(cols, p.ColIdx) {
		t.Fatalf("sparsity pattern differs from scikit-learn %s", strings.TrimSpace(string(out)))
	}
	var worst float64
	for e, v := range vals {
		worst = max(worst, math.Abs(float64(p.Val[e])-v)/v)
	}
	t.Logf("scikit-learn %s: largest relative difference %.3g over %d entries", strings.TrimSpace(string(out)), worst, len(vals))
	if worst > 1e-3 {
		t.Fatalf("largest relative difference from scikit-learn %.3g > 1e-3", worst)
	}
}

func writeBin[T any](t *testing.T, path string, data []T) {
	t.Helper()
	f, err := os.Create(path)
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	if err := binary.Write(f, binary.LittleEndian, data); err != nil {
		t.Fatal(err)
	}
}

func readBin[T int32 | int64 | float64](t *testing.T, path string) []T {
	t.Helper()
	b, err := os.ReadFile(path)
	if err != nil {
		t.Fatal(err)
	}
	var zero T
	out := make([]T, len(b)/binary.Size(zero))
	if err := binary.Read(strings.NewReader(string(b)), binary.LittleEndian, out); err != nil {
		t.Fatal(err)
	}
	return out
}

// TestUniformExact checks Uniform against the dense definition
// p_ij = (1[j∈N_k(i)] + 1[i∈N_k(j)]) / (2Nk) computed directly.
func TestUniformExact(t *testing.T) {
	g := testGraph(t, 200, 4, 20, 4)
	const k = 15
	p, err := Uniform(g, k)
	if err != nil {
		t.Fatal(err)
	}
	checkStructure(t, p)
	got := dense(p)
	for i := 0; i < g.N; i++ {
		for j := 0; j < g.N; j++ {
			var want float64
			if slices.Contains(g.Index[i*g.K:i*g.K+k], int32(j)) {
				want++
			}
			if slices.Contains(g.Index[j*g.K:j*g.K+k], int32(i)) {
				want++
			}
			want /= 2 * float64(g.N) * k
			if math.Abs(got[i][j]-want) > 1e-7*want {
				t.Fatalf("P(%d,%d) = %g, want %g", i, j, got[i][j], want)
			}
		}
	}
}

// TestDuplicatePoints checks the documented handling of zero distances: a
// graph where groups of points coincide still gives finite, calibrated
// affinities. Entropy target: van der Maaten & Hinton (2008).
func TestDuplicatePoints(t *testing.T) {
	g := testGraph(t, 120, 3, 30, 5)
	// Make every point's three nearest neighbours duplicates (distance 0).
	for i := 0; i < g.N; i++ {
		for a := 0; a < 3; a++ {
			g.Dist[i*g.K+a] = 0
		}
	}
	p, err := Perplexity(context.Background(), g, 8, 0)
	if err != nil {
		t.Fatal(err)
	}
	checkStructure(t, p)
	// Entropy still reaches the target: 3 ties < perplexity 8.
	k := 24
	w, d2 := make([]float64, k), make([]float64, k)
	for i := 0; i < g.N; i++ {
		_, dist := g.Neighbors(i)
		for a := range d2 {
			d2[a] = float64(dist[a]) * float64(dist[a])
		}
		if h := calibrate(w, d2, 3); math.Abs(h-3) > 1e-4 {
			t.Fatalf("point %d: entropy %g bits, want 3", i, h)
		}
	}
	// More ties than the perplexity: weights concentrate evenly on the ties.
	for a := range d2 {
		d2[a] = 1
		if a < 12 {
			d2[a] = 0
		}
	}
	calibrate(w, d2, math.Log2(8))
	for a := 0; a < 12; a++ {
		if math.Abs(w[a]-1.0/12) > 1e-6 {
			t.Fatalf("tie %d has weight %g, want 1/12", a, w[a])
		}
	}
	// All distances equal: uniform.
	for a := range d2 {
		d2[a] = 2
	}
	calibrate(w, d2, math.Log2(8))
	for a := range w {
		if math.Abs(w[a]-1.0/float64(k)) > 1e-12 {
			t.Fatalf("equal distances: weight %g, want %g", w[a], 1.0/float64(k))
		}
	}
}

// TestThreadsGiveSameResult checks that the result does not depend on the
// number of threads (common practice for reproducible parallel code).
func TestThreadsGiveSameResult(t *testing.T) {
	g := testGraph(t, 700, 5, 45, 6)
	a, err := Perplexity(context.Background(), g, 15, 1)
	if err != nil {
		t.Fatal(err)
	}
	b, err := Perplexity(context.Background(), g, 15, 3)
	if err != nil {
		t.Fatal(err)
	}
	if !slices.Equal(a.RowPtr, b.RowPtr) || !slices.Equal(a.ColIdx, b.ColIdx) || !slices.Equal(a.Val, b.Val) {
		t.Fatal("1 and 3 threads give different matrices")
	}
}

func TestErrors(t *testing.T) {
	ctx := context.Background()
	fresh := func() *neighbors.Graph { return testGraph(t, 50, 3, 12, 7) }

	g := fresh()
	if _, err := Perplexity(ctx, g, 20, 0); !errors.Is(err, ErrPerplexity) {
		t.Errorf("perplexity above K: got %v, want ErrPerplexity", err)
	}
	for _, perp := range []float64{0.5, math.NaN(), math.Inf(1)} {
		if _, err := Perplexity(ctx, g, perp, 0); !errors.Is(err, ErrPerplexity) {
			t.Errorf("perplexity %g: got %v, want ErrPerplexity", perp, err)
		}
	}
	if _, err := Uniform(g, 13); !errors.Is(err, ErrNeighborCount) {
		t.Errorf("Uniform k > K: got %v", err)
	}
	if _, err := Perplexity(ctx, nil, 3, 0); !errors.Is(err, ErrShape) {
		t.Errorf("nil graph: got %v", err)
	}
	g.Dist = g.Dist[:10]
	if _, err := Perplexity(ctx, g, 3, 0); !errors.Is(err, ErrShape) {
		t.Errorf("short Dist: got %v", err)
	}

	cases := []struct {
		name  string
		edit  func(g *neighbors.Graph)
		want  error
		point int
		nb    int
	}{
		{"self", func(g *neighbors.Graph) { g.Index[7*12+2] = 7 }, ErrNeighbor, 7, 2},
		{"range", func(g *neighbors.Graph) { g.Index[9*12+0] = 50 }, ErrNeighbor, 9, 0},
		{"negative distance", func(g *neighbors.Graph) { g.Dist[3*12+5] = -1 }, ErrDistance, 3, 5},
		{"NaN distance", func(g *neighbors.Graph) { g.Dist[4*12+1] = float32(math.NaN()) }, ErrDistance, 4, 1},
		{"repeat", func(g *neighbors.Graph) { g.Index[20*12+4] = g.Index[20*12+1] }, ErrRepeated, 20, 1},
		{"first of two", func(g *neighbors.Graph) { g.Index[30*12] = 30; g.Dist[11*12] = -2 }, ErrDistance, 11, 0},
	}
	for _, c := range cases {
		g := fresh()
		c.edit(g)
		_, err := Perplexity(ctx, g, 3, 2)
		var ge *GraphError
		if !errors.Is(err, c.want) || !errors.As(err, &ge) || ge.Point != c.point || ge.Neighbor != c.nb {
			t.Errorf("%s: got %v, want %v at point %d, neighbour %d", c.name, err, c.want, c.point, c.nb)
		}
	}

	cancelled, cancel := context.WithCancel(ctx)
	cancel()
	if _, err := Perplexity(cancelled, fresh(), 3, 0); !errors.Is(err, context.Canceled) {
		t.Errorf("cancelled context: got %v", err)
	}
}
