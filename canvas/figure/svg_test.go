package figure

import (
	"bytes"
	"image"
	"math"
	"slices"
	"testing"

	"lodestone/canvas/raster"
)

// An SVG export in vector mode parses as XML (encoding/xml, the whole token
// stream) and holds one element per visible point: here every point that is
// neither hidden nor at a non-finite position, since the fitted view shows
// all the others.
func TestSVGVectorOnePointElementEach(t *testing.T) {
	f := testFigure(3000, 6)
	for i := 0; i < 3000; i += 7 {
		f.Colours[i] = raster.Hidden
	}
	f.Layout[2*10] = float32(math.NaN())
	f.Layout[2*11+1] = float32(math.Inf(1))
	want := 3000 - hiddenCount(f.Colours) - 2
	var buf bytes.Buffer
	if err := WriteSVG(&buf, f, Size{WidthPx: 900, HeightPx: 600}, want); err != nil {
		t.Fatal(err)
	}
	doc := parseSVG(t, buf.Bytes())
	if doc.points != want || doc.elements["use"] != want {
		t.Errorf("points group holds %d elements (%d <use> in all), want %d", doc.points, doc.elements["use"], want)
	}
	if len(doc.images) != 0 {
		t.Errorf("vector SVG embeds %d images, want none", len(doc.images))
	}
	if doc.root["viewBox"] != "0 0 900 600" || doc.root["width"] != "900px" || doc.root["height"] != "600px" {
		t.Errorf("root size: viewBox %q, width %q, height %q", doc.root["viewBox"], doc.root["width"], doc.root["height"])
	}
}

// Above the vector limit the points are exactly one embedded PNG, the size
// of the map area, while the title and key stay text.
func TestSVGHybridOneImage(t *testing.T) {
	f := testFigure(3000, 6)
	s := Size{WidthPx: 900, HeightPx: 600}
	var buf bytes.Buffer
	if err := WriteSVG(&buf, f, s, 2999); err != nil {
		t.Fatal(err)
	}
	doc := parseSVG(t, buf.Bytes())
	if len(doc.images) != 1 || doc.elements["image"] != 1 {
		t.Fatalf("hybrid SVG has %d images, want exactly 1", doc.elements["image"])
	}
	if doc.elements["use"] != 0 {
		t.Errorf("hybrid SVG has %d <use> point elements, want 0", doc.elements["use"])
	}
	sc, err := f.scene(s)
	if err != nil {
		t.Fatal(err)
	}
	img := decodeDataPNG(t, doc.images[0])
	if img.Bounds().Size() != sc.points.area.Size() {
		t.Errorf("embedded image is %v, map area %v", img.Bounds().Size(), sc.points.area.Size())
	}
	if !slices.Contains(doc.texts, "Test atlas") || !slices.Contains(doc.texts, "state 3") {
		t.Errorf("title or key text missing from %q", doc.texts)
	}
}

// The default limit is DefaultVectorLimit.
func TestSVGDefaultLimit(t *testing.T) {
	for _, tc := range []struct {
		n      int
		images int
	}{{DefaultVectorLimit, 0}, {DefaultVectorLimit + 1, 1}} {
		f := testFigure(tc.n, 3)
		f.Key, f.Title = nil, ""
		var buf bytes.Buffer
		if err := WriteSVG(&buf, f, Size{WidthPx: 300, HeightPx: 300}, 0); err != nil {
			t.Fatal(err)
		}
		if got := bytes.Count(buf.Bytes(), []byte("<image")); got != tc.images {
			t.Errorf("%d points: %d images, want %d", tc.n, got, tc.images)
		}
	}
}

// Text with XML's special characters survives: decoding the document gives
// back the title, the key's title and entry, and the labels exactly.
func TestSVGEscapesText(t *testing.T) {
	const nasty = `A <b> & "c" 'd' ]]> <!-- e -->`
	f := testFigure(400, 2)
	f.Title = "title " + nasty
	f.Key.Title = "key " + nasty
	f.Key.Entries[1].Label = "entry " + nasty
	f.Labels = []Label{{Text: "label <&>\"'", X: 10, Y: 0}}
	var buf bytes.Buffer
	if err := WriteSVG(&buf, f, Size{WidthPx: 2400, HeightPx: 1200}, 0); err != nil {
		t.Fatal(err)
	}
	doc := parseSVG(t, buf.Bytes())
	if doc.title != f.Title {
		t.Errorf("<title> = %q, want %q", doc.title, f.Title)
	}
	for _, want := range []string{f.Title, f.Key.Title, f.Key.Entries[1].Label, f.Labels[0].Text} {
		if !slices.Contains(doc.texts, want) {
			t.Errorf("no <text> reads %q; texts: %q", want, doc.texts)
		}
	}
}

// With a resolution, the root's width and height give the physical size in
// millimetres: 1051 px at 300 dpi is 1051/300·25.4 = 88.98 mm.
func TestSVGPhysicalSize(t *testing.T) {
	f := testFigure(100, 2)
	var buf bytes.Buffer
	if err := WriteSVG(&buf, f, Size{WidthPx: 1051, HeightPx: 788, DPI: 300}, 0); err != nil {
		t.Fatal(err)
	}
	doc := parseSVG(t, buf.Bytes())
	if doc.root["width"] != "88.98mm" || doc.root["height"] != "66.72mm" || doc.root["viewBox"] != "0 0 1051 788" {
		t.Errorf("width %q height %q viewBox %q, want 88.98mm, 66.72mm, 0 0 1051 788", doc.root["width"], doc.root["height"], doc.root["viewBox"])
	}
}

// The SVG drawn by an independent renderer (librsvg's rsvg-convert) covers
// the same pixels of the map area as the PNG export. Tolerances: at most
// 2 % of the map's pixels may be inked (a channel more than 32 levels from
// white) in one rendering only, and the mean absolute channel difference is
// at most 2 levels in vector mode, where centres are rounded differently
// (0.1 px in SVG, ¼ px in the rasteriser) and each renderer has its own
// anti-aliasing, and at most 0.5 levels in hybrid mode, where the same
// pixels are composited once more over the background.
func TestSVGMatchesIndependentRenderer(t *testing.T) {
	f := testFigure(6000, 8)
	s := Size{WidthPx: 900, HeightPx: 600}
	sc, err := f.scene(s)
	if err != nil {
		t.Fatal(err)
	}
	area := sc.points.area
	var pngBuf bytes.Buffer
	if err := WritePNG(&pngBuf, f, s); err != nil {
		t.Fatal(err)
	}
	ours, _, err := image.Decode(&pngBuf)
	if err != nil {
		t.Fatal(err)
	}
	for _, tc := range []struct {
		name    string
		limit   int
		maxDiff float64 // share of map pixels inked in one rendering only
		maxMean float64 // mean absolute channel difference
	}{
		{"vector", 6000, 0.02, 2},
		{"hybrid", 100, 0.02, 0.5},
	} {
		t.Run(tc.name, func(t *testing.T) {
			var svg bytes.Buffer
			if err := WriteSVG(&svg, f, s, tc.limit); err != nil {
				t.Fatal(err)
			}
			theirs := rsvgRender(t, svg.Bytes(), s.WidthPx, s.HeightPx)
			c := compareRenderings(ours, theirs, area)
			share := float64(c.differ) / float64(c.pixels)
			t.Logf("%s: inked %d (PNG) vs %d (rsvg) of %d; inked in one only %.3f%%; mean |Δ| %.3f levels",
				tc.name, c.inkedA, c.inkedB, c.pixels, 100*share, c.meanAbs)
			if c.inkedA < c.pixels/20 {
				t.Fatalf("only %d of %d map pixels inked: the comparison would say little", c.inkedA, c.pixels)
			}
			if share > tc.maxDiff || c.meanAbs > tc.maxMean {
				t.Errorf("renderings differ: %.3f%% of pixels (≤ %.1f%%), mean |Δ| %.3f (≤ %.1f)", 100*share, 100*tc.maxDiff, c.meanAbs, tc.maxMean)
			}
		})
	}
}
