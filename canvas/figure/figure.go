package figure

import (
	"image"
	"image/color"
	"math"

	"lodestone/canvas/raster"
)

// DefaultScreenWidth is the on-screen map width, in logical pixels, that
// point radii refer to when Figure.ScreenWidth is 0 and there is no View.
const DefaultScreenWidth = 1000

// screenMargin is the free border, in logical pixels, the map widget keeps
// around a fitted layout; the figure keeps the same border, scaled.
const screenMargin = 24

// Figure is a map to export: what the map widget shows, and the title, key
// and labels around it.
//
// WritePNG and WriteSVG refuse a figure with an *InputError wrapping
// ErrOddLength (Layout), ErrLength (Colours, Palette), ErrPaletteIndex
// (Colours), ErrIndex (Order), ErrStyle (ScreenRadius, Opacity,
// ScreenWidth), ErrView or ErrCoordinate (Labels), and a size with ErrSize,
// or ErrNoRoom when the title and key leave the map less than 16 × 16
// pixels.
type Figure struct {
	// Layout holds the points' coordinates, interleaved x0, y0, x1, y1, …
	// in data units with y up.
	Layout []float32
	// Colours holds each point's palette index, or raster.Hidden for a
	// point not drawn.
	Colours []uint16
	// Palette holds the colours, fewer than raster.Hidden.
	Palette []color.NRGBA
	// Order is the drawing order (as raster.Shuffle makes); nil means
	// raster.Shuffle(n, 1), the map widget's order.
	Order []int32
	// View is the on-screen view to reproduce, in screen pixels (device
	// or logical, as the widget reports it); the figure shows at least the
	// data rectangle the screen showed, centred, at equal scale on both
	// axes. nil fits all points, with the widget's margin.
	View *raster.View
	// ScreenRadius is the point radius on screen in logical pixels and
	// Opacity the points' opacity in (0, 1]; 0 chooses
	// raster.DefaultStyle's value for the number of points. The radius in
	// the figure is
	//
	//	r_out = ScreenRadius · (output pixels per data unit) / (screen logical pixels per data unit)
	//
	// which is ScreenRadius · mapWidth / ScreenWidth when the figure shows
	// the screen's width, kept within [0.25, raster.MaxRadius] pixels.
	ScreenRadius, Opacity float64
	// ScreenWidth is the width of the on-screen map in logical pixels; 0
	// means View.Width when View is set, else DefaultScreenWidth.
	ScreenWidth int
	// Title is printed above the map when not empty.
	Title string
	// Key, when not nil, explains the colours beside the map: on the right
	// when the figure is at least as wide as high, else below.
	Key *Key
	// Labels are texts placed on the map near their anchors.
	Labels []Label
	// Background fills the figure; alpha 0 leaves it transparent.
	Background color.NRGBA
}

// Key explains the map's colours: a list of categories when Entries is not
// empty, else a colour bar through Ramp (low to high) when Ramp is not
// empty.
type Key struct {
	Title   string
	Entries []KeyEntry
	// Counts shows each entry's Count after its label.
	Counts bool
	// Ramp holds the colour bar's colours from low to high, evenly spaced;
	// Low and High label its ends.
	Ramp      []color.NRGBA
	Low, High string
	// Missing is the number of cells without a value, shown below the bar
	// with the grey of colour.Missing when positive.
	Missing int
}

// KeyEntry is one category of a key.
type KeyEntry struct {
	Label  string
	Colour color.NRGBA
	Count  int
}

// Label is a text placed on the map at, or near, an anchor point in data
// coordinates (usually the category's centre from Medoids). Labels are
// placed in the order given, each in the first free place around its
// anchor, so the most important should come first.
type Label struct {
	Text string
	X, Y float64
}

// check returns an error for input the figure cannot draw.
func (f *Figure) check() error {
	n := len(f.Layout) / 2
	switch {
	case len(f.Layout)%2 != 0:
		return inputError("Layout", -1, ErrOddLength)
	case len(f.Colours) != n:
		return inputError("Colours", -1, ErrLength)
	case len(f.Palette) >= raster.Hidden:
		return inputError("Palette", -1, ErrLength)
	case !(f.ScreenRadius >= 0) || math.IsInf(f.ScreenRadius, 1):
		return inputError("ScreenRadius", -1, ErrStyle)
	case !(f.Opacity >= 0 && f.Opacity <= 1):
		return inputError("Opacity", -1, ErrStyle)
	case f.ScreenWidth < 0:
		return inputError("ScreenWidth", -1, ErrStyle)
	}
	for i, c := range f.Colours {
		if c != raster.Hidden && int(c) >= len(f.Palette) {
			return inputError("Colours", i, ErrPaletteIndex)
		}
	}
	for k, i := range f.Order {
		if i < 0 || int(i) >= n {
			return inputError("Order", k, ErrIndex)
		}
	}
	if v := f.View; v != nil {
		if !(v.Scale > 0) || math.IsInf(v.Scale, 1) || v.Width <= 0 || v.Height <= 0 ||
			math.IsNaN(v.CenterX) || math.IsInf(v.CenterX, 0) || math.IsNaN(v.CenterY) || math.IsInf(v.CenterY, 0) {
			return inputError("View", -1, ErrView)
		}
	}
	for i, l := range f.Labels {
		if math.IsNaN(l.X) || math.IsInf(l.X, 0) || math.IsNaN(l.Y) || math.IsInf(l.Y, 0) {
			return inputError("Labels", i, ErrCoordinate)
		}
	}
	return nil
}

// minMapPx is the smallest width and height of the map area.
const minMapPx = 16

// scene lays the figure out at size s.
func (f *Figure) scene(s Size) (*scene, error) {
	if err := s.check(); err != nil {
		return nil, err
	}
	if err := f.check(); err != nil {
		return nil, err
	}
	ts, err := newTypesetter()
	if err != nil {
		return nil, err
	}
	W, H := float64(s.WidthPx), float64(s.HeightPx)
	T := s.textPx()
	pad := math.Round(0.8 * T)
	sc := &scene{width: s.WidthPx, height: s.HeightPx, dpi: s.DPI, background: f.Background, title: f.Title}

	top := pad
	var title *textItem
	if f.Title != "" {
		size := 1.3 * T
		if w := ts.advance(f.Title, size, true); w > W-2*pad {
			size = math.Max(T, size*(W-2*pad)/w)
		}
		asc, desc := ts.vmetrics(size, true)
		title = &textItem{s: ts.fit(f.Title, size, true, W-2*pad), y: top + asc, size: size, bold: true, align: alignMiddle, colour: ink}
		top = math.Round(top + asc + desc + 0.5*T)
	}

	area := box{pad, top, W - pad, H - pad}
	var kl *keyLayout
	if f.Key != nil {
		if W >= H {
			kl = layoutKey(ts, f.Key, T, 0.4*(W-2*pad), H-pad-top)
			area.x1 = math.Round(W - pad - kl.w - pad)
			kl.origin(W-pad-kl.w, top)
		} else {
			kl = layoutKey(ts, f.Key, T, W-2*pad, 0.4*(H-pad-top))
			area.y1 = math.Round(H - pad - kl.h - pad)
			kl.origin(pad, H-pad-kl.h)
		}
	}
	rect := image.Rect(int(area.x0), int(area.y0), int(area.x1), int(area.y1))
	if rect.Dx() < minMapPx || rect.Dy() < minMapPx {
		return nil, inputError("Size", -1, ErrNoRoom)
	}
	p, err := f.pointsLayer(rect)
	if err != nil {
		return nil, err
	}
	sc.points = p
	if title != nil {
		title.x = float64(rect.Min.X+rect.Max.X) / 2
		half := ts.advance(title.s, title.size, true) / 2
		title.x = math.Max(pad+half, math.Min(W-pad-half, title.x))
		sc.items = append(sc.items, title)
	}
	sc.items = append(sc.items, placeLabels(ts, f.Labels, p, T)...)
	if kl != nil {
		sc.items = append(sc.items, kl.items...)
	}
	return sc, nil
}

// pointsLayer returns the map drawn into the area rect of the figure.
func (f *Figure) pointsLayer(rect image.Rectangle) (*pointsLayer, error) {
	n := len(f.Layout) / 2
	def := raster.DefaultStyle(n)
	radius, opacity := f.ScreenRadius, f.Opacity
	if radius == 0 {
		radius = def.Radius
	}
	if opacity == 0 {
		opacity = def.Opacity
	}
	w, h := rect.Dx(), rect.Dy()
	var v raster.View
	if f.View == nil {
		sw := float64(f.ScreenWidth)
		if sw == 0 {
			sw = DefaultScreenWidth
		}
		k := float64(w) / sw // output pixels per screen pixel
		radius *= k
		var err error
		if v, err = raster.Fit(f.Layout, w, h, math.Min(screenMargin*k, float64(min(w, h))/4)); err != nil {
			return nil, err
		}
	} else {
		sv := *f.View
		sw := float64(f.ScreenWidth)
		if sw == 0 {
			sw = float64(sv.Width)
		}
		dw, dh := float64(sv.Width)/sv.Scale, float64(sv.Height)/sv.Scale // the data rectangle shown
		scale := math.Min(float64(w)/dw, float64(h)/dh)
		// Screen logical pixels per data unit: sv.Scale · sw / sv.Width.
		radius *= scale * float64(sv.Width) / (sw * sv.Scale)
		v = raster.View{CenterX: sv.CenterX, CenterY: sv.CenterY, Scale: scale, Width: w, Height: h}
		if math.IsInf(radius, 0) || math.IsNaN(radius) || !(scale > 0) || math.IsInf(scale, 1) {
			return nil, inputError("View", -1, ErrView)
		}
	}
	order := f.Order
	if order == nil {
		order = raster.Shuffle(n, 1)
	}
	return &pointsLayer{
		area: rect, view: v,
		layout: f.Layout, colours: f.Colours, palette: f.Palette, order: order,
		radius: math.Max(minRadius, math.Min(radius, raster.MaxRadius)), opacity: opacity,
	}, nil
}

// minRadius is the smallest point radius drawn, in output pixels.
const minRadius = 0.25

// pointsLayer is the map in a figure: the points drawn into the area.
type pointsLayer struct {
	area    image.Rectangle // in figure pixels
	view    raster.View     // of the area: Width and Height are its size
	layout  []float32
	colours []uint16
	palette []color.NRGBA
	order   []int32
	radius  float64 // in output pixels
	opacity float64
}

// draw draws the points into dst, an image the size of the area, over the
// background bg.
func (p *pointsLayer) draw(dst *image.RGBA, bg color.NRGBA) error {
	st := raster.Style{Radius: p.radius, Opacity: p.opacity, PixelScale: 1, Background: bg}
	return raster.Draw(dst, p.layout, p.colours, p.palette, p.order, p.view, st, 0)
}

// eachVisible calls fn, in drawing order, with each drawn point whose disc
// can touch the area, and its centre in figure pixels.
func (p *pointsLayer) eachVisible(fn func(i int, px, py float64)) {
	ox, oy := float64(p.area.Min.X), float64(p.area.Min.Y)
	w, h := float64(p.area.Dx()), float64(p.area.Dy())
	r := p.radius
	for _, i := range p.order {
		if p.colours[i] == raster.Hidden {
			continue
		}
		px, py := p.view.ToPixel(float64(p.layout[2*i]), float64(p.layout[2*i+1]))
		if px > -r && px < w+r && py > -r && py < h+r { // false for NaN
			fn(int(i), px+ox, py+oy)
		}
	}
}

// visible returns the number of points eachVisible visits.
func (p *pointsLayer) visible() int {
	n := 0
	p.eachVisible(func(int, float64, float64) { n++ })
	return n
}
