package embed

import "math"

// The interpolated repulsion's FFTs: complex transforms of one length whose
// only prime factors are 2, 3 and 5 (the padded grid's columns), and real
// transforms of even such lengths (its rows), as a complex transform of half
// the length. Their tables are made once per grid size and shared by the
// team's goroutines; each goroutine brings its own scratch lines.

// cplan is the discrete Fourier transform of length n,
//
//	X_k = Σ_{j<n} x_j·exp(∓2πi·jk/n),
//
// by Stockham's self-sorting algorithm, decimation in frequency: a stage of
// radix R takes s interleaved sequences of length l (element j of sequence q
// at q + s·j) to R·s sequences of length l/R,
//
//	y[q + s·(R·p + r)] = W_l^{p·r} · Σ_{t<R} x[q + s·(p + t·l/R)]·W_R^{t·r},
//
// W_l = exp(∓2πi/l), and after the last stage the n sequences of length 1
// are X in natural order. The radices are 4 while 4 divides what is left,
// then 2, 3 and 5.
type cplan struct {
	n     int
	radix []int
	// Per stage, the twiddles W_l^{p·r} for p < l/R, 1 ≤ r < R at
	// p·(R−1) + r − 1: tw of the forward transform, twInv (conjugates) of
	// the backward one.
	tw, twInv [][]complex128
}

// newCPlan returns the plan of length n ≥ 1, whose only prime factors must
// be 2, 3 and 5.
func newCPlan(n int) *cplan {
	p := &cplan{n: n}
	for l := n; l > 1; {
		var r int
		switch {
		case l%4 == 0:
			r = 4
		case l%2 == 0:
			r = 2
		case l%3 == 0:
			r = 3
		case l%5 == 0:
			r = 5
		default:
			panic("embed: FFT length with a prime factor above 5")
		}
		m := l / r
		tw, inv := make([]complex128, m*(r-1)), make([]complex128, m*(r-1))
		for q := 0; q < m; q++ {
			for j := 1; j < r; j++ {
				w := unitRoot(q*j, l)
				tw[q*(r-1)+j-1], inv[q*(r-1)+j-1] = w, complex(real(w), -imag(w))
			}
		}
		p.radix = append(p.radix, r)
		p.tw, p.twInv = append(p.tw, tw), append(p.twInv, inv)
		l = m
	}
	return p
}

// unitRoot returns W_n^k = exp(−2πi·k/n).
func unitRoot(k, n int) complex128 {
	c, s := cosSin(k%n, n)
	return complex(c, -s)
}

// cosSin returns cos θ and sin θ, θ = 2π·a/b, 0 ≤ a < b, from an angle in
// [0, π/4] by the symmetries of cos and sin, so that the roots of unity at
// multiples of π/4 come out exact or symmetric.
func cosSin(a, b int) (float64, float64) {
	switch {
	case 2*a > b: // θ = 2π − φ
		c, s := cosSin(b-a, b)
		return c, -s
	case 4*a > b: // θ = π − φ, φ = 2π·(b−2a)/(2b)
		c, s := cosSin(b-2*a, 2*b)
		return -c, s
	case 8*a > b: // θ = π/2 − φ, φ = 2π·(b−4a)/(4b)
		c, s := cosSin(b-4*a, 4*b)
		return s, c
	}
	s, c := math.Sincos(2 * math.Pi * float64(a) / float64(b))
	return c, s
}

// transform computes the forward (inverse false) or backward transform of
// x[:n] in place, unnormalised, with work[:n] as scratch.
func (p *cplan) transform(x, work []complex128, inverse bool) {
	a, b := x[:p.n], work[:p.n]
	s, l := 1, p.n
	for st, r := range p.radix {
		m := l / r
		tw := p.tw[st]
		if inverse {
			tw = p.twInv[st]
		}
		switch r {
		case 4:
			radix4(b, a, tw, m, s, inverse)
		case 2:
			radix2(b, a, tw, m, s)
		case 3:
			radix3(b, a, tw, m, s, inverse)
		case 5:
			radix5(b, a, tw, m, s, inverse)
		}
		a, b = b, a
		s *= r
		l = m
	}
	if len(p.radix)%2 == 1 {
		copy(x[:p.n], a)
	}
}

// timesI returns i·z, or −i·z when neg.
func timesI(z complex128, neg bool) complex128 {
	if neg {
		return complex(imag(z), -real(z))
	}
	return complex(-imag(z), real(z))
}

// radix2 is a stage of radix 2 of cplan.transform from x into y.
func radix2(y, x, tw []complex128, m, s int) {
	for p := 0; p < m; p++ {
		w := tw[p]
		x0, x1 := x[s*p:s*p+s], x[s*(p+m):s*(p+m)+s]
		y0, y1 := y[2*s*p:2*s*p+s], y[2*s*p+s:2*s*p+2*s]
		for q := range x0 {
			a0, a1 := x0[q], x1[q]
			y0[q], y1[q] = a0+a1, (a0-a1)*w
		}
	}
}

// radix4 is a stage of radix 4 of cplan.transform from x into y; W_4 = ∓i.
func radix4(y, x, tw []complex128, m, s int, inverse bool) {
	neg := !inverse
	for p := 0; p < m; p++ {
		w1, w2, w3 := tw[3*p], tw[3*p+1], tw[3*p+2]
		x0, x1 := x[s*p:s*p+s], x[s*(p+m):s*(p+m)+s]
		x2, x3 := x[s*(p+2*m):s*(p+2*m)+s], x[s*(p+3*m):s*(p+3*m)+s]
		o := 4 * s * p
		y0, y1, y2, y3 := y[o:o+s], y[o+s:o+2*s], y[o+2*s:o+3*s], y[o+3*s:o+4*s]
		for q := range x0 {
			a0, a1, a2, a3 := x0[q], x1[q], x2[q], x3[q]
			t0, t1 := a0+a2, a0-a2
			t2, t3 := a1+a3, timesI(a1-a3, neg)
			y0[q] = t0 + t2
			y1[q] = (t1 + t3) * w1
			y2[q] = (t0 - t2) * w2
			y3[q] = (t1 - t3) * w3
		}
	}
}

// Constants of the radix-3 and radix-5 butterflies: sin(2π/3), cos and sin
// of 2π/5 and 4π/5.
var (
	sin3         = math.Sqrt(3) / 2
	cos5a, sin5a = cosSin(1, 5)
	cos5b, sin5b = cosSin(2, 5)
)

// radix3 is a stage of radix 3 of cplan.transform from x into y.
func radix3(y, x, tw []complex128, m, s int, inverse bool) {
	neg := !inverse
	for p := 0; p < m; p++ {
		w1, w2 := tw[2*p], tw[2*p+1]
		x0, x1, x2 := x[s*p:s*p+s], x[s*(p+m):s*(p+m)+s], x[s*(p+2*m):s*(p+2*m)+s]
		o := 3 * s * p
		y0, y1, y2 := y[o:o+s], y[o+s:o+2*s], y[o+2*s:o+3*s]
		for q := range x0 {
			a0, a1, a2 := x0[q], x1[q], x2[q]
			t := a1 + a2
			c := a0 - t*0.5
			u := timesI((a1-a2)*complex(sin3, 0), neg)
			y0[q] = a0 + t
			y1[q] = (c + u) * w1
			y2[q] = (c - u) * w2
		}
	}
}

// radix5 is a stage of radix 5 of cplan.transform from x into y.
func radix5(y, x, tw []complex128, m, s int, inverse bool) {
	neg := !inverse
	for p := 0; p < m; p++ {
		w1, w2, w3, w4 := tw[4*p], tw[4*p+1], tw[4*p+2], tw[4*p+3]
		x0, x1 := x[s*p:s*p+s], x[s*(p+m):s*(p+m)+s]
		x2, x3 := x[s*(p+2*m):s*(p+2*m)+s], x[s*(p+3*m):s*(p+3*m)+s]
		x4 := x[s*(p+4*m) : s*(p+4*m)+s]
		o := 5 * s * p
		y0, y1, y2 := y[o:o+s], y[o+s:o+2*s], y[o+2*s:o+3*s]
		y3, y4 := y[o+3*s:o+4*s], y[o+4*s:o+5*s]
		for q := range x0 {
			a0, a1, a2, a3, a4 := x0[q], x1[q], x2[q], x3[q], x4[q]
			t1, t2, d1, d2 := a1+a4, a2+a3, a1-a4, a2-a3
			c1 := a0 + t1*complex(cos5a, 0) + t2*complex(cos5b, 0)
			c2 := a0 + t1*complex(cos5b, 0) + t2*complex(cos5a, 0)
			u1 := timesI(d1*complex(sin5a, 0)+d2*complex(sin5b, 0), neg)
			u2 := timesI(d1*complex(sin5b, 0)-d2*complex(sin5a, 0), neg)
			y0[q] = a0 + t1 + t2
			y1[q] = (c1 + u1) * w1
			y2[q] = (c2 + u2) * w2
			y3[q] = (c2 - u2) * w3
			y4[q] = (c1 - u1) * w4
		}
	}
}

// rplan is the discrete Fourier transform of real sequences of even length
// n, X_k for k ≤ n/2 (the others are conj(X_{n−k})), as the complex
// transform of length h = n/2 of z_j = x_{2j} + i·x_{2j+1}: with E_k and
// O_k the transforms of the even and odd samples,
//
//	E_k = (Z_k + conj(Z_{h−k}))/2,  O_k = (Z_k − conj(Z_{h−k}))/(2i),
//	X_k = E_k + W_n^k·O_k,  X_{h−k} = conj(E_k − W_n^k·O_k),
//
// and backward the same relations solved for Z.
type rplan struct {
	n    int
	half *cplan
	w    []complex128 // W_n^k = exp(−2πi·k/n), k ≤ n/4
}

// newRPlan returns the plan of even length n, whose only prime factors must
// be 2, 3 and 5.
func newRPlan(n int) *rplan {
	p := &rplan{n: n, half: newCPlan(n / 2), w: make([]complex128, n/4+1)}
	for k := range p.w {
		p.w[k] = unitRoot(k, n)
	}
	return p
}

// coefficients writes X_0 … X_{n/2} of the real sequence x, taken as x
// followed by zeros up to length n, to dst[:n/2+1], with work[:n/2] as
// scratch. len(x) ≤ n.
func (p *rplan) coefficients(dst []complex128, x []float64, work []complex128) {
	h := p.n / 2
	z := dst[:h+1]
	for j := range h {
		var re, im float64
		if 2*j < len(x) {
			re = x[2*j]
		}
		if 2*j+1 < len(x) {
			im = x[2*j+1]
		}
		z[j] = complex(re, im)
	}
	p.half.transform(z[:h], work, false)
	z0 := z[0]
	z[0], z[h] = complex(real(z0)+imag(z0), 0), complex(real(z0)-imag(z0), 0)
	for k := 1; 2*k <= h; k++ {
		zk, zc := z[k], z[h-k]
		zc = complex(real(zc), -imag(zc))
		e, o := (zk+zc)*0.5, (zk-zc)*complex(0, -0.5)
		wo := p.w[k] * o
		z[k] = e + wo
		if 2*k != h {
			d := e - wo
			z[h-k] = complex(real(d), -imag(d))
		}
	}
}

// sequence writes the first len(dst) ≤ n values of the real sequence
//
//	x_j = Σ_{k<n} X_k·exp(2πi·jk/n)
//
// (unnormalised) of the coefficients X_0 … X_{n/2} in src (X_k for k > n/2
// are conj(X_{n−k}); the imaginary parts of X_0 and X_{n/2} are taken as
// 0), with work[:n] as scratch.
func (p *rplan) sequence(dst []float64, src []complex128, work []complex128) {
	h := p.n / 2
	z, scratch := work[:h], work[h:2*h]
	// Z_k = F_k + i·G_k, F_k = X_k + conj(X_{h−k}), G_k = (X_k − conj(X_{h−k}))·conj(W_n^k);
	// Z_{h−k} = conj(F_k) + i·conj(G_k).
	x0, xh := real(src[0]), real(src[h])
	z[0] = complex(x0+xh, x0-xh)
	for k := 1; 2*k <= h; k++ {
		xk, xc := src[k], src[h-k]
		xc = complex(real(xc), -imag(xc))
		w := p.w[k]
		f, g := xk+xc, (xk-xc)*complex(real(w), -imag(w))
		z[k] = f + complex(-imag(g), real(g))
		if 2*k != h {
			z[h-k] = complex(real(f)+imag(g), -imag(f)+real(g))
		}
	}
	p.half.transform(z, scratch, true)
	for i := range dst {
		if i%2 == 0 {
			dst[i] = real(z[i/2])
		} else {
			dst[i] = imag(z[i/2])
		}
	}
}
