package figure

import (
	"image"
	"image/color"
	"image/draw"
	"math"
	"sync"

	"golang.org/x/image/font"
	"golang.org/x/image/font/gofont/gobold"
	"golang.org/x/image/font/gofont/goregular"
	"golang.org/x/image/font/opentype"
	"golang.org/x/image/math/fixed"
)

// fontFamily is the SVG font-family list: the Go font the layout is measured
// in, then faces with Arial's metrics, whose advance widths lie within
// about 1 % of the Go font's on labels, so text laid out for the Go font
// still fits where it is not installed.
const fontFamily = "Go, Arial, Helvetica, 'Liberation Sans', sans-serif"

// ellipsis ends a shortened text.
const ellipsis = "…"

var goFonts struct {
	once          sync.Once
	regular, bold *opentype.Font
	err           error
}

// loadFonts parses the embedded Go fonts once.
func loadFonts() (regular, bold *opentype.Font, err error) {
	goFonts.once.Do(func() {
		goFonts.regular, goFonts.err = opentype.Parse(goregular.TTF)
		if goFonts.err == nil {
			goFonts.bold, goFonts.err = opentype.Parse(gobold.TTF)
		}
	})
	return goFonts.regular, goFonts.bold, goFonts.err
}

// faceKey names one face: a size in pixels and a weight.
type faceKey struct {
	size float64
	bold bool
}

// typesetter measures and draws text in the Go fonts, keeping one face per
// size and weight. It is used by one goroutine.
type typesetter struct {
	regular, bold *opentype.Font
	faces         map[faceKey]font.Face
}

func newTypesetter() (*typesetter, error) {
	r, b, err := loadFonts()
	if err != nil {
		return nil, err
	}
	return &typesetter{regular: r, bold: b, faces: make(map[faceKey]font.Face)}, nil
}

// face returns the face of the given em size in pixels.
func (ts *typesetter) face(size float64, bold bool) font.Face {
	k := faceKey{size, bold}
	if f, ok := ts.faces[k]; ok {
		return f
	}
	src := ts.regular
	if bold {
		src = ts.bold
	}
	// At 72 dpi a point is a pixel. Unhinted outlines keep the advance
	// widths proportional to the size, as an SVG renderer sets them.
	// NewFace only computes a scale from the options and returns no error.
	f, _ := opentype.NewFace(src, &opentype.FaceOptions{Size: size, DPI: 72, Hinting: font.HintingNone})
	ts.faces[k] = f
	return f
}

// advance returns the width of s in pixels.
func (ts *typesetter) advance(s string, size float64, bold bool) float64 {
	return fromFixed(font.MeasureString(ts.face(size, bold), s))
}

// vmetrics returns the ascent and descent of the face in pixels.
func (ts *typesetter) vmetrics(size float64, bold bool) (ascent, descent float64) {
	m := ts.face(size, bold).Metrics()
	return fromFixed(m.Ascent), fromFixed(m.Descent)
}

// fit returns s, or its longest prefix followed by an ellipsis, whose width
// is at most maxW; it returns "" when not even the ellipsis fits.
func (ts *typesetter) fit(s string, size float64, bold bool, maxW float64) string {
	if ts.advance(s, size, bold) <= maxW {
		return s
	}
	r := []rune(s)
	lo, hi := 0, len(r) // the answer keeps lo runes: the largest count that fits
	for lo < hi {
		mid := (lo + hi + 1) / 2
		if ts.advance(string(r[:mid])+ellipsis, size, bold) <= maxW {
			lo = mid
		} else {
			hi = mid - 1
		}
	}
	if lo == 0 && ts.advance(ellipsis, size, bold) > maxW {
		return ""
	}
	return string(r[:lo]) + ellipsis
}

func fromFixed(v fixed.Int26_6) float64 { return float64(v) / 64 }

func toFixed(v float64) fixed.Int26_6 { return fixed.Int26_6(math.Round(v * 64)) }

// align says which point of a text its anchor is.
type align int

const (
	alignStart align = iota
	alignMiddle
	alignEnd
)

// factor returns the share of the advance that lies before the anchor.
func (a align) factor() float64 { return [...]float64{0, 0.5, 1}[a] }

// textItem is one line of text. Horizontal text has its baseline at y and
// its anchor at x; vertical text reads from bottom to top, turned 90°
// anticlockwise about (x, y), so its baseline is the vertical line through x
// and its anchor is at height y.
type textItem struct {
	s        string
	x, y     float64
	size     float64
	bold     bool
	align    align
	colour   color.NRGBA
	halo     float64 // width of the white outline in pixels; 0 for none
	vertical bool
}

// textMasks renders t as coverage masks of the figure: the glyphs and, when
// t has a halo, the glyphs widened by the halo width. Both masks share one
// bounds rectangle in figure pixels.
func (ts *typesetter) textMasks(t *textItem) (glyphs, halo *image.Alpha) {
	face := ts.face(t.size, t.bold)
	bounds, adv := font.BoundString(face, t.s)
	start := -t.align.factor() * fromFixed(adv) // dot position along the text, from the anchor
	margin := int(math.Ceil(t.halo)) + 1
	// The box in text coordinates (u along the text, v down), relative to
	// the anchor, before snapping to pixels.
	u0, u1 := start+fromFixed(bounds.Min.X), start+fromFixed(bounds.Max.X)
	v0, v1 := fromFixed(bounds.Min.Y), fromFixed(bounds.Max.Y)

	var local *image.Alpha // the text drawn horizontally
	var fig image.Rectangle
	var dot fixed.Point26_6
	if !t.vertical {
		fig = image.Rect(int(math.Floor(t.x+u0))-margin, int(math.Floor(t.y+v0))-margin,
			int(math.Ceil(t.x+u1))+margin, int(math.Ceil(t.y+v1))+margin)
		local = image.NewAlpha(image.Rect(0, 0, fig.Dx(), fig.Dy()))
		dot = fixed.Point26_6{X: toFixed(t.x + start - float64(fig.Min.X)), Y: toFixed(t.y - float64(fig.Min.Y))}
	} else {
		// Figure X = x + v, figure Y = y − u.
		fig = image.Rect(int(math.Floor(t.x+v0))-margin, int(math.Floor(t.y-u1))-margin,
			int(math.Ceil(t.x+v1))+margin, int(math.Ceil(t.y-u0))+margin)
		local = image.NewAlpha(image.Rect(0, 0, fig.Dy(), fig.Dx()))
		// Local column i covers u ∈ [fig.Max.Y − y − i − 1, …), so u = 0
		// sits at local x = fig.Max.Y − y.
		dot = fixed.Point26_6{X: toFixed(float64(fig.Max.Y) - t.y + start), Y: toFixed(t.x - float64(fig.Min.X))}
	}
	d := font.Drawer{Dst: local, Src: image.Opaque, Face: face, Dot: dot}
	d.DrawString(t.s)
	if t.halo > 0 {
		halo = dilate(local, t.halo)
	}
	if t.vertical {
		local = rotateLeft(local, fig)
		if halo != nil {
			halo = rotateLeft(halo, fig)
		}
	} else {
		local.Rect = fig
		if halo != nil {
			halo.Rect = fig
		}
	}
	return local, halo
}

// rotateLeft turns the mask a (drawn with its origin at 0, 0) by 90°
// anticlockwise into the figure rectangle fig: local pixel (i, j) goes to
// figure pixel (fig.Min.X + j, fig.Max.Y − 1 − i).
func rotateLeft(a *image.Alpha, fig image.Rectangle) *image.Alpha {
	out := image.NewAlpha(fig)
	w, h := a.Rect.Dx(), a.Rect.Dy()
	for j := 0; j < h; j++ {
		row := a.Pix[j*a.Stride : j*a.Stride+w]
		for i, v := range row {
			out.Pix[(fig.Dy()-1-i)*out.Stride+j] = v
		}
	}
	return out
}

// dilate returns the mask a widened by r pixels: each pixel takes the
// largest value of a within the disc of radius r around it (integer offsets
// with dx² + dy² ≤ r²).
func dilate(a *image.Alpha, r float64) *image.Alpha {
	out := image.NewAlpha(a.Rect)
	w, h := a.Rect.Dx(), a.Rect.Dy()
	ri := int(r)
	for dy := -ri; dy <= ri; dy++ {
		for dx := -ri; dx <= ri; dx++ {
			if float64(dx*dx+dy*dy) > r*r {
				continue
			}
			for y := max(0, -dy); y < min(h, h-dy); y++ {
				src := a.Pix[(y+dy)*a.Stride:]
				dst := out.Pix[y*out.Stride:]
				for x := max(0, -dx); x < min(w, w-dx); x++ {
					if v := src[x+dx]; v > dst[x] {
						dst[x] = v
					}
				}
			}
		}
	}
	return out
}

// drawText draws t into dst: first its halo in white, then its glyphs.
func (ts *typesetter) drawText(dst *image.RGBA, t *textItem) {
	if t.s == "" {
		return
	}
	glyphs, halo := ts.textMasks(t)
	if halo != nil {
		draw.DrawMask(dst, halo.Rect, image.NewUniform(haloColour), image.Point{}, halo, halo.Rect.Min, draw.Over)
	}
	draw.DrawMask(dst, glyphs.Rect, image.NewUniform(t.colour), image.Point{}, glyphs, glyphs.Rect.Min, draw.Over)
}
