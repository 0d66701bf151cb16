package raster

import (
	"errors"
	"math"
	"testing"
)

func near(a, b float64) bool { return math.Abs(a-b) <= 1e-9*math.Max(1, math.Abs(b)) }

// TestViewMapping checks the mapping formula on hand-worked points (y up in
// data, down in pixels) and that ToData inverts ToPixel.
func TestViewMapping(t *testing.T) {
	v := View{CenterX: 1, CenterY: 2, Scale: 10, Width: 100, Height: 80}
	for _, tc := range []struct{ x, y, px, py float64 }{
		{1, 2, 50, 40}, {2, 2, 60, 40}, {1, 3, 50, 30}, {-4, -2, 0, 80},
	} {
		px, py := v.ToPixel(tc.x, tc.y)
		if !near(px, tc.px) || !near(py, tc.py) {
			t.Errorf("ToPixel(%g, %g) = (%g, %g), want (%g, %g)", tc.x, tc.y, px, py, tc.px, tc.py)
		}
		x, y := v.ToData(px, py)
		if !near(x, tc.x) || !near(y, tc.y) {
			t.Errorf("ToData(ToPixel(%g, %g)) = (%g, %g)", tc.x, tc.y, x, y)
		}
	}
}

// TestViewZoomAndPan checks that zooming keeps the data point under the
// pixel it was centred on, and that panning moves every point by the pixels
// asked.
func TestViewZoomAndPan(t *testing.T) {
	v := View{CenterX: -3, CenterY: 7, Scale: 4, Width: 640, Height: 480}
	for _, f := range []float64{2, 0.5, 1.1} {
		z := v.ZoomAt(100, 300, f)
		x, y := v.ToData(100, 300)
		px, py := z.ToPixel(x, y)
		if !near(px, 100) || !near(py, 300) || !near(z.Scale, v.Scale*f) {
			t.Errorf("factor %g: point moved to (%g, %g), scale %g", f, px, py, z.Scale)
		}
	}
	for _, f := range []float64{0, -1, math.NaN(), math.Inf(1)} {
		if z := v.ZoomAt(1, 1, f); z != v {
			t.Errorf("factor %g changed the view: %+v", f, z)
		}
	}
	p := v.Pan(15, -8)
	x, y := v.ToData(200, 100)
	px, py := p.ToPixel(x, y)
	if !near(px, 215) || !near(py, 92) {
		t.Errorf("pan moved (200, 100) to (%g, %g), want (215, 92)", px, py)
	}
}

// TestFit checks that Fit puts the extreme points at the margins along the
// limiting axis and centres the other, skips non-finite points, and handles
// flat, single-point and empty layouts and bad sizes.
func TestFit(t *testing.T) {
	nan := float32(math.NaN())
	layout := []float32{-2, 1, 6, 3, 0, 2, nan, 100, 1e3, float32(math.Inf(1))}
	v, err := Fit(layout, 400, 300, 20)
	if err != nil {
		t.Fatal(err)
	}
	// Extent 8 × 2: x limits, Scale = (400 − 40)/8 = 45.
	if !near(v.Scale, 45) || !near(v.CenterX, 2) || !near(v.CenterY, 2) {
		t.Errorf("Fit = %+v", v)
	}
	if px, _ := v.ToPixel(-2, 1); !near(px, 20) {
		t.Errorf("leftmost point at px %g, want 20", px)
	}
	if px, _ := v.ToPixel(6, 3); !near(px, 380) {
		t.Errorf("rightmost point at px %g, want 380", px)
	}
	tall, _ := Fit([]float32{0, 0, 1, 10}, 400, 300, 10)
	if !near(tall.Scale, 28) {
		t.Errorf("tall layout scale %g, want (300−20)/10 = 28", tall.Scale)
	}
	flat, _ := Fit([]float32{0, 5, 10, 5}, 200, 100, 0)
	if !near(flat.Scale, 20) || !near(flat.CenterY, 5) {
		t.Errorf("flat layout: %+v", flat)
	}
	one, _ := Fit([]float32{3, 4}, 50, 50, 5)
	if one.Scale != 1 || one.CenterX != 3 || one.CenterY != 4 {
		t.Errorf("single point: %+v", one)
	}
	none, _ := Fit([]float32{nan, nan}, 50, 50, 5)
	if none != (View{Scale: 1, Width: 50, Height: 50}) {
		t.Errorf("no finite point: %+v", none)
	}
	for _, bad := range []struct {
		layout []float32
		w, h   int
		margin float64
		err    error
	}{
		{[]float32{1}, 10, 10, 0, ErrOddLength},
		{nil, 0, 10, 0, ErrView},
		{nil, 10, 10, 5, ErrView},
		{nil, 10, 10, -1, ErrView},
	} {
		if _, err := Fit(bad.layout, bad.w, bad.h, bad.margin); !errors.Is(err, bad.err) {
			t.Errorf("Fit(%v, %d, %d, %g): %v, want %v", bad.layout, bad.w, bad.h, bad.margin, err, bad.err)
		}
	}
}
