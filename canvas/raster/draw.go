package raster

import (
	"context"
	"encoding/binary"
	"image"
	"image/color"
	"math"

	"lodestone/compute/parallel"
)

// Hidden is the colour index of a point that is not drawn.
const Hidden = math.MaxUint16

// minBandShift sets the smallest height, 1 << minBandShift pixels, of the
// horizontal bands the image is drawn in; a band of a 1600-pixel-wide image
// then fits in a core's cache.
const minBandShift = 6

// MaxSize is the largest width or height of an image Draw accepts.
const MaxSize = 1 << 14

// Renderer draws points into an image, keeping its working memory from one
// frame to the next: after the first frame of a size, a frame allocates only
// the few small objects of starting its goroutines, however many points it
// draws. The zero value is ready to use. A Renderer must not be used by
// several goroutines at once.
type Renderer struct {
	stamps  *stampSet
	paints  []paint
	buckets [][]entry  // buckets[block·bands + band]: the block's points touching the band, in drawing order
	places  []uint16   // places[k]: the bands the point order[k] was put in (see place), or noPlace
	errs    []error    // errs[block]: the first bad input the block met
	bands   [][]uint32 // bands[worker]: the band being drawn, as packed pixels
	bad     []int      // bad[block]: the first colour outside the palette Redraw found in the block, or −1

	// The last frame Draw drew, which Redraw draws again: valid after a
	// Draw that succeeded, with its bins, blocks and background.
	last       frame
	lastBlocks int
	lastSplit  int // the threads the last Draw split its order for
	lastBG     uint32
	drawn      bool
}

// entry is one point to draw in one band.
type entry struct {
	x, y   int16 // top-left pixel of the point's stamp
	colour uint16
	sub    uint8 // sub-pixel offset: index into stampSet.stamps
}

// paint is a palette colour ready for blending: its red and blue channels
// and its green channel with a full alpha, each pair packed in the low bytes
// of two 16-bit lanes, and the colour's own alpha (0 … 255).
type paint struct {
	rb, ga uint32
	alpha  uint32
}

// frame holds what every part of one Draw needs.
type frame struct {
	layout    []float32
	colours   []uint16
	order     []int32
	npal      int
	ox, oy    float64 // px = x·scale + ox, py = oy − y·scale
	scale     float64
	lo, hiX   float64 // a centre outside (lo, hiX) × (lo, hiY) cannot touch the image
	hiY       float64
	w, h      int
	bandH     int // band height, 1 << bandShift
	bandShift int
	bands     int
}

// Draw draws the points of layout (interleaved x, y in data coordinates) into
// dst as discs, in the order given: order[0] first, so later points cover
// earlier ones. Shuffle gives an order in which no group of points hides
// under another. Point i has colour palette[colours[i]], or is skipped when
// colours[i] is Hidden; points with a non-finite coordinate or outside the
// view are skipped too. dst is first filled with s.Background, then each disc
// is blended over it (premultiplied "over") with alpha
//
//	coverage · s.Opacity · colour alpha
//
// where coverage is the exact fraction of a pixel inside the disc, for the
// point's centre rounded to a quarter pixel. The image is split into
// horizontal bands drawn in parallel on threads goroutines (threads < 1:
// all processors); each band draws its points in the given order, so the
// image is the same for every number of threads.
//
// dst must be v.Width × v.Height, each at most MaxSize. Draw returns an
// *InputError (and leaves dst unchanged) when layout has odd length, colours
// is not one per point, the palette has Hidden or more entries, an order
// entry is not a point, a drawn point's colour index lies outside the
// palette, or the view or style is out of range.
func (r *Renderer) Draw(dst *image.RGBA, layout []float32, colours []uint16, palette []color.NRGBA, order []int32, v View, s Style, threads int) error {
	r.drawn = false
	radius, err := s.deviceRadius()
	if err != nil {
		return err
	}
	if err := checkInputs(dst, layout, colours, palette, v); err != nil {
		return err
	}
	threads = parallel.Threads(threads)
	if r.stamps == nil || r.stamps.radius != radius || r.stamps.opacity != s.Opacity {
		r.stamps = newStampSet(radius, s.Opacity)
	}
	r.stamps.setStride(v.Width)
	f := frame{
		layout: layout, colours: colours, order: order, npal: len(palette),
		ox: float64(v.Width)/2 - v.CenterX*v.Scale, oy: float64(v.Height)/2 + v.CenterY*v.Scale,
		scale: v.Scale,
		lo:    -(radius + 2), hiX: float64(v.Width) + radius + 2, hiY: float64(v.Height) + radius + 2,
		w: v.Width, h: v.Height,
		bandShift: minBandShift,
	}
	for 1<<f.bandShift < 4*r.stamps.maxH {
		f.bandShift++
	}
	f.bandH = 1 << f.bandShift
	f.bands = (f.h + f.bandH - 1) / f.bandH
	r.preparePalette(palette)
	r.prepareBuckets(threads * f.bands)
	if cap(r.places) < len(order) {
		r.places = make([]uint16, len(order))
	}
	r.places = r.places[:len(order)]
	if cap(r.errs) < threads {
		r.errs = make([]error, threads)
	}
	r.errs = r.errs[:threads]
	clear(r.errs)

	parallel.For(len(order), threads, func(lo, hi, block int) {
		r.errs[block] = r.bin(&f, lo, hi, r.buckets[block*f.bands:(block+1)*f.bands])
	})
	for _, e := range r.errs {
		if e != nil {
			return e
		}
	}

	bg := premultiplied(s.Background)
	blocks := min(threads, len(order)) // the number of blocks parallel.For made
	r.drawBands(dst, &f, blocks, bg, threads)
	r.last, r.lastBlocks, r.lastSplit, r.lastBG, r.drawn = f, blocks, threads, bg, true
	return nil
}

// Redraw draws the points of the last frame Draw drew into dst again with
// new colours: the image equals that of Draw with the same layout, order,
// view and style and these colours and palette, byte for byte, but the
// points are not transformed and sorted into bands again, which is most
// of the work of a frame when only the colours change (a new selection or
// paint). The layout and order given to that Draw must not have changed
// since. Redraw works on threads goroutines (threads < 1: all processors),
// and may follow a Redraw.
//
// Redraw returns an *InputError (and leaves dst unchanged) when no Draw
// has succeeded since the Renderer was made or since a Draw failed
// (ErrNoFrame), when dst is not the size of that frame, when colours is not
// one per point of its layout, when the palette has Hidden or more
// entries, or when a colour index, of any point (unlike Draw, which checks
// those of the points in its order), is neither Hidden nor in the palette;
// the first such point is named.
func (r *Renderer) Redraw(dst *image.RGBA, colours []uint16, palette []color.NRGBA, threads int) error {
	f := &r.last
	switch {
	case !r.drawn:
		return &InputError{Arg: "renderer", Index: -1, Err: ErrNoFrame}
	case dst == nil || dst.Rect.Dx() != f.w || dst.Rect.Dy() != f.h:
		return &InputError{Arg: "view size", Index: -1, Err: ErrView}
	case len(colours) != len(f.layout)/2:
		return &InputError{Arg: "colours", Index: -1, Err: ErrLength}
	case len(palette) >= Hidden:
		return &InputError{Arg: "palette", Index: -1, Err: ErrPaletteSize}
	}
	threads = parallel.Threads(threads)
	if cap(r.bad) < threads {
		r.bad = make([]int, threads)
	}
	r.bad = r.bad[:threads]
	npal := len(palette)
	parallel.For(len(colours), threads, func(lo, hi, block int) {
		r.bad[block] = -1
		for i, c := range colours[lo:hi] {
			if c != Hidden && int(c) >= npal {
				r.bad[block] = lo + i
				return
			}
		}
	})
	for _, i := range r.bad[:min(threads, len(colours))] {
		if i >= 0 {
			return &InputError{Arg: "colours", Index: i, Err: ErrPaletteIndex}
		}
	}
	f.colours, f.npal = colours, npal
	r.preparePalette(palette)
	parallel.For(len(f.order), r.lastSplit, func(lo, hi, block int) {
		r.recolour(f, lo, hi, r.buckets[block*f.bands:(block+1)*f.bands])
	})
	r.drawBands(dst, f, r.lastBlocks, r.lastBG, threads)
	return nil
}

// recolour gives the entries of the points order[lo:hi], which Draw put
// in buckets (the block's buckets, band by band), their points' colours
// from f.colours. A block's entries in a band are its points placed in
// that band, in order, so each band's next entry is the next such point's.
func (r *Renderer) recolour(f *frame, lo, hi int, buckets [][]entry) {
	var next [MaxSize >> minBandShift]int32 // next[band]: the band's next entry
	for k, code := range r.places[lo:hi] {
		if code == noPlace {
			continue
		}
		c := f.colours[f.order[lo+k]]
		b0 := int(code >> 1)
		for b := b0; b <= b0+int(code&1); b++ {
			buckets[b][next[b]].colour = c
			next[b]++
		}
	}
}

// drawBands draws every band of frame f on threads goroutines, handing the
// bands out as the goroutines come free.
func (r *Renderer) drawBands(dst *image.RGBA, f *frame, blocks int, bg uint32, threads int) {
	r.prepareBandBuffers(threads, f.w*f.bandH)
	parallel.ForChunks(context.Background(), f.bands, 1, threads, func(lo, hi, worker int) {
		for band := lo; band < hi; band++ {
			r.drawBand(dst, f, band, blocks, bg, r.bands[worker])
		}
	})
}

// Draw draws like Renderer.Draw with a Renderer of its own, which it
// allocates; use a Renderer to draw frame after frame.
func Draw(dst *image.RGBA, layout []float32, colours []uint16, palette []color.NRGBA, order []int32, v View, s Style, threads int) error {
	var r Renderer
	return r.Draw(dst, layout, colours, palette, order, v, s, threads)
}

// checkInputs checks the sizes Draw relies on.
func checkInputs(dst *image.RGBA, layout []float32, colours []uint16, palette []color.NRGBA, v View) error {
	switch {
	case len(layout)%2 != 0:
		return &InputError{Arg: "layout", Index: -1, Err: ErrOddLength}
	case len(colours) != len(layout)/2:
		return &InputError{Arg: "colours", Index: -1, Err: ErrLength}
	case len(palette) >= Hidden:
		return &InputError{Arg: "palette", Index: -1, Err: ErrPaletteSize}
	case dst == nil || dst.Rect.Dx() != v.Width || dst.Rect.Dy() != v.Height ||
		v.Width <= 0 || v.Height <= 0 || v.Width > MaxSize || v.Height > MaxSize:
		return &InputError{Arg: "view size", Index: -1, Err: ErrView}
	case !(v.Scale > 0) || math.IsInf(v.Scale, 1) || math.IsNaN(v.CenterX) || math.IsNaN(v.CenterY) ||
		math.IsInf(v.CenterX, 0) || math.IsInf(v.CenterY, 0):
		return &InputError{Arg: "view", Index: -1, Err: ErrView}
	}
	return nil
}

// preparePalette packs the palette for blending.
func (r *Renderer) preparePalette(palette []color.NRGBA) {
	if cap(r.paints) < len(palette) {
		r.paints = make([]paint, len(palette))
	}
	r.paints = r.paints[:len(palette)]
	for i, c := range palette {
		r.paints[i] = paint{
			rb:    uint32(c.R) | uint32(c.B)<<16,
			ga:    uint32(c.G) | 0xff<<16,
			alpha: uint32(c.A),
		}
	}
}

// prepareBuckets empties n buckets, keeping their memory.
func (r *Renderer) prepareBuckets(n int) {
	if len(r.buckets) < n {
		r.buckets = append(r.buckets, make([][]entry, n-len(r.buckets))...)
	}
	for i := range r.buckets {
		r.buckets[i] = r.buckets[i][:0]
	}
}

// prepareBandBuffers makes sure each of threads workers has a band buffer
// of size pixels.
func (r *Renderer) prepareBandBuffers(threads, size int) {
	for len(r.bands) < threads {
		r.bands = append(r.bands, nil)
	}
	for w := range r.bands {
		if cap(r.bands[w]) < size {
			r.bands[w] = make([]uint32, size)
		}
		r.bands[w] = r.bands[w][:size]
	}
}

// bin transforms the points order[lo:hi] to pixels and appends each one
// that touches the image to the buckets of the bands it touches, keeping the
// drawing order, and notes in r.places[lo:hi] which bands each point went
// to. Hidden points are binned too (and skipped when drawn), so that Redraw
// can show them with new colours. It returns an error for the first order
// entry, in order, that is not a point or names a point whose colour is
// outside the palette.
//
// Points are first gathered from layout and colours in small batches by a
// tight loop, so that the processor can fetch many scattered points at once.
func (r *Renderer) bin(f *frame, lo, hi int, buckets [][]entry) error {
	const batch = 256
	var xs, ys [batch]float32
	var cs [batch]uint16
	n := int32(len(f.colours))
	for start := lo; start < hi; start += batch {
		end := min(start+batch, hi)
		ord := f.order[start:end]
		badIndex := -1
		for k, i := range ord {
			if i < 0 || i >= n {
				badIndex = k
				break
			}
			xs[k], ys[k], cs[k] = f.layout[2*i], f.layout[2*i+1], f.colours[i]
		}
		gathered := len(ord)
		if badIndex >= 0 {
			gathered = badIndex
		}
		for k := range gathered {
			if c := cs[k]; c != Hidden && int(c) >= f.npal {
				return &InputError{Arg: "colours", Index: int(ord[k]), Err: ErrPaletteIndex}
			}
		}
		if badIndex >= 0 {
			return &InputError{Arg: "order", Index: start + badIndex, Err: ErrIndex}
		}
		r.binBatch(f, xs[:len(ord)], ys[:len(ord)], cs[:len(ord)], buckets, r.places[start:end])
	}
	return nil
}

// binBatch bins gathered points whose indices and colours are valid, and
// notes the bands each was put in in places.
func (r *Renderer) binBatch(f *frame, xs, ys []float32, cs []uint16, buckets [][]entry, places []uint16) {
	const bias = MaxRadius + 4 // makes px + bias positive for every centre kept
	stamps := &r.stamps.stamps
	for k, c := range cs {
		px := float64(xs[k])*f.scale + f.ox
		py := f.oy - float64(ys[k])*f.scale
		if !(px > f.lo && px < f.hiX && py > f.lo && py < f.hiY) {
			places[k] = noPlace
			continue
		}
		qx := int((px+bias)*subdiv) - bias*subdiv
		qy := int((py+bias)*subdiv) - bias*subdiv
		sub := (qy&(subdiv-1))<<subdivShift | qx&(subdiv-1)
		st := &stamps[sub]
		x := qx>>subdivShift + st.dx
		y := qy>>subdivShift + st.dy
		if st.w == 0 || x+st.w <= 0 || x >= f.w || y+st.h <= 0 || y >= f.h {
			places[k] = noPlace
			continue
		}
		e := entry{x: int16(x), y: int16(y), colour: c, sub: uint8(sub)}
		b0 := max(y, 0) >> f.bandShift
		b1 := min(y+st.h-1, f.h-1) >> f.bandShift
		for b := b0; b <= b1; b++ {
			buckets[b] = append(buckets[b], e)
		}
		places[k] = place(b0, b1)
	}
}

// noPlace marks a point placed in no band.
const noPlace = math.MaxUint16

// place returns the note of a point put in bands b0 … b1: b0·2, plus 1 when
// it went to the next band as well. A stamp is at most a quarter of a band
// high (see Draw), so it touches at most two bands, and there are at most
// MaxSize >> minBandShift bands, so the note stays below noPlace.
func place(b0, b1 int) uint16 { return uint16(b0<<1 | (b1 - b0)) }

// premultiplied returns c as the four bytes of a premultiplied RGBA pixel,
// packed little-endian.
func premultiplied(c color.NRGBA) uint32 {
	r, g, b, a := c.RGBA()
	return r>>8 | (g>>8)<<8 | (b>>8)<<16 | (a>>8)<<24
}

// drawBand draws one band: it fills the worker's band buffer with the
// background, blends the band's points into it, block by block in block
// order (so in drawing order), and copies it into dst.
func (r *Renderer) drawBand(dst *image.RGBA, f *frame, band, blocks int, bg uint32, buf []uint32) {
	y0 := band * f.bandH
	y1 := min(y0+f.bandH, f.h)
	w := f.w
	buf = buf[:(y1-y0)*w]
	for k := range buf {
		buf[k] = bg
	}
	stamps := &r.stamps.stamps
	for b := 0; b < blocks; b++ {
		for _, e := range r.buckets[b*f.bands+band] {
			if e.colour == Hidden {
				continue
			}
			st := &stamps[e.sub]
			x, y := int(e.x), int(e.y)
			p := r.paints[e.colour]
			if p.alpha != 0xff || x < 0 || x+st.w > w || y < y0 || y+st.h > y1 {
				drawClipped(buf, w, st, x, y-y0, y1-y0, p)
				continue
			}
			// The whole stamp lies in the band and the colour is opaque.
			o := (y-y0)*w + x
			alphas := st.alphas[:len(st.offs)]
			for k, rel := range st.offs {
				buf[o+rel] = over(buf[o+rel], p.rb, p.ga, alphas[k])
			}
		}
	}
	base := dst.PixOffset(dst.Rect.Min.X, dst.Rect.Min.Y)
	for y := y0; y < y1; y++ {
		row := dst.Pix[base+y*dst.Stride : base+y*dst.Stride+4*w]
		src := buf[(y-y0)*w : (y-y0+1)*w]
		for x, v := range src {
			binary.LittleEndian.PutUint32(row[4*x:], v)
		}
	}
}

// drawClipped draws the pixels of stamp st placed with its top-left pixel at
// column x, row y of buf (rows of w pixels) that fall in columns [0, w) and
// rows [0, rows), with the alphas scaled by the colour's own alpha α,
// rounded: a ← (a·α + 127) / 255.
func drawClipped(buf []uint32, w int, st *stamp, x, y, rows int, p paint) {
	for _, sp := range st.pixels {
		px, py := x+sp.i, y+sp.j
		if px < 0 || px >= w || py < 0 || py >= rows {
			continue
		}
		a := sp.a
		if p.alpha != 0xff {
			a = (a*p.alpha + 127) / 0xff
		}
		buf[py*w+px] = over(buf[py*w+px], p.rb, p.ga, a)
	}
}

// over blends a colour with alpha a (0 … alphaOne) over the premultiplied
// pixel d (RGBA bytes packed little-endian); rb and ga hold the colour's red
// and blue, and its green and a full alpha, in the low bytes of two 16-bit
// lanes. Every channel becomes
//
//	(src·a + dst·(alphaOne − a) + alphaOne/2) / alphaOne
//
// two channels per multiplication. src has alpha 255, so this is the
// premultiplied "over" operator with coverage a/alphaOne.
func over(d, rb, ga, a uint32) uint32 {
	na := alphaOne - a
	rb = ((rb*a + (d&0x00ff00ff)*na + 0x00800080) >> 8) & 0x00ff00ff
	ga = ((ga*a + ((d>>8)&0x00ff00ff)*na + 0x00800080) >> 8) & 0x00ff00ff
	return rb | ga<<8
}
