package embed

import (
	"math"
	"testing"
)

// TestPortableRepulsion runs the interpolated repulsion with the portable
// near-field code on an AVX2 machine and compares it with the AVX2 run, so
// that the code path of other processors is tested here too; the two differ
// only by the order of additions.
func TestPortableRepulsion(t *testing.T) {
	if !haveAVX2 {
		t.Skip("the portable code is the only one here and is tested everywhere")
	}
	y := clusteredLayout(5000, 60, 11)
	fast := make([]float64, len(y))
	zFast, _ := newFFTRepulsion(2).compute(fast, y, bbox(y), never)
	haveAVX2 = false
	defer func() { haveAVX2 = true }()
	r := newFFTRepulsion(2)
	slow := make([]float64, len(y))
	zSlow, _ := r.compute(slow, y, bbox(y), never)
	if !r.near {
		t.Fatal("the layout should use the near field")
	}
	var num, den float64
	for i := range fast {
		num += (fast[i] - slow[i]) * (fast[i] - slow[i])
		den += slow[i] * slow[i]
	}
	if e := math.Sqrt(num / den); e > 1e-12 || math.Abs(zFast-zSlow) > 1e-12*zSlow {
		t.Fatalf("AVX2 and portable differ: forces %.2e, Z %v vs %v", e, zFast, zSlow)
	}
}
