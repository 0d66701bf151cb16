package window

import (
	"math"
	"strconv"

	"fyne.io/fyne/v2"
	"fyne.io/fyne/v2/container"
	"fyne.io/fyne/v2/widget"
)

// The grain control's range: the kernel's tail α from grainMin (finest
// groups) to grainMax (smoothest), on a logarithmic scale, 1 (t-SNE) in
// between; within grainSnap of 1 (in log₁₀ α) the control snaps to 1. The
// range lies within the optimiser's (embed.MinTail … embed.MaxTail).
const (
	grainMin  = 0.2
	grainMax  = 10
	grainSnap = 0.03
)

// grainControl sets the kernel's tail α ("Heavy-tailed kernels reveal a
// finer cluster structure in t-SNE visualisations", ECML PKDD 2019) as a
// slider between "finer groups" (heavy tails, α < 1: groups that t-SNE
// shows as one split into their parts) and "smoother" (α > 1: the kernel
// tends to a Gaussian and groups flow together), with t-SNE's α = 1 marked
// in the middle. onSet is called with the new α when the user lets go of
// the slider (not while it is dragged).
type grainControl struct {
	tail   float64
	slider *widget.Slider
	value  *widget.Label
	box    fyne.CanvasObject
	onSet  func(tail float64)
	quiet  bool // set moves the slider without calling onSet
}

func newGrainControl(onSet func(tail float64)) *grainControl {
	g := &grainControl{tail: 1, onSet: onSet}
	g.slider = widget.NewSlider(math.Log10(grainMin), math.Log10(grainMax))
	g.slider.Step = 0.01
	g.slider.Value = 0
	g.value = widget.NewLabel(grainText(1))
	g.value.Importance = widget.LowImportance
	g.slider.OnChanged = func(v float64) { g.value.SetText(grainText(tailOfSlider(v))) }
	g.slider.OnChangeEnded = func(v float64) {
		t := tailOfSlider(v)
		g.value.SetText(grainText(t))
		if g.quiet || t == g.tail {
			g.tail = t
			return
		}
		g.tail = t
		if g.onSet != nil {
			g.onSet(t)
		}
	}
	title := widget.NewLabelWithStyle("Grain", fyne.TextAlignLeading, fyne.TextStyle{Bold: true})
	finer := widget.NewLabel("finer groups")
	smoother := widget.NewLabel("smoother")
	finer.Importance, smoother.Importance = widget.LowImportance, widget.LowImportance
	// Two rows (title and value; the slider between its ends' words), so
	// that the tabs below keep their room in a window 800 pixels high.
	g.box = container.NewVBox(
		container.NewBorder(nil, nil, title, g.value),
		container.NewBorder(nil, nil, finer, smoother, g.slider))
	return g
}

// set moves the control to tail without calling onSet.
func (g *grainControl) set(tail float64) {
	if tail == 0 {
		tail = 1
	}
	g.tail = tail
	g.quiet = true
	g.slider.SetValue(math.Log10(tail))
	g.quiet = false
	g.value.SetText(grainText(tail))
}

// tailOfSlider returns the tail at slider position v (log₁₀ α): two
// significant digits, 1 within grainSnap of the middle.
func tailOfSlider(v float64) float64 {
	if math.Abs(v) < grainSnap {
		return 1
	}
	t, _ := strconv.ParseFloat(strconv.FormatFloat(math.Pow(10, v), 'g', 2, 64), 64)
	return min(max(t, grainMin), grainMax)
}

// grainText describes a tail for the control's value label.
func grainText(tail float64) string {
	if tail == 1 {
		return "1 · t-SNE"
	}
	return formatTail(tail)
}

// formatTail writes a tail as people read it.
func formatTail(tail float64) string {
	return strconv.FormatFloat(tail, 'g', 3, 64)
}
