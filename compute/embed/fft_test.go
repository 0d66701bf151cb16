package embed

import (
	"fmt"
	"math"
	"math/cmplx"
	"math/rand/v2"
	"testing"

	"gonum.org/v1/gonum/dsp/fourier"
)

// fftLengths returns the lengths the interpolated repulsion may use up to
// max: the numbers whose only prime factors are 2, 3 and 5.
func fftLengths(max int) []int {
	var ls []int
	for n := 1; n <= max; n++ {
		m := n
		for _, f := range []int{2, 3, 5} {
			for m%f == 0 {
				m /= f
			}
		}
		if m == 1 {
			ls = append(ls, n)
		}
	}
	return ls
}

// directDFT returns Σ_j x_j·exp(∓2πi·jk/n) for every k, summed with
// compensation, the roots taken at jk mod n.
func directDFT(x []complex128, inverse bool) []complex128 {
	n := len(x)
	out := make([]complex128, n)
	for k := range out {
		var sum, comp complex128
		for j, v := range x {
			w := unitRoot(j*k%n, n)
			if inverse {
				w = cmplx.Conj(w)
			}
			t := v*w - comp
			s := sum + t
			comp = (s - sum) - t
			sum = s
		}
		out[k] = sum
	}
	return out
}

// relErr returns max_k |got_k − want_k| / max_k |want_k|.
func relErr(got, want []complex128) float64 {
	var e, m float64
	for k := range want {
		e = math.Max(e, cmplx.Abs(got[k]-want[k]))
		m = math.Max(m, cmplx.Abs(want[k]))
	}
	return e / m
}

func randomComplex(rng *rand.Rand, n int) []complex128 {
	x := make([]complex128, n)
	for i := range x {
		x[i] = complex(rng.NormFloat64(), rng.NormFloat64())
	}
	return x
}

// TestComplexFFT checks cplan's forward and backward transforms against the
// direct sums (every length with prime factors 2, 3 and 5 up to 500, and
// longer ones up to 2,000 by steps) and against gonum's transforms
// (fourier.CmplxFFT, every such length up to 4,096), to 1e-12 relative to
// the largest coefficient.
func TestComplexFFT(t *testing.T) {
	rng := rand.New(rand.NewPCG(1, 2))
	for _, n := range fftLengths(4096) {
		p := newCPlan(n)
		x := randomComplex(rng, n)
		work := make([]complex128, n)
		ref := fourier.NewCmplxFFT(n)
		for _, inverse := range []bool{false, true} {
			got := append([]complex128(nil), x...)
			p.transform(got, work, inverse)
			var want []complex128
			if inverse {
				want = ref.Sequence(nil, x)
			} else {
				want = ref.Coefficients(nil, x)
			}
			if e := relErr(got, want); e > 1e-12 {
				t.Errorf("n %d, inverse %v: relative error %.3g against gonum", n, inverse, e)
			}
			if n <= 500 || n%97 == 0 || n == 2000 || n == 1944 {
				if e := relErr(got, directDFT(x, inverse)); e > 1e-12 {
					t.Errorf("n %d, inverse %v: relative error %.3g against the direct sums", n, inverse, e)
				}
			}
		}
	}
}

// TestRealFFT checks rplan against the direct sums and gonum's real
// transforms (fourier.FFT) for every even length with prime factors 2, 3 and
// 5 up to 4,096: the coefficients of a sequence padded with zeros, and the
// first values of the sequence of a half spectrum, to 1e-12 relative.
func TestRealFFT(t *testing.T) {
	rng := rand.New(rand.NewPCG(3, 4))
	for _, n := range fftLengths(4096) {
		if n%2 != 0 {
			continue
		}
		p := newRPlan(n)
		ref := fourier.NewFFT(n)
		work := make([]complex128, n)
		h := n / 2
		// Coefficients of x followed by zeros.
		m := max(1, h-rng.IntN(h/2+1))
		x := make([]float64, m)
		for i := range x {
			x[i] = rng.NormFloat64()
		}
		padded := make([]float64, n)
		copy(padded, x)
		got := make([]complex128, h+1)
		p.coefficients(got, x, work)
		want := ref.Coefficients(nil, padded)
		if e := relErr(got, want); e > 1e-12 {
			t.Errorf("n %d: coefficients' relative error %.3g against gonum", n, e)
		}
		direct := func() []complex128 {
			c := make([]complex128, n)
			for i, v := range padded {
				c[i] = complex(v, 0)
			}
			return directDFT(c, false)[:h+1]
		}
		if n <= 500 || n%97 == 0 {
			if e := relErr(got, direct()); e > 1e-12 {
				t.Errorf("n %d: coefficients' relative error %.3g against the direct sums", n, e)
			}
		}
		// The sequence of a half spectrum (X_0 and X_h real).
		spec := randomComplex(rng, h+1)
		spec[0], spec[h] = complex(real(spec[0]), 0), complex(real(spec[h]), 0)
		seq := make([]float64, m)
		p.sequence(seq, spec, work)
		wantSeq := ref.Sequence(nil, spec)
		var e, big float64
		for i, v := range seq {
			e = math.Max(e, math.Abs(v-wantSeq[i]))
		}
		for _, v := range wantSeq {
			big = math.Max(big, math.Abs(v))
		}
		if e/big > 1e-12 {
			t.Errorf("n %d: sequence's relative error %.3g against gonum", n, e/big)
		}
		if n <= 500 || n%97 == 0 {
			full := make([]complex128, n)
			copy(full, spec)
			for k := h + 1; k < n; k++ {
				full[k] = cmplx.Conj(spec[n-k])
			}
			d := directDFT(full, true)
			e = 0
			for i, v := range seq {
				e = math.Max(e, math.Abs(v-real(d[i])))
			}
			if e/big > 1e-12 {
				t.Errorf("n %d: sequence's relative error %.3g against the direct sums", n, e/big)
			}
		}
	}
}

// TestUnitRoot checks the roots of unity at the multiples of π/4 (to the
// last bit, ±1 and ±i exactly), elsewhere against math.Sincos, and their
// period.
func TestUnitRoot(t *testing.T) {
	r := math.Sqrt(0.5)
	for k, want := range []complex128{1, complex(r, -r), -1i, complex(-r, -r), -1, complex(-r, r), 1i, complex(r, r)} {
		if got := unitRoot(k, 8); cmplx.Abs(got-want) > 2e-16 || (k%2 == 0 && got != want) {
			t.Errorf("W_8^%d = %v, want %v", k, got, want)
		}
		if got := unitRoot(3*k, 24); cmplx.Abs(got-want) > 2e-16 || (k%2 == 0 && got != want) {
			t.Errorf("W_24^%d = %v, want %v", 3*k, got, want)
		}
	}
	for n := 1; n < 200; n++ {
		for k := 0; k < n; k++ {
			s, c := math.Sincos(-2 * math.Pi * float64(k) / float64(n))
			got := unitRoot(k, n)
			if cmplx.Abs(got-complex(c, s)) > 4e-15 { // the reference's angle is rounded
				t.Fatalf("W_%d^%d = %v, want %v", n, k, got, complex(c, s))
			}
			if again := unitRoot(k+3*n, n); again != got {
				t.Fatalf("W_%d^%d = %v, W_%d^%d = %v", n, k+3*n, again, n, k, got)
			}
		}
	}
}

// BenchmarkFFT times one forward complex transform and one real transform
// there and back, of lengths the 70k map's grid uses, with cplan and rplan
// and with gonum's transforms.
func BenchmarkFFT(b *testing.B) {
	rng := rand.New(rand.NewPCG(5, 6))
	for _, n := range []int{216, 432, 810} {
		x, buf := randomComplex(rng, n), make([]complex128, n)
		r, out := make([]float64, n), make([]float64, n)
		for i := range r {
			r[i] = rng.NormFloat64()
		}
		spec := make([]complex128, n/2+1)
		work := make([]complex128, n)
		b.Run(fmt.Sprintf("complex%d", n), func(b *testing.B) {
			p := newCPlan(n)
			for i := 0; i < b.N; i++ {
				copy(buf, x)
				p.transform(buf, work, false)
			}
		})
		b.Run(fmt.Sprintf("complex%d-gonum", n), func(b *testing.B) {
			p := fourier.NewCmplxFFT(n)
			for i := 0; i < b.N; i++ {
				p.Coefficients(buf, x)
			}
		})
		b.Run(fmt.Sprintf("real%d", n), func(b *testing.B) {
			p := newRPlan(n)
			for i := 0; i < b.N; i++ {
				p.coefficients(spec, r, work)
				p.sequence(out, spec, work)
			}
		})
		b.Run(fmt.Sprintf("real%d-gonum", n), func(b *testing.B) {
			p := fourier.NewFFT(n)
			for i := 0; i < b.N; i++ {
				p.Coefficients(spec, r)
				p.Sequence(out, spec)
			}
		})
	}
}
