package embed

import "math"

// blockRows is the padded row count of the near-field blocks: the three
// kernels at the cellNodes target nodes, and zero rows up to two passes of
// ten 4-lane registers for the AVX2 kernel.
const blockRows = 80

// The blocks must hold the three kernels at every node.
var _ [blockRows - 3*cellNodes]struct{}

// subBlock subtracts from v the product of the column-major block m (len(q)
// columns of blockRows rows) with q: v_r −= Σ_c m[c·blockRows + r]·q_c. The
// sum over c is formed first, then subtracted.
func subBlock(v *[blockRows]float64, m, q []float64) {
	if haveAVX2 {
		subBlockAVX2(&v[0], &m[0], &q[0], len(q))
		return
	}
	var acc [blockRows]float64
	for c, qc := range q {
		col := (*[blockRows]float64)(m[c*blockRows:])
		for r := range acc {
			acc[r] += col[r] * qc
		}
	}
	for r := range v {
		v[r] -= acc[r]
	}
}

// pairSums adds the exact kernel terms between the point (xa, ya) and the
// points (xs[b], ys[b]), in float32:
//
//	ax[b] −= w²·dx,  ay[b] −= w²·dy,  aw[b] += w,   dx = xa − xs[b], dy = ya − ys[b],
//
// w = 1/(1 + dx² + dy²), and returns Σ_b w²·dx, Σ_b w²·dy and Σ_b w, the
// point's own share of the same terms. All slices have the length of xs;
// the coordinates are relative to a cell of the grid (a few units), so that
// float32 keeps the differences to about 1e-7 of a unit. With AVX2 the
// points go eight at a time, the last n mod 8 with the other lanes masked
// off (each lane summed separately in float32, the lanes then added in
// float64 as (l0+l4)+(l2+l6) + (l1+l5)+(l3+l7)); elsewhere they go one by one
// in order into one float32 sum per quantity.
func pairSums(xa, ya float32, xs, ys, ax, ay, aw []float32) (fx, fy, fw float64) {
	if haveAVX2 {
		if len(xs) == 0 {
			return 0, 0, 0
		}
		ys, ax, ay, aw = ys[:len(xs)], ax[:len(xs)], ay[:len(xs)], aw[:len(xs)]
		return pairSumsAVX2(xa, ya, &xs[0], &ys[0], &ax[0], &ay[0], &aw[0], len(xs))
	}
	ys, ax, ay, aw = ys[:len(xs)], ax[:len(xs)], ay[:len(xs)], aw[:len(xs)]
	var sx, sy, sw float32
	for b, xb := range xs {
		dx, dy := xa-xb, ya-ys[b]
		w := 1 / (1 + dx*dx + dy*dy)
		w2 := w * w
		gx, gy := w2*dx, w2*dy
		sx += gx
		sy += gy
		sw += w
		ax[b] -= gx
		ay[b] -= gy
		aw[b] += w
	}
	return float64(sx), float64(sy), float64(sw)
}

// pairSumsTail is pairSums for the kernel k of any tail α:
//
//	ax[b] −= w·u·dx,  ay[b] −= w·u·dy,  aw[b] += w,   u = 1/(1 + (dx² + dy²)/α),  w = u^α,
//
// returning the point's own share Σ_b w·u·dx, Σ_b w·u·dy and Σ_b w. The
// power is exp(−α·log(1 + d²/α)); the AVX2 kernel computes both functions
// itself in float32, to within a few units of 1e-7 relative (times 1 + α·log q
// for the power, whose argument carries the logarithm's error), and
// otherwise groups its work as pairSums does; the portable code computes the
// power in float64.
func pairSumsTail(xa, ya float32, k tailKernel, xs, ys, ax, ay, aw []float32) (fx, fy, fw float64) {
	m := 0
	if haveAVX2 && len(xs) >= 8 {
		m = len(xs) &^ 7
		fx, fy, fw = pairSumsTailAVX2(xa, ya, float32(k.scale), float32(k.alpha), &xs[0], &ys[0], &ax[0], &ay[0], &aw[0], m)
	}
	xs, ys, ax, ay, aw = xs[m:], ys[m:len(xs)], ax[m:len(xs)], ay[m:len(xs)], aw[m:len(xs)]
	scale := float32(k.scale)
	var sx, sy, sw float32
	for b, xb := range xs {
		dx, dy := xa-xb, ya-ys[b]
		q := 1 + (dx*dx+dy*dy)*scale
		w := float32(math.Exp(-k.alpha * math.Log(float64(q))))
		wu := w / q
		gx, gy := wu*dx, wu*dy
		sx += gx
		sy += gy
		sw += w
		ax[b] -= gx
		ay[b] -= gy
		aw[b] += w
	}
	return fx + float64(sx), fy + float64(sy), fw + float64(sw)
}
