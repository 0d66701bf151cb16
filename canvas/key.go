package canvas

import (
	"fmt"
	"image"
	"image/color"

	"fyne.io/fyne/v2"
	fynecanvas "fyne.io/fyne/v2/canvas"
	"fyne.io/fyne/v2/container"
	"fyne.io/fyne/v2/driver/desktop"
	"fyne.io/fyne/v2/layout"
	"fyne.io/fyne/v2/theme"
	"fyne.io/fyne/v2/widget"
)

// KeyEntry is one category of the key.
type KeyEntry struct {
	Label  string
	Colour color.NRGBA
	Count  int
	Hidden bool
}

// Key explains the current paint: a list of categories with their colours
// and counts (a tap hides or shows one, a double tap shows it alone), or a
// colour bar for continuous values.
type Key struct {
	widget.BaseWidget

	// OnToggle is called when entry i is tapped.
	OnToggle func(i int)
	// OnIsolate is called when entry i is double-tapped.
	OnIsolate func(i int)

	title   *widget.Label
	body    *fyne.Container
	rows    []*keyRow
	content fyne.CanvasObject
}

// NewKey returns an empty key.
func NewKey() *Key {
	k := &Key{title: widget.NewLabelWithStyle("", fyne.TextAlignLeading, fyne.TextStyle{Bold: true})}
	k.body = container.NewVBox()
	k.content = container.NewBorder(k.title, nil, nil, nil, container.NewVScroll(k.body))
	k.ExtendBaseWidget(k)
	return k
}

// SetEntries shows a list of categories.
func (k *Key) SetEntries(title string, entries []KeyEntry) {
	k.title.SetText(title)
	k.rows = k.rows[:0]
	objs := make([]fyne.CanvasObject, 0, len(entries)+1)
	for i, e := range entries {
		r := newKeyRow(k, i, e)
		k.rows = append(k.rows, r)
		objs = append(objs, r)
	}
	if len(entries) > 1 {
		hint := widget.NewLabel("tap: hide or show · double tap: show only this")
		hint.Importance = widget.LowImportance
		hint.TextStyle = fyne.TextStyle{Italic: true}
		hint.Wrapping = fyne.TextWrapWord
		objs = append(objs, hint)
	}
	k.body.Objects = objs
	k.body.Refresh()
}

// Entries returns the number of category rows shown.
func (k *Key) Entries() int { return len(k.rows) }

// Tap taps entry i, as a user would.
func (k *Key) Tap(i int) {
	if i >= 0 && i < len(k.rows) {
		k.rows[i].Tapped(nil)
	}
}

// SetRamp shows a colour bar from lo to hi (already formatted), with the
// number of cells without a value.
func (k *Key) SetRamp(title string, ramp []color.NRGBA, lo, hi string, missing int) {
	k.title.SetText(title)
	k.rows = k.rows[:0]
	bar := fynecanvas.NewRaster(func(w, h int) image.Image {
		img := image.NewNRGBA(image.Rect(0, 0, w, h))
		for x := 0; x < w; x++ {
			c := ramp[x*(len(ramp)-1)/max(1, w-1)]
			for y := 0; y < h; y++ {
				img.SetNRGBA(x, y, c)
			}
		}
		return img
	})
	bar.SetMinSize(fyne.NewSize(160, 18))
	ends := container.NewHBox(widget.NewLabel(lo), layout.NewSpacer(), widget.NewLabel(hi))
	objs := []fyne.CanvasObject{bar, ends}
	if missing > 0 {
		m := widget.NewLabel(fmt.Sprintf("%d cells without a value (grey)", missing))
		m.Importance = widget.LowImportance
		objs = append(objs, m)
	}
	k.body.Objects = objs
	k.body.Refresh()
}

// CreateRenderer shows the title above the scrolled list.
func (k *Key) CreateRenderer() fyne.WidgetRenderer { return widget.NewSimpleRenderer(k.content) }

// keyRow is one category: swatch, label and count.
type keyRow struct {
	widget.BaseWidget
	key     *Key
	index   int
	entry   KeyEntry
	swatch  *fynecanvas.Rectangle
	label   *widget.Label
	count   *widget.Label
	hovered bool
	bg      *fynecanvas.Rectangle
}

var (
	_ fyne.Tappable       = (*keyRow)(nil)
	_ fyne.DoubleTappable = (*keyRow)(nil)
	_ desktop.Hoverable   = (*keyRow)(nil)
)

func newKeyRow(k *Key, i int, e KeyEntry) *keyRow {
	r := &keyRow{key: k, index: i, entry: e}
	r.swatch = fynecanvas.NewRectangle(e.Colour)
	r.swatch.SetMinSize(fyne.NewSize(14, 14))
	r.swatch.CornerRadius = 7
	r.label = widget.NewLabel(e.Label)
	r.label.Truncation = fyne.TextTruncateEllipsis
	r.count = widget.NewLabel(fmt.Sprint(e.Count))
	r.bg = fynecanvas.NewRectangle(color.Transparent)
	r.ExtendBaseWidget(r)
	r.update()
	return r
}

func (r *keyRow) update() {
	if r.entry.Hidden {
		r.swatch.FillColor = color.Transparent
		r.swatch.StrokeColor = r.entry.Colour
		r.swatch.StrokeWidth = 2
		r.label.Importance = widget.LowImportance
		r.count.Importance = widget.LowImportance
	} else {
		r.swatch.FillColor = r.entry.Colour
		r.swatch.StrokeWidth = 0
		r.label.Importance = widget.MediumImportance
		r.count.Importance = widget.MediumImportance
	}
	if r.hovered {
		r.bg.FillColor = theme.Color(theme.ColorNameHover)
	} else {
		r.bg.FillColor = color.Transparent
	}
}

// Tapped hides or shows the category.
func (r *keyRow) Tapped(*fyne.PointEvent) {
	if r.key.OnToggle != nil {
		r.key.OnToggle(r.index)
	}
}

// DoubleTapped shows the category alone.
func (r *keyRow) DoubleTapped(*fyne.PointEvent) {
	if r.key.OnIsolate != nil {
		r.key.OnIsolate(r.index)
	}
}

func (r *keyRow) MouseIn(*desktop.MouseEvent)    { r.hovered = true; r.update(); r.Refresh() }
func (r *keyRow) MouseMoved(*desktop.MouseEvent) {}
func (r *keyRow) MouseOut()                      { r.hovered = false; r.update(); r.Refresh() }

func (r *keyRow) CreateRenderer() fyne.WidgetRenderer {
	row := container.NewBorder(nil, nil, container.NewCenter(r.swatch), r.count, r.label)
	return widget.NewSimpleRenderer(container.NewStack(r.bg, row))
}
