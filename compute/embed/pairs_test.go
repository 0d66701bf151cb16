package embed

import (
	"math"
	"math/rand/v2"
	"testing"
)

// TestPairSums checks pairSums and, for tails other than 1, pairSumsTail,
// on whatever kernel this processor runs, against their definition
// evaluated term by term in float64 with math.Pow from the same float32
// coordinates, for every length from 0 to 27 (full blocks of eight and every
// remainder) at distances from 0 to about 30 (a near field spans a few cells
// of a few units). The kernels work in float32: each term is good to a few
// units of 6e-8 relative, the power's to 6e-8·(1 + α·log q), so each sum must
// agree to 2e-6 of the sum of its terms' magnitudes.
func TestPairSums(t *testing.T) {
	rng := rand.New(rand.NewPCG(3, 9))
	for _, tail := range []float64{1, MinTail, 0.2, 0.5, 0.7, 3, 10, MaxTail} {
		k := newTail(tail)
		for n := 0; n < 28; n++ {
			xs, ys := make([]float32, n), make([]float32, n)
			ax, ay, aw := make([]float32, n), make([]float32, n), make([]float32, n)
			for b := range xs {
				r := math.Pow(10, 2.5*rng.Float64()-1)
				if b == 0 {
					r = 0
				}
				xs[b], ys[b] = float32(r*rng.NormFloat64()), float32(r*rng.NormFloat64())
				ax[b], ay[b], aw[b] = rng.Float32(), rng.Float32(), rng.Float32()
			}
			wantX, wantY, wantW := make([]float64, n), make([]float64, n), make([]float64, n)
			xa, ya := float32(rng.NormFloat64()), float32(rng.NormFloat64())
			var fx, fy, fw, mx, my float64
			for b := range xs {
				dx, dy := float64(xa)-float64(xs[b]), float64(ya)-float64(ys[b])
				u := 1 / (1 + (dx*dx+dy*dy)/tail)
				w := math.Pow(u, tail)
				kx, ky := dx*w*u, dy*w*u
				fx, fy, fw = fx+kx, fy+ky, fw+w
				mx, my = mx+math.Abs(kx), my+math.Abs(ky)
				wantX[b], wantY[b], wantW[b] = float64(ax[b])-kx, float64(ay[b])-ky, float64(aw[b])+w
			}
			var gx, gy, gw float64
			if k.cauchy() {
				gx, gy, gw = pairSums(xa, ya, xs, ys, ax, ay, aw)
			} else {
				gx, gy, gw = pairSumsTail(xa, ya, k, xs, ys, ax, ay, aw)
			}
			close := func(got, want, scale float64) bool { return math.Abs(got-want) <= 2e-6*scale }
			if !close(gx, fx, mx) || !close(gy, fy, my) || !close(gw, fw, fw) {
				t.Fatalf("α = %g, n = %d: sums (%v, %v, %v), want (%v, %v, %v)", tail, n, gx, gy, gw, fx, fy, fw)
			}
			for b := range xs {
				if !close(float64(ax[b]), wantX[b], 1) || !close(float64(ay[b]), wantY[b], 1) || !close(float64(aw[b]), wantW[b], 1+wantW[b]) {
					t.Fatalf("α = %g, n = %d, point %d: (%v, %v, %v), want (%v, %v, %v)", tail, n, b, ax[b], ay[b], aw[b], wantX[b], wantY[b], wantW[b])
				}
			}
		}
	}
}

// TestPairSumsTailRelative checks the power w = u^α of pairSumsTail term
// by term (not only within a sum), at distances from 0.1 to 30 where w spans
// from about 1 to below 1e-30: a near field's terms are summed, but a
// relative error must not hide in the tiny ones. Each distance fills a
// block of eight, so the AVX2 kernel computes it where it runs. In float32
// (unit roundoff 6e-8) the power is good to a few roundoffs times
// 1 + α + α·log q (the rounding of q and the error of log q, times α, make
// the relative error of the power), and the term w·u·d, a few operations
// more, likewise: both must agree to 5e-7·(1 + α + α·log q).
func TestPairSumsTailRelative(t *testing.T) {
	for _, tail := range []float64{MinTail, 0.5, 2, MaxTail} {
		k := newTail(tail)
		for e := -1.0; e <= 1.5; e += 0.0625 {
			d := float64(float32(math.Pow(10, e)))
			xs := []float32{float32(d), float32(-d), float32(d), float32(-d), float32(d), float32(-d), float32(d), float32(-d)}
			ys := make([]float32, 8)
			ax, ay, aw := make([]float32, 8), make([]float32, 8), make([]float32, 8)
			pairSumsTail(0, 0, k, xs, ys, ax, ay, aw)
			u := 1 / (1 + d*d/tail)
			w := math.Pow(u, tail)
			tol := 5e-7 * (1 + tail + tail*math.Log(1/u))
			if math.Abs(float64(aw[0])-w) > tol*w {
				t.Fatalf("α = %g, d = %g: w = %v, want %v", tail, d, aw[0], w)
			}
			if want := d * w * u; math.Abs(float64(ax[0])-want) > tol*want {
				t.Fatalf("α = %g, d = %g: w·u·d = %v, want %v", tail, d, ax[0], want)
			}
		}
	}
}

// TestSubBlock checks subBlock, on whatever kernel this processor runs,
// against its definition summed term by term, for 1 to 30 columns.
func TestSubBlock(t *testing.T) {
	rng := rand.New(rand.NewPCG(4, 1))
	for n := 1; n <= 30; n++ {
		m, q := make([]float64, n*blockRows), make([]float64, n)
		for k := range m {
			m[k] = rng.NormFloat64()
		}
		for c := range q {
			q[c] = rng.NormFloat64()
		}
		var v, want [blockRows]float64
		for r := range v {
			v[r] = rng.NormFloat64()
			var s float64
			for c := range q {
				s += m[c*blockRows+r] * q[c]
			}
			want[r] = v[r] - s
		}
		subBlock(&v, m, q)
		for r := range v {
			if math.Abs(v[r]-want[r]) > 1e-13*(1+math.Abs(want[r])) {
				t.Fatalf("%d columns, row %d: %v, want %v", n, r, v[r], want[r])
			}
		}
	}
}

// TestAttractRow checks attractRow, on whatever kernel this processor runs,
// against its definition summed term by term, for rows of 0 to 19 entries
// whose columns reach both ends of the layout.
func TestAttractRow(t *testing.T) {
	rng := rand.New(rand.NewPCG(8, 2))
	const points = 50
	y := make([]float64, 2*points)
	for k := range y {
		y[k] = 4 * rng.NormFloat64()
	}
	for n := 0; n < 20; n++ {
		cols, vals := make([]int32, n), make([]float32, n)
		for k := range cols {
			cols[k], vals[k] = int32(rng.IntN(points)), rng.Float32()
		}
		if n > 1 {
			cols[0], cols[n-1] = 0, points-1
		}
		xi, yi := rng.NormFloat64(), rng.NormFloat64()
		var wantX, wantY float64
		for k, j := range cols {
			dx, dy := xi-y[2*j], yi-y[2*j+1]
			w := 1 / (1 + dx*dx + dy*dy)
			wantX += float64(vals[k]) * w * dx
			wantY += float64(vals[k]) * w * dy
		}
		fx, fy := attractRow(xi, yi, 1, y, cols, vals)
		if math.Abs(fx-wantX) > 1e-14*(1+math.Abs(wantX)) || math.Abs(fy-wantY) > 1e-14*(1+math.Abs(wantY)) {
			t.Fatalf("%d entries: (%v, %v), want (%v, %v)", n, fx, fy, wantX, wantY)
		}
		// Other tails: Σ v·d/(α + d²).
		for _, a := range []float64{MinTail, 0.5, 3, MaxTail} {
			var wantX, wantY float64
			for k, j := range cols {
				dx, dy := xi-y[2*j], yi-y[2*j+1]
				wantX += float64(vals[k]) * dx / (a + dx*dx + dy*dy)
				wantY += float64(vals[k]) * dy / (a + dx*dx + dy*dy)
			}
			fx, fy := attractRow(xi, yi, a, y, cols, vals)
			if math.Abs(fx-wantX) > 1e-14*(1+math.Abs(wantX)) || math.Abs(fy-wantY) > 1e-14*(1+math.Abs(wantY)) {
				t.Fatalf("α = %g, %d entries: (%v, %v), want (%v, %v)", a, n, fx, fy, wantX, wantY)
			}
		}
	}
}

// TestAttractRow32 checks attractRow32, on whatever kernel this processor
// runs, against its definition summed term by term in float64 from the same
// float32 coordinates, for rows of 0 to 27 entries (full blocks of eight and
// every remainder) whose columns reach both ends of the layout, for t-SNE's
// kernel and other tails: float32 terms are good to a few units of 6e-8
// relative, so the sums must agree to 1e-6 of Σ|term|.
func TestAttractRow32(t *testing.T) {
	rng := rand.New(rand.NewPCG(8, 3))
	const points = 60
	y := make([]float32, 2*points)
	for k := range y {
		y[k] = float32(4 * rng.NormFloat64())
	}
	for _, a := range []float32{1, MinTail, 0.5, 3, MaxTail} {
		for n := 0; n < 28; n++ {
			cols, vals := make([]int32, n), make([]float32, n)
			for k := range cols {
				cols[k], vals[k] = int32(rng.IntN(points)), rng.Float32()
			}
			if n > 1 {
				cols[0], cols[n-1] = 0, points-1
			}
			xi, yi := float32(rng.NormFloat64()), float32(rng.NormFloat64())
			var wantX, wantY, absX, absY float64
			for k, j := range cols {
				dx, dy := float64(xi)-float64(y[2*j]), float64(yi)-float64(y[2*j+1])
				pw := float64(vals[k]) / (float64(a) + dx*dx + dy*dy)
				wantX, wantY = wantX+pw*dx, wantY+pw*dy
				absX, absY = absX+math.Abs(pw*dx), absY+math.Abs(pw*dy)
			}
			fx, fy := attractRow32(xi, yi, a, y, cols, vals)
			if math.Abs(fx-wantX) > 1e-6*absX || math.Abs(fy-wantY) > 1e-6*absY {
				t.Fatalf("a = %g, %d entries: (%v, %v), want (%v, %v)", a, n, fx, fy, wantX, wantY)
			}
		}
	}
}

// TestAttract32 checks the optimiser's float32 attractive sums against the
// float64 ones of attraction.sums (which the gradient tests check against finite
// differences and scikit-learn) on a t-SNE map of 5,000 points: their
// relative difference over all points stays below 1e-6.
func TestAttract32(t *testing.T) {
	P := mixtureAffinity(t, 5000)
	y := clusteredLayout(5000, 60, 3)
	y32 := make([]float32, len(y))
	for k, v := range y {
		y32[k] = float32(v)
		y[k] = float64(y32[k])
	}
	for _, tail := range []float64{1, 0.5} {
		want, got := make([]float64, len(y)), make([]float64, len(y))
		attract(want, y, P, tail, nil, nil, 2, never)
		newAttraction(testTeam(t, 2), P, tail).sums32(got, y32, never)
		var num, den float64
		for k := range got {
			num += (got[k] - want[k]) * (got[k] - want[k])
			den += want[k] * want[k]
		}
		if e := math.Sqrt(num / den); e > 1e-6 {
			t.Fatalf("α = %g: relative difference %.2e", tail, e)
		}
	}
}

// TestAttractRowLog checks attractRowLog, on whatever kernel this processor
// runs, against its definition with math.Log, to 1e-12 relative, for rows of
// 0 to 19 entries at distances from 0 (log 1 = 0) to 10⁴, including
// 1 + d² = √2 and 2 where the logarithm's mantissa range turns over, for
// t-SNE's kernel and other tails.
func TestAttractRowLog(t *testing.T) {
	rng := rand.New(rand.NewPCG(6, 6))
	const points = 64
	y := make([]float64, 2*points)
	for k := 0; k < points; k++ {
		r := math.Pow(10, 4*rng.Float64()-2)
		switch k {
		case 0:
			r = 0
		case 1:
			r = math.Sqrt(math.Sqrt2 - 1)
		case 2:
			r = 1
		case 3:
			r = 1e4
		}
		y[2*k] = r // the point (0, 0) is the one the rows are for
	}
	for n := 0; n < 20; n++ {
		cols, vals := make([]int32, n), make([]float32, n)
		for k := range cols {
			cols[k], vals[k] = int32((k*37+n)%points), rng.Float32()
		}
		// a = 1 for t-SNE; other tails α (q = α + d², below 1 for α < 1 and
		// short distances).
		for _, a := range []float64{1, MinTail, 0.5, 3, MaxTail} {
			var wantX, wantY, wantL float64
			for k, j := range cols {
				dx, dy := -y[2*j], -y[2*j+1]
				q := a + dx*dx + dy*dy
				wantX += float64(vals[k]) / q * dx
				wantY += float64(vals[k]) / q * dy
				wantL += float64(vals[k]) * math.Log(q)
			}
			fx, fy, ls := attractRowLog(0, 0, a, y, cols, vals)
			close := func(got, want float64) bool { return math.Abs(got-want) <= 1e-12*(1+math.Abs(want)) }
			if !close(fx, wantX) || !close(fy, wantY) || !close(ls, wantL) {
				t.Fatalf("a = %g, %d entries: (%v, %v, %v), want (%v, %v, %v)", a, n, fx, fy, ls, wantX, wantY, wantL)
			}
		}
	}
}
