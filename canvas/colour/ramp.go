package colour

import (
	"image/color"
	"math"
	"sort"
	"sync"
)

// RampSize is the number of entries in RampTable.
const RampSize = 256

// rampCurve is the design curve of the continuous ramp in OKLCH, for u in
// [0, 1]: from a deep navy through sea green to pale straw,
//
//	L(u) = 0.22 + 0.73·u
//	C(u) = 0.06 + 0.02·u + 0.4·u³·(1−u)
//	H(u) = 262° − 160°·u
//
// Lightness rises linearly, the hue turns gently by 160°, and the chroma
// stays under the sRGB gamut boundary along the whole curve (narrowest near
// u = 0.35, where dark cyans leave little room).
func rampCurve(u float64) OKLCH {
	return OKLCH{
		L: 0.22 + 0.73*u,
		C: 0.06 + 0.02*u + 0.4*u*u*u*(1-u),
		H: 262 - 160*u,
	}
}

// rampArcSegments is the number of chords used to measure the curve's length.
const rampArcSegments = 4096

var rampArc struct {
	once sync.Once
	s    []float64 // s[i]: OKLab arc length from u = 0 to u = i/rampArcSegments, normalised to end at 1
}

// rampArcLength returns the normalised cumulative arc length of rampCurve.
func rampArcLength() []float64 {
	rampArc.once.Do(func() {
		s := make([]float64, rampArcSegments+1)
		prev := rampCurve(0).OKLab()
		for i := 1; i <= rampArcSegments; i++ {
			cur := rampCurve(float64(i) / rampArcSegments).OKLab()
			s[i] = s[i-1] + Distance(prev, cur)
			prev = cur
		}
		for i := range s {
			s[i] /= s[rampArcSegments]
		}
		rampArc.s = s
	})
	return rampArc.s
}

// RampOKLab returns the colour of the continuous ramp at t in OKLab, before
// any rounding. The ramp is rampCurve reparametrised by OKLab arc length, so
// that equal steps in t are (to within the chord approximation) equal
// Euclidean steps in OKLab:
//
//	RampOKLab(t) = curve(u(t)),  ∫₀^u(t) |curve'(v)| dv = t · ∫₀¹ |curve'(v)| dv
//
// t is clamped to [0, 1]; NaN gives NaN components.
func RampOKLab(t float64) OKLab {
	if math.IsNaN(t) {
		return OKLab{math.NaN(), math.NaN(), math.NaN()}
	}
	t = math.Max(0, math.Min(1, t))
	s := rampArcLength()
	i := sort.SearchFloat64s(s, t) // first i with s[i] ≥ t
	if i == 0 {
		return rampCurve(0).OKLab()
	}
	f := (t - s[i-1]) / (s[i] - s[i-1])
	u := (float64(i-1) + f) / rampArcSegments
	return rampCurve(u).OKLab()
}

// Ramp returns the colour of the continuous ramp at t in [0, 1] (clamped),
// from dark (0) to light (1), rounded to 8 bits. NaN gives Missing.
func Ramp(t float64) color.NRGBA {
	if math.IsNaN(t) {
		return Missing
	}
	return RampOKLab(t).SRGB().NRGBA()
}

// RampTable returns the ramp sampled at RampSize evenly spaced values of t:
// entry i is Ramp(i / (RampSize − 1)).
func RampTable() [RampSize]color.NRGBA {
	var lut [RampSize]color.NRGBA
	for i := range lut {
		lut[i] = Ramp(float64(i) / (RampSize - 1))
	}
	return lut
}
