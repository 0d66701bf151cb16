package embed

import (
	"context"
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

// smallCase returns the perplexity-5 affinities of n random points in 5-D
// and a random layout of extent about 4.
func smallCase(t *testing.T, n int, seed uint64) (*sparse.CSR, []float64) {
	t.Helper()
	rng := rand.New(rand.NewPCG(seed, 9))
	x := atlas.NewDense(n, 5)
	for i := range x.Data {
		x.Data[i] = float32(rng.NormFloat64())
	}
	g := exactKNN(t, x, 15)
	p, err := affinity.Perplexity(context.Background(), g, 5, 0)
	if err != nil {
		t.Fatal(err)
	}
	y := make([]float64, 2*n)
	for i := range y {
		y[i] = rng.NormFloat64()
	}
	return p, y
}

// gradient returns ∂C_ρ/∂y = 4 [ρ/ΣP · Σ_j p_ij u_ij (y_i − y_j) − (1/Z) Σ_j w_ij u_ij (y_i − y_j)]
// for the kernel of tail α (u = 1/(1 + d²/α), w = u^α) from the optimiser's
// own parts (attract and ExactRepulsion).
func gradient(p *sparse.CSR, y []float64, rho, tail float64) []float64 {
	a, _ := checkAffinity(p, len(y)/2, 1)
	attr, rep := make([]float64, len(y)), make([]float64, len(y))
	attract(attr, y, p, tail, nil, nil, 1, never)
	z := ExactRepulsion(rep, y, tail, 1)
	g := make([]float64, len(y))
	for k := range g {
		g[k] = 4 * (rho/a.sum*attr[k] - rep[k]/z)
	}
	return g
}

// objective returns C_ρ(Y) = ρ·KL(P‖Q) + (1−ρ)·log Z for the kernel of tail
// α, computed directly from its definition in O(N²) with math.Pow:
// KL = Σ p̃_ij log(p̃_ij Z / w_ij), w_ij = (1 + |y_i − y_j|²/α)^(−α).
func objective(p *sparse.CSR, y []float64, rho, tail float64) float64 {
	n := len(y) / 2
	w := func(i, j int) float64 {
		dx, dy := y[2*i]-y[2*j], y[2*i+1]-y[2*j+1]
		if tail == 1 {
			return 1 / (1 + dx*dx + dy*dy) // the same, without the power's cost
		}
		return math.Pow(1+(dx*dx+dy*dy)/tail, -tail)
	}
	var z, sum float64
	for i := 0; i < n; i++ {
		for j := 0; j < n; j++ {
			if i != j {
				z += w(i, j)
			}
		}
	}
	for _, v := range p.Val {
		sum += float64(v)
	}
	var kl float64
	for i := 0; i < n; i++ {
		cols, vals := p.Row(i)
		for k, j := range cols {
			if v := float64(vals[k]) / sum; v > 0 {
				kl += v * math.Log(v*z/w(i, int(j)))
			}
		}
	}
	return rho*kl + (1-rho)*math.Log(z)
}

// TestGradientFiniteDifferences checks the gradient of the attraction-scaled
// objective against central finite differences of the objective itself
// (exact slow computation): C_ρ(Y) = ρ·KL(P‖Q) + (1−ρ)·log Z, whose gradient
// is 4[ρ Σ_j p_ij u_ij (y_i − y_j) − (1/Z) Σ_j w_ij u_ij (y_i − y_j)]
// (van der Maaten & Hinton 2008 for ρ = 1 and α = 1; the heavy-tailed
// kernel of "Heavy-tailed kernels reveal a finer cluster structure in t-SNE
// visualisations", ECML PKDD 2019, for other α), at tails from MinTail to
// MaxTail and attractions below, at and above 1. Step 1e-5: the truncation
// error is of order 1e-10 and the rounding error of order 1e-11 relative to
// the largest component, so agreement to 1e-6 of the largest component is
// required.
func TestGradientFiniteDifferences(t *testing.T) {
	p, y := smallCase(t, 30, 1)
	for _, tail := range []float64{1, 0.5, 3, MinTail, MaxTail} {
		for _, rho := range []float64{1, 4, 0.5} {
			g := gradient(p, y, rho, tail)
			var scale float64
			for _, v := range g {
				scale = max(scale, math.Abs(v))
			}
			const step = 1e-5
			for k := range y {
				saved := y[k]
				y[k] = saved + step
				up := objective(p, y, rho, tail)
				y[k] = saved - step
				down := objective(p, y, rho, tail)
				y[k] = saved
				fd := (up - down) / (2 * step)
				if math.Abs(fd-g[k]) > 1e-6*scale {
					t.Fatalf("α = %g, ρ = %g, coordinate %d: gradient %.9g, finite difference %.9g", tail, rho, k, g[k], fd)
				}
			}
		}
	}
}

// TestKLAndGradientAgainstSklearn compares KL and the ρ = 1 gradient with
// scikit-learn's exact t-SNE objective, sklearn.manifold._t_sne._kl_divergence
// (degrees of freedom 1), on the same P and layout: both to 1e-9 relative.
func TestKLAndGradientAgainstSklearn(t *testing.T) {
	py := pyref.Require(t, "numpy, scipy, sklearn")
	p, y := smallCase(t, 40, 2)
	n := p.Rows
	layout := make([]float32, len(y))
	for k, v := range y {
		layout[k] = float32(v)
		y[k] = float64(layout[k]) // both sides use the float32 layout KL sees
	}
	dir := t.TempDir()
	// P as a dense matrix and the layout, as text.
	var dense, lay strings.Builder
	for i := 0; i < n; i++ {
		for j := 0; j < n; j++ {
			fmt.Fprintf(&dense, "%.17g ", p.At(i, j))
		}
		dense.WriteString("\n")
		fmt.Fprintf(&lay, "%.17g %.17g\n", y[2*i], y[2*i+1])
	}
	writeText(t, filepath.Join(dir, "p"), dense.String())
	writeText(t, filepath.Join(dir, "y"), lay.String())
	script := `
import sys, numpy as np
from scipy.spatial.distance import squareform
from sklearn.manifold._t_sne import _kl_divergence
P = np.loadtxt(sys.argv[1]); Y = np.loadtxt(sys.argv[2])
P = P / P.sum()
kl, grad = _kl_divergence(Y.ravel(), squareform(P, checks=False), 1, Y.shape[0], 2)
print("%.17g" % kl)
print(" ".join("%.17g" % g for g in grad))
`
	out, err := exec.Command(py, "-c", script, filepath.Join(dir, "p"), filepath.Join(dir, "y")).CombinedOutput()
	if err != nil {
		t.Fatalf("reference script: %v\n%s", err, out)
	}
	lines := strings.Split(strings.TrimSpace(string(out)), "\n")
	refKL, _ := strconv.ParseFloat(lines[0], 64)
	kl, err := KL(p, layout, 1, 0)
	if err != nil {
		t.Fatal(err)
	}
	g := gradient(p, y, 1, 1)
	t.Logf("KL %.12f, scikit-learn %.12f", kl, refKL)
	if math.Abs(kl-refKL) > 1e-9*refKL {
		t.Errorf("KL %.15g, scikit-learn %.15g", kl, refKL)
	}
	var scale float64
	for _, v := range g {
		scale = max(scale, math.Abs(v))
	}
	for k, f := range strings.Fields(lines[1]) {
		ref, _ := strconv.ParseFloat(f, 64)
		if math.Abs(g[k]-ref) > 1e-9*scale {
			t.Fatalf("gradient component %d: %.15g, scikit-learn %.15g", k, g[k], ref)
		}
	}
}
