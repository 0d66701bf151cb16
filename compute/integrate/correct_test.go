package integrate

import (
	"context"
	"math"
	"math/rand/v2"
	"testing"

	"gonum.org/v1/gonum/mat"
)

// TestCorrectionIsTheRidgeMixture checks the correction step against a
// direct float64 evaluation of (6) and (7) with gonum (dense Φ*, a solve
// per cluster), for two batch columns (so Σ_i R_ki Φ*_i Φ*_iᵀ has
// cross terms) and random assignments.
func TestCorrectionIsTheRidgeMixture(t *testing.T) {
	withPortable(t, func(t *testing.T) {
		const n, d, K = 500, 7, 5
		rng := rand.New(rand.NewPCG(11, 12))
		p := newPlanted(n, d, 4, 3, 3, 1, 13)
		second := make([]int32, n)
		for i := range second {
			second[i] = int32(rng.IntN(2))
		}
		covs := []Covariate{p.covariate(),
			{Name: "protocol", Levels: []string{"x", "y"}, Codes: second, Theta: 1, Lambda: 0.5}}
		h := newTestHarmony(t, p.z, covs, Options{Seed: 1, Clusters: K})
		// Random assignments, by input row.
		R := mat.NewDense(n, K, nil)
		for i := 0; i < n; i++ {
			var s float64
			for k := 0; k < K; k++ {
				v := float64(float32(rng.Float64() + 0.01))
				R.Set(i, k, v)
				s += v
			}
			for k := 0; k < K; k++ {
				R.Set(i, k, float64(float32(R.At(i, k)/s)))
			}
		}
		for s, i := range h.order {
			for k := 0; k < K; k++ {
				h.r[s*h.kp+k] = float32(R.At(int(i), k))
			}
		}
		if err := h.correct(context.Background()); err != nil {
			t.Fatal(err)
		}

		// Φ*: intercept, 3 levels of the first column, 2 of the second.
		L := 5
		phi := mat.NewDense(n, L+1, nil)
		Z := mat.NewDense(n, d, nil)
		for i := 0; i < n; i++ {
			phi.Set(i, 0, 1)
			phi.Set(i, 1+int(p.batch[i]), 1)
			phi.Set(i, 4+int(second[i]), 1)
			for j := 0; j < d; j++ {
				Z.Set(i, j, float64(p.z.At(i, j)))
			}
		}
		lambda := []float64{0, 1, 1, 1, 0.5, 0.5}
		want := mat.DenseCopyOf(Z)
		for k := 0; k < K; k++ {
			wphi := mat.DenseCopyOf(phi) // diag(R_k) Φ*
			for i := 0; i < n; i++ {
				for l := 0; l <= L; l++ {
					wphi.Set(i, l, wphi.At(i, l)*R.At(i, k))
				}
			}
			var a, rhs, w mat.Dense
			a.Mul(phi.T(), wphi)
			for l := range lambda {
				a.Set(l, l, a.At(l, l)+lambda[l])
			}
			rhs.Mul(wphi.T(), Z)
			if err := w.Solve(&a, &rhs); err != nil {
				t.Fatal(err)
			}
			for j := 0; j < d; j++ {
				w.Set(0, j, 0) // the intercept stays
			}
			var corr mat.Dense
			corr.Mul(phi, &w)
			for i := 0; i < n; i++ {
				for j := 0; j < d; j++ {
					want.Set(i, j, want.At(i, j)-R.At(i, k)*corr.At(i, j))
				}
			}
		}
		for i := 0; i < n; i++ {
			var norm float64
			for j := 0; j < d; j++ {
				got, w := float64(h.out.At(i, j)), want.At(i, j)
				if math.Abs(got-w) > 1e-4*(1+math.Abs(w)) {
					t.Fatalf("cell %d, component %d: corrected %v, want %v", i, j, got, w)
				}
				norm += w * w
			}
			// The scaled copy used for clustering has unit length.
			s := int(slicesIndex(h.order, int32(i)))
			var u float64
			for _, v := range h.zcos[s*h.dz : s*h.dz+d] {
				u += float64(v) * float64(v)
			}
			if math.Abs(u-1) > 1e-5 {
				t.Fatalf("cell %d: scaled components have squared length %v", i, u)
			}
		}
	})
}

func slicesIndex(s []int32, v int32) int {
	for i, x := range s {
		if x == v {
			return i
		}
	}
	return -1
}
