package canvas

import (
	"fmt"
	"image/color"
	"math"

	"fyne.io/fyne/v2"
	fynecanvas "fyne.io/fyne/v2/canvas"
	"fyne.io/fyne/v2/driver/desktop"
	"fyne.io/fyne/v2/theme"
	"fyne.io/fyne/v2/widget"
)

// The attraction dial is a rotary control over the exaggeration of the
// attractive forces. Its travel is split in two parts:
//
//	[0, dialLogEnd]   logarithmic from DialMin to DialMax
//	(dialLogEnd, 1]   the ∞ stop (the spectral layout)
//
// The needle sweeps dialSweep degrees, centred on "up".
const (
	// DialMin is the weakest attraction the dial offers.
	DialMin = 0.5
	// DialMax is the strongest finite attraction the dial offers.
	DialMax    = 100.0
	dialLogEnd = 0.88
	dialSweep  = 280.0 // degrees
	dialNotch  = 0.02  // travel per key press or wheel notch
)

// DialTicks are the values marked on the dial's face.
var DialTicks = []float64{0.5, 1, 2, 4, 10, 30, 100, math.Inf(1)}

// DialPosition returns the travel fraction in [0, 1] at which the dial shows
// value v. Values below DialMin map to 0, values from DialMax up to (but not
// including) +Inf to dialLogEnd, +Inf to 1.
func DialPosition(v float64) float64 {
	if math.IsInf(v, 1) {
		return 1
	}
	if v <= DialMin {
		return 0
	}
	if v >= DialMax {
		return dialLogEnd
	}
	return dialLogEnd * math.Log(v/DialMin) / math.Log(DialMax/DialMin)
}

// DialValue returns the value shown at travel fraction u: logarithmic up to
// dialLogEnd, then DialMax until half way to the stop, then +Inf.
func DialValue(u float64) float64 {
	switch {
	case u <= 0:
		return DialMin
	case u < dialLogEnd:
		return DialMin * math.Exp(u/dialLogEnd*math.Log(DialMax/DialMin))
	case u < (1+dialLogEnd)/2:
		return DialMax
	default:
		return math.Inf(1)
	}
}

// FormatAttraction writes an attraction value the way the dial shows it:
// "∞", or two significant digits ("0.5", "4.0", "12", "100").
func FormatAttraction(v float64) string {
	switch {
	case math.IsInf(v, 1):
		return "∞"
	case v < 10:
		return fmt.Sprintf("%.1f", v)
	default:
		return fmt.Sprintf("%.0f", v)
	}
}

// Dial is the attraction dial: a rotary control turned by dragging its
// needle, the mouse wheel, or the arrow keys when focused. OnChanged is called
// while it turns, OnChangeEnded when a drag is released or after a key or
// wheel step.
type Dial struct {
	widget.BaseWidget

	Value         float64
	OnChanged     func(float64) `json:"-"`
	OnChangeEnded func(float64) `json:"-"`

	focused  bool
	dragging bool
}

var (
	_ fyne.Draggable     = (*Dial)(nil)
	_ fyne.Focusable     = (*Dial)(nil)
	_ fyne.Scrollable    = (*Dial)(nil)
	_ fyne.Tappable      = (*Dial)(nil)
	_ desktop.Cursorable = (*Dial)(nil)
)

// NewDial returns a dial showing value.
func NewDial(value float64) *Dial {
	d := &Dial{Value: value}
	d.ExtendBaseWidget(d)
	return d
}

// SetValue moves the dial to v without calling its callbacks.
func (d *Dial) SetValue(v float64) {
	d.Value = v
	d.Refresh()
}

// angleAt returns the needle's angle in radians, clockwise from up, for
// travel fraction u.
func angleAt(u float64) float64 {
	return (u - 0.5) * dialSweep * math.Pi / 180
}

// travelAt returns the travel fraction for a pointer at p relative to the
// dial's centre, clamped to the travel; pointers in the gap at the bottom go
// to the nearer end.
func travelAt(dx, dy float64) float64 {
	a := math.Atan2(dx, -dy) * 180 / math.Pi // clockwise from up, in (−180, 180]
	u := a/dialSweep + 0.5
	return math.Max(0, math.Min(1, u))
}

func (d *Dial) setTravel(u float64, ended bool) {
	v := DialValue(u)
	changed := v != d.Value
	d.Value = v
	d.Refresh()
	if changed && d.OnChanged != nil {
		d.OnChanged(v)
	}
	if ended && d.OnChangeEnded != nil {
		d.OnChangeEnded(v)
	}
}

func (d *Dial) centre() fyne.Position {
	s := d.Size()
	return fyne.NewPos(s.Width/2, dialCentreY(s))
}

// Dragged turns the needle towards the pointer.
func (d *Dial) Dragged(e *fyne.DragEvent) {
	d.dragging = true
	c := d.centre()
	d.setTravel(travelAt(float64(e.Position.X-c.X), float64(e.Position.Y-c.Y)), false)
}

// DragEnd reports the value the needle was released at.
func (d *Dial) DragEnd() {
	if d.dragging && d.OnChangeEnded != nil {
		d.OnChangeEnded(d.Value)
	}
	d.dragging = false
}

// Tapped moves the needle to where the face was tapped.
func (d *Dial) Tapped(e *fyne.PointEvent) {
	c := d.centre()
	d.setTravel(travelAt(float64(e.Position.X-c.X), float64(e.Position.Y-c.Y)), true)
}

// Scrolled turns the dial one notch per wheel step.
func (d *Dial) Scrolled(e *fyne.ScrollEvent) {
	step := dialNotch
	if e.Scrolled.DY < 0 {
		step = -step
	}
	d.step(step)
}

func (d *Dial) step(du float64) {
	u := DialPosition(d.Value) + du
	if math.IsInf(d.Value, 1) && du < 0 {
		u = dialLogEnd
	} else if d.Value >= DialMax && du > 0 {
		u = 1
	}
	d.setTravel(u, true)
}

// Cursor shows a pointer hand over the dial.
func (d *Dial) Cursor() desktop.Cursor { return desktop.PointerCursor }

// FocusGained marks the dial focused.
func (d *Dial) FocusGained() { d.focused = true; d.Refresh() }

// FocusLost marks the dial unfocused.
func (d *Dial) FocusLost() { d.focused = false; d.Refresh() }

// TypedRune ignores typed characters.
func (d *Dial) TypedRune(rune) {}

// TypedKey turns the dial with the arrow keys, Home and End.
func (d *Dial) TypedKey(e *fyne.KeyEvent) {
	switch e.Name {
	case fyne.KeyLeft, fyne.KeyDown:
		d.step(-dialNotch)
	case fyne.KeyRight, fyne.KeyUp:
		d.step(dialNotch)
	case fyne.KeyHome:
		d.setTravel(0, true)
	case fyne.KeyEnd:
		d.setTravel(1, true)
	}
}

// MinSize is large enough for the face, its tick labels and the two end
// captions.
func (d *Dial) MinSize() fyne.Size { return fyne.NewSize(210, 180) }

// CreateRenderer builds the dial's face.
func (d *Dial) CreateRenderer() fyne.WidgetRenderer {
	r := &dialRenderer{d: d}
	r.face = fynecanvas.NewCircle(color.Transparent)
	r.face.StrokeWidth = 1
	for i := range r.track {
		r.track[i] = fynecanvas.NewLine(color.Transparent)
		r.track[i].StrokeWidth = 5
	}
	for range DialTicks {
		r.ticks = append(r.ticks, fynecanvas.NewLine(color.Transparent))
		t := fynecanvas.NewText("", color.Transparent)
		t.TextSize = theme.CaptionTextSize()
		t.Alignment = fyne.TextAlignCenter
		r.tickLabels = append(r.tickLabels, t)
	}
	r.needle = fynecanvas.NewLine(color.Transparent)
	r.needle.StrokeWidth = 3
	r.hub = fynecanvas.NewCircle(color.Transparent)
	r.value = fynecanvas.NewText("", color.Transparent)
	r.value.TextStyle = fyne.TextStyle{Bold: true}
	r.value.Alignment = fyne.TextAlignCenter
	r.caption = fynecanvas.NewText("attraction", color.Transparent)
	r.caption.Alignment = fyne.TextAlignCenter
	r.caption.TextSize = theme.CaptionTextSize()
	r.left = fynecanvas.NewText("separate groups", color.Transparent)
	r.left.TextSize = theme.CaptionTextSize()
	r.right = fynecanvas.NewText("continuous paths", color.Transparent)
	r.right.TextSize = theme.CaptionTextSize()
	r.right.Alignment = fyne.TextAlignTrailing
	r.objects = []fyne.CanvasObject{r.face}
	for _, l := range r.track {
		r.objects = append(r.objects, l)
	}
	for i := range r.ticks {
		r.objects = append(r.objects, r.ticks[i], r.tickLabels[i])
	}
	r.objects = append(r.objects, r.needle, r.hub, r.value, r.caption, r.left, r.right)
	r.Refresh()
	return r
}

const dialSegments = 70

type dialRenderer struct {
	d                    *Dial
	face, hub            *fynecanvas.Circle
	track                [dialSegments]*fynecanvas.Line
	ticks                []*fynecanvas.Line
	tickLabels           []*fynecanvas.Text
	needle               *fynecanvas.Line
	value, caption       *fynecanvas.Text
	left, right          *fynecanvas.Text
	objects              []fyne.CanvasObject
	lastSize             fyne.Size
	radius, cx, cy       float32
	captionH, valueTextH float32
}

func dialCentreY(s fyne.Size) float32 {
	captionH := theme.CaptionTextSize() * 1.6
	return (s.Height - captionH) * 0.55
}

func dialRadius(s fyne.Size) float32 {
	captionH := theme.CaptionTextSize() * 1.6
	r := float32(math.Min(float64(s.Width)/2, float64(s.Height-captionH)/2)) - theme.CaptionTextSize()*2.2
	if r < 20 {
		r = 20
	}
	return r
}

func polar(cx, cy, r float32, angle float64) fyne.Position {
	return fyne.NewPos(cx+r*float32(math.Sin(angle)), cy-r*float32(math.Cos(angle)))
}

func (r *dialRenderer) Layout(s fyne.Size) {
	r.lastSize = s
	r.radius = dialRadius(s)
	r.cx, r.cy = s.Width/2, dialCentreY(s)
	rad := r.radius
	r.face.Move(fyne.NewPos(r.cx-rad, r.cy-rad))
	r.face.Resize(fyne.NewSize(2*rad, 2*rad))
	for i, l := range r.track {
		u0 := float64(i) / dialSegments
		u1 := float64(i+1) / dialSegments
		if u0 >= dialLogEnd-1e-9 && u1 > dialLogEnd {
			// leave a gap before the ∞ stop, then one short segment at the stop
			u0, u1 = 0.985, 1.0
			if i != dialSegments-1 {
				u0, u1 = 1, 1
			}
		}
		p0, p1 := polar(r.cx, r.cy, rad*0.86, angleAt(u0)), polar(r.cx, r.cy, rad*0.86, angleAt(u1))
		l.Position1, l.Position2 = p0, p1
	}
	for i, v := range DialTicks {
		a := angleAt(DialPosition(v))
		r.ticks[i].Position1 = polar(r.cx, r.cy, rad*0.96, a)
		r.ticks[i].Position2 = polar(r.cx, r.cy, rad*1.06, a)
		t := r.tickLabels[i]
		t.Text = FormatAttractionTick(v)
		ts := t.MinSize()
		c := polar(r.cx, r.cy, rad*1.06+theme.CaptionTextSize()*0.9, a)
		t.Move(fyne.NewPos(c.X-ts.Width/2, c.Y-ts.Height/2))
		t.Resize(ts)
	}
	hub := rad * 0.12
	r.hub.Move(fyne.NewPos(r.cx-hub, r.cy-hub))
	r.hub.Resize(fyne.NewSize(2*hub, 2*hub))
	r.value.TextSize = rad * 0.32
	vs := r.value.MinSize()
	r.value.Move(fyne.NewPos(r.cx-vs.Width/2, r.cy+rad*0.22))
	r.value.Resize(vs)
	cs := r.caption.MinSize()
	r.caption.Move(fyne.NewPos(r.cx-cs.Width/2, r.cy+rad*0.22+vs.Height))
	r.caption.Resize(cs)
	ls, rs := r.left.MinSize(), r.right.MinSize()
	y := s.Height - ls.Height
	r.left.Move(fyne.NewPos(0, y))
	r.left.Resize(ls)
	r.right.Move(fyne.NewPos(s.Width-rs.Width, y))
	r.right.Resize(rs)
	r.placeNeedle()
}

// FormatAttractionTick writes a tick label: like FormatAttraction but without
// a trailing ".0".
func FormatAttractionTick(v float64) string {
	if !math.IsInf(v, 1) && v == math.Trunc(v) {
		return fmt.Sprintf("%.0f", v)
	}
	return FormatAttraction(v)
}

func (r *dialRenderer) placeNeedle() {
	a := angleAt(DialPosition(r.d.Value))
	r.needle.Position1 = polar(r.cx, r.cy, r.radius*0.1, a)
	r.needle.Position2 = polar(r.cx, r.cy, r.radius*0.92, a)
}

func (r *dialRenderer) MinSize() fyne.Size { return r.d.MinSize() }

func (r *dialRenderer) Refresh() {
	fg := theme.Color(theme.ColorNameForeground)
	muted := theme.Color(theme.ColorNameDisabled)
	accent := theme.Color(theme.ColorNamePrimary)
	track := theme.Color(theme.ColorNameInputBorder)
	r.face.FillColor = theme.Color(theme.ColorNameInputBackground)
	r.face.StrokeColor = track
	if r.d.focused {
		r.face.StrokeColor = accent
		r.face.StrokeWidth = 2
	} else {
		r.face.StrokeWidth = 1
	}
	pos := DialPosition(r.d.Value)
	for i, l := range r.track {
		u := (float64(i) + 0.5) / dialSegments
		if i == dialSegments-1 {
			u = 1
		}
		if u <= pos+1e-9 {
			l.StrokeColor = accent
		} else {
			l.StrokeColor = track
		}
	}
	for i := range r.ticks {
		r.ticks[i].StrokeColor = muted
		r.ticks[i].StrokeWidth = 1.5
		r.tickLabels[i].Color = fg
	}
	r.needle.StrokeColor = accent
	r.hub.FillColor = accent
	r.value.Text = FormatAttraction(r.d.Value)
	r.value.Color = fg
	r.caption.Color = muted
	r.left.Color, r.right.Color = muted, muted
	if r.lastSize.Width > 0 {
		r.Layout(r.lastSize)
	}
	for _, o := range r.objects {
		o.Refresh()
	}
}

func (r *dialRenderer) Objects() []fyne.CanvasObject { return r.objects }

func (r *dialRenderer) Destroy() {}
