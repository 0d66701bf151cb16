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
	"lodestone/app/paint"
	lcanvas "lodestone/canvas"
	"lodestone/canvas/raster"
	"lodestone/compute/atlas"
	"lodestone/compute/pipeline"
	"lodestone/compute/quality"
)

// sweepThumb is the size of a sweep map in logical pixels. Each map has
// its caption beside it, one map a row, so that a map and its scores are
// seen together in the tab's room.
const sweepThumb = 120

const noLabel = "(none)"

// mapRunner is what the sweep needs of the runs: what the map on screen
// continues from, and showing a map the sweep made.
type mapRunner interface {
	snapshot() runSnapshot
	show(layout []float32, history []live.Step, attraction float64)
}

// sweepPanel computes maps at several values of one control — the dial's
// attraction, or the grain (the kernel's tail) at the dial's value — each run
// warm from the previous one's result (the first from the map on screen),
// and shows them side by side with their fidelity, so that the user can
// pick the value that keeps the most of the data's neighbourhoods. It owns
// the sweep's choices, the sweep in flight and its maps.
type sweepPanel struct {
	st    *atlasState
	jobs  *viewJobs
	errs  errorShower
	runs  mapRunner
	order []int32 // the drawing order of the thumbnails' cells (the map's)

	control *widget.Select // which control the sweep varies
	values  *widget.Entry
	label   *widget.Select
	run     *widget.Button
	info    *widget.Label
	grid    *fyne.Container
	box     fyne.CanvasObject

	cancel  context.CancelFunc // stops the sweep in flight; nil when none
	results []sweepResult
}

// sweepResult is one map of a sweep with its scores.
type sweepResult struct {
	live.SweepMap
	scores quality.FidelityScores
	mixing *quality.MixingScores // the samples' (and types') mixing in the map; nil when no column names the samples
}

func newSweepPanel(st *atlasState, jobs *viewJobs, errs errorShower, runs mapRunner) *sweepPanel {
	s := &sweepPanel{st: st, jobs: jobs, errs: errs, runs: runs}
	s.values = widget.NewEntry()
	s.values.SetText(defaultSweepValues[sweepAttraction])
	s.control = widget.NewSelect([]string{sweepAttraction, sweepGrain}, func(c string) {
		// A new control gets its own default values, unless the user typed some.
		for _, v := range defaultSweepValues {
			if s.values.Text == v {
				s.values.SetText(defaultSweepValues[c])
			}
		}
	})
	s.control.SetSelected(sweepAttraction)
	s.label = widget.NewSelect(nil, nil)
	s.fillLabels()
	s.run = widget.NewButtonWithIcon("Run the sweep", theme.MediaPlayIcon(), s.toggle)
	s.info = widget.NewLabel("Maps at several values of the dial or of the grain, each continued from the one before, with their fidelity (and the samples' mixing once the Atlas tab names their column). Tap a map to adopt it.")
	s.info.Wrapping = fyne.TextWrapWord
	s.info.Importance = widget.LowImportance
	s.grid = container.NewVBox()
	form := container.New(layout.NewFormLayout(), widget.NewLabel("sweep the"), s.control, widget.NewLabel("values"), s.values,
		widget.NewLabel("label accuracy of"), s.label)
	s.box = container.NewBorder(container.NewVBox(form, s.run, s.info), nil, nil, nil, container.NewVScroll(s.grid))
	st.on(topicColumns, s.fillLabels)
	return s
}

// content returns the panel's widgets.
func (s *sweepPanel) content() fyne.CanvasObject { return s.box }

// fillLabels lists the categorical columns whose label accuracy the sweep
// can score, keeping the one chosen.
func (s *sweepPanel) fillLabels() {
	opts := []string{noLabel}
	for i := range s.st.prep.Annotations {
		if c := &s.st.prep.Annotations[i]; c.Kind == atlas.Categorical && len(c.Levels) >= 2 {
			opts = append(opts, c.Name)
		}
	}
	chosen := s.label.Selected
	s.label.SetOptions(opts)
	switch {
	case contains(opts, chosen):
	case len(opts) > 1:
		s.label.SetSelected(opts[1])
	default:
		s.label.SetSelected(noLabel)
	}
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

// parseGrainValues reads a comma-separated list of grains (kernel tails).
func parseGrainValues(text string) ([]float64, error) {
	var out []float64
	for _, f := range strings.Split(text, ",") {
		f = strings.TrimSpace(f)
		if f == "" {
			continue
		}
		x, err := strconv.ParseFloat(f, 64)
		if err != nil || !(x >= grainMin && x <= grainMax) {
			return nil, fmt.Errorf("%q is not a grain (%g … %g; 1 is t-SNE)", f, float64(grainMin), float64(grainMax))
		}
		out = append(out, x)
	}
	if len(out) == 0 || len(out) > 12 {
		return nil, fmt.Errorf("give 1 to 12 grains, separated by commas")
	}
	return out, nil
}

// The controls a sweep can vary, and their default values.
const (
	sweepAttraction = "attraction"
	sweepGrain      = "grain"
)

var defaultSweepValues = map[string]string{
	sweepAttraction: "1, 2, 4, 10, 30, inf",
	sweepGrain:      "0.3, 0.5, 1, 2, 5",
}

// sweepPoints reads the values for the chosen control and returns the
// settings of the sweep's maps: each value with the other control as it
// stands (base).
func sweepPoints(control, text string, base runSnapshot) ([]live.SweepPoint, error) {
	if control == sweepGrain {
		if math.IsInf(base.attraction, 1) {
			return nil, fmt.Errorf("at ∞ every map is the spectral layout, whatever the grain: turn the dial to a finite value to sweep the grain")
		}
		values, err := parseGrainValues(text)
		if err != nil {
			return nil, err
		}
		return live.AtAttraction(base.attraction, values), nil
	}
	values, err := parseDialValues(text)
	if err != nil {
		return nil, err
	}
	return live.AtTail(values, base.tail), nil
}

// running reports whether a sweep is in flight.
func (s *sweepPanel) running() bool { return s.cancel != nil }

// toggle starts a sweep, or stops the one in flight.
func (s *sweepPanel) toggle() {
	if s.cancel != nil {
		s.cancel()
		return
	}
	if !s.st.ready {
		s.errs.showError("Not yet", fmt.Errorf("the sweep can run once the atlas behind the map has been prepared"))
		return
	}
	base := s.runs.snapshot()
	points, err := sweepPoints(s.control.Selected, s.values.Text, base)
	if err != nil {
		s.errs.showError("Sweep values", err)
		return
	}
	var labels []int32
	if c := s.st.column(s.label.Selected); c != nil && c.Kind == atlas.Categorical {
		labels = c.Codes
	}
	fo := fidelityOptions(s.st.prep, labels)
	features := s.st.prep.Features
	// The samples' (and types') mixing in each map, as the status line
	// scores the map on screen, when the Atlas tab names their column.
	var mixing *quality.MixingOptions
	if s.st.samples != "" {
		mo, err := pipeline.MixingLabels(s.st.prep, s.st.samples, s.st.types, mixingOptions(s.st.prep))
		if err != nil {
			s.errs.showError("Sample mixing", err)
			return
		}
		mixing = &mo
	}
	ctx, cancel := s.jobs.child()
	s.cancel = cancel
	s.run.SetText("Stop the sweep")
	s.run.SetIcon(theme.MediaStopIcon())
	s.results = nil
	s.grid.Objects = nil
	s.grid.Refresh()
	start := time.Now()
	s.jobs.goCtx(ctx, func(ctx context.Context) {
		before := func(k int) {
			text := fmt.Sprintf("sweep: map %d of %d (%s)…", k+1, len(points), settingText(points[k].Attraction, points[k].Tail))
			s.jobs.do(func() { s.info.SetText(text) })
		}
		err := live.ScoredSweep(ctx, base.opt, base.layout, base.history, points, base.iterations, base.perplexity, features, fo, before, func(m live.ScoredMap) error {
			r := sweepResult{SweepMap: m.SweepMap, scores: m.Fidelity}
			if mixing != nil {
				mx, err := quality.MapMixing(ctx, m.Layout, *mixing)
				if err != nil {
					return err
				}
				r.mixing = &mx
			}
			s.jobs.do(func() { s.add(r) })
			return nil
		})
		stopped := ctx.Err() != nil
		cancel()
		s.jobs.do(func() {
			s.cancel = nil
			s.run.SetText("Run the sweep")
			s.run.SetIcon(theme.MediaPlayIcon())
			switch {
			case stopped:
				s.info.SetText(fmt.Sprintf("sweep stopped after %d maps", len(s.results)))
			case err != nil:
				s.info.SetText("")
				s.errs.showError("The sweep stopped", err)
			default:
				s.info.SetText(fmt.Sprintf("%d maps in %.0f s. Tap a map to adopt it; the dial moves to its value.",
					len(s.results), time.Since(start).Seconds()))
			}
		})
	})
}

// settingText writes both controls' values.
func settingText(attraction, tail float64) string {
	return fmt.Sprintf("attraction %s · grain %s", lcanvas.FormatAttraction(attraction), formatTail(tail))
}

// sweepCaption writes a sweep map's setting and scores.
func sweepCaption(r sweepResult) string {
	text := fmt.Sprintf("%s\nkept %.3f · trust %.3f\ndCor %.2f", settingText(r.Attraction, r.Tail), r.scores.KNN, r.scores.Trust, r.scores.DCor)
	if !math.IsNaN(r.scores.Labels) {
		text += fmt.Sprintf(" · labels %.2f", r.scores.Labels)
	}
	if m := r.mixing; m != nil {
		text += fmt.Sprintf("\nsamples mixed %.2f", m.Batch)
		if !math.IsNaN(m.Types) {
			text += fmt.Sprintf("\ntypes mixed %.2f", m.Types)
		}
	}
	return text
}

// add shows one map of the sweep.
func (s *sweepPanel) add(r sweepResult) {
	s.results = append(s.results, r)
	idx := len(s.results) - 1
	if n := len(r.Layout) / 2; len(s.order) != n {
		s.order = raster.Shuffle(n, 1) // the map widget's order
	}
	img := thumbnail(r.Layout, s.st.paint, s.order, sweepThumb*2)
	s.grid.Add(newThumbCard(img, sweepCaption(r), func() { s.adopt(idx) }))
}

// adopt shows sweep map i on the main map, with the history that led to
// it, and moves the dial to its value.
func (s *sweepPanel) adopt(i int) {
	if i < 0 || i >= len(s.results) {
		return
	}
	r := s.results[i]
	s.runs.show(r.Layout, r.History, r.Attraction)
	s.st.tell("adopted the sweep's map at " + settingText(r.Attraction, r.Tail))
}

// thumbnail draws a layout with a paint into a square image of size pixels.
func thumbnail(layout []float32, p *paint.Paint, order []int32, size int) image.Image {
	img := image.NewRGBA(image.Rect(0, 0, size, size))
	fit := layout
	if x0, x1, y0, y1, ok := lcanvas.FitBox(layout); ok {
		fit = []float32{float32(x0), float32(y0), float32(x1), float32(y1)}
	}
	view, err := raster.Fit(fit, size, size, 4)
	if err != nil || p == nil || len(p.Colours) != len(layout)/2 {
		return img
	}
	st := raster.DefaultStyle(len(layout) / 2)
	st.Radius = math.Max(0.5, st.Radius*0.6)
	st.Background = color.NRGBA{R: 0xff, G: 0xff, B: 0xff, A: 0xff}
	raster.Draw(img, layout, p.Colours, p.Palette, order, view, st, 0)
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
	return widget.NewSimpleRenderer(container.NewBorder(nil, nil, container.NewStack(frame, c.img), nil, c.text))
}
