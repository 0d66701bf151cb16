package canvas

import (
	"image"
	"image/color"
	"math"
	"math/rand/v2"
	"slices"
	"testing"
	"time"

	"fyne.io/fyne/v2"
	"fyne.io/fyne/v2/driver/desktop"
	"fyne.io/fyne/v2/test"

	"lodestone/canvas/raster"
)

// pointInPolygon is the even–odd rule written out plainly (a horizontal ray
// to the right crosses the boundary an odd number of times), the reference
// for the map's lasso.
func pointInPolygon(x, y float64, poly []float64) bool {
	in := false
	n := len(poly) / 2
	for i, j := 0, n-1; i < n; j, i = i, i+1 {
		xi, yi, xj, yj := poly[2*i], poly[2*i+1], poly[2*j], poly[2*j+1]
		if (yi > y) != (yj > y) && x < (xj-xi)*(y-yi)/(yj-yi)+xi {
			in = !in
		}
	}
	return in
}

func randomLayout(n int, seed uint64) []float32 {
	r := rand.New(rand.NewPCG(seed, 1))
	l := make([]float32, 2*n)
	for i := range l {
		l[i] = float32(r.NormFloat64())
	}
	return l
}

// TestLassoByDragMatchesPointInPolygon draws a lasso with simulated drags in
// the headless test driver and compares the selection with a direct
// point-in-polygon test of the same loop in data coordinates.
func TestLassoByDragMatchesPointInPolygon(t *testing.T) {
	a := test.NewApp()
	defer a.Quit()
	m := NewMap()
	w := test.NewWindow(m)
	defer w.Close()
	w.Resize(fyne.NewSize(400, 300))
	m.SetLayout(randomLayout(3000, 3))
	m.SetPaint(make([]uint16, 3000), []color.NRGBA{{A: 255}})
	w.Canvas().Capture() // draw once, so the view is fitted
	m.SetTool(LassoAdd)

	// A concave, star-like loop around the middle of the map.
	var path []fyne.Position
	c := fyne.NewPos(m.Size().Width/2, m.Size().Height/2)
	for k := 0; k <= 40; k++ {
		rad := float32(60)
		if k%2 == 1 {
			rad = 25
		}
		ang := float64(k) / 40 * 2 * math.Pi
		path = append(path, c.Add(fyne.NewPos(rad*float32(math.Cos(ang)), rad*float32(math.Sin(ang)))))
	}
	for k := 1; k < len(path); k++ {
		d := path[k].Subtract(path[k-1])
		m.Dragged(&fyne.DragEvent{PointEvent: fyne.PointEvent{Position: path[k]}, Dragged: fyne.NewDelta(d.X, d.Y)})
	}
	m.DragEnd()

	// The reference: the recorded vertices (the first drag also records
	// its start point) turned into data coordinates.
	var poly []float64
	for _, p := range path {
		x, y := m.view.ToData(float64(p.X), float64(p.Y))
		poly = append(poly, x, y)
	}
	sel, n := m.Selection()
	if n == 0 {
		t.Fatal("the lasso selected nothing")
	}
	layout := m.Layout()
	mismatches := 0
	for i := range sel {
		want := pointInPolygon(float64(layout[2*i]), float64(layout[2*i+1]), poly)
		if sel[i] != want {
			mismatches++
		}
	}
	if mismatches != 0 {
		t.Fatalf("%d of %d cells disagree with the direct point-in-polygon test", mismatches, len(sel))
	}

	// Subtracting the same loop empties the selection; undo restores it.
	m.SetTool(LassoSubtract)
	m.ApplyLasso(poly, true)
	if _, n2 := m.Selection(); n2 != 0 {
		t.Fatalf("subtracting the loop left %d selected", n2)
	}
	if !m.Undo() {
		t.Fatal("nothing to undo")
	}
	if _, n3 := m.Selection(); n3 != n {
		t.Fatalf("undo restored %d, want %d", n3, n)
	}
}

// TestKeyTapHidesCategoryPixels taps a key entry and checks that the
// hidden category's colour disappears from the rendered map.
func TestKeyTapHidesCategoryPixels(t *testing.T) {
	a := test.NewApp()
	defer a.Quit()
	m := NewMap()
	key := NewKey()
	w := test.NewWindow(m)
	defer w.Close()
	w.Resize(fyne.NewSize(300, 300))

	const n = 2000
	layout := randomLayout(n, 5)
	codes := make([]uint16, n)
	for i := range codes {
		codes[i] = uint16(i % 2)
	}
	palette := []color.NRGBA{{R: 200, G: 30, B: 30, A: 255}, {R: 20, G: 40, B: 200, A: 255}}
	hidden := []bool{false, false}
	paint := func() {
		c := make([]uint16, n)
		for i, v := range codes {
			if hidden[v] {
				c[i] = raster.Hidden
			} else {
				c[i] = v
			}
		}
		m.SetPaint(c, palette)
		key.SetEntries("kind", []KeyEntry{{Label: "a", Colour: palette[0], Count: n / 2, Hidden: hidden[0]},
			{Label: "b", Colour: palette[1], Count: n / 2, Hidden: hidden[1]}})
	}
	key.OnToggle = func(i int) { hidden[i] = !hidden[i]; paint() }
	m.SetLayout(layout)
	paint()
	m.SetPointStyle(2, 1)

	before := w.Canvas().Capture()
	if countNear(before, palette[0]) == 0 || countNear(before, palette[1]) == 0 {
		t.Fatal("both categories should be drawn before the tap")
	}
	key.Tap(0)
	after := w.Canvas().Capture()
	if got := countNear(after, palette[0]); got != 0 {
		t.Fatalf("%d pixels of the hidden category remain", got)
	}
	if countNear(after, palette[1]) == 0 {
		t.Fatal("the other category vanished too")
	}
	key.Tap(0)
	if countNear(w.Canvas().Capture(), palette[0]) == 0 {
		t.Fatal("a second tap did not show the category again")
	}
}

// countNear counts pixels within a small distance of colour c (fully
// covered points; edges blend with the background).
func countNear(img image.Image, c color.NRGBA) int {
	n := 0
	b := img.Bounds()
	for y := b.Min.Y; y < b.Max.Y; y++ {
		for x := b.Min.X; x < b.Max.X; x++ {
			r, g, bb, _ := img.At(x, y).RGBA()
			if absDiff(r>>8, uint32(c.R)) < 6 && absDiff(g>>8, uint32(c.G)) < 6 && absDiff(bb>>8, uint32(c.B)) < 6 {
				n++
			}
		}
	}
	return n
}

func absDiff(a, b uint32) uint32 {
	if a > b {
		return a - b
	}
	return b - a
}

// TestFitBoxIgnoresStragglers checks that a handful of far points do not
// set the fitted view, while an ordinary layout is shown whole.
func TestFitBoxIgnoresStragglers(t *testing.T) {
	l := randomLayout(10000, 9)
	x0, x1, y0, y1, ok := FitBox(l)
	if !ok {
		t.Fatal("no box")
	}
	// Gaussian points: the box reaches past ±2.5 (beyond the 0.2–99.8
	// percentiles, ±2.88, by a quarter of the span, clipped to the extremes).
	if x0 > -2.5 || x1 < 2.5 || y0 > -2.5 || y1 < 2.5 {
		t.Fatalf("box (%v,%v)×(%v,%v) cuts the bulk", x0, x1, y0, y1)
	}
	for i := 0; i < 10; i++ {
		l[2*i], l[2*i+1] = 1000+float32(i), -500
	}
	x0, x1, y0, y1, _ = FitBox(l)
	if x1 > 10 || y0 < -10 {
		t.Fatalf("10 stragglers stretched the box to (%v,%v)×(%v,%v)", x0, x1, y0, y1)
	}
}

// TestRendererOnlyReadsTheWidget draws the same map at two pixel densities:
// the widget's view, style and selection stay as they were (the renderer
// writes nothing back), and the denser frame shows the same picture at
// twice the pixels.
func TestRendererOnlyReadsTheWidget(t *testing.T) {
	a := test.NewApp()
	defer a.Quit()
	m := NewMap()
	w := test.NewWindow(m)
	defer w.Close()
	w.SetPadded(false)
	w.Resize(fyne.NewSize(240, 180))
	m.SetLayout(randomLayout(500, 11))
	m.SetPaint(make([]uint16, 500), []color.NRGBA{{R: 30, G: 60, B: 200, A: 255}})
	m.SetPointStyle(3, 1)
	view, style := m.View(), m.style
	if !m.hasView || view.Width != int(m.Size().Width) || view.Height != int(m.Size().Height) {
		t.Fatalf("the widget did not fit its view to its size %v: %+v", m.Size(), view)
	}
	w.Canvas().Capture()
	one := m.Snapshot()
	c := w.Canvas().(test.WindowlessCanvas)
	c.SetScale(2)
	w.Canvas().Capture()
	two := m.Snapshot()
	c.SetScale(1)
	if m.View() != view || m.style != style || m.Pinned() {
		t.Fatalf("drawing changed the widget: view %+v → %+v, style %+v → %+v", view, m.View(), style, m.style)
	}
	if two.Rect.Dx() != 2*one.Rect.Dx() || two.Rect.Dy() != 2*one.Rect.Dy() {
		t.Fatalf("frames of %v and %v; want the second twice the first", one.Rect, two.Rect)
	}
	// Each point covers four times the pixels at twice the density.
	n1, n2 := countNear(one, color.NRGBA{R: 30, G: 60, B: 200}), countNear(two, color.NRGBA{R: 30, G: 60, B: 200})
	if n1 == 0 || math.Abs(float64(n2)/float64(n1)-4) > 0.6 {
		t.Fatalf("%d inked pixels at scale 1, %d at scale 2; want about 4×", n1, n2)
	}
}

// TestResizeRefitsAFollowingView checks that the widget, not its renderer,
// fits the view when its size changes, and that a pinned view keeps its
// centre and scale.
func TestResizeRefitsAFollowingView(t *testing.T) {
	a := test.NewApp()
	defer a.Quit()
	m := NewMap()
	m.Resize(fyne.NewSize(300, 200))
	m.SetLayout(randomLayout(1000, 12))
	small := m.View()
	m.Resize(fyne.NewSize(600, 400))
	big := m.View()
	x0, x1, y0, y1, _ := FitBox(m.Layout())
	want, err := raster.Fit([]float32{float32(x0), float32(y0), float32(x1), float32(y1)}, 600, 400, 24)
	if err != nil || big != want || small.Width != 300 {
		t.Fatalf("refit view %+v after %+v; want %+v", big, small, want)
	}
	m.Scrolled(&fyne.ScrollEvent{PointEvent: fyne.PointEvent{Position: fyne.NewPos(100, 100)}, Scrolled: fyne.NewDelta(0, 300)})
	pinned := m.View()
	m.Resize(fyne.NewSize(500, 500))
	v := m.View()
	if !m.Pinned() || v.Scale != pinned.Scale || v.CenterX != pinned.CenterX || v.Width != 500 {
		t.Fatalf("a pinned view changed on resize: %+v → %+v", pinned, v)
	}
	m.Fit()
	if m.Pinned() {
		t.Fatal("Fit left the view pinned")
	}
}

// TestPointsRedrawOnlyWhenTheyChange checks which changes of the widget
// redraw its points: the layout, paint, style, selection and view do; the
// hover tip and a lasso being drawn do not (the points' image stays, and
// the lasso's layer is shown only while there is a lasso).
func TestPointsRedrawOnlyWhenTheyChange(t *testing.T) {
	a := test.NewApp()
	defer a.Quit()
	m := NewMap()
	w := test.NewWindow(m)
	defer w.Close()
	w.Resize(fyne.NewSize(300, 200))
	m.SetLayout(randomLayout(800, 4))
	m.SetPaint(make([]uint16, 800), []color.NRGBA{{R: 200, A: 255}})
	w.Canvas().Capture()
	r := test.WidgetRenderer(m).(*mapRenderer)
	gen := m.pointsGen
	if r.pointsGen != gen {
		t.Fatalf("after a refresh the renderer has generation %d of %d", r.pointsGen, gen)
	}
	if r.overlay.Visible() {
		t.Fatal("the lasso's layer is shown without a lasso")
	}
	// Hover over every cell in turn: only the tip changes.
	m.HoverText = func(i int) string { return "cell" }
	for k := 0; k < 20; k++ {
		m.MouseMoved(&desktop.MouseEvent{PointEvent: fyne.PointEvent{Position: fyne.NewPos(float32(10*k), float32(5*k))}})
	}
	// A lasso being drawn: only its layer changes.
	m.SetTool(LassoAdd)
	for k := 1; k < 10; k++ {
		m.Dragged(&fyne.DragEvent{PointEvent: fyne.PointEvent{Position: fyne.NewPos(float32(20+10*k), float32(30+7*k))}, Dragged: fyne.NewDelta(10, 7)})
	}
	if m.pointsGen != gen || r.pointsGen != gen {
		t.Fatalf("hovering and drawing a lasso moved the points' generation from %d to %d (renderer %d)", gen, m.pointsGen, r.pointsGen)
	}
	if !r.overlay.Visible() {
		t.Fatal("the lasso being drawn is not shown")
	}
	m.DragEnd() // selects cells: the points change
	if r.overlay.Visible() {
		t.Fatal("the lasso's layer stays after the lasso closed")
	}
	changes := []struct {
		what string
		do   func()
	}{
		{"the selection", func() {}}, // DragEnd above
		{"the layout", func() { m.SetLayout(randomLayout(800, 5)) }},
		{"the paint", func() { m.SetPaint(make([]uint16, 800), []color.NRGBA{{B: 200, A: 255}}) }},
		{"the style", func() { m.SetPointStyle(2, 0.5) }},
		{"a pan", func() {
			m.SetTool(Move)
			m.Dragged(&fyne.DragEvent{Dragged: fyne.NewDelta(5, 0)})
		}},
		{"a zoom", func() {
			m.Scrolled(&fyne.ScrollEvent{PointEvent: fyne.PointEvent{Position: fyne.NewPos(50, 50)}, Scrolled: fyne.NewDelta(0, 40)})
		}},
		{"Fit", m.Fit},
		{"a resize", func() { w.Resize(fyne.NewSize(320, 220)) }},
	}
	for _, c := range changes {
		c.do()
		if m.pointsGen == gen || r.pointsGen != m.pointsGen {
			t.Fatalf("%s did not redraw the points: generation %d → %d, renderer %d", c.what, gen, m.pointsGen, r.pointsGen)
		}
		gen = m.pointsGen
	}
}

// TestMovingViewFollowsEachFrame checks that while a run moves the points
// the view is the fitted view of each new layout at once (each frame is
// drawn once, without a glide between frames), and that a layout shown
// while nothing moves is glided to.
func TestMovingViewFollowsEachFrame(t *testing.T) {
	a := test.NewApp()
	defer a.Quit()
	m := NewMap()
	w := test.NewWindow(m)
	defer w.Close()
	w.Resize(fyne.NewSize(300, 200))
	m.SetLayout(randomLayout(500, 6))
	m.SetMoving(true)
	for k := 1; k <= 3; k++ {
		l := randomLayout(500, 6)
		for i := range l {
			l[i] = l[i]*float32(1+k) + float32(3*k)
		}
		m.SetLayout(l)
		want, _ := m.fitted()
		if m.View() != want || m.glide != nil {
			t.Fatalf("frame %d: view %+v, want the fitted %+v at once (glide %v)", k, m.View(), want, m.glide)
		}
	}
	m.SetMoving(false)
	m.SetLayout(randomLayout(500, 7))
	want, _ := m.fitted()
	if m.glide == nil || m.viewTarget != want {
		t.Fatalf("no glide to a layout shown while nothing moves (target %+v, want %+v)", m.viewTarget, want)
	}
}

// TestOnDrawnReportsTheFrame checks that drawing the points reports a
// frame with its cost.
func TestOnDrawnReportsTheFrame(t *testing.T) {
	a := test.NewApp()
	defer a.Quit()
	m := NewMap()
	var costs []time.Duration
	m.OnDrawn = func(d time.Duration) { costs = append(costs, d) }
	w := test.NewWindow(m)
	defer w.Close()
	w.Resize(fyne.NewSize(300, 200))
	m.SetLayout(randomLayout(20000, 8))
	w.Canvas().Capture()
	if len(costs) != 1 || costs[0] <= 0 {
		t.Fatalf("one drawing reported %v", costs)
	}
}

// TestPercentilesAgreeWithSorting checks the selection FitBox uses against
// a full sort, with ties, on many sizes.
func TestPercentilesAgreeWithSorting(t *testing.T) {
	r := rand.New(rand.NewPCG(3, 4))
	for n := 1; n < 3000; n = n*3/2 + 1 {
		s := make([]float64, n)
		for i := range s {
			s[i] = math.Round(r.NormFloat64() * 20) // many ties
		}
		sorted := slices.Clone(s)
		slices.Sort(sorted)
		at := func(p float64) int { return min(n-1, int(p*float64(n))) }
		for _, p := range [][2]float64{{0.002, 0.998}, {0, 1}, {0.5, 0.5}, {0.1, 0.9}} {
			a, b := percentiles(slices.Clone(s), p[0], p[1])
			if a != sorted[at(p[0])] || b != sorted[at(p[1])] {
				t.Fatalf("n = %d, %v: got %v, %v; sorting gives %v, %v", n, p, a, b, sorted[at(p[0])], sorted[at(p[1])])
			}
		}
	}
}

// TestHoverTipStaysInsideTheMap hovers over cells across a map narrower
// than twice its tip, where the tip fits on neither side of some cells:
// the tip must lie inside the map every time (its left end was cut off at
// the map's left edge), and beside the pointer, not over it, wherever it
// fits there. A tip wider than the map begins at its left edge.
func TestHoverTipStaysInsideTheMap(t *testing.T) {
	a := test.NewApp()
	defer a.Quit()
	m := NewMap()
	w := test.NewWindow(m)
	defer w.Close()
	w.Resize(fyne.NewSize(300, 200))
	const n = 41
	layout := make([]float32, 2*n)
	for i := 0; i < n; i++ {
		layout[2*i], layout[2*i+1] = float32(i), float32(i%5)
	}
	m.SetLayout(layout)
	m.SetPaint(make([]uint16, n), []color.NRGBA{{R: 200, A: 255}})
	w.Canvas().Capture()
	r := test.WidgetRenderer(m).(*mapRenderer)
	size := m.Size()
	for _, text := range []string{"a cell's name, its group and its value", "a tip far wider than the whole of this small map, which cannot show it all"} {
		m.HoverText = func(int) string { return text }
		shown := 0
		for i := 0; i < n; i++ {
			px, py := m.View().ToPixel(float64(layout[2*i]), float64(layout[2*i+1]))
			at := fyne.NewPos(float32(px), float32(py))
			m.MouseMoved(&desktop.MouseEvent{PointEvent: fyne.PointEvent{Position: at}})
			if m.hover != i {
				t.Fatalf("pointer at cell %d (%v) hovers %d", i, at, m.hover)
			}
			if !r.tipBox.Visible() {
				t.Fatalf("no tip over cell %d", i)
			}
			shown++
			pos, box := r.tipBox.Position(), r.tipBox.Size()
			if box.Width <= size.Width {
				if pos.X < 0 || pos.X+box.Width > size.Width {
					t.Errorf("tip %q over cell %d at x = %v: spans %v … %v in a map %v wide", text, i, at.X, pos.X, pos.X+box.Width, size.Width)
				}
				if fitsBeside := at.X+14+box.Width <= size.Width || at.X-14-box.Width >= 0; fitsBeside && pos.X <= at.X && at.X <= pos.X+box.Width {
					t.Errorf("tip over cell %d covers the pointer at x = %v although it fits beside it (%v … %v)", i, at.X, pos.X, pos.X+box.Width)
				}
			} else if pos.X != 0 {
				t.Errorf("tip wider than the map over cell %d begins at x = %v, not at the map's left edge", i, pos.X)
			}
			if pos.Y < 0 || pos.Y+box.Height > size.Height {
				t.Errorf("tip over cell %d spans y %v … %v in a map %v high", i, pos.Y, pos.Y+box.Height, size.Height)
			}
			if tp := r.tipText.Position(); tp.X != pos.X+5 || tp.Y != pos.Y+5 {
				t.Errorf("tip text at %v, not inside its box at %v", tp, pos)
			}
		}
		if shown != n {
			t.Fatalf("tips shown over %d of %d cells", shown, n)
		}
	}
}

// TestFramesEqualFreshDraws changes the map in the ways a user does —
// lassos that add and remove cells, undo, a paint that hides cells, a new
// layout in the same slice, a pan, a new point style — and checks after
// each that the frame equals, byte for byte, a fresh raster.Draw of the
// map's cells as they are: frames after changes of colour alone are drawn
// again from the renderer's placed points (raster.Renderer.Redraw), the
// others placed anew. A lasso never selects hidden cells.
func TestFramesEqualFreshDraws(t *testing.T) {
	a := test.NewApp()
	defer a.Quit()
	m := NewMap()
	w := test.NewWindow(m)
	defer w.Close()
	w.SetPadded(false)
	w.Resize(fyne.NewSize(320, 240))
	const n = 6000
	layout, colours := clusteredMap(n, 3)
	palette := make([]color.NRGBA, 20)
	for i := range palette {
		palette[i] = color.NRGBA{uint8(40 + 13*i), uint8(200 - 7*i), uint8(90 + 29*i), uint8(255 - 6*i)}
	}
	m.SetLayout(layout)
	m.SetPaint(colours, palette)
	r := test.WidgetRenderer(m).(*mapRenderer)
	check := func(what string, redrawn bool) {
		t.Helper()
		before := r.drawn
		w.Canvas().Capture()
		got := m.Snapshot()
		if again := r.drawn == before; again != redrawn {
			t.Errorf("%s: drawn again from placed points %v, want %v", what, again, redrawn)
		}
		v := m.View()
		want := image.NewRGBA(got.Rect)
		if err := raster.Draw(want, m.layout, m.drawColours, m.drawPalette, m.order, v, m.style, 1); err != nil {
			t.Fatal(err)
		}
		if !slices.Equal(got.Pix, want.Pix) {
			t.Fatalf("%s: the frame differs from a fresh draw", what)
		}
		// Unselected cells are drawn in the dimmed half of the palette
		// while any cell is selected.
		sel, k := m.Selection()
		for i, c := range m.colours {
			if k > 0 && c != raster.Hidden && !sel[i] {
				c += uint16(len(m.palette))
			}
			if m.drawColours[i] != c || k > 0 && len(m.drawPalette) != 2*len(m.palette) {
				t.Fatalf("%s: cell %d drawn in colour %d of %d, want %d", what, i, m.drawColours[i], len(m.drawPalette), c)
			}
		}
	}
	check("first frame", false)
	box := []float64{-60, -40, 60, -40, 60, 40, -60, 40}
	loop := []float64{-15, -10, 5, -12, 10, 6, -12, 9}
	m.ApplyLasso(loop, false)
	check("lasso", true)
	m.ApplyLasso([]float64{-5, -30, 0, -30, 0, 30, -5, 30}, true)
	check("lasso removing cells", true)
	m.Undo()
	check("undo", true)
	hidden := append([]uint16(nil), colours...)
	for i, c := range hidden {
		if c%3 == 0 {
			hidden[i] = raster.Hidden
		}
	}
	m.SetPaint(hidden, palette)
	check("paint hiding cells", true)
	m.ClearSelection()
	m.ApplyLasso(box, false)
	check("lasso around every cell", true)
	visible := 0
	for _, c := range hidden {
		if c != raster.Hidden {
			visible++
		}
	}
	if sel, k := m.Selection(); k != visible {
		t.Errorf("a lasso around every cell selected %d, want the %d visible", k, visible)
	} else {
		for i, s := range sel {
			if s == (hidden[i] == raster.Hidden) {
				t.Fatalf("cell %d (colour %d) selected: %v", i, hidden[i], s)
			}
		}
	}
	m.SetPaint(colours, palette)
	check("paint showing cells", true)
	for i := range layout {
		layout[i] *= 0.9
	}
	m.SetLayout(layout)
	check("layout changed in place", false)
	m.Dragged(&fyne.DragEvent{Dragged: fyne.NewDelta(7, -3)})
	check("pan", false)
	m.SetPointStyle(2.5, 0.7)
	check("point style", false)
	m.ApplyLasso(loop, true)
	check("lasso after the style", true)
}
