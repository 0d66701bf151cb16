package integrate

import "math"

// tileRows and tileCols are the shape of the output tile of the matrix
// product kernel: six rows by sixteen columns (two vectors of eight lanes).
// Every matrix the kernel reads is padded so that no product has ragged
// edges: rows in multiples of tileRows, columns in multiples of tileCols.
const (
	tileRows = 6
	tileCols = 16
)

// mm6x16 computes nt tiles of a matrix product and writes them over c: for
// r < 6, tiles j < nt and columns q < 16,
//
//	c[r·ldc + 16j + q] = Σ_{t<p} a[r·rs + t·ps] · b[t·ldb + 16j + q]
//
// with the sum over t taken in order (one fused multiply–add per term in
// the AVX2 kernel). The strides rs and ps let a be read by rows (rs = row
// length, ps = 1) or by columns (rs = 1, ps = row length). p may be 0 (the
// tiles are then zero). All indices the formula names must lie inside the
// slices; the AVX2 kernel does not check them, so the portable checks below
// run first in either case.
func mm6x16(a []float32, rs, ps int, b []float32, ldb int, c []float32, ldc, p, nt int) {
	if nt < 1 {
		return
	}
	if p > 0 {
		_ = a[5*rs+(p-1)*ps]
		_ = b[(p-1)*ldb+16*nt-1]
	}
	_ = c[5*ldc+16*nt-1]
	if haveAVX2 {
		mm6x16AVX2(&a[0], rs, ps, &b[0], ldb, &c[0], ldc, p, nt)
		return
	}
	mm6x16Go(a, rs, ps, b, ldb, c, ldc, p, nt)
}

// mm6x16Go is the portable mm6x16: one output row at a time, its sixteen
// sums in local variables.
func mm6x16Go(a []float32, rs, ps int, b []float32, ldb int, c []float32, ldc, p, nt int) {
	for j := 0; j < nt; j++ {
		for r := range tileRows {
			var c0, c1, c2, c3, c4, c5, c6, c7, c8, c9, c10, c11, c12, c13, c14, c15 float32
			ai := r * rs
			bi := 16 * j
			for t := 0; t < p; t++ {
				x := a[ai]
				bt := b[bi : bi+16 : bi+16]
				c0 += x * bt[0]
				c1 += x * bt[1]
				c2 += x * bt[2]
				c3 += x * bt[3]
				c4 += x * bt[4]
				c5 += x * bt[5]
				c6 += x * bt[6]
				c7 += x * bt[7]
				c8 += x * bt[8]
				c9 += x * bt[9]
				c10 += x * bt[10]
				c11 += x * bt[11]
				c12 += x * bt[12]
				c13 += x * bt[13]
				c14 += x * bt[14]
				c15 += x * bt[15]
				ai += ps
				bi += ldb
			}
			out := c[r*ldc+16*j : r*ldc+16*j+16 : r*ldc+16*j+16]
			out[0], out[1], out[2], out[3] = c0, c1, c2, c3
			out[4], out[5], out[6], out[7] = c4, c5, c6, c7
			out[8], out[9], out[10], out[11] = c8, c9, c10, c11
			out[12], out[13], out[14], out[15] = c12, c13, c14, c15
		}
	}
}

// Constants of expNonPositive.
const (
	log2e = 1.44269504088896340735992468100189214
	ln2Hi = 6.93147180369123816490e-01 // ln 2 in two parts (Cody & Waite)
	ln2Lo = 1.90821492927058770002e-10
)

// expNonPositive returns e^x for x ≤ 0 with a relative error below 1e-8,
// and 0 below −700. It reduces the argument as x = n·ln 2 + r with
// |r| ≤ ln 2 / 2 (Cody & Waite's two-part ln 2), evaluates the Taylor
// polynomial of e^r of degree 7 (truncation error r⁸/8! < 5e-9 at |r| = ln 2/2)
// and scales by 2^n through the exponent bits. It serves the soft assignments,
// which are stored in float32, a hundred million times per iteration at a
// million cells, where math.Exp's full accuracy costs three times as much.
func expNonPositive(x float64) float64 {
	if x < -700 {
		return 0
	}
	n := math.Floor(x*log2e + 0.5)
	r := x - n*ln2Hi - n*ln2Lo
	p := 1 + r*(1+r*(1.0/2+r*(1.0/6+r*(1.0/24+r*(1.0/120+r*(1.0/720+r*(1.0/5040)))))))
	return math.Float64frombits(math.Float64bits(p) + uint64(int64(n))<<52)
}

// softmaxRow computes one cell's soft assignments (5) in single precision.
// With a_k = dots_k·scale + lp_k for k < K (lp holds the log penalty minus
// scale, so that a_k = (dots_k − 1)·scale + log penalty) and m = max_k a_k,
//
//	e_k = exp(max(a_k − m, −87)),  s = Σ_k e_k,  r_k = e_k / s,
//
// it writes r_k to r[:K] (and zeros up to ⌈K/8⌉·8), adds r_k to sums[k] and
// returns s, t0 = Σ r_k, t1 = Σ r_k (a_k − m) and t2 = Σ r_k dots_k, from
// which the caller forms the cell's k-means error 2(t0 − t2) and its
// Σ r log r = t1 − t0 log s. The exponential is the AVX2 kernel's
// polynomial (as expNonPositive, in single precision). dots, lp, r and sums
// must hold at least ⌈K/8⌉·8 entries; K ≥ 1.
func softmaxRow(dots, lp, r []float32, sums []float64, k int, scale float32) (s, t0, t1, t2 float32) {
	n := (k + 7) / 8 * 8
	_, _, _, _ = dots[n-1], lp[n-1], r[n-1], sums[n-1]
	if haveAVX2 {
		return softmaxRowAVX2(&dots[0], &lp[0], &r[0], &sums[0], k, scale)
	}
	return softmaxRowGo(dots, lp, r, sums, k, scale)
}

// softmaxRowGo is the portable softmaxRow.
func softmaxRowGo(dots, lp, r []float32, sums []float64, k int, scale float32) (s, t0, t1, t2 float32) {
	m := float32(math.Inf(-1))
	for j := 0; j < k; j++ {
		a := dots[j]*scale + lp[j]
		r[j] = a
		m = max(m, a)
	}
	for j := 0; j < k; j++ {
		e := float32(expNonPositive(float64(max(r[j]-m, -87))))
		r[j] = e
		s += e
	}
	for j := k; j < (k+7)/8*8; j++ {
		r[j] = 0
	}
	inv := 1 / s
	for j := 0; j < k; j++ {
		v := r[j] * inv
		r[j] = v
		t0 += v
		t1 += v * (dots[j]*scale + lp[j] - m)
		t2 += v * dots[j]
		sums[j] += float64(v)
	}
	return s, t0, t1, t2
}
