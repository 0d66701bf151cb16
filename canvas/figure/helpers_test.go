package figure

import (
	"bytes"
	"encoding/base64"
	"encoding/xml"
	"image"
	"image/color"
	"image/png"
	"io"
	"math"
	"math/rand/v2"
	"os"
	"os/exec"
	"path/filepath"
	"strconv"
	"strings"
	"testing"

	"lodestone/canvas/colour"
	"lodestone/canvas/raster"
)

var white = color.NRGBA{R: 0xff, G: 0xff, B: 0xff, A: 0xff}

// clusters returns n points in k Gaussian clusters (spread sd) whose
// centres lie evenly on a circle of radius 10, point i in cluster i mod k,
// and the centres.
func clusters(n, k int, sd float64, seed uint64) (layout []float32, codes []int32, centres [][2]float64) {
	rng := rand.New(rand.NewPCG(seed, 7))
	layout = make([]float32, 2*n)
	codes = make([]int32, n)
	for c := 0; c < k; c++ {
		a := 2 * math.Pi * float64(c) / float64(k)
		centres = append(centres, [2]float64{10 * math.Cos(a), 10 * math.Sin(a)})
	}
	for i := 0; i < n; i++ {
		c := i % k
		layout[2*i] = float32(centres[c][0] + sd*rng.NormFloat64())
		layout[2*i+1] = float32(centres[c][1] + sd*rng.NormFloat64())
		codes[i] = int32(c)
	}
	return layout, codes, centres
}

// testFigure returns a figure of n points in k clusters with a title, a
// key and no labels, on white.
func testFigure(n, k int) *Figure {
	layout, codes, _ := clusters(n, k, 1.5, 1)
	colours := make([]uint16, n)
	for i, c := range codes {
		colours[i] = uint16(c)
	}
	pal := colour.Categorical(k)
	key := &Key{Title: "state", Counts: true}
	for c := 0; c < k; c++ {
		key.Entries = append(key.Entries, KeyEntry{Label: "state " + strconv.Itoa(c), Colour: pal[c], Count: n / k})
	}
	return &Figure{
		Layout: layout, Colours: colours, Palette: pal,
		ScreenRadius: 3, Opacity: 0.8, ScreenWidth: 800,
		Title: "Test atlas", Key: key, Background: white,
	}
}

// svgDoc is what the tests read from an SVG document.
type svgDoc struct {
	elements map[string]int // elements by local name
	points   int            // child elements of the group with id "points"
	images   []string       // xlink:href of each <image>
	texts    []string       // character data of each <text>
	title    string         // the <title> element's text
	root     map[string]string
}

// parseSVG decodes the whole token stream of an SVG document with
// encoding/xml, failing the test on any error.
func parseSVG(t *testing.T, data []byte) svgDoc {
	t.Helper()
	doc := svgDoc{elements: map[string]int{}, root: map[string]string{}}
	d := xml.NewDecoder(bytes.NewReader(data))
	var stack []string
	inPoints := -1 // depth of the points group
	var text *strings.Builder
	for {
		tok, err := d.Token()
		if err == io.EOF {
			break
		}
		if err != nil {
			t.Fatalf("SVG does not parse as XML: %v", err)
		}
		switch tok := tok.(type) {
		case xml.StartElement:
			name := tok.Name.Local
			doc.elements[name]++
			if len(stack) == 0 {
				if name != "svg" || tok.Name.Space != "http://www.w3.org/2000/svg" {
					t.Fatalf("root element is %v, want svg in the SVG namespace", tok.Name)
				}
				for _, a := range tok.Attr {
					doc.root[a.Name.Local] = a.Value
				}
			}
			if inPoints >= 0 && len(stack) == inPoints+1 {
				doc.points++
			}
			for _, a := range tok.Attr {
				if name == "g" && a.Name.Local == "id" && a.Value == "points" {
					inPoints = len(stack)
				}
				if name == "image" && a.Name.Local == "href" && a.Name.Space == "http://www.w3.org/1999/xlink" {
					doc.images = append(doc.images, a.Value)
				}
			}
			if name == "text" || name == "title" {
				text = &strings.Builder{}
			}
			stack = append(stack, name)
		case xml.EndElement:
			stack = stack[:len(stack)-1]
			if len(stack) == inPoints {
				inPoints = -1
			}
			switch tok.Name.Local {
			case "text":
				doc.texts = append(doc.texts, text.String())
				text = nil
			case "title":
				doc.title = text.String()
				text = nil
			}
		case xml.CharData:
			if text != nil {
				text.Write(tok)
			}
		}
	}
	if len(stack) != 0 {
		t.Fatalf("SVG ends inside %v", stack)
	}
	return doc
}

// decodeDataPNG decodes a data:image/png;base64 URL.
func decodeDataPNG(t *testing.T, href string) image.Image {
	t.Helper()
	const prefix = "data:image/png;base64,"
	if !strings.HasPrefix(href, prefix) {
		t.Fatalf("image reference %.40q… is not a PNG data URL", href)
	}
	raw, err := base64.StdEncoding.DecodeString(href[len(prefix):])
	if err != nil {
		t.Fatalf("embedded image: %v", err)
	}
	img, err := png.Decode(bytes.NewReader(raw))
	if err != nil {
		t.Fatalf("embedded image: %v", err)
	}
	return img
}

// rsvgRender renders an SVG document with rsvg-convert at w × h pixels, or
// skips the test when rsvg-convert is not installed.
func rsvgRender(t *testing.T, svg []byte, w, h int) image.Image {
	t.Helper()
	bin, err := exec.LookPath("rsvg-convert")
	if err != nil {
		t.Skip("rsvg-convert not found (Debian package librsvg2-bin): cannot check the SVG with an independent renderer")
	}
	dir := t.TempDir()
	in, out := filepath.Join(dir, "in.svg"), filepath.Join(dir, "out.png")
	if err := os.WriteFile(in, svg, 0o644); err != nil {
		t.Fatal(err)
	}
	cmd := exec.Command(bin, "-w", strconv.Itoa(w), "-h", strconv.Itoa(h), "-f", "png", "-o", out, in)
	if msg, err := cmd.CombinedOutput(); err != nil {
		t.Fatalf("rsvg-convert: %v\n%s", err, msg)
	}
	data, err := os.ReadFile(out)
	if err != nil {
		t.Fatal(err)
	}
	img, err := png.Decode(bytes.NewReader(data))
	if err != nil {
		t.Fatalf("rsvg-convert output: %v", err)
	}
	if b := img.Bounds(); b.Dx() != w || b.Dy() != h {
		t.Fatalf("rsvg-convert drew %v, want %d×%d", b, w, h)
	}
	return img
}

// nrgbaAt returns the colour of img at (x, y) composited over white, as
// 8-bit channels.
func overWhite(img image.Image, x, y int) [3]float64 {
	r, g, b, a := img.At(x, y).RGBA() // premultiplied, 16 bits
	w := float64(0xffff - a)
	return [3]float64{(float64(r) + w) / 257, (float64(g) + w) / 257, (float64(b) + w) / 257}
}

// comparison of two renderings over a rectangle.
type comparison struct {
	inkedA, inkedB int     // pixels differing from white by more than the ink threshold
	differ         int     // pixels inked in one rendering only
	pixels         int     // pixels compared
	meanAbs        float64 // mean absolute difference per channel, in 8-bit units
}

// inkThreshold is the largest channel difference from white, in 8-bit
// units, of a pixel counted as blank.
const inkThreshold = 32

// compareRenderings compares a and b over r.
func compareRenderings(a, b image.Image, r image.Rectangle) comparison {
	var c comparison
	var sum float64
	for y := r.Min.Y; y < r.Max.Y; y++ {
		for x := r.Min.X; x < r.Max.X; x++ {
			pa, pb := overWhite(a, x, y), overWhite(b, x, y)
			ia, ib := false, false
			for k := 0; k < 3; k++ {
				ia = ia || 255-pa[k] > inkThreshold
				ib = ib || 255-pb[k] > inkThreshold
				sum += math.Abs(pa[k] - pb[k])
			}
			if ia {
				c.inkedA++
			}
			if ib {
				c.inkedB++
			}
			if ia != ib {
				c.differ++
			}
			c.pixels++
		}
	}
	c.meanAbs = sum / float64(3*c.pixels)
	return c
}

// hiddenCount returns the number of hidden points.
func hiddenCount(colours []uint16) int {
	n := 0
	for _, c := range colours {
		if c == raster.Hidden {
			n++
		}
	}
	return n
}
