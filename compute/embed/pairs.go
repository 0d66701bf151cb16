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
// points (xs[b], ys[b]):
//
//	ax[b] −= w²·dx,  ay[b] −= w²·dy,  aw[b] += w,   dx = xa − xs[b], dy = ya − ys[b],
//
// w = 1/(1 + dx² + dy²), and returns Σ_b w²·dx, Σ_b w²·dy and Σ_b w, the
// point's own share of the same terms. All slices have the length of xs.
// With AVX2 the first len(xs) &^ 3 points go four at a time (each lane
// summed separately, the lanes then added as (l0+l2)+(l1+l3)); the rest, and
// every point elsewhere, go one by one in order.
func pairSums(xa, ya float64, xs, ys, ax, ay, aw []float64) (fx, fy, fw float64) {
	m := 0
	if haveAVX2 && len(xs) >= 4 {
		m = len(xs) &^ 3
		fx, fy, fw = pairSumsAVX2(xa, ya, &xs[0], &ys[0], &ax[0], &ay[0], &aw[0], m)
	}
	gx, gy, gw := pairSumsGo(xa, ya, xs[m:], ys[m:], ax[m:], ay[m:], aw[m:])
	return fx + gx, fy + gy, fw + gw
}

// pairSumsGo is pairSums one point at a time.
func pairSumsGo(xa, ya float64, xs, ys, ax, ay, aw []float64) (fx, fy, fw float64) {
	ys, ax, ay, aw = ys[:len(xs)], ax[:len(xs)], ay[:len(xs)], aw[:len(xs)]
	for b, xb := range xs {
		dx, dy := xa-xb, ya-ys[b]
		w := 1 / (1 + dx*dx + dy*dy)
		w2 := w * w
		gx, gy := w2*dx, w2*dy
		fx += gx
		fy += gy
		fw += w
		ax[b] -= gx
		ay[b] -= gy
		aw[b] += w
	}
	return fx, fy, fw
}

// pairSumsTail is pairSums for the kernel k of any tail α:
//
//	ax[b] −= w·u·dx,  ay[b] −= w·u·dy,  aw[b] += w,   u = 1/(1 + (dx² + dy²)/α),  w = u^α,
//
// returning the point's own share Σ_b w·u·dx, Σ_b w·u·dy and Σ_b w. The
// power is exp(−α·log(1 + d²/α)); the AVX2 kernel computes both functions
// itself, to within 1e-13 relative, and otherwise groups its work as
// pairSums does.
func pairSumsTail(xa, ya float64, k tailKernel, xs, ys, ax, ay, aw []float64) (fx, fy, fw float64) {
	m := 0
	if haveAVX2 && len(xs) >= 4 {
		m = len(xs) &^ 3
		fx, fy, fw = pairSumsTailAVX2(xa, ya, k.scale, k.alpha, &xs[0], &ys[0], &ax[0], &ay[0], &aw[0], m)
	}
	xs, ys, ax, ay, aw = xs[m:], ys[m:len(xs)], ax[m:len(xs)], ay[m:len(xs)], aw[m:len(xs)]
	for b, xb := range xs {
		dx, dy := xa-xb, ya-ys[b]
		q := 1 + (dx*dx+dy*dy)*k.scale
		w := math.Exp(-k.alpha * math.Log(q))
		wu := w / q
		gx, gy := wu*dx, wu*dy
		fx += gx
		fy += gy
		fw += w
		ax[b] -= gx
		ay[b] -= gy
		aw[b] += w
	}
	return fx, fy, fw
}
