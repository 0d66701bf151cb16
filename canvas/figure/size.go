package figure

import (
	"math"

	"lodestone/canvas/raster"
)

// Size is the size of an output image in pixels, its resolution, and the
// size of its body text.
type Size struct {
	WidthPx, HeightPx int // at most raster.MaxSize each
	// DPI is the resolution written into the file (pixels per inch; the PNG
	// pHYs chunk, the SVG's physical width and height); 0 writes none.
	DPI float64
	// TextPx is the body text size (the em size) in pixels, at most a
	// quarter of the shorter side; 0 chooses 1/36 of the shorter side, at
	// least 10 pixels. Titles are 1.3 times larger.
	TextPx float64
}

// The preset sizes. A 16:9 slide is 13⅓ × 7½ inches and a 4:3 slide
// 10 × 7½ inches (common practice), so 1920 × 1080 and 1440 × 1080 pixels
// are both 144 dpi: pictures placed on such slides fill them at their own
// size. Journal figures are about 89 mm wide for one column and 183 mm for
// two (common practice, from memory; the arithmetic is checked by a test),
// here 4:3 landscape so that a square map fits beside the key.
const (
	slideDPI       = 144
	slideTextPx    = 30 // 15 pt at 144 dpi: readable from the back of a room
	printTextPt    = 7  // journal figure text, common practice
	column1WidthMM = 89
	column2WidthMM = 183
	mmPerInch      = 25.4
	defaultPrint   = 300
	minPresetDPI   = 50
	maxPresetDPI   = 1200
)

// presets lists the preset names in the order a menu shows them.
var presets = []string{"slide16x9", "slide4x3", "column1", "column2"}

// Presets returns the names Preset knows, in the order a menu should list
// them. The slice is new on every call.
func Presets() []string { return append([]string(nil), presets...) }

// Preset returns the size of a named preset at dpi dots per inch:
//
//	slide16x9  1920 × 1080 px, body text 30 px
//	slide4x3   1440 × 1080 px, body text 30 px
//	column1    89 mm × 66¾ mm, body text 7 pt
//	column2    183 mm × 137¼ mm, body text 7 pt
//
// A journal width in pixels is round(mm / 25.4 · dpi), its height
// round(¾ · width). Slides have a fixed pixel size and dpi only sets the
// resolution recorded in the file. dpi 0 chooses 144 for slides and 300 for
// journal sizes; otherwise dpi must lie in [50, 1200]. Preset returns an
// *InputError wrapping ErrPreset for an unknown name and ErrSize for a dpi
// out of range.
func Preset(name string, dpi float64) (Size, error) {
	if dpi != 0 && !(dpi >= minPresetDPI && dpi <= maxPresetDPI) {
		return Size{}, inputError("dpi", -1, ErrSize)
	}
	switch name {
	case "slide16x9", "slide4x3":
		if dpi == 0 {
			dpi = slideDPI
		}
		w := 1920
		if name == "slide4x3" {
			w = 1440
		}
		return Size{WidthPx: w, HeightPx: 1080, DPI: dpi, TextPx: slideTextPx}, nil
	case "column1", "column2":
		if dpi == 0 {
			dpi = defaultPrint
		}
		mm := float64(column1WidthMM)
		if name == "column2" {
			mm = column2WidthMM
		}
		w := int(math.Round(mm / mmPerInch * dpi))
		return Size{WidthPx: w, HeightPx: int(math.Round(0.75 * float64(w))), DPI: dpi, TextPx: printTextPt * dpi / 72}, nil
	}
	return Size{}, inputError("preset "+quoteName(name), -1, ErrPreset)
}

// quoteName returns name in quotes, shortened to 40 runes, for messages.
func quoteName(name string) string {
	const most = 40
	if r := []rune(name); len(r) > most {
		name = string(r[:most]) + "…"
	}
	return `"` + name + `"`
}

// check returns an error when s cannot be drawn.
func (s Size) check() error {
	switch {
	case s.WidthPx <= 0 || s.WidthPx > raster.MaxSize:
		return inputError("Size.WidthPx", -1, ErrSize)
	case s.HeightPx <= 0 || s.HeightPx > raster.MaxSize:
		return inputError("Size.HeightPx", -1, ErrSize)
	case !(s.DPI >= 0) || math.IsInf(s.DPI, 1):
		return inputError("Size.DPI", -1, ErrSize)
	case !(s.TextPx >= 0) || s.TextPx > float64(min(s.WidthPx, s.HeightPx))/4:
		return inputError("Size.TextPx", -1, ErrSize)
	}
	return nil
}

// textPx returns the body text size in pixels.
func (s Size) textPx() float64 {
	if s.TextPx > 0 {
		return s.TextPx
	}
	return math.Max(10, float64(min(s.WidthPx, s.HeightPx))/36)
}
