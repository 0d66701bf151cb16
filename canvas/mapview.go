package canvas

import (
	"image"
	"image/color"
	"math"
	"time"

	"fyne.io/fyne/v2"
	fynecanvas "fyne.io/fyne/v2/canvas"
	"fyne.io/fyne/v2/driver/desktop"
	"fyne.io/fyne/v2/theme"
	"fyne.io/fyne/v2/widget"

	"lodestone/canvas/raster"
	"lodestone/canvas/spatial"
	"lodestone/compute/parallel"
	"lodestone/internal/threadcpu"

	"lodestone/internal/order"
)

// Tool says what dragging on the map does.
type Tool int

const (
	// Move pans the map.
	Move Tool = iota
	// LassoAdd adds the cells inside a freehand loop to the selection.
	LassoAdd
	// LassoSubtract removes the cells inside a freehand loop from the
	// selection.
	LassoSubtract
)

// Map is the map widget: cells drawn as points into a raster of its own,
// painted with one palette colour each. Dragging pans or lassos (see Tool),
// the wheel zooms about the pointer, hovering names the nearest cell.
//
// While a run moves the points the view follows the layout's extent
// smoothly, until the user pans or zooms, which pins it; Fit unpins it.
// The widget holds all state and changes it (its view follows the layout
// and the widget's size); the renderer only reads it, scales the view from
// logical to device pixels and draws.
// All methods must be called on the UI goroutine.
type Map struct {
	widget.BaseWidget

	// OnHover is called with the cell under the pointer, or −1.
	OnHover func(cell int)
	// HoverText returns the text shown beside the pointer for a cell.
	HoverText func(cell int) string
	// OnSelection is called after a lasso changed the selection, with the
	// number of selected cells.
	OnSelection func(count int)
	// OnDrawn, when set, is called on the UI goroutine after each frame in
	// which the points were drawn, with what the frame cost: the processor
	// time of drawing the points (their wall time where threads cannot be
	// measured) and the wall time from then to the end of the window's
	// paint.
	OnDrawn func(cost time.Duration)

	layout    []float32
	layoutGen uint64 // counts the calls of SetLayout
	colours   []uint16
	palette   []color.NRGBA
	order     []int32
	style     raster.Style

	tool      Tool
	selection []bool
	selCount  int
	undo      [][]bool

	view       raster.View // in logical pixels (the renderer scales it to the device's)
	viewFrom   raster.View // start of the glide towards the fitted view
	viewTarget raster.View
	glide      *fyne.Animation
	pinned     bool
	hasView    bool
	moving     bool // a run moves the points: the view follows frame by frame, drawn on the UI's thread

	// pointsGen counts the changes of what the points' image shows (layout,
	// paint, style, selection, view); the renderer redraws the points only
	// when it has not drawn this generation yet, not when only the lasso or
	// the hover tip changed.
	pointsGen uint64

	path    []fyne.Position // the lasso being drawn, in logical pixels
	pathGen uint64          // counts the changes of path
	hover   int
	tipAt   fyne.Position

	grid      *spatial.Grid
	gridStale bool

	drawColours []uint16 // colours with the selection dimming applied: colours, or dimBuf
	drawPalette []color.NRGBA
	dimBuf      []uint16

	renderer *mapRenderer // the renderer, for what it drew (Snapshot)
}

var (
	_ fyne.Draggable    = (*Map)(nil)
	_ fyne.Scrollable   = (*Map)(nil)
	_ desktop.Hoverable = (*Map)(nil)
)

// NewMap returns an empty map.
func NewMap() *Map {
	m := &Map{hover: -1}
	m.style.Background = color.NRGBA{R: 0xff, G: 0xff, B: 0xff, A: 0xff}
	m.ExtendBaseWidget(m)
	return m
}

// SetLayout shows a new layout of the same cells (or of new cells, when the
// length changes, which also resets the drawing order, the paint and the
// selection). The slice must not be modified afterwards.
func (m *Map) SetLayout(layout []float32) {
	n := len(layout) / 2
	if n != len(m.layout)/2 {
		m.order = raster.Shuffle(n, 1)
		if len(m.colours) != n {
			m.colours = make([]uint16, n)
			m.palette = []color.NRGBA{{R: 0x55, G: 0x55, B: 0x5a, A: 0xff}}
		}
		m.selection = make([]bool, n)
		m.selCount = 0
		m.undo = nil
		bg := m.style.Background
		m.style = raster.DefaultStyle(n)
		m.style.Background = bg
		m.hasView = false
		m.pinned = false
		m.updateDrawColours()
	}
	m.layout = layout
	m.layoutGen++
	m.gridStale = true
	m.follow()
	m.refreshPoints()
}

// SetMoving tells the map whether a run moves its points. While it does,
// the view follows the layout frame by frame, each frame drawn once, and
// the points are drawn on the calling (UI) thread alone, so that drawing
// does not compete with the optimiser's threads for the processors; when
// the run stops, the view glides to the fitted view of the last layout.
func (m *Map) SetMoving(moving bool) { m.moving = moving }

// refreshPoints redraws the points and what lies over them.
func (m *Map) refreshPoints() {
	m.pointsGen++
	m.Refresh()
}

// Layout returns the layout shown.
func (m *Map) Layout() []float32 { return m.layout }

// SetPaint sets each cell's palette index (raster.Hidden hides a cell) and the
// palette. The slices must not be modified afterwards.
func (m *Map) SetPaint(colours []uint16, palette []color.NRGBA) {
	m.colours, m.palette = colours, palette
	m.updateDrawColours()
	m.gridStale = true
	m.refreshPoints()
}

// SetPointStyle changes the point radius (logical pixels) and opacity.
func (m *Map) SetPointStyle(radius, opacity float64) {
	m.style.Radius = math.Max(0.3, math.Min(radius, 12))
	m.style.Opacity = math.Max(0.05, math.Min(opacity, 1))
	m.refreshPoints()
}

// PointStyle returns the point radius and opacity.
func (m *Map) PointStyle() (radius, opacity float64) { return m.style.Radius, m.style.Opacity }

// SetTool chooses what dragging does.
func (m *Map) SetTool(t Tool) { m.tool = t }

// Tool returns what dragging does.
func (m *Map) Tool() Tool { return m.tool }

// Selection returns the selected cells (true when selected) and their number.
// The slice must not be modified.
func (m *Map) Selection() ([]bool, int) { return m.selection, m.selCount }

// SetSelection replaces the selection (remembering the old one for Undo).
func (m *Map) SetSelection(sel []bool) {
	if len(sel) != len(m.selection) {
		return
	}
	m.pushUndo()
	m.applySelection(sel)
}

func (m *Map) applySelection(sel []bool) {
	m.selection = sel
	counts := make([]int, parallel.Threads(0))
	parallel.For(len(sel), 0, func(lo, hi, block int) {
		for _, s := range sel[lo:hi] {
			if s {
				counts[block]++
			}
		}
	})
	m.selCount = 0
	for _, c := range counts {
		m.selCount += c
	}
	m.updateDrawColours()
	m.selectionChanged()
}

// selectionChanged redraws the points and tells OnSelection.
func (m *Map) selectionChanged() {
	m.refreshPoints()
	if m.OnSelection != nil {
		m.OnSelection(m.selCount)
	}
}

func (m *Map) pushUndo() {
	const keep = 30
	m.undo = append(m.undo, m.selection)
	if len(m.undo) > keep {
		m.undo = m.undo[len(m.undo)-keep:]
	}
}

// Undo restores the selection before the last change; it reports false when
// there is nothing to undo.
func (m *Map) Undo() bool {
	if len(m.undo) == 0 {
		return false
	}
	prev := m.undo[len(m.undo)-1]
	m.undo = m.undo[:len(m.undo)-1]
	m.applySelection(prev)
	return true
}

// ClearSelection selects nothing.
func (m *Map) ClearSelection() {
	if m.selCount == 0 {
		return
	}
	m.SetSelection(make([]bool, len(m.selection)))
}

// Fit shows the whole layout and lets the view follow the layout again.
func (m *Map) Fit() {
	m.pinned = false
	m.follow()
	m.refreshPoints()
}

// Order returns the drawing order of the cells.
func (m *Map) Order() []int32 { return m.order }

// Pinned reports whether the user's pan or zoom holds the view.
func (m *Map) Pinned() bool { return m.pinned }

// View returns the current view in logical pixels: what the user sees,
// independent of the screen's pixel density; its Width and Height are the
// widget's size.
func (m *Map) View() raster.View { return m.view }

// SetView shows v (in logical pixels) and pins it; its centre and scale are
// kept, its size follows the widget's.
func (m *Map) SetView(v raster.View) {
	m.stopGlide()
	v.Width, v.Height = m.logicalSize()
	m.view, m.hasView, m.pinned = v, true, true
	m.refreshPoints()
}

// Resize sizes the widget; a pinned view keeps its centre and scale, a
// following view fits the layout at the new size at once.
func (m *Map) Resize(s fyne.Size) {
	if s == m.Size() {
		return
	}
	m.pointsGen++
	m.BaseWidget.Resize(s) // lays the renderer out, which redraws the points
	if m.pinned && m.hasView {
		m.view.Width, m.view.Height = m.logicalSize()
		return
	}
	m.hasView = false
	m.follow()
}

// Snapshot returns a copy of the last frame drawn, in device pixels (nil
// before the first).
func (m *Map) Snapshot() *image.RGBA {
	if m.renderer == nil || m.renderer.img == nil {
		return nil
	}
	img := m.renderer.img
	c := image.NewRGBA(img.Rect)
	copy(c.Pix, img.Pix)
	return c
}

// logicalSize returns the widget's size in whole logical pixels.
func (m *Map) logicalSize() (int, int) {
	s := m.Size()
	return int(math.Round(float64(s.Width))), int(math.Round(float64(s.Height)))
}

// fitted returns the view that shows the layout in the widget: its bulk,
// that is, so that a few stragglers far outside do not shrink the map to a
// dot (see FitBox).
func (m *Map) fitted() (raster.View, bool) {
	w, h := m.logicalSize()
	if w < 8 || h < 8 || len(m.layout) == 0 {
		return raster.View{}, false
	}
	margin := math.Min(24, float64(min(w, h))/4)
	x0, x1, y0, y1, ok := FitBox(m.layout)
	if !ok {
		v, err := raster.Fit(m.layout, w, h, margin)
		return v, err == nil
	}
	box := []float32{float32(x0), float32(y0), float32(x1), float32(y1)}
	v, err := raster.Fit(box, w, h, margin)
	return v, err == nil
}

// fitSample is the number of points FitBox looks at.
const fitSample = 20000

// FitBox returns the box that a fitted view shows: the box of the points
// between the 0.2 and 99.8 percentiles of each coordinate (over a regular
// sample of at most fitSample points), widened by a quarter of its size on
// each side but not beyond the extreme points. Points beyond it are a
// handful of stragglers; they stay reachable by zooming out. ok is false
// when the layout has no finite point.
func FitBox(layout []float32) (x0, x1, y0, y1 float64, ok bool) {
	n := len(layout) / 2
	step := max(1, n/fitSample)
	xs := make([]float64, 0, n/step+1)
	ys := make([]float64, 0, n/step+1)
	minX, maxX, minY, maxY := math.Inf(1), math.Inf(-1), math.Inf(1), math.Inf(-1)
	for i := 0; i < n; i++ {
		x, y := float64(layout[2*i]), float64(layout[2*i+1])
		if math.IsNaN(x) || math.IsNaN(y) || math.IsInf(x, 0) || math.IsInf(y, 0) {
			continue
		}
		minX, maxX = math.Min(minX, x), math.Max(maxX, x)
		minY, maxY = math.Min(minY, y), math.Max(maxY, y)
		if i%step == 0 {
			xs = append(xs, x)
			ys = append(ys, y)
		}
	}
	if len(xs) == 0 {
		return 0, 0, 0, 0, false
	}
	x0, x1 = percentiles(xs, 0.002, 0.998)
	y0, y1 = percentiles(ys, 0.002, 0.998)
	dx, dy := (x1-x0)/4, (y1-y0)/4
	return math.Max(minX, x0-dx), math.Min(maxX, x1+dx), math.Max(minY, y0-dy), math.Min(maxY, y1+dy), true
}

// percentiles returns the elements of s that would stand at positions
// ⌊lo·len⌋ and ⌊hi·len⌋ (capped at the last) once sorted, lo ≤ hi, by
// selection instead of sorting (a frame's view is fitted in linear time).
// s is reordered.
func percentiles(s []float64, lo, hi float64) (float64, float64) {
	at := func(p float64) int { return min(len(s)-1, int(p*float64(len(s)))) }
	i, j := at(lo), at(hi)
	a := order.Nth(s, i)
	return a, order.Nth(s[i:], j-i)
}

// follow moves the view towards the fitted view: at once when there is no
// view yet, otherwise by a short glide, so that the map does not jump
// between snapshots.
func (m *Map) follow() {
	if m.pinned {
		return
	}
	target, ok := m.fitted()
	if !ok {
		return
	}
	if !m.hasView || m.moving || m.view.Width != target.Width || m.view.Height != target.Height || nearView(m.view, target) {
		m.stopGlide()
		m.view, m.hasView = target, true
		return
	}
	m.viewFrom, m.viewTarget = m.view, target
	if m.glide == nil {
		m.glide = fyne.NewAnimation(180*time.Millisecond, func(t float32) {
			if m.pinned {
				return
			}
			m.view = blendViews(m.viewFrom, m.viewTarget, float64(t))
			m.refreshPoints()
		})
		m.glide.Curve = fyne.AnimationEaseOut
	} else {
		m.glide.Stop()
	}
	if fyne.CurrentApp() != nil {
		m.glide.Start()
	} else {
		m.view = target
	}
}

func (m *Map) stopGlide() {
	if m.glide != nil {
		m.glide.Stop()
	}
}

// nearView reports whether the fitted view b differs from a by less than
// half a pixel at the map's edges, so that gliding there would show
// nothing.
func nearView(a, b raster.View) bool {
	half := math.Max(float64(b.Width), float64(b.Height)) / 2
	return math.Abs(a.CenterX-b.CenterX)*b.Scale < 0.5 && math.Abs(a.CenterY-b.CenterY)*b.Scale < 0.5 &&
		math.Abs(a.Scale/b.Scale-1)*half < 0.5
}

// blendViews interpolates centre linearly and scale geometrically.
func blendViews(a, b raster.View, t float64) raster.View {
	return raster.View{
		CenterX: a.CenterX + t*(b.CenterX-a.CenterX),
		CenterY: a.CenterY + t*(b.CenterY-a.CenterY),
		Scale:   a.Scale * math.Pow(b.Scale/a.Scale, t),
		Width:   b.Width, Height: b.Height,
	}
}

// Dragged pans the map or draws the lasso.
func (m *Map) Dragged(e *fyne.DragEvent) {
	if m.tool == Move {
		m.stopGlide()
		m.pinned = true
		m.view = m.view.Pan(float64(e.Dragged.DX), float64(e.Dragged.DY))
		m.refreshPoints()
		return
	}
	p := e.Position
	if n := len(m.path); n > 0 {
		q := m.path[n-1]
		if dx, dy := p.X-q.X, p.Y-q.Y; dx*dx+dy*dy < 4 {
			return // closer than two pixels to the last vertex
		}
	} else {
		m.path = append(m.path, fyne.NewPos(p.X-e.Dragged.DX, p.Y-e.Dragged.DY))
	}
	m.path = append(m.path, p)
	m.pathGen++
	m.Refresh()
}

// DragEnd closes the lasso and applies it to the selection.
func (m *Map) DragEnd() {
	m.pathGen++
	if m.tool == Move || len(m.path) < 3 {
		m.path = m.path[:0]
		m.Refresh()
		return
	}
	poly := make([]float64, 0, 2*len(m.path))
	for _, p := range m.path {
		x, y := m.view.ToData(float64(p.X), float64(p.Y))
		poly = append(poly, x, y)
	}
	m.path = m.path[:0]
	m.ApplyLasso(poly, m.tool == LassoSubtract)
	m.Refresh()
}

// ApplyLasso adds the visible cells inside poly (x0,y0,x1,y1,… in data
// coordinates) to the selection, or removes them when subtract is set.
//
// After the test of every point against the loop, one pass on all
// processors makes the new selection: it leaves out hidden cells, combines
// the loop with the selection, counts the selected cells and dims the
// colours of the others.
func (m *Map) ApplyLasso(poly []float64, subtract bool) {
	inside, err := spatial.Inside(poly, m.layout, nil, 0)
	if err != nil {
		fyne.LogError("lasso", err)
		return
	}
	if len(inside) != len(m.selection) || len(m.colours) != len(inside) {
		return
	}
	mode := spatial.Add
	if subtract {
		mode = spatial.Subtract
	}
	k := uint16(len(m.palette))
	dim := m.dimBuffer()
	sel, current, colours := inside, m.selection, m.colours // sel is written over inside
	counts := make([]int, parallel.Threads(0))
	parallel.For(len(sel), 0, func(lo, hi, block int) {
		count := 0
		for i := lo; i < hi; i++ {
			c := colours[i]
			s := mode.Apply(current[i], inside[i] && c != raster.Hidden) // hidden cells are never selected by a lasso
			sel[i] = s
			if s {
				count++
			} else if c != raster.Hidden {
				c += k
			}
			dim[i] = c
		}
		counts[block] = count
	})
	m.pushUndo()
	m.selection, m.selCount = sel, 0
	for _, c := range counts {
		m.selCount += c
	}
	m.setDrawColours(dim)
	m.selectionChanged()
}

// Scrolled zooms about the pointer and pins the view.
func (m *Map) Scrolled(e *fyne.ScrollEvent) {
	if !m.hasView {
		return
	}
	m.stopGlide()
	m.pinned = true
	f := math.Pow(1.0015, float64(e.Scrolled.DY))
	m.view = m.view.ZoomAt(float64(e.Position.X), float64(e.Position.Y), f)
	m.refreshPoints()
}

// MouseIn starts hover tracking.
func (m *Map) MouseIn(e *desktop.MouseEvent) { m.MouseMoved(e) }

// MouseMoved finds the cell under the pointer.
func (m *Map) MouseMoved(e *desktop.MouseEvent) {
	cell := m.CellAt(e.Position)
	m.tipAt = e.Position
	if cell != m.hover {
		m.hover = cell
		if m.OnHover != nil {
			m.OnHover(cell)
		}
		m.Refresh()
	}
}

// MouseOut ends hover tracking.
func (m *Map) MouseOut() {
	if m.hover != -1 {
		m.hover = -1
		if m.OnHover != nil {
			m.OnHover(-1)
		}
		m.Refresh()
	}
}

// CellAt returns the visible cell nearest to the logical position p within a
// few pixels, or −1.
func (m *Map) CellAt(p fyne.Position) int {
	if !m.hasView || len(m.layout) == 0 {
		return -1
	}
	if m.grid == nil || m.gridStale {
		g, err := spatial.NewGrid(m.layout, func(i int) bool { return m.colours[i] != raster.Hidden })
		if err != nil {
			return -1
		}
		m.grid, m.gridStale = g, false
	}
	x, y := m.view.ToData(float64(p.X), float64(p.Y))
	reach := (6 + m.style.Radius) / m.view.Scale
	if i, ok := m.grid.Nearest(x, y, reach); ok {
		return i
	}
	return -1
}

// MinSize is small: the map takes what space it is given.
func (m *Map) MinSize() fyne.Size { return fyne.NewSize(200, 160) }

// CreateRenderer builds the map's drawing.
func (m *Map) CreateRenderer() fyne.WidgetRenderer {
	r := &mapRenderer{m: m}
	m.renderer = r
	r.points = fynecanvas.NewRaster(r.drawPoints)
	r.points.ScaleMode = fynecanvas.ImageScalePixels
	r.overlay = fynecanvas.NewRaster(r.drawOverlay)
	r.tipBox = fynecanvas.NewRectangle(color.Transparent)
	r.tipBox.CornerRadius = 4
	r.tipText = fynecanvas.NewText("", color.Transparent)
	r.tipText.TextSize = theme.CaptionTextSize()
	r.tipBox.Hide()
	r.tipText.Hide()
	r.overlay.Hide()
	r.pointsGen = m.pointsGen
	return r
}

// drawnFrame says what a frame drew the points of: the layout (by the
// generation of the map's SetLayout, which also sets the drawing order),
// the view and style in device pixels, and whether it was drawn.
type drawnFrame struct {
	layoutGen uint64
	view      raster.View
	style     raster.Style
	ok        bool
}

// mapRenderer draws a Map. It reads the widget's state and writes only its
// own: the images it draws into.
type mapRenderer struct {
	m               *Map
	points, overlay *fynecanvas.Raster
	tipBox          *fynecanvas.Rectangle
	tipText         *fynecanvas.Text
	overlayImg      *image.NRGBA

	rend  raster.Renderer
	img   *image.RGBA
	drawn drawnFrame // what rend last drew, when it can be drawn again with new colours

	pointsGen, pathGen uint64 // the widget's generations last refreshed
}

func (r *mapRenderer) Layout(s fyne.Size) {
	r.pointsGen = r.m.pointsGen // a new size redraws the points (Raster.Resize)
	r.points.Resize(s)
	r.overlay.Resize(s)
	r.placeTip()
}

// Refresh redraws what changed: the points when the widget's pointsGen
// moved on, the lasso when its path did (the lasso's layer is hidden while
// there is none, so that the window does not upload an empty image over the
// map with every frame), and the tip.
func (r *mapRenderer) Refresh() {
	m := r.m
	r.placeTip()
	if r.pointsGen != m.pointsGen {
		r.pointsGen = m.pointsGen
		r.points.Refresh()
	}
	if r.pathGen != m.pathGen {
		r.pathGen = m.pathGen
		if len(m.path) < 2 {
			r.overlay.Hide()
		} else {
			r.overlay.Show()
			r.overlay.Refresh()
		}
	}
	r.tipBox.Refresh()
	r.tipText.Refresh()
}

func (r *mapRenderer) MinSize() fyne.Size { return r.m.MinSize() }

func (r *mapRenderer) Objects() []fyne.CanvasObject {
	return []fyne.CanvasObject{r.points, r.overlay, r.tipBox, r.tipText}
}

func (r *mapRenderer) Destroy() {}

func (r *mapRenderer) placeTip() {
	m := r.m
	if m.hover < 0 || m.HoverText == nil || len(m.path) > 0 {
		r.tipBox.Hide()
		r.tipText.Hide()
		return
	}
	r.tipText.Text = m.HoverText(m.hover)
	r.tipText.Color = theme.Color(theme.ColorNameForeground)
	r.tipBox.FillColor = theme.Color(theme.ColorNameInputBackground)
	r.tipBox.StrokeColor = theme.Color(theme.ColorNameInputBorder)
	r.tipBox.StrokeWidth = 1
	ts := r.tipText.MinSize()
	pad := float32(5)
	box := fyne.NewSize(ts.Width+2*pad, ts.Height+2*pad)
	pos := fyne.NewPos(tipOffset(m.tipAt.X, 14, box.Width, m.Size().Width), tipOffset(m.tipAt.Y, 10, box.Height, m.Size().Height))
	r.tipBox.Move(pos)
	r.tipBox.Resize(box)
	r.tipText.Move(pos.Add(fyne.NewPos(pad, pad)))
	r.tipText.Resize(ts)
	r.tipBox.Show()
	r.tipText.Show()
}

// tipOffset returns where a tip of length l begins along one axis of a map
// of length room, for the pointer at p: gap beyond the pointer when the tip
// fits there, else gap before it when it fits there, else as near that
// side as the map allows — clamped to [0, room − l], and at 0 when the tip
// is longer than the map, so that its beginning always shows.
func tipOffset(p, gap, l, room float32) float32 {
	if p+gap+l <= room {
		return p + gap
	}
	if p-gap-l >= 0 {
		return p - gap - l
	}
	return max(0, min(p-gap-l, room-l))
}

// dimmed returns c faded towards the background, for cells outside the
// selection.
func dimmed(c, bg color.NRGBA) color.NRGBA {
	mix := func(a, b uint8) uint8 { return uint8((int(a)*30 + int(b)*70) / 100) }
	return color.NRGBA{R: mix(c.R, bg.R), G: mix(c.G, bg.G), B: mix(c.B, bg.B), A: c.A}
}

// updateDrawColours applies the selection to the paint: with cells
// selected, the others are drawn in faded versions of their colours, on
// all processors.
func (m *Map) updateDrawColours() {
	if m.selCount == 0 || len(m.selection) != len(m.colours) {
		m.setDrawColours(nil)
		return
	}
	k := uint16(len(m.palette))
	dim, colours, sel := m.dimBuffer(), m.colours, m.selection
	parallel.For(len(colours), 0, func(lo, hi, _ int) {
		for i := lo; i < hi; i++ {
			c := colours[i]
			if c != raster.Hidden && !sel[i] {
				c += k
			}
			dim[i] = c
		}
	})
	m.setDrawColours(dim)
}

// dimBuffer returns the map's buffer for dimmed colours, one per cell.
func (m *Map) dimBuffer() []uint16 {
	if len(m.dimBuf) != len(m.colours) {
		m.dimBuf = make([]uint16, len(m.colours))
	}
	return m.dimBuf
}

// setDrawColours draws the cells in dim, the paint's colours with those of
// unselected cells moved to the dimmed half of the palette, when cells are
// selected; otherwise (or when dim is nil) in the paint itself.
func (m *Map) setDrawColours(dim []uint16) {
	if m.selCount == 0 || dim == nil {
		m.drawColours, m.drawPalette = m.colours, m.palette
		return
	}
	k := len(m.palette)
	m.drawPalette = make([]color.NRGBA, 2*k)
	copy(m.drawPalette, m.palette)
	for i, c := range m.palette {
		m.drawPalette[k+i] = dimmed(c, m.style.Background)
	}
	m.drawColours = dim
}

// deviceScale returns the device pixels per logical pixel of an image w
// pixels wide drawn over the widget.
func (r *mapRenderer) deviceScale(w int) float64 {
	if s := r.m.Size(); s.Width > 0 {
		return float64(w) / float64(s.Width)
	}
	return 1
}

func (r *mapRenderer) drawPoints(w, h int) image.Image {
	m := r.m
	if r.img == nil || r.img.Rect.Dx() != w || r.img.Rect.Dy() != h {
		r.img = image.NewRGBA(image.Rect(0, 0, w, h))
	}
	if len(m.layout) == 0 || !m.hasView {
		fill(r.img, m.style.Background)
		return r.img
	}
	s := r.deviceScale(w)
	st := m.style
	st.PixelScale = s
	v := m.view
	v.Scale *= s
	v.Width, v.Height = w, h
	threads := 0
	if m.moving {
		threads = 1
	}
	start := time.Now()
	var err error
	// When only the colours changed since the last frame (a lasso, a new
	// paint), the renderer draws its points again with the new colours
	// instead of placing them anew.
	frame := drawnFrame{layoutGen: m.layoutGen, view: v, style: st, ok: true}
	cost, measured := threadcpu.Section(func() {
		if frame == r.drawn {
			err = r.rend.Redraw(r.img, m.drawColours, m.drawPalette, threads)
		} else {
			err = r.rend.Draw(r.img, m.layout, m.drawColours, m.drawPalette, m.order, v, st, threads)
		}
	})
	r.drawn = frame
	if err != nil {
		r.drawn = drawnFrame{}
		fyne.LogError("drawing the map", err)
	}
	if m.OnDrawn != nil {
		drawn := time.Now()
		if !measured || threads != 1 { // other threads drew: count the wall time
			cost = drawn.Sub(start)
		}
		// Queued from the paint, this runs after the window's frame has
		// been painted and shown.
		fyne.Do(func() { m.OnDrawn(cost + time.Since(drawn)) })
	}
	return r.img
}

func fill(img *image.RGBA, c color.NRGBA) {
	p := img.Pix
	for i := 0; i+3 < len(p); i += 4 {
		p[i], p[i+1], p[i+2], p[i+3] = c.R, c.G, c.B, c.A
	}
}

// drawOverlay draws the lasso being drawn.
func (r *mapRenderer) drawOverlay(w, h int) image.Image {
	m := r.m
	if r.overlayImg == nil || r.overlayImg.Rect.Dx() != w || r.overlayImg.Rect.Dy() != h {
		r.overlayImg = image.NewNRGBA(image.Rect(0, 0, w, h))
	} else {
		clear(r.overlayImg.Pix)
	}
	if len(m.path) < 2 {
		return r.overlayImg
	}
	c := theme.Color(theme.ColorNamePrimary)
	if m.tool == LassoSubtract {
		c = theme.Color(theme.ColorNameError)
	}
	rc, gc, bc, _ := c.RGBA()
	col := color.NRGBA{R: uint8(rc >> 8), G: uint8(gc >> 8), B: uint8(bc >> 8), A: 0xff}
	s := r.deviceScale(w)
	for i := 1; i <= len(m.path); i++ {
		a, b := m.path[i-1], m.path[i%len(m.path)]
		alpha := uint8(0xff)
		if i == len(m.path) {
			alpha = 0x70 // the closing edge, drawn fainter
		}
		strokeLine(r.overlayImg, float64(a.X)*s, float64(a.Y)*s, float64(b.X)*s, float64(b.Y)*s, math.Max(1.5, 1.5*s), color.NRGBA{R: col.R, G: col.G, B: col.B, A: alpha})
	}
	return r.overlayImg
}

// strokeLine draws a line of the given width by stamping discs along it.
func strokeLine(img *image.NRGBA, x0, y0, x1, y1, width float64, c color.NRGBA) {
	dx, dy := x1-x0, y1-y0
	steps := int(math.Max(math.Abs(dx), math.Abs(dy))) + 1
	r := width / 2
	for s := 0; s <= steps; s++ {
		t := float64(s) / float64(steps)
		cx, cy := x0+t*dx, y0+t*dy
		for py := int(cy - r); py <= int(cy+r); py++ {
			for px := int(cx - r); px <= int(cx+r); px++ {
				if !(image.Point{X: px, Y: py}.In(img.Rect)) {
					continue
				}
				ddx, ddy := float64(px)+0.5-cx, float64(py)+0.5-cy
				if ddx*ddx+ddy*ddy <= r*r+0.25 {
					o := img.PixOffset(px, py)
					if img.Pix[o+3] < c.A {
						img.Pix[o], img.Pix[o+1], img.Pix[o+2], img.Pix[o+3] = c.R, c.G, c.B, c.A
					}
				}
			}
		}
	}
}
