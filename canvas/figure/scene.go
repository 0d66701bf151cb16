package figure

import (
	"image"
	"image/color"
	"math"
)

// Colours of text and lines, chosen in OKLCH: ink is OKLCH(0.27, 0.02, 265),
// a blue-black; quiet is OKLCH(0.55, 0.01, 265) for counts and outlines.
var (
	ink        = color.NRGBA{R: 0x1f, G: 0x23, B: 0x2e, A: 0xff}
	quiet      = color.NRGBA{R: 0x6b, G: 0x6d, B: 0x74, A: 0xff}
	haloColour = color.NRGBA{R: 0xff, G: 0xff, B: 0xff, A: 0xff}
)

// scene is a figure laid out in pixels: the background, the points of the
// map (if any), then shapes and text drawn in order.
type scene struct {
	width, height int
	dpi           float64
	background    color.NRGBA
	title         string // the document title of an SVG file
	points        *pointsLayer
	items         []item
}

// item is a shape or a line of text of a scene.
type item interface {
	drawPNG(c *pngCanvas)
	writeSVG(w *svgWriter)
}

// box is a rectangle in figure pixels: [x0, x1) × [y0, y1).
type box struct{ x0, y0, x1, y1 float64 }

func (b box) w() float64 { return b.x1 - b.x0 }
func (b box) h() float64 { return b.y1 - b.y0 }

// overlap returns the area shared by a and b.
func (b box) overlap(o box) float64 {
	w := math.Min(b.x1, o.x1) - math.Max(b.x0, o.x0)
	h := math.Min(b.y1, o.y1) - math.Max(b.y0, o.y0)
	if w <= 0 || h <= 0 {
		return 0
	}
	return w * h
}

// inside reports whether b lies within o.
func (b box) inside(o box) bool {
	return b.x0 >= o.x0 && b.y0 >= o.y0 && b.x1 <= o.x1 && b.y1 <= o.y1
}

// rectItem is a filled axis-aligned rectangle.
type rectItem struct {
	b      box
	colour color.NRGBA
}

// discItem is a filled disc.
type discItem struct {
	cx, cy, r float64
	colour    color.NRGBA
}

// rampItem is a rectangle filled with a horizontal gradient through the
// stops, evenly spaced from left to right, interpolated linearly in sRGB
// (as SVG's linearGradient does by default).
type rampItem struct {
	b     box
	stops []color.NRGBA
}

// rampAt returns the gradient's colour at t in [0, 1].
func rampAt(stops []color.NRGBA, t float64) color.NRGBA {
	if len(stops) == 1 {
		return stops[0]
	}
	p := math.Max(0, math.Min(1, t)) * float64(len(stops)-1)
	i := min(int(p), len(stops)-2)
	f := p - float64(i)
	a, b := stops[i], stops[i+1]
	mix := func(x, y uint8) uint8 { return uint8(math.Round(float64(x) + f*(float64(y)-float64(x)))) }
	return color.NRGBA{R: mix(a.R, b.R), G: mix(a.G, b.G), B: mix(a.B, b.B), A: mix(a.A, b.A)}
}

// outline returns the four rectangles of the outline of b drawn inside it
// with the given line width.
func outline(b box, width float64, c color.NRGBA) []item {
	return []item{
		&rectItem{box{b.x0, b.y0, b.x1, b.y0 + width}, c},
		&rectItem{box{b.x0, b.y1 - width, b.x1, b.y1}, c},
		&rectItem{box{b.x0, b.y0 + width, b.x0 + width, b.y1 - width}, c},
		&rectItem{box{b.x1 - width, b.y0 + width, b.x1, b.y1 - width}, c},
	}
}

// pixelSpan returns the pixels [lo, hi) touched by [a, b), clipped to
// [0, n).
func pixelSpan(a, b float64, n int) (lo, hi int) {
	lo = max(0, int(math.Floor(a)))
	hi = min(n, int(math.Ceil(b)))
	return lo, hi
}

// spanCover returns the length of [a, b) inside pixel [p, p+1).
func spanCover(a, b float64, p int) float64 {
	return math.Max(0, math.Min(b, float64(p+1))-math.Max(a, float64(p)))
}

// pngCanvas is the image a scene is drawn into.
type pngCanvas struct {
	img *image.RGBA
	ts  *typesetter
}

// blend draws colour c with coverage cov over pixel (x, y), premultiplied
// "over" in 8-bit sRGB as image/draw does.
func (c *pngCanvas) blend(x, y int, col color.NRGBA, cov float64) {
	a := cov * float64(col.A) / 255
	if a <= 0 {
		return
	}
	o := c.img.PixOffset(x, y)
	p := c.img.Pix[o : o+4 : o+4]
	na := 1 - a
	p[0] = uint8(math.Round(float64(col.R)*a + float64(p[0])*na))
	p[1] = uint8(math.Round(float64(col.G)*a + float64(p[1])*na))
	p[2] = uint8(math.Round(float64(col.B)*a + float64(p[2])*na))
	p[3] = uint8(math.Round(255*a + float64(p[3])*na))
}

// drawPNG fills the rectangle, with partial coverage at fractional edges.
func (r *rectItem) drawPNG(c *pngCanvas) {
	fillBox(c, r.b, func(float64) color.NRGBA { return r.colour })
}

// fillBox fills b with the colour that colourAt gives for each pixel
// column's relative position t in [0, 1], weighting each pixel by the share
// of it inside b.
func fillBox(c *pngCanvas, b box, colourAt func(t float64) color.NRGBA) {
	bounds := c.img.Rect
	x0, x1 := pixelSpan(b.x0, b.x1, bounds.Dx())
	y0, y1 := pixelSpan(b.y0, b.y1, bounds.Dy())
	for x := x0; x < x1; x++ {
		cx := spanCover(b.x0, b.x1, x)
		col := colourAt((float64(x) + 0.5 - b.x0) / b.w())
		for y := y0; y < y1; y++ {
			c.blend(x, y, col, cx*spanCover(b.y0, b.y1, y))
		}
	}
}

// drawPNG fills the gradient.
func (r *rampItem) drawPNG(c *pngCanvas) {
	fillBox(c, r.b, func(t float64) color.NRGBA { return rampAt(r.stops, t) })
}

// discSamples is the number of sample positions per pixel axis used to
// estimate a disc's coverage of an edge pixel.
const discSamples = 8

// drawPNG fills the disc, each pixel weighted by the share of a grid of
// discSamples² points in it that lie inside the disc.
func (d *discItem) drawPNG(c *pngCanvas) {
	bounds := c.img.Rect
	x0, x1 := pixelSpan(d.cx-d.r, d.cx+d.r, bounds.Dx())
	y0, y1 := pixelSpan(d.cy-d.r, d.cy+d.r, bounds.Dy())
	r2 := d.r * d.r
	for y := y0; y < y1; y++ {
		for x := x0; x < x1; x++ {
			in := 0
			for sy := 0; sy < discSamples; sy++ {
				py := float64(y) + (float64(sy)+0.5)/discSamples - d.cy
				for sx := 0; sx < discSamples; sx++ {
					px := float64(x) + (float64(sx)+0.5)/discSamples - d.cx
					if px*px+py*py <= r2 {
						in++
					}
				}
			}
			c.blend(x, y, d.colour, float64(in)/(discSamples*discSamples))
		}
	}
}

// drawPNG draws the text with its halo.
func (t *textItem) drawPNG(c *pngCanvas) { c.ts.drawText(c.img, t) }
