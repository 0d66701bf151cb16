package figure

import (
	"bufio"
	"encoding/base64"
	"encoding/xml"
	"fmt"
	"image"
	"image/color"
	"io"
	"math"
	"strconv"
)

// DefaultVectorLimit is the number of visible points up to which WriteSVG
// writes one element per point when its vectorLimit is 0 or less: about
// 2 MB of SVG, which drawing programs still edit comfortably.
const DefaultVectorLimit = 50000

// WriteSVG writes f as an SVG 1.1 document (W3C Recommendation) of s.WidthPx
// × s.HeightPx user units, one unit per pixel of the PNG export. Its root
// element has viewBox "0 0 W H"; width and height are the same numbers in
// px, or, when s.DPI > 0, the physical size in millimetres,
//
//	width = WidthPx / DPI · 25.4 mm
//
// so that page-layout programs place it at its intended size.
//
// When at most vectorLimit points are visible (vectorLimit ≤ 0 means
// DefaultVectorLimit), every visible point is one <use> element, in drawing
// order, of a circle defined once per palette colour, its centre rounded to
// 0.1 unit; the points lie in a group with id "points", clipped to the map
// area. Above the limit the points become one embedded PNG image of the
// map area at one pixel per unit (an <image> whose xlink:href is a
// data:image/png;base64 URL) inside that group. Title, key and labels are
// <text> elements in either case, XML-escaped, with font-family naming the
// Go font first. References use xlink:href, which SVG 1.1 requires and
// current renderers accept.
//
// WriteSVG returns an *InputError for bad input (as WritePNG does) and the
// writer's error, with context, when writing fails.
func WriteSVG(w io.Writer, f *Figure, s Size, vectorLimit int) error {
	sc, err := f.scene(s)
	if err != nil {
		return err
	}
	if vectorLimit <= 0 {
		vectorLimit = DefaultVectorLimit
	}
	return writeSceneSVG(w, sc, vectorLimit)
}

// svgWriter writes SVG text to a buffered writer, keeping the first error.
type svgWriter struct {
	w       *bufio.Writer
	err     error
	ids     int    // gradients written so far, to name the next
	scratch []byte // reused for numbers
}

func (w *svgWriter) str(s string) {
	if w.err == nil {
		_, w.err = w.w.WriteString(s)
	}
}

func (w *svgWriter) bytes(b []byte) {
	if w.err == nil {
		_, w.err = w.w.Write(b)
	}
}

// num writes v rounded to 0.01.
func (w *svgWriter) num(v float64) {
	w.scratch = strconv.AppendFloat(w.scratch[:0], math.Round(v*100)/100, 'f', -1, 64)
	w.bytes(w.scratch)
}

// attr writes ` name="v"` with v rounded to 0.01.
func (w *svgWriter) attr(name string, v float64) {
	w.str(" " + name + `="`)
	w.num(v)
	w.str(`"`)
}

// text writes s escaped for XML character data and attribute values.
func (w *svgWriter) text(s string) {
	if w.err == nil {
		w.err = xml.EscapeText(w.w, []byte(s))
	}
}

// fill writes the fill colour and, when it is not opaque, its opacity.
func (w *svgWriter) fill(c color.NRGBA, opacity float64) {
	w.str(fmt.Sprintf(` fill="#%02x%02x%02x"`, c.R, c.G, c.B))
	if a := opacity * float64(c.A) / 255; a < 1 {
		w.attr("fill-opacity", a)
	}
}

// writeSceneSVG writes the scene.
func writeSceneSVG(out io.Writer, sc *scene, vectorLimit int) error {
	w := &svgWriter{w: bufio.NewWriterSize(out, 1<<16)}
	w.str(`<?xml version="1.0" encoding="UTF-8"?>` + "\n")
	w.str(`<svg xmlns="http://www.w3.org/2000/svg" xmlns:xlink="http://www.w3.org/1999/xlink" version="1.1"`)
	if sc.dpi > 0 {
		w.str(` width="`)
		w.num(float64(sc.width) / sc.dpi * mmPerInch)
		w.str(`mm" height="`)
		w.num(float64(sc.height) / sc.dpi * mmPerInch)
		w.str(`mm"`)
	} else {
		w.str(fmt.Sprintf(` width="%dpx" height="%dpx"`, sc.width, sc.height))
	}
	w.str(fmt.Sprintf(` viewBox="0 0 %d %d">`+"\n", sc.width, sc.height))
	if sc.title != "" {
		w.str("<title>")
		w.text(sc.title)
		w.str("</title>\n")
	}
	if sc.background.A > 0 {
		w.str(fmt.Sprintf(`<rect width="%d" height="%d"`, sc.width, sc.height))
		w.fill(sc.background, 1)
		w.str("/>\n")
	}
	if sc.points != nil {
		if err := sc.points.writeSVG(w, vectorLimit); err != nil {
			return err
		}
	}
	w.str(`<g font-family="` + fontFamily + `">` + "\n")
	for _, it := range sc.items {
		it.writeSVG(w)
	}
	w.str("</g>\n</svg>\n")
	if w.err == nil {
		w.err = w.w.Flush()
	}
	if w.err != nil {
		return fmt.Errorf("figure: writing SVG: %w", w.err)
	}
	return nil
}

// writeSVG writes the rectangle.
func (r *rectItem) writeSVG(w *svgWriter) {
	w.str("<rect")
	w.attr("x", r.b.x0)
	w.attr("y", r.b.y0)
	w.attr("width", r.b.w())
	w.attr("height", r.b.h())
	w.fill(r.colour, 1)
	w.str("/>\n")
}

// writeSVG writes the disc.
func (d *discItem) writeSVG(w *svgWriter) {
	w.str("<circle")
	w.attr("cx", d.cx)
	w.attr("cy", d.cy)
	w.attr("r", d.r)
	w.fill(d.colour, 1)
	w.str("/>\n")
}

// writeSVG writes the gradient and the rectangle it fills.
func (r *rampItem) writeSVG(w *svgWriter) {
	w.ids++
	id := "ramp" + strconv.Itoa(w.ids)
	w.str(`<defs><linearGradient id="` + id + `" x1="0" y1="0" x2="1" y2="0">` + "\n")
	for i, c := range r.stops {
		w.str(`<stop offset="`)
		w.num(float64(i) / math.Max(1, float64(len(r.stops)-1)))
		w.str(fmt.Sprintf(`" stop-color="#%02x%02x%02x"`, c.R, c.G, c.B))
		if c.A < 0xff {
			w.attr("stop-opacity", float64(c.A)/255)
		}
		w.str("/>\n")
	}
	w.str("</linearGradient></defs>\n<rect")
	w.attr("x", r.b.x0)
	w.attr("y", r.b.y0)
	w.attr("width", r.b.w())
	w.attr("height", r.b.h())
	w.str(` fill="url(#` + id + `)"/>` + "\n")
}

// writeSVG writes the text: with a halo, first a copy stroked in white
// (SVG 1.1 has no paint-order), then the filled text.
func (t *textItem) writeSVG(w *svgWriter) {
	if t.s == "" {
		return
	}
	if t.halo > 0 {
		t.element(w, func() {
			w.str(` fill="none" stroke="#ffffff" stroke-linejoin="round"`)
			w.attr("stroke-width", 2*t.halo)
		})
	}
	t.element(w, func() { w.fill(t.colour, 1) })
}

// element writes one <text> element, with paint attributes from paint.
func (t *textItem) element(w *svgWriter, paint func()) {
	w.str("<text")
	w.attr("x", t.x)
	w.attr("y", t.y)
	w.attr("font-size", t.size)
	if t.bold {
		w.str(` font-weight="bold"`)
	}
	switch t.align {
	case alignMiddle:
		w.str(` text-anchor="middle"`)
	case alignEnd:
		w.str(` text-anchor="end"`)
	}
	if t.vertical {
		w.str(` transform="rotate(-90 `)
		w.num(t.x)
		w.str(" ")
		w.num(t.y)
		w.str(`)"`)
	}
	paint()
	w.str(">")
	w.text(t.s)
	w.str("</text>\n")
}

// writeSVG writes the points, as vectors or as one embedded image.
func (p *pointsLayer) writeSVG(w *svgWriter, vectorLimit int) error {
	w.str(`<defs><clipPath id="map-area"><rect`)
	w.attr("x", float64(p.area.Min.X))
	w.attr("y", float64(p.area.Min.Y))
	w.attr("width", float64(p.area.Dx()))
	w.attr("height", float64(p.area.Dy()))
	w.str("/></clipPath>\n")
	vector := p.visible() <= vectorLimit
	if vector {
		for k, c := range p.palette {
			w.str(`<circle id="p` + strconv.Itoa(k) + `"`)
			w.attr("r", p.radius)
			w.fill(c, p.opacity)
			w.str("/>\n")
		}
	}
	w.str("</defs>\n" + `<g id="points" clip-path="url(#map-area)">` + "\n")
	if vector {
		p.writeVector(w)
	} else if err := p.writeImage(w); err != nil {
		return err
	}
	w.str("</g>\n")
	return nil
}

// writeVector writes one <use> element per visible point, in drawing order.
func (p *pointsLayer) writeVector(w *svgWriter) {
	buf := w.scratch[:0]
	p.eachVisible(func(i int, px, py float64) {
		buf = append(buf[:0], `<use xlink:href="#p`...)
		buf = strconv.AppendUint(buf, uint64(p.colours[i]), 10)
		buf = append(buf, `" x="`...)
		buf = strconv.AppendFloat(buf, math.Round(px*10)/10, 'f', -1, 64)
		buf = append(buf, `" y="`...)
		buf = strconv.AppendFloat(buf, math.Round(py*10)/10, 'f', -1, 64)
		buf = append(buf, "\"/>\n"...)
		w.bytes(buf)
	})
	w.scratch = buf
}

// writeImage writes the points as one PNG image of the map area, on a
// transparent background, base64-encoded into a data URL.
func (p *pointsLayer) writeImage(w *svgWriter) error {
	img := image.NewRGBA(image.Rect(0, 0, p.area.Dx(), p.area.Dy()))
	if err := p.draw(img, color.NRGBA{}); err != nil {
		return err
	}
	w.str(`<image`)
	w.attr("x", float64(p.area.Min.X))
	w.attr("y", float64(p.area.Min.Y))
	w.attr("width", float64(p.area.Dx()))
	w.attr("height", float64(p.area.Dy()))
	w.str(` preserveAspectRatio="none" xlink:href="data:image/png;base64,`)
	if w.err == nil {
		enc := base64.NewEncoder(base64.StdEncoding, w.w)
		if err := encodePNG(enc, img, 0); err != nil {
			return fmt.Errorf("figure: writing SVG: %w", err)
		}
		w.err = enc.Close()
	}
	w.str(`"/>` + "\n")
	return nil
}
