// Package raster draws the map: up to millions of points as anti-aliased,
// alpha-blended discs into an image.RGBA, fast enough to redraw every frame
// of a live layout.
//
// A View maps data coordinates to pixels, a Style says how big and how
// opaque the discs are, and a Renderer draws points in a given order with a
// palette colour each. Renderer.Draw uses all cores and gives the same image
// for any number of threads.
package raster

import (
	"math"
)

// View maps data coordinates (y up) to pixel coordinates (y down) of an image
// Width × Height device pixels:
//
//	px = (x − CenterX)·Scale + Width/2
//	py = Height/2 − (y − CenterY)·Scale
//
// Pixel (i, j) covers [i, i+1) × [j, j+1) in pixel coordinates, so a point
// at px = i + 0.5 sits at the middle of column i.
type View struct {
	CenterX, CenterY float64 // the data point shown at the centre of the image
	Scale            float64 // device pixels per data unit, > 0
	Width, Height    int     // image size in device pixels
}

// ToPixel returns the pixel coordinates of the data point (x, y).
func (v View) ToPixel(x, y float64) (px, py float64) {
	return (x-v.CenterX)*v.Scale + float64(v.Width)/2, float64(v.Height)/2 - (y-v.CenterY)*v.Scale
}

// ToData returns the data coordinates of the pixel point (px, py), the
// inverse of ToPixel.
func (v View) ToData(px, py float64) (x, y float64) {
	return v.CenterX + (px-float64(v.Width)/2)/v.Scale, v.CenterY - (py-float64(v.Height)/2)/v.Scale
}

// ZoomAt returns v magnified by factor about the pixel point (px, py): the
// data point under (px, py) stays there and Scale is multiplied by factor.
//
//	Scale' = factor·Scale
//	Center' = d + (Center − d)/factor,  d = ToData(px, py)
//
// A factor that is not finite and positive returns v unchanged.
func (v View) ZoomAt(px, py, factor float64) View {
	if !(factor > 0) || math.IsInf(factor, 1) {
		return v
	}
	dx, dy := v.ToData(px, py)
	v.CenterX = dx + (v.CenterX-dx)/factor
	v.CenterY = dy + (v.CenterY-dy)/factor
	v.Scale *= factor
	return v
}

// Pan returns v with the picture moved by (dx, dy) pixels: the data point
// that was at pixel (px, py) is at (px+dx, py+dy) afterwards.
func (v View) Pan(dx, dy float64) View {
	v.CenterX -= dx / v.Scale
	v.CenterY += dy / v.Scale
	return v
}

// Fit returns the View of a width × height image that shows every finite
// point of layout (interleaved x, y) with margin pixels free on each side,
// centred, with equal scale on both axes:
//
//	Scale = min((width − 2·margin)/(xmax − xmin), (height − 2·margin)/(ymax − ymin))
//
// An axis of zero extent does not limit the scale; when both have zero
// extent Scale is 1, and when layout has no finite point the view is
// centred on the origin at Scale 1. It returns an error when layout has odd
// length, the image is empty, or the margins leave no room.
func Fit(layout []float32, width, height int, margin float64) (View, error) {
	if len(layout)%2 != 0 {
		return View{}, &InputError{Arg: "layout", Index: -1, Err: ErrOddLength}
	}
	if width <= 0 || height <= 0 || !(margin >= 0) || 2*margin >= float64(width) || 2*margin >= float64(height) {
		return View{}, &InputError{Arg: "image size", Index: -1, Err: ErrView}
	}
	xmin, ymin := math.Inf(1), math.Inf(1)
	xmax, ymax := math.Inf(-1), math.Inf(-1)
	for i := 0; i+1 < len(layout); i += 2 {
		x, y := float64(layout[i]), float64(layout[i+1])
		if math.IsNaN(x) || math.IsNaN(y) || math.IsInf(x, 0) || math.IsInf(y, 0) {
			continue
		}
		xmin, xmax = math.Min(xmin, x), math.Max(xmax, x)
		ymin, ymax = math.Min(ymin, y), math.Max(ymax, y)
	}
	v := View{Scale: 1, Width: width, Height: height}
	if xmin > xmax {
		return v, nil
	}
	v.CenterX, v.CenterY = (xmin+xmax)/2, (ymin+ymax)/2
	scale := math.Inf(1)
	if ex := xmax - xmin; ex > 0 {
		scale = (float64(width) - 2*margin) / ex
	}
	if ey := ymax - ymin; ey > 0 {
		scale = math.Min(scale, (float64(height)-2*margin)/ey)
	}
	if !math.IsInf(scale, 1) {
		v.Scale = scale
	}
	return v, nil
}
