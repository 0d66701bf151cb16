package window

import (
	"fmt"
	"strings"

	"fyne.io/fyne/v2"
	fynecanvas "fyne.io/fyne/v2/canvas"
	"fyne.io/fyne/v2/container"
	"fyne.io/fyne/v2/theme"
	"fyne.io/fyne/v2/widget"

	"lodestone/app/paint"
	lcanvas "lodestone/canvas"
)

// toolNames are the map's tools as the tool strip names them, in the order
// of lcanvas.Tool.
var toolNames = []string{"Move", "Lasso +", "Lasso −"}

// mapPanel is the map with its tool strip (tools, Fit, dot size and ink,
// the selection and Make a group) and, at its side, the key of the paint,
// which can be folded away. It owns the map widget, whose selection (with
// its undo) it publishes in the atlas state.
type mapPanel struct {
	st *atlasState

	mapView   *lcanvas.Map
	tools     *widget.RadioGroup
	fit       *widget.Button
	dot       *widget.Slider
	ink       *widget.Slider
	selLabel  *widget.Label
	makeGroup *widget.Button
	clearSel  *widget.Button

	side       *fyne.Container // the key, or its folded strip
	sideOpen   fyne.CanvasObject
	sideClosed fyne.CanvasObject
	fold       *widget.Button // folds the key away
	unfold     *widget.Button // shows it again
	keyShown   bool

	styled bool // the point style was chosen for the atlas's size
	box    fyne.CanvasObject
}

// newMapPanel builds the map panel; key is the paint's key, shown at the
// map's side, and makeGroup makes a group of the selected cells.
func newMapPanel(st *atlasState, key fyne.CanvasObject, makeGroup func()) *mapPanel {
	m := &mapPanel{st: st, mapView: lcanvas.NewMap(), keyShown: true}
	m.mapView.HoverText = m.hoverText
	m.mapView.OnSelection = func(n int) {
		sel, _ := m.mapView.Selection()
		m.st.setSelection(sel, n)
	}

	m.tools = widget.NewRadioGroup(toolNames, func(s string) {
		for i, n := range toolNames {
			if n == s {
				m.mapView.SetTool(lcanvas.Tool(i))
			}
		}
	})
	m.tools.Horizontal = true
	m.tools.Required = true
	m.tools.SetSelected(toolNames[lcanvas.Move])
	m.fit = widget.NewButtonWithIcon("Fit", theme.ZoomFitIcon(), m.mapView.Fit)
	m.dot = widget.NewSlider(0.4, 8)
	m.dot.Step = 0.1
	m.dot.OnChanged = func(r float64) { _, o := m.mapView.PointStyle(); m.mapView.SetPointStyle(r, o) }
	m.ink = widget.NewSlider(0.1, 1)
	m.ink.Step = 0.05
	m.ink.OnChanged = func(o float64) { r, _ := m.mapView.PointStyle(); m.mapView.SetPointStyle(r, o) }
	// The selection's label takes the room left and cuts its text rather
	// than widen the window.
	m.selLabel = widget.NewLabel("nothing selected")
	m.selLabel.Alignment = fyne.TextAlignTrailing
	m.selLabel.Truncation = fyne.TextTruncateEllipsis
	m.makeGroup = widget.NewButtonWithIcon("Make a group", theme.ContentAddIcon(), makeGroup)
	m.clearSel = widget.NewButtonWithIcon("", theme.ContentClearIcon(), m.mapView.ClearSelection)
	strip := container.NewBorder(nil, nil,
		container.NewHBox(m.tools, m.fit, widget.NewSeparator(),
			widget.NewLabel("dot"), container.NewGridWrap(fyne.NewSize(80, 36), m.dot),
			widget.NewLabel("ink"), container.NewGridWrap(fyne.NewSize(80, 36), m.ink)),
		container.NewHBox(m.makeGroup, m.clearSel),
		m.selLabel)

	m.fold = widget.NewButtonWithIcon("", theme.MenuExpandIcon(), func() { m.showKey(false) })
	m.fold.Importance = widget.LowImportance
	m.unfold = widget.NewButtonWithIcon("", theme.NavigateBackIcon(), func() { m.showKey(true) })
	m.unfold.Importance = widget.LowImportance
	keyHead := container.NewBorder(nil, nil, nil, m.fold, widget.NewLabelWithStyle("Key", fyne.TextAlignLeading, fyne.TextStyle{Bold: true}))
	m.sideOpen = container.New(&fixedWidth{width: 210}, container.NewBorder(keyHead, nil, nil, nil, key))
	m.sideClosed = container.NewVBox(m.unfold)
	m.side = container.NewStack(m.sideOpen)

	frame := fynecanvas.NewRectangle(theme.Color(theme.ColorNameInputBorder))
	mapArea := container.NewStack(frame, container.NewPadded(m.mapView))
	m.box = container.NewBorder(strip, nil, nil, nil, container.NewBorder(nil, nil, nil, m.side, mapArea))

	st.on(topicFrame, m.showLayout)
	st.on(topicPaint, m.showPaint)
	st.on(topicSelection, m.showSelection)
	return m
}

// content returns the panel's widgets.
func (m *mapPanel) content() fyne.CanvasObject { return m.box }

// showKey shows the key at the map's side, or folds it into a narrow strip.
func (m *mapPanel) showKey(show bool) {
	m.keyShown = show
	if show {
		m.side.Objects = []fyne.CanvasObject{m.sideOpen}
	} else {
		m.side.Objects = []fyne.CanvasObject{m.sideClosed}
	}
	m.side.Refresh()
}

// showLayout draws the layout on screen; the first one chooses a point
// style for the atlas's size.
func (m *mapPanel) showLayout() {
	m.mapView.SetMoving(m.st.run.Running)
	m.mapView.SetLayout(m.st.layout)
	if !m.styled && len(m.st.layout) > 0 {
		m.styled = true
		r, o := m.mapView.PointStyle()
		m.dot.SetValue(r)
		m.ink.SetValue(o)
	}
}

func (m *mapPanel) showPaint() {
	if p := m.st.paint; p != nil {
		m.mapView.SetPaint(p.Colours, p.Palette)
	}
}

func (m *mapPanel) showSelection() {
	g := m.st.groupWithCells(m.st.selection)
	switch {
	case m.st.selected == 0:
		m.selLabel.SetText("nothing selected")
	case g != nil:
		m.selLabel.SetText(fmt.Sprintf("%s selected (%s)", count(m.st.selected), g.Name))
	default:
		m.selLabel.SetText(fmt.Sprintf("%s selected", count(m.st.selected)))
	}
}

// selectCells replaces the selection (the map keeps the old one for Undo).
func (m *mapPanel) selectCells(sel []bool) {
	m.mapView.SetSelection(append([]bool(nil), sel...))
}

// setTool chooses what dragging on the map does.
func (m *mapPanel) setTool(t lcanvas.Tool) { m.tools.SetSelected(toolNames[t]) }

// hoverText names the cell under the pointer and its annotations.
func (m *mapPanel) hoverText(i int) string {
	var b strings.Builder
	p := m.st.prep
	b.WriteString(p.CellIDs[i])
	for k := range p.Annotations {
		c := &p.Annotations[k]
		if l := c.Label(i); l != "" {
			fmt.Fprintf(&b, "\n%s: %s", c.Name, l)
		}
	}
	if pt := m.st.paint; pt != nil && pt.Source == paint.Gene && i < len(m.st.geneValues) {
		fmt.Fprintf(&b, "\n%s: %s", pt.Name, paint.FormatValue(m.st.geneValues[i]))
	}
	return b.String()
}

// count writes a number of cells with thousands separated: 5,530.
func count(n int) string {
	s := fmt.Sprint(n)
	var b strings.Builder
	for i, c := range s {
		if i > 0 && (len(s)-i)%3 == 0 && s[i-1] != '-' {
			b.WriteByte(',')
		}
		b.WriteRune(c)
	}
	return b.String()
}
