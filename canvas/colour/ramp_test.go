package colour

import (
	"math"
	"testing"
)

// maxStepCV bounds the coefficient of variation (standard deviation / mean)
// of the OKLab distances between successive ramp steps before rounding. The
// ramp is its design curve reparametrised by OKLab arc length, measured by
// 4096 chords; chord and arc differ by less than 1e-5 relative at this
// curvature, so 1e-3 leaves a wide margin while failing any ramp that is
// not arc-length uniform (a linear parametrisation of the same curve has a
// CV of about 0.03).
const maxStepCV = 1e-3

func rampSteps(n int, f func(t float64) OKLab) []float64 {
	steps := make([]float64, n-1)
	prev := f(0)
	for i := 1; i < n; i++ {
		cur := f(float64(i) / float64(n-1))
		steps[i-1] = Distance(prev, cur)
		prev = cur
	}
	return steps
}

func coefficientOfVariation(x []float64) float64 {
	var mean float64
	for _, v := range x {
		mean += v
	}
	mean /= float64(len(x))
	var ss float64
	for _, v := range x {
		ss += (v - mean) * (v - mean)
	}
	return math.Sqrt(ss/float64(len(x))) / mean
}

// TestRampUniform checks that successive steps of the ramp are nearly equal
// in OKLab (Euclidean ΔE), the perceptual uniformity OKLab was built for.
func TestRampUniform(t *testing.T) {
	cv := coefficientOfVariation(rampSteps(RampSize, RampOKLab))
	if cv > maxStepCV {
		t.Errorf("ramp step CV = %.2e, want ≤ %.0e", cv, maxStepCV)
	}
	// The same curve with its raw parameter must fail the bound, or the test
	// would not tell a uniform ramp from any other.
	raw := coefficientOfVariation(rampSteps(RampSize, func(u float64) OKLab { return rampCurve(u).OKLab() }))
	if raw <= maxStepCV {
		t.Errorf("raw curve step CV = %.2e is already within the bound", raw)
	}
}

// TestRampInGamut checks that every step of the ramp lies in the sRGB gamut
// before rounding to 8 bits, so RampTable holds no clipped colour.
func TestRampInGamut(t *testing.T) {
	for i := 0; i < RampSize; i++ {
		c := RampOKLab(float64(i) / (RampSize - 1))
		if s := c.SRGB(); !s.InGamut(0) {
			t.Errorf("step %d %v is outside sRGB: %v", i, c, s)
		}
	}
}

// TestRampLightness checks that lightness rises along the ramp in normal
// vision and under each simulated deficiency (Machado et al. 2009), so the
// ramp reads from dark to light for every viewer: strictly for the colours
// before rounding, and never falling along the 8-bit table (where two
// neighbouring dark steps may round to the same colour).
func TestRampLightness(t *testing.T) {
	lut := RampTable()
	for _, d := range append([]Deficiency{0}, deficiencies[:]...) {
		prevDesign, prevTable := math.Inf(-1), math.Inf(-1)
		for i, c := range lut {
			design := Simulate(RampOKLab(float64(i)/(RampSize-1)).Linear(), d).OKLab().L
			if design <= prevDesign {
				t.Errorf("%s: lightness does not rise at step %d (%.5f after %.5f)", visionName(d), i, design, prevDesign)
				break
			}
			table := Simulate(fromNRGBA(c).Linear(), d).OKLab().L
			if table < prevTable {
				t.Errorf("%s: 8-bit lightness falls at step %d (%.5f after %.5f)", visionName(d), i, table, prevTable)
				break
			}
			prevDesign, prevTable = design, table
		}
	}
}

// TestRampEnds checks clamping, NaN and the table's agreement with Ramp.
func TestRampEnds(t *testing.T) {
	lut := RampTable()
	if Ramp(-1) != lut[0] || Ramp(2) != lut[RampSize-1] {
		t.Error("Ramp does not clamp t to [0, 1]")
	}
	if Ramp(math.NaN()) != Missing {
		t.Error("Ramp(NaN) is not Missing")
	}
	if got := Ramp(0.5); got != RampOKLab(0.5).SRGB().NRGBA() {
		t.Errorf("Ramp(0.5) = %v", got)
	}
	for i, c := range lut {
		if c != Ramp(float64(i)/(RampSize-1)) {
			t.Errorf("table entry %d differs from Ramp", i)
		}
	}
	if first, last := RampOKLab(0), RampOKLab(1); math.Abs(first.L-0.22) > 1e-12 || math.Abs(last.L-0.95) > 1e-12 {
		t.Errorf("ends at L %.4f and %.4f, want 0.22 and 0.95", first.L, last.L)
	}
}
