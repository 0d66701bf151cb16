package window

import (
	"context"
	"fmt"
	"image"
	"image/color"
	"math"
	"strconv"
	"strings"
	"time"

	"fyne.io/fyne/v2"
	fynecanvas "fyne.io/fyne/v2/canvas"
	"fyne.io/fyne/v2/container"
	"fyne.io/fyne/v2/layout"
	"fyne.io/fyne/v2/theme"
	"fyne.io/fyne/v2/widget"

	"lodestone/app/live"
	lcanvas "lodestone/canvas"
	"lodestone/canvas/raster"
	"lodestone/compute/atlas"
	"lodestone/compute/quality"
)

// A sweep computes maps at several dial values, each run warm from the
// previous one's result (the first from the map on screen), and shows them
// side by side with their fidelity, so that the user can pick the dial
// value that keeps the most of the data's neighbourhoods.

// sweepThumb is the size of a sweep map in logical pixels.
const sweepThumb = 150

type sweepResult struct {
	attraction float64
	layout     []float32
	history    []live.Step // the history that leads to layout
	kept       float64
	trust      float64
	accuracy   float64 // NaN without a label column
}

type sweepState struct {
	values  *widget.Entry
	label   *widget.Select
	run     *widget.Button
	info    *widget.Label
	grid    *fyne.Container
	cancel  context.CancelFunc
	results []sweepResult
	onDone  func() // called after a sweep ended (used by the self-test)
}

const noLabel = "(none)"

// sweepPanel builds the sweep tab.
func (v *atlasView) sweepPanel() fyne.CanvasObject {
	s := &sweepState{}
	v.sweep = s
	s.values = widget.NewEntry()
	s.values.SetText("1, 2, 4, 10, 30, inf")
	opts := []string{noLabel}
	for i := range v.prep.Annotations {
		if c := &v.prep.Annotations[i]; c.Kind == atlas.Categorical && len(c.Levels) >= 2 {
			opts = append(opts, c.Name)
		}
	}
	s.label = widget.NewSelect(opts, nil)
	if len(opts) > 1 {
		s.label.SetSelected(opts[1])
	} else {
		s.label.SetSelected(noLabel)
	}
	s.run = widget.NewButtonWithIcon("Run the sweep", theme.MediaPlayIcon(), v.toggleSweep)
	s.info = widget.NewLabel("Maps at several dial values, each continued from the one before, with their fidelity. Tap a map to adopt it.")
	s.info.Wrapping = fyne.TextWrapWord
	s.info.Importance = widget.LowImportance
	s.grid = container.NewGridWrap(fyne.NewSize(sweepThumb, sweepThumb+54))
	form := container.New(layout.NewFormLayout(), widget.NewLabel("dial values"), s.values, widget.NewLabel("label accuracy of"), s.label)
	return container.NewBorder(container.NewVBox(form, s.run, s.info), nil, nil, nil, container.NewVScroll(s.grid))
}

// parseDialValues reads a comma-separated list of attractions ("inf" for
// the spectral end).
func parseDialValues(text string) ([]float64, error) {
	var out []float64
	for _, f := range strings.Split(text, ",") {
		f = strings.TrimSpace(strings.ToLower(f))
		if f == "" {
			continue
		}
		if f == "inf" || f == "∞" {
			out = append(out, math.Inf(1))
			continue
		}
		x, err := strconv.ParseFloat(f, 64)
		if err != nil || x < lcanvas.DialMin || x > lcanvas.DialMax {
			return nil, fmt.Errorf("%q is not a dial value (%g … %g, or inf)", f, lcanvas.DialMin, lcanvas.DialMax)
		}
		out = append(out, x)
	}
	if len(out) == 0 || len(out) > 12 {
		return nil, fmt.Errorf("give 1 to 12 dial values, separated by commas")
	}
	return out, nil
}

func (v *atlasView) toggleSweep() {
	s := v.sweep
	if s.cancel != nil {
		s.cancel()
		return
	}
	if !v.ready {
		return
	}
	values, err := parseDialValues(s.values.Text)
	if err != nil {
		v.u.showError("Dial values", err)
		return
	}
	var labels []int32
	if c := v.column(s.label.Selected); c != nil && c.Kind == atlas.Categorical {
		labels = c.Codes
	}
	ctx, cancel := context.WithCancel(context.Background())
	go func() {
		<-v.closed
		cancel()
	}()
	s.cancel = cancel
	s.run.SetText("Stop the sweep")
	s.run.SetIcon(theme.MediaStopIcon())
	s.results = nil
	s.grid.Objects = nil
	s.grid.Refresh()
	base, _ := v.engine.Latest()
	history := v.engine.History()
	opt := v.tsne
	iters := v.iterationsPerTurn()
	setting := v.perp
	features := v.prep.Features
	fo := quality.FidelityOptions{Seed: v.prep.Settings.Seed, Threads: v.prep.Settings.Threads, Labels: labels}
	start := time.Now()
	go func() {
		before := func(k int) {
			s.progress(v, fmt.Sprintf("sweep: map %d of %d (attraction %s)…", k+1, len(values), lcanvas.FormatAttraction(values[k])))
		}
		err := live.Sweep(ctx, opt, base, history, values, iters, setting, before, func(m live.SweepMap) error {
			r := sweepResult{attraction: m.Attraction, layout: m.Layout, history: m.History, accuracy: math.NaN()}
			f, err := quality.Fidelity(ctx, features, m.Layout, fo)
			if err != nil {
				return err
			}
			r.kept, r.trust, r.accuracy = f.KNN, f.Trust, f.Labels
			fyne.Do(func() { v.addSweepResult(r) })
			return nil
		})
		fyne.Do(func() {
			s.cancel = nil
			s.run.SetText("Run the sweep")
			s.run.SetIcon(theme.MediaPlayIcon())
			switch {
			case err != nil && ctx.Err() == nil:
				v.u.showError("The sweep stopped", err)
			case ctx.Err() != nil:
				s.info.SetText("sweep stopped")
			default:
				s.info.SetText(fmt.Sprintf("%d maps in %.0f s. Tap a map to adopt it; the dial moves to its value.",
					len(s.results), time.Since(start).Seconds()))
			}
			if s.onDone != nil {
				s.onDone()
			}
		})
	}()
}

func (s *sweepState) progress(v *atlasView, text string) {
	fyne.Do(func() { s.info.SetText(text) })
}

// addSweepResult shows one map of the sweep.
func (v *atlasView) addSweepResult(r sweepResult) {
	s := v.sweep
	s.results = append(s.results, r)
	idx := len(s.results) - 1
	img := v.thumbnail(r.layout, sweepThumb*2)
	text := fmt.Sprintf("attraction %s\nkept %.2f · trust %.3f", lcanvas.FormatAttraction(r.attraction), r.kept, r.trust)
	if !math.IsNaN(r.accuracy) {
		text += fmt.Sprintf("\nlabels %.2f", r.accuracy)
	}
	card := newThumbCard(img, text, func() { v.adoptSweep(idx) })
	s.grid.Add(card)
}

// adoptSweep shows sweep map i on the main map, with the history that led
// to it, and moves the dial to its value.
func (v *atlasView) adoptSweep(i int) {
	r := v.sweep.results[i]
	v.engine.SetLayout(r.layout, r.history)
	v.dial.SetValue(r.attraction)
	v.showFrame()
	v.scoreFidelity()
	v.note(fmt.Sprintf("adopted the sweep's map at attraction %s", lcanvas.FormatAttraction(r.attraction)))
}

// thumbnail draws a layout with the current paint into a square image.
func (v *atlasView) thumbnail(layout []float32, size int) image.Image {
	img := image.NewRGBA(image.Rect(0, 0, size, size))
	fit := layout
	if x0, x1, y0, y1, ok := lcanvas.FitBox(layout); ok {
		fit = []float32{float32(x0), float32(y0), float32(x1), float32(y1)}
	}
	view, err := raster.Fit(fit, size, size, 4)
	if err != nil || v.painted == nil {
		return img
	}
	st := raster.DefaultStyle(len(layout) / 2)
	st.Radius = math.Max(0.5, st.Radius*0.6)
	st.Background = color.NRGBA{R: 0xff, G: 0xff, B: 0xff, A: 0xff}
	raster.Draw(img, layout, v.painted.Colours, v.painted.Palette, v.mapView.Order(), view, st, 0)
	return img
}

// thumbCard is a small map with a caption that can be tapped.
type thumbCard struct {
	widget.BaseWidget
	img    *fynecanvas.Image
	text   *widget.Label
	tapped func()
}

func newThumbCard(img image.Image, text string, tapped func()) *thumbCard {
	c := &thumbCard{img: fynecanvas.NewImageFromImage(img), text: widget.NewLabel(text), tapped: tapped}
	c.img.FillMode = fynecanvas.ImageFillContain
	c.img.SetMinSize(fyne.NewSize(sweepThumb, sweepThumb))
	c.text.TextStyle = fyne.TextStyle{Monospace: false}
	c.text.Importance = widget.LowImportance
	c.ExtendBaseWidget(c)
	return c
}

// Tapped adopts the map.
func (c *thumbCard) Tapped(*fyne.PointEvent) { c.tapped() }

func (c *thumbCard) CreateRenderer() fyne.WidgetRenderer {
	frame := fynecanvas.NewRectangle(color.Transparent)
	frame.StrokeColor = theme.Color(theme.ColorNameInputBorder)
	frame.StrokeWidth = 1
	return widget.NewSimpleRenderer(container.NewBorder(nil, c.text, nil, nil, container.NewStack(frame, c.img)))
}
