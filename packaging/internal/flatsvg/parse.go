// Package flatsvg reads a small, flat subset of SVG 1.1 and rasterises it at
// any size with golang.org/x/image/vector, so that the program's icon is
// drawn at every size from one hand-written source file.
//
// The subset: an <svg> root with a viewBox, and as its children only
// filled <path>, <polygon> and <circle> elements, painted in document order.
// Path data may use the absolute commands M, L, H, V, C and Z. A shape's
// fill is a #rrggbb or #rgb colour or "none" (black when absent, as in SVG),
// with an optional fill-opacity. <title>, <desc> and <metadata> are skipped.
// Anything else — strokes, transforms, groups, gradients, relative path
// commands, style sheets — is refused with an error rather than ignored, so
// that a file this package accepts draws the same here as in any SVG
// renderer.
package flatsvg

import (
	"bytes"
	"encoding/xml"
	"errors"
	"fmt"
	"image/color"
	"io"
	"math"
	"strconv"
	"strings"
)

// The errors a ParseError wraps; test for them with errors.Is.
var (
	ErrSyntax      = errors.New("malformed value")
	ErrUnsupported = errors.New("outside the supported SVG subset")
	ErrViewBox     = errors.New("missing or invalid viewBox")
)

// ParseError is the error Parse returns for a file it cannot read. Line and
// Column are where the offending element's start tag ends (both 1-based).
type ParseError struct {
	Line, Column int
	Element      string // the element's name, "" when the file is not XML
	Attr         string // the attribute, "" when the element itself is at fault
	Err          error  // wraps ErrSyntax, ErrUnsupported or ErrViewBox, or an XML error
}

func (e *ParseError) Error() string {
	where := fmt.Sprintf("line %d, column %d", e.Line, e.Column)
	switch {
	case e.Element != "" && e.Attr != "":
		where += fmt.Sprintf(": <%s> attribute %s", e.Element, e.Attr)
	case e.Element != "":
		where += fmt.Sprintf(": <%s>", e.Element)
	}
	return "flatsvg: " + where + ": " + e.Err.Error()
}

func (e *ParseError) Unwrap() error { return e.Err }

// Op is the kind of a path segment.
type Op uint8

// The segment kinds of a Path.
const (
	MoveTo  Op = iota // start a subpath at P[0]
	LineTo            // straight line to P[0]
	CubicTo           // cubic Bézier curve through controls P[0], P[1] to P[2]
	Close             // straight line back to the subpath's start
)

// Point is a position in the image's user space (the viewBox's units).
type Point struct{ X, Y float64 }

// Segment is one step of a path; only the points its Op uses are set.
type Segment struct {
	Op Op
	P  [3]Point
}

// Shape is a filled area: its outline, filled by the non-zero rule, and
// its colour with the fill opacity in Fill.A.
type Shape struct {
	Path []Segment
	Fill color.NRGBA
}

// Image is a parsed file: its user space, from (MinX, MinY) of size
// Width × Height, and its shapes in painting order.
type Image struct {
	MinX, MinY    float64
	Width, Height float64
	Shapes        []Shape
}

const svgNS = "http://www.w3.org/2000/svg"

// Parse reads an SVG file in the subset described in the package comment.
// It returns a *ParseError for anything outside the subset.
func Parse(r io.Reader) (*Image, error) {
	d := xml.NewDecoder(r)
	p := &parser{d: d}
	img, err := p.document()
	if err != nil {
		var pe *ParseError
		if !errors.As(err, &pe) {
			line, col := d.InputPos()
			err = &ParseError{Line: line, Column: col, Err: err}
		}
		return nil, err
	}
	return img, nil
}

type parser struct {
	d    *xml.Decoder
	elem string // the element being read
}

// fail returns a ParseError at the decoder's position.
func (p *parser) fail(attr string, err error) error {
	line, col := p.d.InputPos()
	return &ParseError{Line: line, Column: col, Element: p.elem, Attr: attr, Err: err}
}

func (p *parser) document() (*Image, error) {
	root, err := p.nextStart()
	if err != nil {
		return nil, err
	}
	if root == nil || root.Name.Local != "svg" {
		return nil, fmt.Errorf("%w: the root element is not <svg>", ErrUnsupported)
	}
	p.elem = "svg"
	img := &Image{}
	seenViewBox := false
	for _, a := range root.Attr {
		switch {
		case isNamespaceDecl(a):
		case a.Name.Space != "":
			return nil, p.fail(a.Name.Local, fmt.Errorf("%w: attribute in namespace %s", ErrUnsupported, a.Name.Space))
		case a.Name.Local == "viewBox":
			v, err := numbers(a.Value)
			if err != nil {
				return nil, p.fail("viewBox", err)
			}
			if len(v) != 4 || !(v[2] > 0) || !(v[3] > 0) {
				return nil, p.fail("viewBox", fmt.Errorf("%w: want min-x min-y width height with positive sizes, got %q", ErrViewBox, a.Value))
			}
			img.MinX, img.MinY, img.Width, img.Height = v[0], v[1], v[2], v[3]
			seenViewBox = true
		case a.Name.Local == "width" || a.Name.Local == "height":
			// The intrinsic size does not matter: Render draws at any size.
			if _, err := strconv.ParseFloat(strings.TrimSuffix(strings.TrimSpace(a.Value), "px"), 64); err != nil {
				return nil, p.fail(a.Name.Local, fmt.Errorf("%w: length %q (a number, optionally in px)", ErrSyntax, a.Value))
			}
		case a.Name.Local == "version":
		default:
			return nil, p.fail(a.Name.Local, fmt.Errorf("%w: attribute of <svg>", ErrUnsupported))
		}
	}
	if !seenViewBox {
		return nil, p.fail("", ErrViewBox)
	}
	for {
		el, err := p.nextStart()
		if err != nil {
			return nil, err
		}
		if el == nil {
			return img, nil
		}
		p.elem = el.Name.Local
		if el.Name.Space != svgNS && el.Name.Space != "" {
			return nil, p.fail("", fmt.Errorf("%w: element in namespace %s", ErrUnsupported, el.Name.Space))
		}
		switch el.Name.Local {
		case "title", "desc", "metadata":
			if err := p.d.Skip(); err != nil {
				return nil, err
			}
			continue
		case "path", "polygon", "circle":
		default:
			return nil, p.fail("", ErrUnsupported)
		}
		s, err := p.shape(el)
		if err != nil {
			return nil, err
		}
		if err := p.leaf(); err != nil {
			return nil, err
		}
		if s.Fill.A > 0 && len(s.Path) > 0 {
			img.Shapes = append(img.Shapes, s)
		}
	}
}

// nextStart returns the next start element at the current depth, or nil at
// the end of the enclosing element or of the file. Character data between
// elements must be white space.
func (p *parser) nextStart() (*xml.StartElement, error) {
	for {
		tok, err := p.d.Token()
		if err == io.EOF {
			return nil, nil
		}
		if err != nil {
			return nil, err
		}
		switch t := tok.(type) {
		case xml.StartElement:
			return &t, nil
		case xml.EndElement:
			return nil, nil
		case xml.CharData:
			if len(bytes.TrimSpace(t)) != 0 {
				return nil, p.fail("", fmt.Errorf("%w: text %q outside <title> or <desc>", ErrUnsupported, strings.TrimSpace(string(t))))
			}
		}
	}
}

// leaf reads up to the end of a shape element, which must have no children.
func (p *parser) leaf() error {
	el, err := p.nextStart()
	if err != nil {
		return err
	}
	if el != nil {
		return p.fail("", fmt.Errorf("%w: child element <%s>", ErrUnsupported, el.Name.Local))
	}
	return nil
}

func isNamespaceDecl(a xml.Attr) bool {
	return (a.Name.Space == "" && a.Name.Local == "xmlns") || a.Name.Space == "xmlns"
}

// shape reads the geometry and fill of a path, polygon or circle.
func (p *parser) shape(el *xml.StartElement) (Shape, error) {
	s := Shape{Fill: color.NRGBA{A: 0xff}}
	opacity := 1.0
	var cx, cy, r float64
	haveGeometry := false
	for _, a := range el.Attr {
		if isNamespaceDecl(a) {
			continue
		}
		name := a.Name.Local
		if a.Name.Space != "" {
			return s, p.fail(name, fmt.Errorf("%w: attribute in namespace %s", ErrUnsupported, a.Name.Space))
		}
		var err error
		switch {
		case name == "id":
		case name == "fill":
			s.Fill, err = parseColour(a.Value)
		case name == "fill-opacity":
			opacity, err = strconv.ParseFloat(strings.TrimSpace(a.Value), 64)
			if err != nil || !(opacity >= 0 && opacity <= 1) {
				err = fmt.Errorf("%w: opacity %q, want a number from 0 to 1", ErrSyntax, a.Value)
			}
		case el.Name.Local == "path" && name == "d":
			s.Path, err = parsePathData(a.Value)
			haveGeometry = true
		case el.Name.Local == "polygon" && name == "points":
			s.Path, err = parsePoints(a.Value)
			haveGeometry = true
		case el.Name.Local == "circle" && (name == "cx" || name == "cy" || name == "r"):
			var v float64
			v, err = strconv.ParseFloat(strings.TrimSpace(a.Value), 64)
			switch {
			case err != nil || math.IsInf(v, 0) || math.IsNaN(v):
				err = fmt.Errorf("%w: number %q", ErrSyntax, a.Value)
			case name == "cx":
				cx = v
			case name == "cy":
				cy = v
			case !(v > 0):
				err = fmt.Errorf("%w: radius %q, want a positive number", ErrSyntax, a.Value)
			default:
				r = v
				haveGeometry = true
			}
		default:
			err = ErrUnsupported
		}
		if err != nil {
			return s, p.fail(name, err)
		}
	}
	if !haveGeometry {
		return s, p.fail("", fmt.Errorf("%w: no geometry", ErrSyntax))
	}
	if el.Name.Local == "circle" {
		s.Path = circle(cx, cy, r)
	}
	s.Fill.A = uint8(math.Round(float64(s.Fill.A) * opacity))
	return s, nil
}

// parseColour reads #rrggbb, #rgb or "none" (returned as transparent).
func parseColour(v string) (color.NRGBA, error) {
	v = strings.TrimSpace(v)
	if v == "none" {
		return color.NRGBA{}, nil
	}
	bad := fmt.Errorf("%w: colour %q, want #rrggbb, #rgb or none", ErrSyntax, v)
	if len(v) != 7 && len(v) != 4 || v[0] != '#' {
		return color.NRGBA{}, bad
	}
	n, err := strconv.ParseUint(v[1:], 16, 32)
	if err != nil {
		return color.NRGBA{}, bad
	}
	if len(v) == 4 {
		// #rgb stands for #rrggbb (SVG 1.1, §4.2 basic data types).
		r, g, b := uint8(n>>8&0xf), uint8(n>>4&0xf), uint8(n&0xf)
		return color.NRGBA{R: r * 0x11, G: g * 0x11, B: b * 0x11, A: 0xff}, nil
	}
	return color.NRGBA{R: uint8(n >> 16), G: uint8(n >> 8), B: uint8(n), A: 0xff}, nil
}

// numbers reads a list of numbers separated by white space and/or commas.
func numbers(v string) ([]float64, error) {
	var out []float64
	sc := scanner{s: v}
	for {
		sc.skipSeparators()
		if sc.done() {
			return out, nil
		}
		x, err := sc.number()
		if err != nil {
			return nil, err
		}
		out = append(out, x)
	}
}

// parsePoints reads a polygon's points attribute.
func parsePoints(v string) ([]Segment, error) {
	xs, err := numbers(v)
	if err != nil {
		return nil, err
	}
	if len(xs)%2 != 0 {
		return nil, fmt.Errorf("%w: odd number of coordinates (%d)", ErrSyntax, len(xs))
	}
	if len(xs) < 6 {
		return nil, fmt.Errorf("%w: a polygon needs at least 3 points, got %d", ErrSyntax, len(xs)/2)
	}
	path := make([]Segment, 0, len(xs)/2+1)
	for i := 0; i < len(xs); i += 2 {
		op := LineTo
		if i == 0 {
			op = MoveTo
		}
		path = append(path, Segment{Op: op, P: [3]Point{{xs[i], xs[i+1]}}})
	}
	return append(path, Segment{Op: Close}), nil
}

// parsePathData reads a path's d attribute (SVG 1.1, §8.3), absolute
// commands M, L, H, V, C and Z only. A command letter may be followed by
// several argument groups; after M they are lines.
func parsePathData(v string) ([]Segment, error) {
	sc := scanner{s: v}
	var path []Segment
	var pen, start Point
	cmd := byte(0)
	open := false // a subpath has been started and not closed
	for {
		sc.skipSeparators()
		if sc.done() {
			break
		}
		if c := sc.s[sc.i]; isLetter(c) {
			sc.i++
			switch c {
			case 'M', 'L', 'H', 'V', 'C', 'Z':
				cmd = c
			default:
				return nil, fmt.Errorf("%w: path command %q (only absolute M, L, H, V, C and Z)", ErrUnsupported, c)
			}
			if cmd == 'Z' {
				if !open {
					return nil, fmt.Errorf("%w: Z with no open subpath", ErrSyntax)
				}
				path = append(path, Segment{Op: Close})
				pen, open = start, false
				cmd = 0
				continue
			}
		} else if cmd == 0 {
			return nil, fmt.Errorf("%w: expected a path command at %q", ErrSyntax, sc.s[sc.i:])
		}
		if cmd != 'M' && !open {
			if len(path) == 0 {
				return nil, fmt.Errorf("%w: path data must start with M", ErrSyntax)
			}
			// A drawing command after Z starts a new subpath at the old start.
			path = append(path, Segment{Op: MoveTo, P: [3]Point{start}})
			open = true
		}
		var args [6]float64
		for k := range argCount(cmd) {
			sc.skipSeparators()
			x, err := sc.number()
			if err != nil {
				return nil, fmt.Errorf("%w (command %c)", err, cmd)
			}
			args[k] = x
		}
		switch cmd {
		case 'M':
			if open {
				path = append(path, Segment{Op: Close})
			}
			pen = Point{args[0], args[1]}
			start, open = pen, true
			path = append(path, Segment{Op: MoveTo, P: [3]Point{pen}})
			cmd = 'L'
			continue
		case 'L':
			pen = Point{args[0], args[1]}
		case 'H':
			pen.X = args[0]
		case 'V':
			pen.Y = args[0]
		case 'C':
			path = append(path, Segment{Op: CubicTo, P: [3]Point{{args[0], args[1]}, {args[2], args[3]}, {args[4], args[5]}}})
			pen = Point{args[4], args[5]}
			continue
		}
		path = append(path, Segment{Op: LineTo, P: [3]Point{pen}})
	}
	if len(path) == 0 {
		return nil, fmt.Errorf("%w: empty path data", ErrSyntax)
	}
	if open {
		path = append(path, Segment{Op: Close})
	}
	return path, nil
}

func isLetter(c byte) bool { return c|0x20 >= 'a' && c|0x20 <= 'z' }

// argCount is the number of arguments a path command takes.
func argCount(cmd byte) int {
	switch cmd {
	case 'M', 'L':
		return 2
	case 'H', 'V':
		return 1
	case 'C':
		return 6
	}
	return 0
}

// scanner reads numbers in the SVG grammar, where "1-2" and ".5.5" are two
// numbers each.
type scanner struct {
	s string
	i int
}

func (sc *scanner) done() bool { return sc.i >= len(sc.s) }

func (sc *scanner) skipSeparators() {
	for sc.i < len(sc.s) {
		switch sc.s[sc.i] {
		case ' ', '\t', '\n', '\r', ',':
			sc.i++
		default:
			return
		}
	}
}

func (sc *scanner) number() (float64, error) {
	s, j := sc.s, sc.i
	digits := func() int {
		k := j
		for j < len(s) && s[j] >= '0' && s[j] <= '9' {
			j++
		}
		return j - k
	}
	if j < len(s) && (s[j] == '+' || s[j] == '-') {
		j++
	}
	n := digits()
	if j < len(s) && s[j] == '.' {
		j++
		n += digits()
	}
	if n == 0 {
		return 0, fmt.Errorf("%w: expected a number at %q", ErrSyntax, s[sc.i:])
	}
	if j < len(s) && (s[j] == 'e' || s[j] == 'E') {
		k := j
		j++
		if j < len(s) && (s[j] == '+' || s[j] == '-') {
			j++
		}
		if digits() == 0 {
			j = k // not an exponent
		}
	}
	x, err := strconv.ParseFloat(s[sc.i:j], 64)
	if err != nil || math.IsInf(x, 0) {
		return 0, fmt.Errorf("%w: number %q", ErrSyntax, s[sc.i:j])
	}
	sc.i = j
	return x, nil
}

// kappa places the control points of a cubic Bézier quarter circle:
// 4(√2−1)/3, which puts the curve's midpoint on the circle (the radial
// error elsewhere stays below 0.03 % of the radius).
var kappa = 4 * (math.Sqrt2 - 1) / 3

// circle returns a circle as four cubic Bézier quarters.
func circle(cx, cy, r float64) []Segment {
	k := kappa * r
	return []Segment{
		{Op: MoveTo, P: [3]Point{{cx + r, cy}}},
		{Op: CubicTo, P: [3]Point{{cx + r, cy + k}, {cx + k, cy + r}, {cx, cy + r}}},
		{Op: CubicTo, P: [3]Point{{cx - k, cy + r}, {cx - r, cy + k}, {cx - r, cy}}},
		{Op: CubicTo, P: [3]Point{{cx - r, cy - k}, {cx - k, cy - r}, {cx, cy - r}}},
		{Op: CubicTo, P: [3]Point{{cx + k, cy - r}, {cx + r, cy - k}, {cx + r, cy}}},
		{Op: Close},
	}
}
