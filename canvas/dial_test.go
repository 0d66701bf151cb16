package canvas

import (
	"math"
	"testing"

	"fyne.io/fyne/v2"
	"fyne.io/fyne/v2/test"
)

func TestDialPositionRoundTrip(t *testing.T) {
	for _, v := range []float64{0.5, 0.7, 1, 2, 4, 10, 30, 99, 100} {
		got := DialValue(DialPosition(v))
		if math.Abs(got-v) > 1e-9*v {
			t.Errorf("DialValue(DialPosition(%v)) = %v", v, got)
		}
	}
	if !math.IsInf(DialValue(DialPosition(math.Inf(1))), 1) {
		t.Error("the ∞ stop does not round-trip")
	}
	// The scale is logarithmic: equal ratios take equal travel.
	d1 := DialPosition(2) - DialPosition(1)
	d2 := DialPosition(20) - DialPosition(10)
	if math.Abs(d1-d2) > 1e-12 {
		t.Errorf("travel for ×2 differs: %v vs %v", d1, d2)
	}
}

func TestDialValueIsMonotone(t *testing.T) {
	prev := 0.0
	for u := 0.0; u <= 1.0; u += 0.001 {
		v := DialValue(u)
		if v < prev {
			t.Fatalf("DialValue(%v) = %v < %v", u, v, prev)
		}
		prev = v
	}
}

func TestDialTurnsWithKeysAndDrag(t *testing.T) {
	a := test.NewApp()
	defer a.Quit()
	d := NewDial(1)
	w := test.NewWindow(d)
	defer w.Close()
	w.Resize(fyne.NewSize(260, 240))

	var changes, ends int
	d.OnChanged = func(float64) { changes++ }
	d.OnChangeEnded = func(float64) { ends++ }

	d.TypedKey(&fyne.KeyEvent{Name: fyne.KeyRight})
	if d.Value <= 1 || changes != 1 || ends != 1 {
		t.Fatalf("after →: value %v, %d changes, %d ends", d.Value, changes, ends)
	}
	d.TypedKey(&fyne.KeyEvent{Name: fyne.KeyEnd})
	if !math.IsInf(d.Value, 1) {
		t.Fatalf("End should reach ∞, got %v", d.Value)
	}
	d.TypedKey(&fyne.KeyEvent{Name: fyne.KeyLeft})
	if d.Value != DialMax {
		t.Fatalf("← from ∞ should land on %v, got %v", DialMax, d.Value)
	}

	// Drag the needle to straight up: the middle of the travel.
	c := d.centre()
	d.Dragged(&fyne.DragEvent{PointEvent: fyne.PointEvent{Position: fyne.NewPos(c.X, c.Y-50)}})
	d.DragEnd()
	if want := DialValue(0.5); math.Abs(d.Value-want) > 1e-9 {
		t.Fatalf("needle up: value %v, want %v", d.Value, want)
	}
	// Far left and down, in the gap: clamps to the weakest end.
	d.Dragged(&fyne.DragEvent{PointEvent: fyne.PointEvent{Position: fyne.NewPos(c.X-5, c.Y+80)}})
	if d.Value != DialMin {
		t.Fatalf("needle in the bottom-left gap: value %v, want %v", d.Value, DialMin)
	}
}
