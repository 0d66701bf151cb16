package figure

import (
	"bytes"
	"encoding/binary"
	"errors"
	"hash/crc32"
	"image"
	"image/color"
	"image/png"
	"math"
	"runtime"
	"testing"

	"lodestone/canvas/raster"
)

// pngChunk is one chunk of a PNG stream.
type pngChunk struct {
	kind string
	data []byte
}

// pngChunks splits a PNG stream into chunks, checking the signature, each
// chunk's length and its CRC (ISO/IEC 15948, §5.3: CRC-32 of type and data).
func pngChunks(t *testing.T, b []byte) []pngChunk {
	t.Helper()
	if !bytes.HasPrefix(b, []byte("\x89PNG\r\n\x1a\n")) {
		t.Fatal("no PNG signature")
	}
	var out []pngChunk
	for p := 8; p < len(b); {
		if p+12 > len(b) {
			t.Fatalf("truncated chunk at byte %d", p)
		}
		n := int(binary.BigEndian.Uint32(b[p:]))
		if p+12+n > len(b) {
			t.Fatalf("chunk at byte %d runs past the end", p)
		}
		body := b[p+4 : p+8+n]
		if crc := binary.BigEndian.Uint32(b[p+8+n:]); crc != crc32.ChecksumIEEE(body) {
			t.Fatalf("chunk %q at byte %d: bad CRC", body[:4], p)
		}
		out = append(out, pngChunk{kind: string(body[:4]), data: body[4:]})
		p += 12 + n
	}
	return out
}

// The PNG decodes with the standard library, has the requested size, and
// carries the resolution in a pHYs chunk right after IHDR (before IDAT, as
// ISO/IEC 15948 §5.6 requires): pixels per metre on both axes, unit 1
// (metre). 300 dpi is 300/0.0254 = 11811.02 → 11811 pixels per metre,
// 600 dpi 23622, 144 dpi 5669.
func TestPNGSizeAndResolution(t *testing.T) {
	f := testFigure(2000, 5)
	for _, tc := range []struct {
		s   Size
		ppm uint32
	}{
		{Size{WidthPx: 1051, HeightPx: 788, DPI: 300}, 11811},
		{Size{WidthPx: 640, HeightPx: 900, DPI: 600}, 23622},
		{Size{WidthPx: 1920, HeightPx: 1080, DPI: 144}, 5669},
		{Size{WidthPx: 333, HeightPx: 222}, 0},
	} {
		var buf bytes.Buffer
		if err := WritePNG(&buf, f, tc.s); err != nil {
			t.Fatal(err)
		}
		img, err := png.Decode(bytes.NewReader(buf.Bytes()))
		if err != nil {
			t.Fatalf("%v: %v", tc.s, err)
		}
		if b := img.Bounds(); b.Dx() != tc.s.WidthPx || b.Dy() != tc.s.HeightPx {
			t.Errorf("%v: decoded size %v", tc.s, b)
		}
		chunks := pngChunks(t, buf.Bytes())
		if chunks[0].kind != "IHDR" {
			t.Fatalf("%v: first chunk %q", tc.s, chunks[0].kind)
		}
		var phys []pngChunk
		for _, c := range chunks {
			if c.kind == "pHYs" {
				phys = append(phys, c)
			}
		}
		if tc.ppm == 0 {
			if len(phys) != 0 {
				t.Errorf("%v: pHYs written without a resolution", tc.s)
			}
			continue
		}
		if len(phys) != 1 || chunks[1].kind != "pHYs" {
			t.Fatalf("%v: want one pHYs chunk right after IHDR, chunks %v", tc.s, kinds(chunks))
		}
		d := phys[0].data
		if len(d) != 9 {
			t.Fatalf("%v: pHYs holds %d bytes, want 9", tc.s, len(d))
		}
		x, y, unit := binary.BigEndian.Uint32(d), binary.BigEndian.Uint32(d[4:]), d[8]
		if x != tc.ppm || y != tc.ppm || unit != 1 {
			t.Errorf("%v: pHYs %d × %d per unit %d, want %d per metre", tc.s, x, y, unit, tc.ppm)
		}
		if dpi := float64(x) * 0.0254; math.Abs(dpi-tc.s.DPI) > 0.01 {
			t.Errorf("%v: pHYs gives back %.3f dpi", tc.s, dpi)
		}
	}
}

func kinds(c []pngChunk) []string {
	var k []string
	for _, x := range c {
		k = append(k, x.kind)
	}
	return k
}

// The same inputs give the same bytes, whatever the number of processors.
func TestDeterministicBytes(t *testing.T) {
	f := testFigure(20000, 7)
	f.Labels = []Label{{"one", 10, 0}, {"two", 0, 10}}
	s := Size{WidthPx: 700, HeightPx: 500, DPI: 300}
	write := func() (p, v, h []byte) {
		var a, b, c bytes.Buffer
		if err := WritePNG(&a, f, s); err != nil {
			t.Fatal(err)
		}
		if err := WriteSVG(&b, f, s, 0); err != nil {
			t.Fatal(err)
		}
		if err := WriteSVG(&c, f, s, 10); err != nil {
			t.Fatal(err)
		}
		return a.Bytes(), b.Bytes(), c.Bytes()
	}
	p1, v1, h1 := write()
	old := runtime.GOMAXPROCS(1)
	p2, v2, h2 := write()
	runtime.GOMAXPROCS(old)
	p3, v3, h3 := write()
	for _, tc := range []struct {
		name string
		a    [][]byte
	}{{"PNG", [][]byte{p1, p2, p3}}, {"vector SVG", [][]byte{v1, v2, v3}}, {"hybrid SVG", [][]byte{h1, h2, h3}}} {
		if !bytes.Equal(tc.a[0], tc.a[1]) || !bytes.Equal(tc.a[0], tc.a[2]) {
			t.Errorf("%s differs between runs", tc.name)
		}
	}
}

// inkArea returns the area covered by black on white in r: Σ (255 − red)/255.
func inkArea(img image.Image, r image.Rectangle) float64 {
	var a float64
	for y := r.Min.Y; y < r.Max.Y; y++ {
		for x := r.Min.X; x < r.Max.X; x++ {
			a += (255 - overWhite(img, x, y)[0]) / 255
		}
	}
	return a
}

// The point radius scales with the output: one opaque black point drawn
// with ScreenRadius r for a screen ScreenWidth wide covers the exact disc
// area π·r_out², r_out = r · mapWidth / ScreenWidth (the rasteriser's
// coverage is exact per pixel, up to 8-bit rounding). With a View, the
// point at the view's centre lands at the centre of the map area, and the
// radius follows the ratio of output to screen scale.
func TestPointRadiusFollowsOutputSize(t *testing.T) {
	black := color.NRGBA{A: 0xff}
	for _, tc := range []struct {
		name   string
		view   *raster.View
		screen int
		size   Size
	}{
		{"fitted", nil, 500, Size{WidthPx: 600, HeightPx: 400}},
		{"fitted, twice the pixels", nil, 500, Size{WidthPx: 1200, HeightPx: 800}},
		{"view", &raster.View{CenterX: 5, CenterY: -3, Scale: 40, Width: 800, Height: 600}, 400, Size{WidthPx: 900, HeightPx: 500}},
	} {
		t.Run(tc.name, func(t *testing.T) {
			f := &Figure{
				Layout: []float32{5, -3}, Colours: []uint16{0}, Palette: []color.NRGBA{black},
				ScreenRadius: 3, Opacity: 1, ScreenWidth: tc.screen, View: tc.view, Background: white,
			}
			sc, err := f.scene(tc.size)
			if err != nil {
				t.Fatal(err)
			}
			area := sc.points.area
			want := 3 * float64(area.Dx()) / float64(tc.screen)
			if v := tc.view; v != nil {
				// Output scale over screen scale, in logical pixels per data unit.
				out := math.Min(float64(area.Dx())*v.Scale/float64(v.Width), float64(area.Dy())*v.Scale/float64(v.Height))
				screen := v.Scale * float64(tc.screen) / float64(v.Width)
				want = 3 * out / screen
			}
			var buf bytes.Buffer
			if err := WritePNG(&buf, f, tc.size); err != nil {
				t.Fatal(err)
			}
			img, err := png.Decode(&buf)
			if err != nil {
				t.Fatal(err)
			}
			got := inkArea(img, area)
			if exact := math.Pi * want * want; math.Abs(got-exact) > 0.01*exact {
				t.Errorf("disc covers %.2f px², want π·%.3f² = %.2f", got, want, exact)
			}
			// The disc's centre of mass is the map's centre (the point is
			// the only one, or the view's centre).
			var sx, sy, sw float64
			for y := area.Min.Y; y < area.Max.Y; y++ {
				for x := area.Min.X; x < area.Max.X; x++ {
					w := (255 - overWhite(img, x, y)[0]) / 255
					sx, sy, sw = sx+w*(float64(x)+0.5), sy+w*(float64(y)+0.5), sw+w
				}
			}
			cx, cy := float64(area.Min.X+area.Max.X)/2, float64(area.Min.Y+area.Max.Y)/2
			if math.Abs(sx/sw-cx) > 0.2 || math.Abs(sy/sw-cy) > 0.2 {
				t.Errorf("disc centred at (%.2f, %.2f), map centre (%.2f, %.2f)", sx/sw, sy/sw, cx, cy)
			}
		})
	}
}

// A transparent background stays transparent where nothing is drawn.
func TestTransparentBackground(t *testing.T) {
	f := testFigure(500, 3)
	f.Background = color.NRGBA{}
	var buf bytes.Buffer
	if err := WritePNG(&buf, f, Size{WidthPx: 400, HeightPx: 300}); err != nil {
		t.Fatal(err)
	}
	img, err := png.Decode(&buf)
	if err != nil {
		t.Fatal(err)
	}
	if _, _, _, a := img.At(0, 299).RGBA(); a != 0 {
		t.Errorf("corner alpha %d, want 0", a)
	}
}

// failingWriter fails after n bytes.
type failingWriter struct{ n int }

var errDiskFull = errors.New("disk full")

func (w *failingWriter) Write(b []byte) (int, error) {
	if len(b) > w.n {
		k := w.n
		w.n = 0
		return k, errDiskFull
	}
	w.n -= len(b)
	return len(b), nil
}

// A failing writer's error comes back wrapped with what was being written.
func TestWriteErrorsWrapped(t *testing.T) {
	f := testFigure(3000, 3)
	s := Size{WidthPx: 300, HeightPx: 200, DPI: 300}
	tab := smallTable()
	for _, n := range []int{0, 20, 40, 5000} {
		for name, write := range map[string]func() error{
			"PNG":            func() error { return WritePNG(&failingWriter{n}, f, s) },
			"vector SVG":     func() error { return WriteSVG(&failingWriter{n}, f, s, 0) },
			"hybrid SVG":     func() error { return WriteSVG(&failingWriter{n}, f, s, 10) },
			"expression PNG": func() error { return WriteExpressionPNG(&failingWriter{n}, tab, s) },
			"expression SVG": func() error { return WriteExpressionSVG(&failingWriter{n}, tab, s) },
		} {
			err := write()
			if !errors.Is(err, errDiskFull) {
				t.Errorf("%s, writer failing after %d bytes: error %v, want one wrapping %v", name, n, err, errDiskFull)
			}
		}
	}
}
