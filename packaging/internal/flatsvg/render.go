package flatsvg

import (
	"errors"
	"fmt"
	"image"
	"math"

	"golang.org/x/image/vector"
)

// The errors Render returns; test for them with errors.Is.
var (
	ErrSize  = errors.New("flatsvg: image size must be positive")
	ErrRange = errors.New("flatsvg: shape reaches too far outside the image")
)

// maxReach bounds the pixel coordinates Render accepts, in multiples of
// the image's size: far enough for any drawing meant for the image, near
// enough that the rasteriser's work stays proportional to the image.
const maxReach = 64

// floatColumns is a rasteriser width on x/image/vector's float32 path.
const floatColumns = 513

// Tolerance is the largest distance, in pixels, between a curve and the
// straight segments Render draws in its place.
const Tolerance = 1.0 / 512

// Render draws the image into a new w × h RGBA image, transparent where no
// shape covers it. The viewBox is mapped onto the whole image, each axis
// scaled on its own:
//
//	x_px = (x − MinX)·w/Width,   y_px = (y − MinY)·h/Height
//
// Shapes are filled by the non-zero rule with anti-aliasing by exact area
// coverage and composited with Porter–Duff "over" in painting order.
// Curves are replaced by straight segments no farther than Tolerance from
// them. Render returns an error wrapping ErrSize when w or h is not
// positive, and one wrapping ErrRange when a point of a shape maps farther
// than 64 image widths or heights from the image.
func (im *Image) Render(w, h int) (*image.RGBA, error) {
	if w <= 0 || h <= 0 {
		return nil, fmt.Errorf("%w: %d × %d", ErrSize, w, h)
	}
	dst := image.NewRGBA(image.Rect(0, 0, w, h))
	// The rasteriser keeps coordinates in float32 when the area is wider
	// than 512 pixels and truncates them to 1/512 pixel below that, which
	// costs up to 2 levels in 255 of coverage at an edge; a wide enough
	// area, of which only the image's part is drawn, keeps every size on
	// the float32 path.
	zw := max(w, floatColumns)
	z := vector.NewRasterizer(zw, h)
	sx, sy := float64(w)/im.Width, float64(h)/im.Height
	px := func(p Point) Point { return Point{(p.X - im.MinX) * sx, (p.Y - im.MinY) * sy} }
	for i, s := range im.Shapes {
		for _, seg := range s.Path {
			for _, p := range seg.P[:points(seg.Op)] {
				q := px(p)
				if !(math.Abs(q.X) <= maxReach*float64(w) && math.Abs(q.Y) <= maxReach*float64(h)) {
					return nil, fmt.Errorf("%w: shape %d has the point (%g, %g), at pixel (%g, %g) of a %d × %d image",
						ErrRange, i, p.X, p.Y, q.X, q.Y, w, h)
				}
			}
		}
	}
	for _, s := range im.Shapes {
		z.Reset(zw, h)
		var pen, start Point
		for _, seg := range s.Path {
			switch seg.Op {
			case MoveTo:
				pen = px(seg.P[0])
				start = pen
				z.MoveTo(float32(pen.X), float32(pen.Y))
			case LineTo:
				pen = px(seg.P[0])
				z.LineTo(float32(pen.X), float32(pen.Y))
			case CubicTo:
				c := [4]Point{pen, px(seg.P[0]), px(seg.P[1]), px(seg.P[2])}
				n := cubicSegments(c, Tolerance)
				for i := 1; i <= n; i++ {
					q := cubicAt(c, float64(i)/float64(n))
					z.LineTo(float32(q.X), float32(q.Y))
				}
				pen = c[3]
			case Close:
				z.LineTo(float32(start.X), float32(start.Y))
				pen = start
			}
		}
		z.Draw(dst, dst.Bounds(), image.NewUniform(s.Fill), image.Point{})
	}
	return dst, nil
}

// points is the number of points a segment of kind op uses.
func points(op Op) int {
	switch op {
	case MoveTo, LineTo:
		return 1
	case CubicTo:
		return 3
	}
	return 0
}

// cubicSegments returns how many equal parameter steps keep the chords of
// the cubic Bézier curve with control points c within tol of the curve, by
// Wang's formula (G.-J. Wang 1984; T. W. Sederberg, Computer Aided
// Geometric Design, §10.6) for degree 3:
//
//	n = ⌈√(3·2/8 · M / tol)⌉,   M = max(|c0 − 2c1 + c2|, |c1 − 2c2 + c3|)
//
// It returns at least 1; tol must be positive.
func cubicSegments(c [4]Point, tol float64) int {
	m := math.Max(math.Hypot(c[0].X-2*c[1].X+c[2].X, c[0].Y-2*c[1].Y+c[2].Y),
		math.Hypot(c[1].X-2*c[2].X+c[3].X, c[1].Y-2*c[2].Y+c[3].Y))
	n := math.Ceil(math.Sqrt(0.75 * m / tol))
	return max(1, int(n))
}

// cubicAt returns the point at parameter t of the cubic Bézier curve with
// control points c:
//
//	B(t) = (1−t)³c0 + 3(1−t)²t·c1 + 3(1−t)t²·c2 + t³c3
func cubicAt(c [4]Point, t float64) Point {
	u := 1 - t
	b0, b1, b2, b3 := u*u*u, 3*u*u*t, 3*u*t*t, t*t*t
	return Point{
		b0*c[0].X + b1*c[1].X + b2*c[2].X + b3*c[3].X,
		b0*c[0].Y + b1*c[1].Y + b2*c[2].Y + b3*c[3].Y,
	}
}
