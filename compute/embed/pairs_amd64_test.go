package embed

import (
	"math"
	"testing"
)

// TestPortableRepulsion runs the interpolated repulsion with the portable
// near-field code on an AVX2 machine and compares it with the AVX2 run, so
// that the code path of other processors is tested here too, for t-SNE's
// kernel and another tail; the two differ by the order of the float32
// additions of the exact pairs (eight lanes against one sum) and, for the
// tail, by the power (float32 in the kernel, float64 in the portable code),
// so they agree to 1e-6 relative. TestPortableIteration does the same for one
// optimiser step.
func TestPortableRepulsion(t *testing.T) {
	if !haveAVX2 {
		t.Skip("the portable code is the only one here and is tested everywhere")
	}
	y := clusteredLayout(5000, 60, 11)
	for _, tail := range []float64{1, 0.5} {
		fast := make([]float64, len(y))
		zFast, _ := newFFTRepulsion(testTeam(t, 2), tail).compute(fast, y, bbox(y), never)
		haveAVX2 = false
		r := newFFTRepulsion(testTeam(t, 2), tail)
		slow := make([]float64, len(y))
		zSlow, _ := r.compute(slow, y, bbox(y), never)
		haveAVX2 = true
		if !r.near {
			t.Fatal("the layout should use the near field")
		}
		var num, den float64
		for i := range fast {
			num += (fast[i] - slow[i]) * (fast[i] - slow[i])
			den += slow[i] * slow[i]
		}
		e := math.Sqrt(num / den)
		t.Logf("α = %g: AVX2 and portable differ by %.2e (forces), %.2e (Z)", tail, e, math.Abs(zFast-zSlow)/zSlow)
		if e > 1e-6 || math.Abs(zFast-zSlow) > 1e-6*zSlow {
			t.Fatalf("α = %g: AVX2 and portable differ: forces %.2e, Z %v vs %v", tail, e, zFast, zSlow)
		}
	}
}

// TestPortableIteration takes one optimiser step from the same layout with
// the AVX2 kernels and with the portable code (attraction, repulsion with its
// near field, and the step) and requires the two new layouts to agree to
// 1e-8 of the layout's extent: they differ by the order of additions, which
// in the float32 attraction (eight lanes against one sum) changes its sums
// by about 1e-7 relative (measured: 1e-9 of the extent after the step).
func TestPortableIteration(t *testing.T) {
	if !haveAVX2 {
		t.Skip("the portable code is the only one here and is tested everywhere")
	}
	P := mixtureAffinity(t, 3000)
	a, err := checkAffinity(P, P.Rows, 2)
	if err != nil {
		t.Fatal(err)
	}
	y := clusteredLayout(P.Rows, 60, 5)
	step := func() []float64 {
		p := Params{Attraction: 1, Threads: 2}
		if err := p.check(); err != nil {
			t.Fatal(err)
		}
		o := newOptimizer(a, append([]float64(nil), y...), p)
		defer o.close()
		if o.fft == nil {
			t.Fatal("the layout should use the interpolated repulsion")
		}
		o.iterate(1, lateMomentum, float64(o.n), false, never)
		return o.y
	}
	fast := step()
	haveAVX2 = false
	defer func() { haveAVX2 = true }()
	slow := step()
	for k := range fast {
		if math.Abs(fast[k]-slow[k]) > 1e-8*60 {
			t.Fatalf("coordinate %d: AVX2 %v, portable %v", k, fast[k], slow[k])
		}
	}
}
