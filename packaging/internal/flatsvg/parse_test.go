package flatsvg

import (
	"errors"
	"image/color"
	"reflect"
	"strings"
	"testing"
)

const head = `<svg xmlns="http://www.w3.org/2000/svg" viewBox="0 0 10 10">` + "\n"

func TestParsePathData(t *testing.T) {
	// Expected segments worked out by hand from the path grammar of SVG 1.1,
	// §8.3 (implicit lines after M, H/V keep the other coordinate, Z returns
	// to the subpath's start, numbers may run together as in "1-2" or ".5.5").
	m := func(x, y float64) Segment { return Segment{Op: MoveTo, P: [3]Point{{x, y}}} }
	l := func(x, y float64) Segment { return Segment{Op: LineTo, P: [3]Point{{x, y}}} }
	z := Segment{Op: Close}
	for _, tc := range []struct {
		d    string
		want []Segment
	}{
		{"M1 2 L3 4 Z", []Segment{m(1, 2), l(3, 4), z}},
		{"M1,2 3,4 5,6", []Segment{m(1, 2), l(3, 4), l(5, 6), z}},
		{"M1 2H5V7L1-2Z", []Segment{m(1, 2), l(5, 2), l(5, 7), l(1, -2), z}},
		{"M.5.5L1e1,-2.5E-1", []Segment{m(0.5, 0.5), l(10, -0.25), z}},
		{"M0 0 C1 2 3 4 5 6", []Segment{m(0, 0), {Op: CubicTo, P: [3]Point{{1, 2}, {3, 4}, {5, 6}}}, z}},
		{"M0 0 L1 0 Z L0 1", []Segment{m(0, 0), l(1, 0), z, m(0, 0), l(0, 1), z}},
		{"M0 0 L1 0 M5 5 L6 5", []Segment{m(0, 0), l(1, 0), z, m(5, 5), l(6, 5), z}},
	} {
		got, err := parsePathData(tc.d)
		if err != nil {
			t.Errorf("%q: %v", tc.d, err)
			continue
		}
		if !reflect.DeepEqual(got, tc.want) {
			t.Errorf("%q:\n got %v\nwant %v", tc.d, got, tc.want)
		}
	}
}

func TestParseFills(t *testing.T) {
	// #rgb doubles each digit (SVG 1.1, §4.2); an absent fill is black; the
	// opacity scales alpha; fill="none" shapes are dropped.
	src := head +
		`<polygon points="0,0 1,0 1,1" fill="#a84b2a"/>` + "\n" +
		`<polygon points="0,0 1,0 1,1" fill="#fa0" fill-opacity="0.5"/>` + "\n" +
		`<polygon points="0,0 1,0 1,1"/>` + "\n" +
		`<polygon points="0,0 1,0 1,1" fill="none"/>` + "\n" +
		`<circle id="c" cx="5" cy="5" r="2" fill="#123456" fill-opacity="0"/>` + "\n" +
		`<title>ignored <b>text</b></title><desc>also</desc>` + "\n</svg>"
	img, err := Parse(strings.NewReader(src))
	if err != nil {
		t.Fatal(err)
	}
	want := []color.NRGBA{{0xa8, 0x4b, 0x2a, 0xff}, {0xff, 0xaa, 0x00, 0x80}, {0, 0, 0, 0xff}}
	if len(img.Shapes) != len(want) {
		t.Fatalf("%d shapes, want %d", len(img.Shapes), len(want))
	}
	for i, s := range img.Shapes {
		if s.Fill != want[i] {
			t.Errorf("shape %d: fill %v, want %v", i, s.Fill, want[i])
		}
	}
	if img.MinX != 0 || img.MinY != 0 || img.Width != 10 || img.Height != 10 {
		t.Errorf("viewBox %v %v %v %v, want 0 0 10 10", img.MinX, img.MinY, img.Width, img.Height)
	}
}

func TestParseCircle(t *testing.T) {
	// A circle is four cubic quarters starting at (cx+r, cy); every curve
	// ends on the circle and its midpoint lies on it (the choice of kappa).
	img, err := Parse(strings.NewReader(head + `<circle cx="3" cy="4" r="2"/></svg>`))
	if err != nil {
		t.Fatal(err)
	}
	p := img.Shapes[0].Path
	if len(p) != 6 || p[0].Op != MoveTo || p[0].P[0] != (Point{5, 4}) || p[5].Op != Close {
		t.Fatalf("circle path %v", p)
	}
	pen := p[0].P[0]
	for _, s := range p[1:5] {
		mid := cubicAt([4]Point{pen, s.P[0], s.P[1], s.P[2]}, 0.5)
		if r := dist(mid, Point{3, 4}); abs(r-2) > 1e-12 {
			t.Errorf("quarter's midpoint at radius %v, want 2", r)
		}
		pen = s.P[2]
	}
}

func TestParseErrors(t *testing.T) {
	for _, tc := range []struct {
		name       string
		src        string
		err        error
		line       int
		elem, attr string
	}{
		{"stroke", head + `<path d="M0 0 L1 1" stroke="#000"/></svg>`, ErrUnsupported, 2, "path", "stroke"},
		{"group", head + `<g></g></svg>`, ErrUnsupported, 2, "g", ""},
		{"relative", head + `<path d="m0 0 l1 1"/></svg>`, ErrUnsupported, 2, "path", "d"},
		{"arc", head + `<path d="M0 0 A1 1 0 0 1 2 2"/></svg>`, ErrUnsupported, 2, "path", "d"},
		{"bad number", head + "\n" + `<polygon points="0,0 1,x 2,2"/></svg>`, ErrSyntax, 3, "polygon", "points"},
		{"odd points", head + `<polygon points="0,0 1,1 2"/></svg>`, ErrSyntax, 2, "polygon", "points"},
		{"two points", head + `<polygon points="0,0 1,1"/></svg>`, ErrSyntax, 2, "polygon", "points"},
		{"colour name", head + `<circle r="1" fill="red"/></svg>`, ErrSyntax, 2, "circle", "fill"},
		{"opacity", head + `<circle r="1" fill-opacity="2"/></svg>`, ErrSyntax, 2, "circle", "fill-opacity"},
		{"zero radius", head + `<circle r="0"/></svg>`, ErrSyntax, 2, "circle", "r"},
		{"no geometry", head + `<circle cx="1"/></svg>`, ErrSyntax, 2, "circle", ""},
		{"no viewBox", `<svg xmlns="http://www.w3.org/2000/svg"></svg>`, ErrViewBox, 1, "svg", ""},
		{"flat viewBox", `<svg viewBox="0 0 10 0"></svg>`, ErrViewBox, 1, "svg", "viewBox"},
		{"transform", `<svg viewBox="0 0 1 1" transform="scale(2)"></svg>`, ErrUnsupported, 1, "svg", "transform"},
		{"child", head + `<circle r="1"><title>t</title></circle></svg>`, ErrUnsupported, 2, "circle", ""},
		{"text", head + `hello</svg>`, ErrUnsupported, 2, "svg", ""},
		{"missing command", head + `<path d="0 0 L1 1"/></svg>`, ErrSyntax, 2, "path", "d"},
		{"lone Z", head + `<path d="Z"/></svg>`, ErrSyntax, 2, "path", "d"},
	} {
		_, err := Parse(strings.NewReader(tc.src))
		var pe *ParseError
		if !errors.As(err, &pe) {
			t.Errorf("%s: error %v, want a *ParseError", tc.name, err)
			continue
		}
		if !errors.Is(err, tc.err) || pe.Line != tc.line || pe.Element != tc.elem || pe.Attr != tc.attr {
			t.Errorf("%s: got %v (line %d, <%s> %s), want %v at line %d, <%s> %s",
				tc.name, err, pe.Line, pe.Element, pe.Attr, tc.err, tc.line, tc.elem, tc.attr)
		}
	}
	// Not XML at all: a ParseError wrapping the XML decoder's error.
	_, err := Parse(strings.NewReader("<svg viewBox='0 0 1 1'><path"))
	var pe *ParseError
	if !errors.As(err, &pe) || pe.Line != 1 {
		t.Errorf("truncated XML: got %v, want a *ParseError on line 1", err)
	}
}
