package raster

import (
	"bytes"
	"encoding/binary"
	"errors"
	"image"
	"image/color"
	"math"
	"math/rand/v2"
	"testing"
)

// TestDiscRectArea checks the closed-form disc–rectangle intersection area
// against the whole disc (πr²), a quadrant (πr²/4), a half disc, and an
// exact slow computation: the midpoint rule on a fine grid, whose error is
// bounded by the grid cells the circle crosses.
func TestDiscRectArea(t *testing.T) {
	for _, r := range []float64{0.3, 0.75, 1, 2.5, 7} {
		if a := discRectArea(r, -10, 10, -10, 10); math.Abs(a-math.Pi*r*r) > 1e-12*r*r {
			t.Errorf("r=%g: whole disc area %.15g, want %.15g", r, a, math.Pi*r*r)
		}
		if a := discRectArea(r, 0, 10, 0, 10); math.Abs(a-math.Pi*r*r/4) > 1e-12*r*r {
			t.Errorf("r=%g: quadrant area %.15g, want %.15g", r, a, math.Pi*r*r/4)
		}
		if a := discRectArea(r, -10, 10, -10, 0); math.Abs(a-math.Pi*r*r/2) > 1e-12*r*r {
			t.Errorf("r=%g: half disc area %.15g", r, a)
		}
	}
	rng := rand.New(rand.NewPCG(1, 2))
	const grid = 2000
	for trial := 0; trial < 40; trial++ {
		r := 0.2 + 3*rng.Float64()
		x0, y0 := -4+6*rng.Float64(), -4+6*rng.Float64()
		x1, y1 := x0+0.1+2*rng.Float64(), y0+0.1+2*rng.Float64()
		got := discRectArea(r, x0, x1, y0, y1)
		dx, dy := (x1-x0)/grid, (y1-y0)/grid
		var n int
		for j := 0; j < grid; j++ {
			y := y0 + (float64(j)+0.5)*dy
			for i := 0; i < grid; i++ {
				x := x0 + (float64(i)+0.5)*dx
				if x*x+y*y < r*r {
					n++
				}
			}
		}
		slow := float64(n) * dx * dy
		// The midpoint rule errs only in cells the circle crosses: at most
		// about 2πr/min(dx,dy)·2 cells of area dx·dy each, and far less.
		tol := 4 * math.Pi * r * math.Max(dx, dy)
		if math.Abs(got-slow) > tol {
			t.Errorf("r=%.3f rect [%.3f,%.3f]×[%.3f,%.3f]: area %.6f, grid %.6f", r, x0, x1, y0, y1, got, slow)
		}
	}
}

func newImage(w, h int) *image.RGBA { return image.NewRGBA(image.Rect(0, 0, w, h)) }

// pixelView returns the view in which data coordinates are pixel
// coordinates with y up: x = px, y = h − py.
func pixelView(w, h int) View {
	return View{CenterX: float64(w) / 2, CenterY: float64(h) / 2, Scale: 1, Width: w, Height: h}
}

// TestSinglePointDisc checks that one point draws a disc of area πr² in its
// colour where it was put: on a transparent background the alpha channel
// sums to the coverage, interior pixels are the exact colour, the pixel
// holding the centre is covered most, and every pixel holds premultiplied
// red only. (TestDrawMatchesSlowReference checks positions exactly.)
func TestSinglePointDisc(t *testing.T) {
	red := color.NRGBA{255, 0, 0, 255}
	for _, tc := range []struct {
		radius, pixelScale float64
		x, y               float64
	}{
		{0.7, 1, 20.5, 20.5},
		{1.5, 1, 20.3, 19.9},
		{3.3, 1, 20.1, 20.6},
		{2.2, 2, 21.77, 18.13},
		{10, 1, 20, 20},
	} {
		img := newImage(48, 48)
		s := Style{Radius: tc.radius, Opacity: 1, PixelScale: tc.pixelScale}
		v := pixelView(48, 48)
		layout := []float32{float32(tc.x), float32(48 - tc.y)}
		if err := Draw(img, layout, []uint16{0}, []color.NRGBA{red}, []int32{0}, v, s, 1); err != nil {
			t.Fatal(err)
		}
		r := tc.radius * tc.pixelScale
		var sum float64
		var partial int
		for y := 0; y < 48; y++ {
			for x := 0; x < 48; x++ {
				p := img.RGBAAt(x, y)
				if p.G != 0 || p.B != 0 || p.R != p.A {
					t.Fatalf("r=%g: pixel (%d,%d) = %v, not premultiplied red", r, x, y, p)
				}
				a := float64(p.A) / 255
				sum += a
				if p.A != 0 && p.A != 255 {
					partial++
				}
				// A pixel wholly inside the disc is exactly the colour.
				dx := math.Max(math.Abs(float64(x)-tc.x), math.Abs(float64(x+1)-tc.x)) + 0.125
				dy := math.Max(math.Abs(float64(y)-tc.y), math.Abs(float64(y+1)-tc.y)) + 0.125
				if dx*dx+dy*dy < r*r && p != (color.RGBA{255, 0, 0, 255}) {
					t.Errorf("r=%g: interior pixel (%d,%d) = %v", r, x, y, p)
				}
			}
		}
		// Geometry: area πr². Each partly covered pixel carries at most
		// 1/512 from rounding the stamp and 1/510 from rounding the blend.
		if tol := float64(partial) / 250; math.Abs(sum-math.Pi*r*r) > tol {
			t.Errorf("r=%g: drawn area %.4f, want %.4f ± %.3f", r, sum, math.Pi*r*r, tol)
		}
		// The pixel holding the centre is covered most.
		best, bestA := image.Point{}, uint8(0)
		for y := 0; y < 48; y++ {
			for x := 0; x < 48; x++ {
				if a := img.RGBAAt(x, y).A; a > bestA {
					best, bestA = image.Pt(x, y), a
				}
			}
		}
		centre := image.Pt(int(tc.x), int(tc.y))
		if img.RGBAAt(centre.X, centre.Y).A != bestA {
			t.Errorf("r=%g: most covered pixel %v (alpha %d), centre pixel %v has %d", r, best, bestA, centre, img.RGBAAt(centre.X, centre.Y).A)
		}
	}
}

// TestBlendMatchesPorterDuff checks the fixed-point blend against the
// "over" operator of Porter & Duff (1984) in floating point, on random
// premultiplied pixels, colours and alphas: within one unit of 8 bits.
func TestBlendMatchesPorterDuff(t *testing.T) {
	rng := rand.New(rand.NewPCG(3, 4))
	for trial := 0; trial < 20000; trial++ {
		c := color.NRGBA{uint8(rng.IntN(256)), uint8(rng.IntN(256)), uint8(rng.IntN(256)), uint8(rng.IntN(256))}
		da := rng.IntN(256)
		d := [4]int{rng.IntN(da + 1), rng.IntN(da + 1), rng.IntN(da + 1), da}
		a := uint32(rng.IntN(alphaOne + 1))
		row := []uint8{uint8(d[0]), uint8(d[1]), uint8(d[2]), uint8(d[3])}
		var r Renderer
		r.preparePalette([]color.NRGBA{c})
		st := stamp{w: 1, h: 1, pixels: []stampPixel{{a: a}}}
		buf := []uint32{binary.LittleEndian.Uint32(row)}
		drawClipped(buf, 1, &st, 0, 0, 1, r.paints[0])
		binary.LittleEndian.PutUint32(row, buf[0])
		alpha := float64(a) / alphaOne * float64(c.A) / 255
		src := [4]float64{float64(c.R) * alpha, float64(c.G) * alpha, float64(c.B) * alpha, 255 * alpha}
		for k := 0; k < 4; k++ {
			want := src[k] + float64(d[k])*(1-alpha)
			if math.Abs(float64(row[k])-want) > 1 {
				t.Fatalf("colour %v alpha %d over %v: channel %d = %d, want %.2f", c, a, d, k, row[k], want)
			}
		}
	}
}

// slowDraw is the exact slow reference for Draw: every point in order, every
// pixel of its disc's bounding box, coverage from discRectArea at the same
// quarter-pixel centre, the same rounding and the same blend, with no
// stamps, bands or threads.
func slowDraw(img *image.RGBA, layout []float32, colours []uint16, palette []color.NRGBA, order []int32, v View, s Style) {
	bg := s.Background
	for y := 0; y < v.Height; y++ {
		for x := 0; x < v.Width; x++ {
			img.Set(x, y, bg)
		}
	}
	scale := s.PixelScale
	if scale == 0 {
		scale = 1
	}
	r := s.Radius * scale
	var rd Renderer
	rd.preparePalette(palette)
	for _, i := range order {
		c := colours[i]
		if c == Hidden {
			continue
		}
		px, py := v.ToPixel(float64(layout[2*i]), float64(layout[2*i+1]))
		if math.IsNaN(px) || math.IsNaN(py) || math.Abs(px) > 1e6 || math.Abs(py) > 1e6 {
			continue
		}
		cx := (math.Floor(px*subdiv) + 0.5) / subdiv
		cy := (math.Floor(py*subdiv) + 0.5) / subdiv
		for y := int(math.Floor(cy - r)); y <= int(math.Ceil(cy+r)); y++ {
			for x := int(math.Floor(cx - r)); x <= int(math.Ceil(cx+r)); x++ {
				if x < 0 || y < 0 || x >= v.Width || y >= v.Height {
					continue
				}
				cov := discRectArea(r, float64(x)-cx, float64(x+1)-cx, float64(y)-cy, float64(y+1)-cy)
				a := uint32(math.Round(alphaOne * s.Opacity * math.Min(cov, 1)))
				st := stamp{w: 1, h: 1, pixels: []stampPixel{{a: a}}}
				px := img.Pix[img.PixOffset(x, y):][:4]
				buf := []uint32{binary.LittleEndian.Uint32(px)}
				drawClipped(buf, 1, &st, 0, 0, 1, rd.paints[c])
				binary.LittleEndian.PutUint32(px, buf[0])
			}
		}
	}
}

// randomScene returns n points spread over and beyond a w × h pixel view
// (some off-screen, some NaN, some hidden) with colours from a palette that
// includes a translucent colour.
func randomScene(n, w, h int, seed uint64) (layout []float32, colours []uint16, palette []color.NRGBA) {
	rng := rand.New(rand.NewPCG(seed, 7))
	palette = []color.NRGBA{{200, 30, 40, 255}, {20, 90, 200, 255}, {30, 160, 60, 128}, {250, 200, 10, 255}}
	layout = make([]float32, 2*n)
	colours = make([]uint16, n)
	for i := 0; i < n; i++ {
		layout[2*i] = float32(-10 + (float64(w)+20)*rng.Float64())
		layout[2*i+1] = float32(-10 + (float64(h)+20)*rng.Float64())
		colours[i] = uint16(rng.IntN(len(palette)))
		switch rng.IntN(50) {
		case 0:
			colours[i] = Hidden
		case 1:
			layout[2*i] = float32(math.NaN())
		case 2:
			layout[2*i+1] = float32(math.Inf(1))
		}
	}
	return layout, colours, palette
}

// TestDrawMatchesSlowReference checks Draw, for several radii, opacities,
// image sizes and thread counts, byte for byte against slowDraw, which
// blends every point's disc in order, pixel by pixel: the bands,
// the binning, the clipping at image and band edges and the stamps together
// must give exactly the reference image. The same comparison shows that the
// image does not depend on the number of threads.
func TestDrawMatchesSlowReference(t *testing.T) {
	for _, tc := range []struct {
		w, h    int
		n       int
		style   Style
		threads []int
	}{
		{97, 131, 3000, Style{Radius: 0.8, Opacity: 0.55, Background: color.NRGBA{255, 255, 255, 255}}, []int{1, 2, 3, 8}},
		{160, 75, 2000, Style{Radius: 2.6, Opacity: 1, Background: color.NRGBA{20, 20, 30, 255}}, []int{1, 4}},
		{64, 200, 500, Style{Radius: 9.5, Opacity: 0.8}, []int{1, 2, 5}},
		{50, 50, 400, Style{Radius: 1.2, Opacity: 0.7, PixelScale: 2.5}, []int{1, 3}},
		// A million cells' style over a dense map: about nine discs on every
		// pixel, each of which must count.
		{160, 100, 80000, DefaultStyle(1000000), []int{1, 2, 3}},
	} {
		layout, colours, palette := randomScene(tc.n, tc.w, tc.h, uint64(tc.n))
		order := Shuffle(tc.n, int64(tc.w))
		v := pixelView(tc.w, tc.h)
		want := newImage(tc.w, tc.h)
		slowDraw(want, layout, colours, palette, order, v, tc.style)
		var r Renderer
		for _, th := range tc.threads {
			got := newImage(tc.w, tc.h)
			for frame := 0; frame < 2; frame++ { // the second frame reuses the Renderer's memory
				if err := r.Draw(got, layout, colours, palette, order, v, tc.style, th); err != nil {
					t.Fatal(err)
				}
				if !bytes.Equal(got.Pix, want.Pix) {
					t.Fatalf("%dx%d r=%g threads=%d frame %d: image differs from the slow reference at %d bytes",
						tc.w, tc.h, tc.style.Radius, th, frame, countDiff(got.Pix, want.Pix))
				}
			}
		}
	}
}

func countDiff(a, b []uint8) int {
	n := 0
	for i := range a {
		if a[i] != b[i] {
			n++
		}
	}
	return n
}

// TestDrawOrder checks that a later point covers an earlier one.
func TestDrawOrder(t *testing.T) {
	palette := []color.NRGBA{{255, 0, 0, 255}, {0, 0, 255, 255}}
	layout := []float32{10.5, 10.5, 10.5, 10.5}
	s := Style{Radius: 3, Opacity: 1, Background: color.NRGBA{255, 255, 255, 255}}
	v := pixelView(21, 21)
	for _, tc := range []struct {
		order []int32
		want  color.RGBA
	}{
		{[]int32{0, 1}, color.RGBA{0, 0, 255, 255}},
		{[]int32{1, 0}, color.RGBA{255, 0, 0, 255}},
	} {
		img := newImage(21, 21)
		if err := Draw(img, layout, []uint16{0, 1}, palette, tc.order, v, s, 2); err != nil {
			t.Fatal(err)
		}
		if got := img.RGBAAt(10, 10); got != tc.want {
			t.Errorf("order %v: centre %v, want %v", tc.order, got, tc.want)
		}
	}
}

// TestHiddenAndOutsideSkipped checks that hidden points, points with
// non-finite coordinates and points beyond the view leave the background
// untouched, while a point just off the edge still draws its visible part.
func TestHiddenAndOutsideSkipped(t *testing.T) {
	bg := color.NRGBA{250, 250, 250, 255}
	s := Style{Radius: 2, Opacity: 1, Background: bg}
	v := pixelView(40, 30)
	palette := []color.NRGBA{{0, 0, 0, 255}}
	nan, inf := float32(math.NaN()), float32(math.Inf(-1))
	layout := []float32{20, 15, -5, 15, 60, 15, 20, -2.5, 20, 1e30, nan, 3, 4, inf}
	colours := []uint16{Hidden, 0, 0, 0, 0, 0, 0}
	img := newImage(40, 30)
	if err := Draw(img, layout, colours, palette, Shuffle(7, 1), v, s, 2); err != nil {
		t.Fatal(err)
	}
	for y := 0; y < 30; y++ {
		for x := 0; x < 40; x++ {
			if p := img.RGBAAt(x, y); p != (color.RGBA{250, 250, 250, 255}) {
				t.Fatalf("pixel (%d,%d) = %v, want the background", x, y, p)
			}
		}
	}
	// A point centred half a pixel below the bottom edge shows its top half.
	if err := Draw(img, []float32{20, -0.5}, []uint16{0}, palette, []int32{0}, v, s, 1); err != nil {
		t.Fatal(err)
	}
	if p := img.RGBAAt(20, 29); p.R > 10 {
		t.Errorf("edge pixel %v, want drawn", p)
	}
}

// TestDrawErrors checks that bad input is reported as an *InputError that
// names the argument and element and wraps the right sentinel.
func TestDrawErrors(t *testing.T) {
	img := newImage(10, 10)
	v := pixelView(10, 10)
	s := DefaultStyle(3)
	pal := []color.NRGBA{{1, 2, 3, 255}}
	layout := []float32{1, 1, 2, 2, 3, 3}
	cols := []uint16{0, 0, 0}
	order := []int32{0, 1, 2}
	for _, tc := range []struct {
		name   string
		err    error
		arg    string
		index  int
		layout []float32
		cols   []uint16
		order  []int32
		v      View
		s      Style
	}{
		{"odd layout", ErrOddLength, "layout", -1, layout[:5], cols, order, v, s},
		{"short colours", ErrLength, "colours", -1, layout, cols[:2], order, v, s},
		{"order index", ErrIndex, "order", 1, layout, cols, []int32{0, 3, 1}, v, s},
		{"negative order", ErrIndex, "order", 2, layout, cols, []int32{0, 1, -1}, v, s},
		{"palette index", ErrPaletteIndex, "colours", 2, layout, []uint16{0, Hidden, 4}, order, v, s},
		{"first bad entry", ErrPaletteIndex, "colours", 2, layout, []uint16{0, 0, 4}, []int32{2, 7, 0}, v, s},
		{"first bad entry", ErrIndex, "order", 1, layout, []uint16{0, 0, 4}, []int32{0, 7, 2}, v, s},
		{"view size", ErrView, "view size", -1, layout, cols, order, pixelView(11, 10), s},
		{"view scale", ErrView, "view", -1, layout, cols, order, View{Scale: 0, Width: 10, Height: 10}, s},
		{"radius", ErrStyle, "style radius", -1, layout, cols, order, v, Style{Radius: 0, Opacity: 1}},
		{"huge radius", ErrStyle, "style radius", -1, layout, cols, order, v, Style{Radius: 40, PixelScale: 2, Opacity: 1}},
		{"opacity", ErrStyle, "style opacity", -1, layout, cols, order, v, Style{Radius: 1, Opacity: 1.5}},
	} {
		err := Draw(img, tc.layout, tc.cols, pal, tc.order, tc.v, tc.s, 2)
		var ie *InputError
		if !errors.Is(err, tc.err) || !errors.As(err, &ie) || ie.Arg != tc.arg || ie.Index != tc.index {
			t.Errorf("%s: got %v, want %v at %s[%d]", tc.name, err, tc.err, tc.arg, tc.index)
		}
	}
	big := make([]color.NRGBA, Hidden)
	if err := Draw(img, layout, cols, big, order, v, s, 1); !errors.Is(err, ErrPaletteSize) {
		t.Errorf("palette of %d: got %v", len(big), err)
	}
	if err := Draw(nil, layout, cols, pal, order, v, s, 1); !errors.Is(err, ErrView) {
		t.Errorf("nil image: got %v", err)
	}
}

// TestDrawSubImage checks drawing into a sub-image that does not start at
// the origin of its pixel buffer.
func TestDrawSubImage(t *testing.T) {
	whole := newImage(30, 30)
	sub := whole.SubImage(image.Rect(10, 5, 25, 20)).(*image.RGBA)
	v := pixelView(15, 15)
	s := Style{Radius: 1.5, Opacity: 1, Background: color.NRGBA{9, 9, 9, 255}}
	if err := Draw(sub, []float32{7.5, 7.5}, []uint16{0}, []color.NRGBA{{200, 0, 0, 255}}, []int32{0}, v, s, 2); err != nil {
		t.Fatal(err)
	}
	if p := whole.RGBAAt(17, 12); p != (color.RGBA{200, 0, 0, 255}) {
		t.Errorf("centre of sub-image %v", p)
	}
	if p := whole.RGBAAt(9, 12); p != (color.RGBA{}) {
		t.Errorf("pixel outside the sub-image changed: %v", p)
	}
}

// TestRendererReusesMemory checks that a second frame of the same size
// allocates only the few small objects of starting goroutines, whatever the
// number of points.
func TestRendererReusesMemory(t *testing.T) {
	for _, n := range []int{1000, 50000} {
		layout, colours, palette := randomScene(n, 300, 200, 5)
		order := Shuffle(n, 9)
		img := newImage(300, 200)
		v := pixelView(300, 200)
		s := DefaultStyle(n)
		var r Renderer
		allocs := testing.AllocsPerRun(5, func() {
			if err := r.Draw(img, layout, colours, palette, order, v, s, 2); err != nil {
				t.Fatal(err)
			}
		})
		if allocs > 16 {
			t.Errorf("n=%d: %.0f allocations per frame, want ≤ 16", n, allocs)
		}
	}
}

func TestDefaultStyle(t *testing.T) {
	prevR, prevO := math.Inf(1), math.Inf(1)
	for _, n := range []int{0, 1, 100, 1000, 10000, 100000, 1000000, 10000000} {
		s := DefaultStyle(n)
		if _, err := s.deviceRadius(); err != nil {
			t.Errorf("n=%d: %v", n, err)
		}
		if s.Radius > prevR || s.Opacity > prevO {
			t.Errorf("n=%d: radius %.3f opacity %.3f grew with n", n, s.Radius, s.Opacity)
		}
		prevR, prevO = s.Radius, s.Opacity
	}
	if s := DefaultStyle(1000000); math.Abs(s.Radius-14/math.Pow(1e6, 0.2)) > 1e-12 || s.Opacity != 0.5 {
		t.Errorf("DefaultStyle(1e6) = %+v", s)
	}
}

// TestShuffle checks that Shuffle returns permutations that depend only on
// the seed, and that for few points all orders are equally likely: over
// 60000 seeds each of the 6 orders of 3 items must be drawn within 5
// standard deviations of 10000 times (binomial, p = 1/6).
func TestShuffle(t *testing.T) {
	if len(Shuffle(0, 1)) != 0 || len(Shuffle(-2, 1)) != 0 {
		t.Error("Shuffle of n ≤ 0 not empty")
	}
	for _, n := range []int{1, 1000, shuffleUniformMax, shuffleUniformMax + 1, 300007} {
		p := Shuffle(n, 42)
		seen := make([]bool, n)
		for _, v := range p {
			if v < 0 || int(v) >= n || seen[v] {
				t.Fatalf("n=%d: not a permutation: %d", n, v)
			}
			seen[v] = true
		}
		if len(p) != n {
			t.Fatalf("n=%d: %d entries", n, len(p))
		}
		if !equalInt32(p, Shuffle(n, 42)) {
			t.Errorf("n=%d: same seed, different permutations", n)
		}
		if n > 1 && equalInt32(p, Shuffle(n, 43)) {
			t.Errorf("n=%d: different seeds, same permutation", n)
		}
	}
	const trials = 60000
	counts := map[[3]int32]int{}
	for s := int64(0); s < trials; s++ {
		q := Shuffle(3, s)
		counts[[3]int32{q[0], q[1], q[2]}]++
	}
	mean, sd := trials/6.0, math.Sqrt(trials*(1.0/6)*(5.0/6))
	if len(counts) != 6 {
		t.Fatalf("%d distinct orders of 3, want 6", len(counts))
	}
	for k, c := range counts {
		if math.Abs(float64(c)-mean) > 5*sd {
			t.Errorf("order %v drawn %d times, want %.0f ± %.0f", k, c, mean, 5*sd)
		}
	}
}

// TestShuffleMixesGroups checks the property Shuffle is for, on a million
// points stored group by group (contiguous indices), with large groups and
// rare ones of a few hundred points:
//
//   - in every eighth of the drawing order, the last one (the top layer)
//     included, each group has an eighth of its points, give or take one per
//     chunk it touches (each chunk is dealt evenly into the 8 sweeps) and a
//     few more because the sweeps' lengths may differ from exact eighths by
//     the uneven split of the last, partial chunk (2 per sweep boundary);
//   - within the last sweep, a group stored first and a group stored last
//     are drawn at the same time on average, so that neither lies on top of
//     the other where they overlap: their mean positions differ by less than
//     4 standard deviations of the difference of two means of 25 chunks
//     placed at random (0.29/√25 each).
func TestShuffleMixesGroups(t *testing.T) {
	const n = 1000003
	sizes := []int{100000, 450, 30000, 700, 250000, 1200, 67000, 300, 0}
	sizes[len(sizes)-1] = n
	for _, s := range sizes[:len(sizes)-1] {
		sizes[len(sizes)-1] -= s
	}
	group := make([]int, n)
	starts := make([]int, len(sizes))
	i := 0
	for g, s := range sizes {
		starts[g] = i
		for ; i < starts[g]+s; i++ {
			group[i] = g
		}
	}
	order := Shuffle(n, 5)
	d := n / shuffleSweeps
	for part := 0; part < shuffleSweeps; part++ {
		counts := make([]int, len(sizes))
		for _, i := range order[part*d : (part+1)*d] {
			counts[group[i]]++
		}
		for g, size := range sizes {
			touched := (starts[g]+size-1)/shuffleChunk - starts[g]/shuffleChunk + 1
			want := float64(size) / shuffleSweeps
			if diff := math.Abs(float64(counts[g]) - want); diff > float64(touched+2*shuffleSweeps) {
				t.Errorf("eighth %d: group %d (%d points) has %d, want %.1f ± %d", part, g, size, counts[g], want, touched+2*shuffleSweeps)
			}
		}
	}
	last := order[n-d:]
	var sumFirst, sumLast, nFirst, nLast float64
	for k, i := range last {
		switch group[i] {
		case 0:
			sumFirst += float64(k) / float64(d)
			nFirst++
		case len(sizes) - 1:
			sumLast += float64(k) / float64(d)
			nLast++
		}
	}
	if diff := math.Abs(sumFirst/nFirst - sumLast/nLast); diff > 4*math.Sqrt(2)*0.29/5 {
		t.Errorf("in the last sweep the first and last groups are drawn at mean positions %.3f and %.3f", sumFirst/nFirst, sumLast/nLast)
	}
}

func equalInt32(a, b []int32) bool {
	if len(a) != len(b) {
		return false
	}
	for i := range a {
		if a[i] != b[i] {
			return false
		}
	}
	return true
}

// TestRedrawMatchesSlowReference draws a scene, then draws it again with
// other colours by Redraw (points hidden and shown, colours changed,
// translucent ones included), and checks each image byte for byte against
// slowDraw with those colours, for Redraw on as many threads as the Draw
// and on others.
func TestRedrawMatchesSlowReference(t *testing.T) {
	for _, tc := range []struct {
		w, h    int
		n       int
		style   Style
		threads [][2]int // threads of the Draw, then of the Redraws
	}{
		{97, 131, 3000, Style{Radius: 0.8, Opacity: 0.55, Background: color.NRGBA{255, 255, 255, 255}}, [][2]int{{1, 1}, {2, 3}, {3, 1}}},
		{64, 200, 500, Style{Radius: 9.5, Opacity: 0.8}, [][2]int{{2, 2}, {1, 5}}},
		{160, 100, 80000, DefaultStyle(1000000), [][2]int{{2, 2}, {3, 1}}},
	} {
		layout, colours, palette := randomScene(tc.n, tc.w, tc.h, uint64(tc.n))
		order := Shuffle(tc.n, int64(tc.w))
		v := pixelView(tc.w, tc.h)
		rng := rand.New(rand.NewPCG(uint64(tc.n), 3))
		var later [][]uint16
		for range 2 {
			c := make([]uint16, tc.n)
			for i := range c {
				c[i] = uint16(rng.IntN(len(palette)))
				if rng.IntN(7) == 0 {
					c[i] = Hidden
				}
			}
			later = append(later, c)
		}
		for _, th := range tc.threads {
			var r Renderer
			got := newImage(tc.w, tc.h)
			if err := r.Draw(got, layout, colours, palette, order, v, tc.style, th[0]); err != nil {
				t.Fatal(err)
			}
			for k, c := range later {
				if err := r.Redraw(got, c, palette, th[1]); err != nil {
					t.Fatal(err)
				}
				want := newImage(tc.w, tc.h)
				slowDraw(want, layout, c, palette, order, v, tc.style)
				if !bytes.Equal(got.Pix, want.Pix) {
					t.Fatalf("%dx%d r=%g threads %v, redraw %d: image differs from the slow reference at %d bytes",
						tc.w, tc.h, tc.style.Radius, th, k, countDiff(got.Pix, want.Pix))
				}
			}
		}
	}
}

// TestRedrawErrors checks that Redraw refuses to draw without a frame (none
// yet, or the last Draw failed), into an image of another size, or with
// colours that do not fit, names the first bad colour of any point, and
// leaves the image unchanged.
func TestRedrawErrors(t *testing.T) {
	img := newImage(10, 10)
	v := pixelView(10, 10)
	s := DefaultStyle(3)
	pal := []color.NRGBA{{1, 2, 3, 255}}
	layout := []float32{1, 1, 2, 2, 3, 3}
	cols := []uint16{0, 0, 0}
	var r Renderer
	if err := r.Redraw(img, cols, pal, 1); !errors.Is(err, ErrNoFrame) {
		t.Errorf("before any frame: got %v", err)
	}
	if err := r.Draw(img, layout, cols, pal, []int32{0, 2}, v, s, 2); err != nil {
		t.Fatal(err)
	}
	before := append([]uint8(nil), img.Pix...)
	for _, tc := range []struct {
		name  string
		err   error
		arg   string
		index int
		img   *image.RGBA
		cols  []uint16
		pal   []color.NRGBA
	}{
		{"image size", ErrView, "view size", -1, newImage(10, 11), cols, pal},
		{"nil image", ErrView, "view size", -1, nil, cols, pal},
		{"short colours", ErrLength, "colours", -1, img, cols[:2], pal},
		{"palette size", ErrPaletteSize, "palette", -1, img, cols, make([]color.NRGBA, Hidden)},
		{"first bad colour", ErrPaletteIndex, "colours", 1, img, []uint16{Hidden, 1, 2}, pal},
	} {
		err := r.Redraw(tc.img, tc.cols, tc.pal, 2)
		var ie *InputError
		if !errors.Is(err, tc.err) || !errors.As(err, &ie) || ie.Arg != tc.arg || ie.Index != tc.index {
			t.Errorf("%s: got %v, want %v at %s[%d]", tc.name, err, tc.err, tc.arg, tc.index)
		}
	}
	if !bytes.Equal(img.Pix, before) {
		t.Error("a refused Redraw changed the image")
	}
	if err := r.Redraw(img, []uint16{0, Hidden, 0}, pal, 2); err != nil {
		t.Errorf("after refusals: %v", err)
	}
	if err := r.Draw(img, layout, cols, pal, []int32{0, 7}, v, s, 2); !errors.Is(err, ErrIndex) {
		t.Fatalf("bad order: got %v", err)
	}
	if err := r.Redraw(img, cols, pal, 2); !errors.Is(err, ErrNoFrame) {
		t.Errorf("after a failed Draw: got %v", err)
	}
}
