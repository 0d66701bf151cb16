package integrate

import (
	"math"
	"math/rand/v2"
	"testing"
)

// withPortable runs f with the AVX2 kernels and, where they exist, again
// with the portable ones.
func withPortable(t *testing.T, f func(t *testing.T)) {
	t.Run("default", f)
	if haveAVX2 {
		t.Run("portable", func(t *testing.T) {
			setAVX2(false)
			defer setAVX2(true)
			f(t)
		})
	}
}

func randomSlice(rng *rand.Rand, n int) []float32 {
	v := make([]float32, n)
	for i := range v {
		v[i] = float32(rng.NormFloat64())
	}
	return v
}

// TestMatrixKernel compares mm6x16 with the float64 sum of its definition,
// for a read by rows and by columns, several tiles and p = 0 (the bound is
// the float32 rounding of p products, common practice: p·2⁻²⁴·Σ|terms|).
func TestMatrixKernel(t *testing.T) {
	withPortable(t, func(t *testing.T) {
		rng := rand.New(rand.NewPCG(1, 2))
		for _, tc := range []struct{ rs, ps, p, nt, ldb, ldc int }{
			{rs: 37, ps: 1, p: 37, nt: 3, ldb: 48, ldc: 50},
			{rs: 1, ps: 41, p: 200, nt: 2, ldb: 32, ldc: 32},
			{rs: 9, ps: 1, p: 1, nt: 1, ldb: 16, ldc: 16},
			{rs: 3, ps: 1, p: 0, nt: 1, ldb: 16, ldc: 16},
		} {
			a := randomSlice(rng, 6*tc.rs+tc.p*tc.ps+1)
			b := randomSlice(rng, max(tc.p, 1)*tc.ldb)
			c := randomSlice(rng, 6*tc.ldc) // overwritten
			mm6x16(a, tc.rs, tc.ps, b, tc.ldb, c, tc.ldc, tc.p, tc.nt)
			for r := 0; r < 6; r++ {
				for q := 0; q < 16*tc.nt; q++ {
					var want, mag float64
					for s := 0; s < tc.p; s++ {
						x := float64(a[r*tc.rs+s*tc.ps]) * float64(b[s*tc.ldb+q])
						want += x
						mag += math.Abs(x)
					}
					got := float64(c[r*tc.ldc+q])
					if math.Abs(got-want) > float64(tc.p+1)*0x1p-24*mag {
						t.Fatalf("%+v: c[%d][%d] = %v, want %v", tc, r, q, got, want)
					}
				}
			}
		}
	})
}

// TestExpNonPositive checks the polynomial exponential against math.Exp.
func TestExpNonPositive(t *testing.T) {
	for x := -700.0; x <= 0; x += 0.0137 {
		want := math.Exp(x)
		if got := expNonPositive(x); math.Abs(got-want) > 1e-8*want {
			t.Fatalf("exp(%v) = %v, want %v", x, got, want)
		}
	}
	if expNonPositive(-800) != 0 || expNonPositive(0) != 1 {
		t.Fatal("exp(−800) must be 0 and exp(0) 1")
	}
}

// TestSoftmaxRow checks one cell's assignments and sums against float64
// evaluations of their definitions, for several numbers of clusters
// (multiples of 8 and not).
func TestSoftmaxRow(t *testing.T) {
	withPortable(t, func(t *testing.T) {
		rng := rand.New(rand.NewPCG(3, 4))
		for _, k := range []int{1, 7, 8, 13, 100} {
			n := (k + 15) / 16 * 16
			dots := randomSlice(rng, n)
			lp := randomSlice(rng, n)
			for j := range dots {
				dots[j] = float32(math.Tanh(float64(dots[j]))) // cosines
				if j >= k {
					dots[j], lp[j] = 0, 0
				}
			}
			const scale = 20
			r := randomSlice(rng, n)
			sums := make([]float64, n)
			for j := range sums {
				sums[j] = 1
			}
			s, t0, t1, t2 := softmaxRow(dots, lp, r, sums, k, scale)
			a := make([]float64, k)
			m := math.Inf(-1)
			for j := range a {
				a[j] = float64(dots[j])*scale + float64(lp[j])
				m = max(m, a[j])
			}
			var ws float64
			for j := range a {
				ws += math.Exp(a[j] - m)
			}
			var w0, w1, w2 float64
			for j := range a {
				rj := math.Exp(a[j]-m) / ws
				w0 += rj
				w1 += rj * (a[j] - m)
				w2 += rj * float64(dots[j])
				// The argument a_j − m is formed in single precision: its
				// rounding, up to 2⁻²⁴(|a_j| + |m|) twice, moves r_j by
				// that share; the polynomial adds a few units in the last
				// place.
				tol := 4*0x1p-24*(math.Abs(a[j])+math.Abs(m)) + 1e-6
				if math.Abs(float64(r[j])-rj) > tol*max(rj, 1e-30)+1e-12 {
					t.Fatalf("k %d: r[%d] = %v, want %v", k, j, r[j], rj)
				}
				if math.Abs(sums[j]-1-rj) > 1e-6 {
					t.Fatalf("k %d: sums[%d] grew by %v, want %v", k, j, sums[j]-1, rj)
				}
			}
			for j := k; j < (k+7)/8*8; j++ {
				if r[j] != 0 || sums[j] != 1 {
					t.Fatalf("k %d: padding %d: r %v, sums %v", k, j, r[j], sums[j])
				}
			}
			for _, c := range []struct {
				name      string
				got, want float64
			}{{"s", float64(s), ws}, {"t0", float64(t0), w0}, {"t1", float64(t1), w1}, {"t2", float64(t2), w2}} {
				if math.Abs(c.got-c.want) > 4*0x1p-24*float64(k)*(scale+2+math.Abs(m))*max(1, math.Abs(c.want)) {
					t.Fatalf("k %d: %s = %v, want %v", k, c.name, c.got, c.want)
				}
			}
		}
	})
}

// TestCholSolve solves a small system whose solution is known.
func TestCholSolve(t *testing.T) {
	// A = LLᵀ with L = [[2,0,0],[1,3,0],[−1,2,1]]; X = [[1,2],[0,−1],[3,1]].
	a := []float64{4, 2, -2, 2, 10, 5, -2, 5, 6}
	x := []float64{1, 2, 0, -1, 3, 1}
	b := make([]float64, 6)
	for i := 0; i < 3; i++ {
		for q := 0; q < 2; q++ {
			for p := 0; p < 3; p++ {
				b[i*2+q] += a[i*3+p] * x[p*2+q]
			}
		}
	}
	if !cholSolve(a, 3, b, 2) {
		t.Fatal("positive definite matrix refused")
	}
	for i := range x {
		if math.Abs(b[i]-x[i]) > 1e-12 {
			t.Fatalf("x = %v, want %v", b, x)
		}
	}
	if cholSolve([]float64{1, 2, 2, 1}, 2, []float64{1, 1}, 1) {
		t.Fatal("indefinite matrix accepted")
	}
}
