package flatsvg

import (
	"errors"
	"fmt"
	"image"
	"image/png"
	"math"
	"math/rand/v2"
	"os"
	"os/exec"
	"path/filepath"
	"strings"
	"testing"
)

// iconPath is the program's icon, the main input these tests draw.
const iconPath = "../../../assets/icon.svg"

// features exercises every part of the subset: H and V, curves, a
// semi-transparent overlap, a sub-pixel circle, a thin sliver, a viewBox
// that does not start at the origin, and several subpaths in one path.
const features = `<svg xmlns="http://www.w3.org/2000/svg" viewBox="-5 -5 40 30">
<path fill="#36a" d="M-3.3 -2.7 H20.6 V12.15 H-3.3 Z"/>
<polygon fill="#f2efe9" fill-opacity="0.5" points="5,20 30,-4 33,22"/>
<circle fill="#a84b2a" cx="25.3" cy="18.8" r="0.9"/>
<polygon fill="#222" points="0,24 30,23.6 30,24.2"/>
<path fill="#7622c8" d="M0 0 C10 -4 14 10 4 12 L2 8 Z M26 2 C30 2 30 8 26 8 Z"/>
</svg>`

func parseFile(t *testing.T, path string) *Image {
	t.Helper()
	f, err := os.Open(path)
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	img, err := Parse(f)
	if err != nil {
		t.Fatal(err)
	}
	return img
}

func parseString(t *testing.T, src string) *Image {
	t.Helper()
	img, err := Parse(strings.NewReader(src))
	if err != nil {
		t.Fatal(err)
	}
	return img
}

func TestCubicFlatness(t *testing.T) {
	// Wang's formula promises chords within tol of the curve. Check it on
	// random curves against the exact curve sampled densely: the distance
	// from each sample to the nearest chord.
	rng := rand.New(rand.NewPCG(1, 2))
	for trial := range 200 {
		var c [4]Point
		for i := range c {
			c[i] = Point{rng.Float64() * 100, rng.Float64() * 100}
		}
		tol := []float64{0.5, 1.0 / 64, 1e-3}[trial%3]
		n := cubicSegments(c, tol)
		worst := 0.0
		for i := range n {
			a := cubicAt(c, float64(i)/float64(n))
			b := cubicAt(c, float64(i+1)/float64(n))
			for k := 0; k <= 50; k++ {
				u := (float64(i) + float64(k)/50) / float64(n)
				worst = math.Max(worst, segmentDist(cubicAt(c, u), a, b))
			}
		}
		if worst > tol {
			t.Fatalf("curve %v, tol %v: %d chords stray %v from the curve", c, tol, n, worst)
		}
	}
}

func TestRenderMatchesExactCoverage(t *testing.T) {
	// The reference is an exact slow computation of the same model: each
	// pixel's coverage is the area of the outline clipped to the pixel's
	// square, shapes composited with Porter–Duff "over" in painting order,
	// in float64. Render composites each shape into 8-bit pixels from a
	// float32 coverage: each shape that does not simply replace the pixel
	// (opaque and covering it whole) adds up to one level in 255 of
	// rounding, so a pixel may differ by as many levels as such shapes
	// have been drawn over it since the last replacement. The curves of
	// both differ from the exact ones by far less (Tolerance, and 256
	// chords a curve here).
	cases := []struct {
		name string
		img  *Image
		w, h int
	}{
		{"icon 16", parseFile(t, iconPath), 16, 16},
		{"icon 24", parseFile(t, iconPath), 24, 24},
		{"icon 48", parseFile(t, iconPath), 48, 48},
		{"features 40×30", parseString(t, features), 40, 30},
		{"features 57×23", parseString(t, features), 57, 23},
	}
	for _, tc := range cases {
		got, err := tc.img.Render(tc.w, tc.h)
		if err != nil {
			t.Fatal(err)
		}
		want, layers := exactRender(tc.img, tc.w, tc.h)
		bad, worst := 0, 0.0
		for y := range tc.h {
			for x := range tc.w {
				i := y*tc.w + x
				for c := range 4 {
					d := math.Abs(float64(got.Pix[y*got.Stride+4*x+c]) - want[4*i+c])
					worst = math.Max(worst, d)
					if d > float64(layers[i])+1e-9 { // 1e-9: float64 noise in the reference
						if bad++; bad <= 5 {
							t.Errorf("%s: pixel (%d,%d) channel %d is %d, exact %.2f: off by more than its %d blended layers",
								tc.name, x, y, c, got.Pix[y*got.Stride+4*x+c], want[4*i+c], layers[i])
						}
					}
				}
			}
		}
		t.Logf("%s: largest difference from exact coverage %.2f levels", tc.name, worst)
	}
}

func TestRenderMatchesLibrsvg(t *testing.T) {
	// librsvg (rsvg-convert) is an independent SVG renderer: it checks that
	// this package reads the subset as SVG means it (coordinates, commands,
	// colours, opacity, painting order). Its anti-aliasing estimates
	// coverage on sub-scanlines, unlike the exact areas of this package, so
	// the pixels compared are those whose 3 × 3 neighbourhood in this
	// package's image is one flat colour: there both must agree to the
	// 8-bit rounding of one semi-transparent layer (1 level). Edges are
	// checked against exact coverage in TestRenderMatchesExactCoverage.
	rsvg, err := exec.LookPath("rsvg-convert")
	if err != nil {
		t.Skip("rsvg-convert is not installed (Debian package librsvg2-bin); skipping the comparison with librsvg")
	}
	dir := t.TempDir()
	featuresPath := filepath.Join(dir, "features.svg")
	if err := os.WriteFile(featuresPath, []byte(features), 0o644); err != nil {
		t.Fatal(err)
	}
	for _, tc := range []struct {
		path string
		w, h int
	}{
		{iconPath, 64, 64}, {iconPath, 256, 256}, {featuresPath, 160, 120}, {featuresPath, 120, 160},
	} {
		out := filepath.Join(dir, fmt.Sprintf("ref-%d-%d.png", tc.w, tc.h))
		cmd := exec.Command(rsvg, "-w", fmt.Sprint(tc.w), "-h", fmt.Sprint(tc.h), "-o", out, tc.path)
		if msg, err := cmd.CombinedOutput(); err != nil {
			t.Fatalf("rsvg-convert: %v\n%s", err, msg)
		}
		ref := readRGBA(t, out)
		got, err := parseFile(t, tc.path).Render(tc.w, tc.h)
		if err != nil {
			t.Fatal(err)
		}
		flat, bad := 0, 0
		for y := 1; y < tc.h-1; y++ {
			for x := 1; x < tc.w-1; x++ {
				if !flatAround(got, x, y) {
					continue
				}
				flat++
				a, b := got.RGBAAt(x, y), ref.RGBAAt(x, y)
				if absDiff(a.R, b.R) > 1 || absDiff(a.G, b.G) > 1 || absDiff(a.B, b.B) > 1 || absDiff(a.A, b.A) > 1 {
					if bad++; bad <= 5 {
						t.Errorf("%s at %d×%d: pixel (%d,%d) is %v here, %v in librsvg", filepath.Base(tc.path), tc.w, tc.h, x, y, a, b)
					}
				}
			}
		}
		if flat < tc.w*tc.h/4 {
			t.Errorf("%s at %d×%d: only %d flat pixels compared", filepath.Base(tc.path), tc.w, tc.h, flat)
		}
	}
}

func TestRenderErrors(t *testing.T) {
	img := parseString(t, features)
	for _, s := range [][2]int{{0, 5}, {5, 0}, {-1, -1}} {
		if _, err := img.Render(s[0], s[1]); !errors.Is(err, ErrSize) {
			t.Errorf("Render(%d, %d): error %v, want ErrSize", s[0], s[1], err)
		}
	}
	// Points far outside the image are refused rather than rasterised at
	// great cost; 64 image sizes away is still drawn.
	for _, tc := range []struct {
		src  string
		want error
	}{
		{`<svg viewBox="0 0 10 10"><polygon points="0,0 1e300,0 1e300,-1e300"/></svg>`, ErrRange},
		{`<svg viewBox="0 0 1e-30 1e-30"><polygon points="0,0 1,0 1,1"/></svg>`, ErrRange},
		{`<svg viewBox="0 0 10 10"><path d="M0 0 C0 0 0 650 1 1 Z"/></svg>`, ErrRange},
		{`<svg viewBox="0 0 10 10"><polygon points="0,0 640,0 -640,-640"/></svg>`, nil},
	} {
		if _, err := parseString(t, tc.src).Render(8, 8); !errors.Is(err, tc.want) {
			t.Errorf("%s: error %v, want %v", tc.src, err, tc.want)
		}
	}
}

// exactRender returns premultiplied RGBA in [0, 255] for every pixel,
// row-major, and for every pixel the number of shapes blended into it
// since the last one that replaced it (opaque and covering it whole). The
// test images' subpaths are simple and do not overlap, so the non-zero
// rule's coverage is the sum of the subpaths' clipped areas.
func exactRender(im *Image, w, h int) ([]float64, []int) {
	out := make([]float64, 4*w*h)
	layers := make([]int, w*h)
	sx, sy := float64(w)/im.Width, float64(h)/im.Height
	for _, s := range im.Shapes {
		var polys [][]Point
		var cur []Point
		var pen Point
		for _, seg := range s.Path {
			p := func(q Point) Point { return Point{(q.X - im.MinX) * sx, (q.Y - im.MinY) * sy} }
			switch seg.Op {
			case MoveTo:
				if len(cur) > 0 {
					polys = append(polys, cur)
				}
				pen = p(seg.P[0])
				cur = []Point{pen}
			case LineTo:
				pen = p(seg.P[0])
				cur = append(cur, pen)
			case CubicTo:
				c := [4]Point{pen, p(seg.P[0]), p(seg.P[1]), p(seg.P[2])}
				for i := 1; i <= 256; i++ {
					cur = append(cur, deCasteljau(c, float64(i)/256))
				}
				pen = c[3]
			}
		}
		polys = append(polys, cur)
		alpha := float64(s.Fill.A) / 255
		col := [4]float64{float64(s.Fill.R) * alpha, float64(s.Fill.G) * alpha, float64(s.Fill.B) * alpha, 255 * alpha}
		lo, hi := bounds(polys)
		for y := max(0, int(lo.Y)); y < min(h, int(math.Ceil(hi.Y))); y++ {
			for x := max(0, int(lo.X)); x < min(w, int(math.Ceil(hi.X))); x++ {
				cov := 0.0
				for _, poly := range polys {
					cov += math.Abs(area(clip(poly, float64(x), float64(y), float64(x+1), float64(y+1))))
				}
				if cov == 0 {
					continue
				}
				cov = math.Min(cov, 1)
				if cov > 1-1e-12 && s.Fill.A == 0xff {
					layers[y*w+x] = 0
				} else {
					layers[y*w+x]++
				}
				o := out[4*(y*w+x):]
				for c := range 4 {
					o[c] = col[c]*cov + o[c]*(1-alpha*cov)
				}
			}
		}
	}
	return out, layers
}

// bounds returns the corners of the polygons' bounding box.
func bounds(polys [][]Point) (lo, hi Point) {
	lo, hi = Point{math.Inf(1), math.Inf(1)}, Point{math.Inf(-1), math.Inf(-1)}
	for _, poly := range polys {
		for _, p := range poly {
			lo = Point{math.Min(lo.X, p.X), math.Min(lo.Y, p.Y)}
			hi = Point{math.Max(hi.X, p.X), math.Max(hi.Y, p.Y)}
		}
	}
	return lo, hi
}

// clip cuts a polygon to the rectangle [x0, x1] × [y0, y1], one edge of
// the rectangle at a time (Sutherland & Hodgman 1974, "Reentrant polygon
// clipping", CACM 17:32–42).
func clip(poly []Point, x0, y0, x1, y1 float64) []Point {
	inside := []func(Point) bool{
		func(p Point) bool { return p.X >= x0 }, func(p Point) bool { return p.X <= x1 },
		func(p Point) bool { return p.Y >= y0 }, func(p Point) bool { return p.Y <= y1 },
	}
	cross := []func(a, b Point) Point{
		func(a, b Point) Point { return lerpAt(a, b, (x0-a.X)/(b.X-a.X)) },
		func(a, b Point) Point { return lerpAt(a, b, (x1-a.X)/(b.X-a.X)) },
		func(a, b Point) Point { return lerpAt(a, b, (y0-a.Y)/(b.Y-a.Y)) },
		func(a, b Point) Point { return lerpAt(a, b, (y1-a.Y)/(b.Y-a.Y)) },
	}
	for e := range 4 {
		if len(poly) == 0 {
			return nil
		}
		var out []Point
		prev := poly[len(poly)-1]
		for _, p := range poly {
			switch in, prevIn := inside[e](p), inside[e](prev); {
			case in && prevIn:
				out = append(out, p)
			case in:
				out = append(out, cross[e](prev, p), p)
			case prevIn:
				out = append(out, cross[e](prev, p))
			}
			prev = p
		}
		poly = out
	}
	return poly
}

// area is the signed area of a polygon by the shoelace formula.
func area(poly []Point) float64 {
	s := 0.0
	for i, p := range poly {
		q := poly[(i+1)%len(poly)]
		s += p.X*q.Y - q.X*p.Y
	}
	return s / 2
}

func lerpAt(a, b Point, t float64) Point { return Point{a.X + t*(b.X-a.X), a.Y + t*(b.Y-a.Y)} }

// deCasteljau evaluates a cubic Bézier curve by repeated interpolation,
// independently of cubicAt's Bernstein form.
func deCasteljau(c [4]Point, t float64) Point {
	a, b, d := lerpAt(c[0], c[1], t), lerpAt(c[1], c[2], t), lerpAt(c[2], c[3], t)
	return lerpAt(lerpAt(a, b, t), lerpAt(b, d, t), t)
}

// segmentDist is the distance from p to the segment ab.
func segmentDist(p, a, b Point) float64 {
	dx, dy := b.X-a.X, b.Y-a.Y
	t := 0.0
	if l := dx*dx + dy*dy; l > 0 {
		t = math.Max(0, math.Min(1, ((p.X-a.X)*dx+(p.Y-a.Y)*dy)/l))
	}
	return dist(p, Point{a.X + t*dx, a.Y + t*dy})
}

func dist(a, b Point) float64 { return math.Hypot(a.X-b.X, a.Y-b.Y) }

func abs(x float64) float64 { return math.Abs(x) }

func absDiff(a, b uint8) int {
	if a > b {
		return int(a - b)
	}
	return int(b - a)
}

// flatAround reports whether the 3 × 3 neighbourhood of (x, y) is one colour.
func flatAround(img *image.RGBA, x, y int) bool {
	c := img.RGBAAt(x, y)
	for dy := -1; dy <= 1; dy++ {
		for dx := -1; dx <= 1; dx++ {
			if img.RGBAAt(x+dx, y+dy) != c {
				return false
			}
		}
	}
	return true
}

// readRGBA decodes a PNG file into premultiplied RGBA.
func readRGBA(t *testing.T, path string) *image.RGBA {
	t.Helper()
	f, err := os.Open(path)
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	m, err := png.Decode(f)
	if err != nil {
		t.Fatal(err)
	}
	out := image.NewRGBA(m.Bounds())
	for y := m.Bounds().Min.Y; y < m.Bounds().Max.Y; y++ {
		for x := m.Bounds().Min.X; x < m.Bounds().Max.X; x++ {
			out.Set(x, y, m.At(x, y))
		}
	}
	return out
}

func BenchmarkRenderIcon(b *testing.B) {
	f, err := os.Open(iconPath)
	if err != nil {
		b.Fatal(err)
	}
	img, err := Parse(f)
	f.Close()
	if err != nil {
		b.Fatal(err)
	}
	for _, size := range []int{32, 256, 1024} {
		b.Run(fmt.Sprint(size), func(b *testing.B) {
			for b.Loop() {
				if _, err := img.Render(size, size); err != nil {
					b.Fatal(err)
				}
			}
		})
	}
}
