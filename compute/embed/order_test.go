package embed

import (
	"math"
	"testing"
)

// TestSpreadBits checks spreadBits against moving the bits one by one.
func TestSpreadBits(t *testing.T) {
	for _, v := range []uint32{0, 1, 2, 3, 0x8000, 0xffff, 0x1234, 0xa5a5, 0x10000 | 7} {
		var want uint32
		for b := 0; b < 16; b++ {
			want |= (v >> b & 1) << (2 * b)
		}
		if got := spreadBits(v); got != want {
			t.Fatalf("spreadBits(%#x) = %#x, want %#x", v, got, want)
		}
	}
}

// TestCurveOrder checks that curveOrder returns a permutation and its
// inverse, and that consecutive points follow the Z-order curve: their
// interleaved grid coordinates never decrease, and equal ones keep id order.
func TestCurveOrder(t *testing.T) {
	y := clusteredLayout(2000, 30, 4)
	order, rank := curveOrder(y, 2)
	seen := make([]bool, len(order))
	b := bbox(y)
	key := func(i int32) uint32 {
		gx := uint32(math.Min(math.Max((y[2*i]-b[0])*65535/(b[1]-b[0]), 0), 65535))
		gy := uint32(math.Min(math.Max((y[2*i+1]-b[2])*65535/(b[3]-b[2]), 0), 65535))
		var z uint32
		for bit := 0; bit < 16; bit++ {
			z |= (gx>>bit&1)<<(2*bit) | (gy>>bit&1)<<(2*bit+1)
		}
		return z
	}
	for k, i := range order {
		if seen[i] || rank[i] != int32(k) {
			t.Fatalf("position %d: point %d seen twice or rank %d", k, i, rank[i])
		}
		seen[i] = true
		if k > 0 {
			prev := order[k-1]
			if key(prev) > key(i) || key(prev) == key(i) && prev > i {
				t.Fatalf("positions %d, %d: keys %#x, %#x out of curve order", k-1, k, key(prev), key(i))
			}
		}
	}
}

// TestRelabelledStepMatches takes one optimiser step from the same layout
// with and without renumbering the points along the curve and requires the
// two new layouts, returned in P's numbering, to agree to 1e-9 of the
// layout's extent: the attraction is summed in the same order either way,
// the repulsion's near field in a different order within each cell.
func TestRelabelledStepMatches(t *testing.T) {
	P := mixtureAffinity(t, 3000)
	a, err := checkAffinity(P, P.Rows, 2)
	if err != nil {
		t.Fatal(err)
	}
	y := clusteredLayout(P.Rows, 50, 9)
	step := func(relabelFrom int) ([]float32, *optimizer) {
		saved := relabelAbove
		relabelAbove = relabelFrom
		defer func() { relabelAbove = saved }()
		p := Params{Attraction: 1, Threads: 2}
		if err := p.check(); err != nil {
			t.Fatal(err)
		}
		o := newOptimizer(a, append([]float64(nil), y...), p)
		o.iterate(1, lateMomentum, float64(o.n), true, never)
		return o.layout(), o
	}
	plain, po := step(math.MaxInt)
	relabelled, ro := step(0)
	if po.rows.rowOf != nil || ro.rows.rowOf == nil {
		t.Fatal("the thresholds did not select the two paths")
	}
	for k := range plain {
		if math.Abs(float64(plain[k]-relabelled[k])) > 1e-9*50+1e-6*math.Abs(float64(plain[k])) {
			t.Fatalf("coordinate %d: plain %v, relabelled %v", k, plain[k], relabelled[k])
		}
	}
}
