package figure

import (
	"bytes"
	"errors"
	"image"
	"image/color"
	"math"
	"slices"
	"strconv"
	"strings"
	"testing"

	"lodestone/canvas/colour"
	"lodestone/canvas/raster"
)

// Presets: a journal width in pixels is mm / 25.4 · dpi, rounded (journal
// widths about 89 mm and 183 mm are common practice, from memory):
// 89 / 25.4 · 300 = 1051.18 → 1051 and 183 / 25.4 · 600 = 4322.83 → 4323.
// Slides are 1920 × 1080 and 1440 × 1080 at 144 dpi (13⅓ and 10 inches
// wide, common practice).
func TestPresets(t *testing.T) {
	for _, tc := range []struct {
		name string
		dpi  float64
		w, h int
		res  float64
	}{
		{"column1", 300, 1051, 788, 300},
		{"column1", 0, 1051, 788, 300},
		{"column2", 600, 4323, 3242, 600},
		{"column2", 300, 2161, 1621, 300},
		{"slide16x9", 0, 1920, 1080, 144},
		{"slide16x9", 96, 1920, 1080, 96},
		{"slide4x3", 0, 1440, 1080, 144},
	} {
		s, err := Preset(tc.name, tc.dpi)
		if err != nil {
			t.Fatalf("%s at %v dpi: %v", tc.name, tc.dpi, err)
		}
		if s.WidthPx != tc.w || s.HeightPx != tc.h || s.DPI != tc.res {
			t.Errorf("%s at %v dpi: %d × %d at %v dpi, want %d × %d at %v", tc.name, tc.dpi, s.WidthPx, s.HeightPx, s.DPI, tc.w, tc.h, tc.res)
		}
		if mm := float64(s.WidthPx) / s.DPI * 25.4; strings.HasPrefix(tc.name, "column") && math.Abs(mm-map[string]float64{"column1": 89, "column2": 183}[tc.name]) > 0.1 {
			t.Errorf("%s: %.2f mm wide", tc.name, mm)
		}
		if strings.HasPrefix(tc.name, "column") && math.Abs(s.TextPx/s.DPI*72-7) > 1e-9 {
			t.Errorf("%s: text %.2f px at %v dpi is not 7 pt", tc.name, s.TextPx, s.DPI)
		}
	}
	if got := Presets(); !slices.Equal(got, []string{"slide16x9", "slide4x3", "column1", "column2"}) {
		t.Errorf("Presets() = %v", got)
	}
	for _, name := range Presets() {
		s, _ := Preset(name, 0)
		f := testFigure(500, 20)
		if err := WritePNG(&bytes.Buffer{}, f, s); err != nil {
			t.Errorf("%s: %v", name, err)
		}
	}
	if _, err := Preset("poster", 300); !errors.Is(err, ErrPreset) || !strings.Contains(err.Error(), `"poster"`) {
		t.Errorf("unknown preset: %v", err)
	}
	for _, dpi := range []float64{-1, 10, 5000, math.NaN()} {
		if _, err := Preset("column1", dpi); !errors.Is(err, ErrSize) {
			t.Errorf("dpi %v: %v", dpi, err)
		}
	}
}

// Bad input gives an *InputError naming the argument and element, wrapping
// the sentinel; nothing is written.
func TestFigureInputErrors(t *testing.T) {
	s := Size{WidthPx: 400, HeightPx: 300}
	for _, tc := range []struct {
		name  string
		edit  func(*Figure)
		size  Size
		want  error
		where string
	}{
		{"odd layout", func(f *Figure) { f.Layout = f.Layout[:len(f.Layout)-1] }, s, ErrOddLength, "Layout"},
		{"colours length", func(f *Figure) { f.Colours = f.Colours[1:] }, s, ErrLength, "Colours"},
		{"palette index", func(f *Figure) { f.Colours[17] = 99 }, s, ErrPaletteIndex, "Colours[17]"},
		{"order index", func(f *Figure) { f.Order = []int32{0, 1, -4} }, s, ErrIndex, "Order[2]"},
		{"opacity", func(f *Figure) { f.Opacity = 1.5 }, s, ErrStyle, "Opacity"},
		{"radius", func(f *Figure) { f.ScreenRadius = math.NaN() }, s, ErrStyle, "ScreenRadius"},
		{"screen width", func(f *Figure) { f.ScreenWidth = -3 }, s, ErrStyle, "ScreenWidth"},
		{"view", func(f *Figure) { f.View = &raster.View{Scale: 0, Width: 10, Height: 10} }, s, ErrView, "View"},
		{"label", func(f *Figure) { f.Labels = []Label{{"a", 0, 0}, {"b", math.Inf(1), 0}} }, s, ErrCoordinate, "Labels[1]"},
		{"width", func(*Figure) {}, Size{WidthPx: 0, HeightPx: 300}, ErrSize, "WidthPx"},
		{"height", func(*Figure) {}, Size{WidthPx: 300, HeightPx: raster.MaxSize + 1}, ErrSize, "HeightPx"},
		{"dpi", func(*Figure) {}, Size{WidthPx: 300, HeightPx: 300, DPI: -72}, ErrSize, "DPI"},
		{"text", func(*Figure) {}, Size{WidthPx: 300, HeightPx: 300, TextPx: 400}, ErrSize, "TextPx"},
		{"no room", func(*Figure) {}, Size{WidthPx: 60, HeightPx: 48, TextPx: 12}, ErrNoRoom, "Size"},
	} {
		f := testFigure(200, 3)
		tc.edit(f)
		var p, v bytes.Buffer
		errP := WritePNG(&p, f, tc.size)
		errV := WriteSVG(&v, f, tc.size, 0)
		for _, err := range []error{errP, errV} {
			var ie *InputError
			if !errors.Is(err, tc.want) || !errors.As(err, &ie) || !strings.Contains(err.Error(), tc.where) {
				t.Errorf("%s: error %v, want an *InputError at %s wrapping %v", tc.name, err, tc.where, tc.want)
			}
		}
		if p.Len() != 0 || v.Len() != 0 {
			t.Errorf("%s: %d and %d bytes written despite the error", tc.name, p.Len(), v.Len())
		}
	}
}

// itemBox returns the box an item covers, measuring text with ts.
func itemBox(ts *typesetter, it item) box {
	switch v := it.(type) {
	case *rectItem:
		return v.b
	case *rampItem:
		return v.b
	case *discItem:
		return box{v.cx - v.r, v.cy - v.r, v.cx + v.r, v.cy + v.r}
	case *textItem:
		w := ts.advance(v.s, v.size, v.bold)
		x := v.x - v.align.factor()*w
		asc, desc := ts.vmetrics(v.size, v.bold)
		return box{x - v.halo, v.y - asc - v.halo, x + w + v.halo, v.y + desc + v.halo}
	}
	panic("unknown item")
}

// A crowded key stays inside the figure and off the map, on both sides
// (right of a wide figure, below a tall one); entries that cannot fit are
// counted in a last line.
func TestKeyFitsBesideMap(t *testing.T) {
	ts, _ := newTypesetter()
	for _, tc := range []struct {
		entries int
		size    Size
		more    bool
	}{
		{8, Size{WidthPx: 1051, HeightPx: 788, TextPx: 29}, false},
		{40, Size{WidthPx: 1051, HeightPx: 788, TextPx: 29}, false},
		{300, Size{WidthPx: 1051, HeightPx: 788, TextPx: 29}, true},
		{30, Size{WidthPx: 700, HeightPx: 1000}, false},
		{400, Size{WidthPx: 700, HeightPx: 1000}, true},
	} {
		f := testFigure(1000, 3)
		f.Key.Entries = nil
		pal := colour.Categorical(tc.entries)
		for i := 0; i < tc.entries; i++ {
			f.Key.Entries = append(f.Key.Entries, KeyEntry{Label: "a category named " + strconv.Itoa(i), Colour: pal[i], Count: 10 * i})
		}
		sc, err := f.scene(tc.size)
		if err != nil {
			t.Fatal(err)
		}
		figure := box{0, 0, float64(tc.size.WidthPx), float64(tc.size.HeightPx)}
		a := sc.points.area
		mapBox := box{float64(a.Min.X), float64(a.Min.Y), float64(a.Max.X), float64(a.Max.Y)}
		if a.Dx() < tc.size.WidthPx/3 || a.Dy() < tc.size.HeightPx/3 {
			t.Errorf("%d entries in %v: map squeezed to %v", tc.entries, tc.size, a)
		}
		more := false
		for _, it := range sc.items[1:] { // after the title
			b := itemBox(ts, it)
			if !b.inside(figure) || b.overlap(mapBox) > 0 {
				t.Errorf("%d entries in %v: key item %v outside the figure or on the map %v", tc.entries, tc.size, b, mapBox)
				break
			}
			if txt, ok := it.(*textItem); ok && strings.HasSuffix(txt.s, " more") {
				more = true
				if want := "+ "; !strings.HasPrefix(txt.s, want) {
					t.Errorf("last line %q", txt.s)
				}
			}
		}
		if more != tc.more {
			t.Errorf("%d entries in %v: 'more' line %v, want %v", tc.entries, tc.size, more, tc.more)
		}
	}
}

// A colour bar key shows its ramp with the end labels and the count of
// cells without a value.
func TestKeyColourBar(t *testing.T) {
	f := testFigure(1000, 3)
	ramp := colour.RampTable()
	f.Key = &Key{Title: "GENE1", Ramp: ramp[:], Low: "0.0", High: "4.2", Missing: 17}
	var buf bytes.Buffer
	if err := WriteSVG(&buf, f, Size{WidthPx: 900, HeightPx: 600}, 0); err != nil {
		t.Fatal(err)
	}
	doc := parseSVG(t, buf.Bytes())
	for _, want := range []string{"GENE1", "0.0", "4.2", "17 without a value"} {
		if !slices.Contains(doc.texts, want) {
			t.Errorf("no text %q in %q", want, doc.texts)
		}
	}
	if doc.elements["stop"] != len(ramp) || doc.elements["linearGradient"] != 1 {
		t.Errorf("%d gradient stops in %d gradients, want %d in 1", doc.elements["stop"], doc.elements["linearGradient"], len(ramp))
	}
}

// inkBounds returns the smallest rectangle holding the mask's non-zero
// pixels.
func inkBounds(a *image.Alpha) image.Rectangle {
	var r image.Rectangle
	for y := a.Rect.Min.Y; y < a.Rect.Max.Y; y++ {
		for x := a.Rect.Min.X; x < a.Rect.Max.X; x++ {
			if a.AlphaAt(x, y).A > 0 {
				r = r.Union(image.Rect(x, y, x+1, y+1))
			}
		}
	}
	return r
}

// Vertical text is horizontal text turned 90° anticlockwise about its
// anchor: with the anchor on whole pixels the two masks hold the same
// values, pixel (u, v) of the text going to (x + v, y − u).
func TestVerticalText(t *testing.T) {
	ts, _ := newTypesetter()
	for _, al := range []align{alignStart, alignMiddle, alignEnd} {
		h := &textItem{s: "GENE-7g", x: 100, y: 200, size: 24, align: al, colour: color.NRGBA{A: 0xff}, halo: 2}
		v := *h
		v.vertical = true
		hg, hh := ts.textMasks(h)
		vg, vh := ts.textMasks(&v)
		for _, pair := range [][2]*image.Alpha{{hg, vg}, {hh, vh}} {
			hm, vm := pair[0], pair[1]
			hb := inkBounds(hm)
			if hb.Empty() {
				t.Fatal("no ink")
			}
			for y := hb.Min.Y; y < hb.Max.Y; y++ {
				for x := hb.Min.X; x < hb.Max.X; x++ {
					u, w := x-100, y-200 // along the text, down from the baseline
					// Pixel [x, x+1) × [y, y+1) turns into [100+w, …) × (200−u−1, 200−u].
					if got, want := vm.AlphaAt(100+w, 200-u-1).A, hm.AlphaAt(x, y).A; got != want {
						t.Fatalf("align %d: pixel (%d, %d) of the text is %d turned, %d flat", al, u, w, got, want)
					}
				}
			}
			if vb := inkBounds(vm); vb.Dx() != hb.Dy() || vb.Dy() != hb.Dx() {
				t.Errorf("align %d: turned ink %v, flat ink %v", al, vb, hb)
			}
		}
	}
}

// Long titles shrink, then are shortened with an ellipsis, never wider than
// the figure.
func TestLongTitleFits(t *testing.T) {
	ts, _ := newTypesetter()
	f := testFigure(100, 2)
	f.Title = strings.Repeat("a very long title ", 20)
	s := Size{WidthPx: 500, HeightPx: 400}
	sc, err := f.scene(s)
	if err != nil {
		t.Fatal(err)
	}
	title := sc.items[0].(*textItem)
	if !strings.HasSuffix(title.s, ellipsis) {
		t.Errorf("title %q not shortened", title.s)
	}
	if b := itemBox(ts, title); b.x0 < 0 || b.x1 > 500 {
		t.Errorf("title spans %v", b)
	}
}
