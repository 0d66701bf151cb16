// Package colour converts between the colour spaces Lodestone draws with and
// provides its own categorical palette and continuous ramp.
//
// Spaces: gamma-encoded sRGB (SRGB), linear-light sRGB (Linear), CIE XYZ for
// the D65 white (XYZ), OKLab and its polar form OKLCH, and CIELAB for the D65
// white (Lab). The matrices are those of the W3C CSS Color Module Level 4.
// Colour differences use CIEDE2000 (Sharma, Wu & Dalal 2005), and
// colour-vision deficiencies are simulated with the severity-1.0 matrices of
// Machado, Oliveira & Fernandes (2009).
//
// All conversions work on float64 triples without clamping, so colours
// outside the sRGB gamut survive a round trip; SRGB.NRGBA clamps when a
// colour is finally put into 8 bits.
package colour

import (
	"image/color"
	"math"
)

// SRGB is a gamma-encoded sRGB colour (IEC 61966-2-1) with channels nominally
// in [0, 1].
type SRGB struct{ R, G, B float64 }

// Linear is a linear-light sRGB colour: the sRGB primaries and D65 white
// without the transfer function, channels nominally in [0, 1].
type Linear struct{ R, G, B float64 }

// Decode returns the linear-light value of one gamma-encoded sRGB channel:
//
//	v / 12.92                     if |v| ≤ 0.04045
//	sign(v)·((|v|+0.055)/1.055)^2.4  otherwise
//
// The curve is extended to negative values by odd symmetry, as in CSS Color 4.
func Decode(v float64) float64 {
	a := math.Abs(v)
	if a <= 0.04045 {
		return v / 12.92
	}
	return math.Copysign(math.Pow((a+0.055)/1.055, 2.4), v)
}

// Encode returns the gamma-encoded value of one linear-light sRGB channel,
// the inverse of Decode:
//
//	12.92·v                          if |v| ≤ 0.0031308
//	sign(v)·(1.055·|v|^(1/2.4) − 0.055)  otherwise
func Encode(v float64) float64 {
	a := math.Abs(v)
	if a <= 0.0031308 {
		return 12.92 * v
	}
	return math.Copysign(1.055*math.Pow(a, 1/2.4)-0.055, v)
}

// Linear returns c with the sRGB transfer function removed.
func (c SRGB) Linear() Linear {
	return Linear{Decode(c.R), Decode(c.G), Decode(c.B)}
}

// SRGB returns c gamma-encoded with the sRGB transfer function.
func (c Linear) SRGB() SRGB {
	return SRGB{Encode(c.R), Encode(c.G), Encode(c.B)}
}

// InGamut reports whether every channel of c lies in [−tol, 1+tol].
func (c SRGB) InGamut(tol float64) bool {
	in := func(v float64) bool { return v >= -tol && v <= 1+tol }
	return in(c.R) && in(c.G) && in(c.B)
}

// NRGBA returns c rounded to 8 bits per channel, fully opaque. Channels
// outside [0, 1] are clamped; NaN becomes 0.
func (c SRGB) NRGBA() color.NRGBA {
	return color.NRGBA{R: to8(c.R), G: to8(c.G), B: to8(c.B), A: 255}
}

// to8 rounds v·255 to the nearest integer in [0, 255].
func to8(v float64) uint8 {
	switch {
	case !(v > 0):
		return 0
	case v >= 1:
		return 255
	}
	return uint8(math.Floor(v*255 + 0.5))
}
