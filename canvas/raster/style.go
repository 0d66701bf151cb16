package raster

import (
	"image/color"
	"math"
)

// MaxRadius is the largest disc radius Draw accepts, in device pixels
// (Radius × PixelScale).
const MaxRadius = 64

// Style says how points are drawn.
type Style struct {
	// Radius is the disc radius in logical pixels; fractional values are
	// drawn with partial coverage.
	Radius float64
	// Opacity multiplies the alpha of every disc, in (0, 1].
	Opacity float64
	// PixelScale is the number of device pixels per logical pixel on
	// high-density screens; 0 means 1.
	PixelScale float64
	// Background fills the image before drawing; a transparent background
	// (alpha 0) leaves discs over transparent pixels.
	Background color.NRGBA
}

// DefaultStyle returns a style suited to n points on a white background:
// large opaque discs for few points, small translucent ones for many, so that
// dense regions stay readable.
//
//	Radius  = clamp(14 / n^0.2, 0.75, 5)
//	Opacity = clamp(1 − 0.25·log10(n/10⁴), 0.5, 1)
//
// which gives radius 5 and opacity 1 up to a few hundred points, and radius
// 0.88 at opacity 0.5 for a million.
func DefaultStyle(n int) Style {
	fn := math.Max(float64(n), 1)
	return Style{
		Radius:     math.Max(0.75, math.Min(5, 14/math.Pow(fn, 0.2))),
		Opacity:    math.Max(0.5, math.Min(1, 1-0.25*math.Log10(fn/1e4))),
		PixelScale: 1,
		Background: color.NRGBA{255, 255, 255, 255},
	}
}

// deviceRadius returns the disc radius in device pixels, or an error when
// the style is out of range.
func (s Style) deviceRadius() (float64, error) {
	scale := s.PixelScale
	if scale == 0 {
		scale = 1
	}
	r := s.Radius * scale
	if !(s.Radius > 0) || !(scale > 0) || !(r <= MaxRadius) {
		return 0, &InputError{Arg: "style radius", Index: -1, Err: ErrStyle}
	}
	if !(s.Opacity > 0 && s.Opacity <= 1) {
		return 0, &InputError{Arg: "style opacity", Index: -1, Err: ErrStyle}
	}
	return r, nil
}
