package window

import (
	"context"
	"fmt"
	"math"
	"strconv"
	"strings"
	"sync/atomic"
	"time"

	"fyne.io/fyne/v2"
	fynecanvas "fyne.io/fyne/v2/canvas"
	"fyne.io/fyne/v2/container"
	"fyne.io/fyne/v2/layout"
	"fyne.io/fyne/v2/theme"
	"fyne.io/fyne/v2/widget"

	"lodestone/app/live"
	"lodestone/app/paint"
	"lodestone/app/session"
	lcanvas "lodestone/canvas"
	"lodestone/compute/atlas"
	"lodestone/compute/pipeline"
	"lodestone/sampledata"
)

// Iteration counts of the runs the window starts.
const (
	freshIterations = 750 // a run from the initial layout, early exaggeration included
	warmIterations  = 500 // a run after a turn of the dial
)

// atlasView is the view of an open atlas. Its fields are touched on the UI
// goroutine only, except framePending.
type atlasView struct {
	u    *ui
	src  source
	data *atlas.Dataset
	prep *pipeline.Prepared

	tsne   *live.TSNE
	engine *live.Engine

	framePending atomic.Bool
	shown        []float32
	wasRunning   bool

	mapView *lcanvas.Map
	dial    *lcanvas.Dial
	key     *lcanvas.Key

	painted     *paint.Paint
	paintedGene []float64 // values of the gene painting the map
	hidden      []bool    // per key entry of a categorical paint
	paintSel    *widget.Select
	geneBox     *widget.SelectEntry

	groups     []*paint.Group
	groupsList *widget.List
	groupSel   int

	tools       *widget.RadioGroup
	selLabel    *widget.Label
	perplexity  *widget.Entry
	iterations  *widget.Entry
	stopBtn     *widget.Button
	restartBtn  *widget.Button
	clustersBtn *widget.Button
	dotSlider   *widget.Slider
	inkSlider   *widget.Slider

	stage    *widget.Label
	progress *widget.ProgressBar
	elapsed  *widget.Label
	runInfo  *widget.Label
	fidelity *widget.Label
	ticker   *time.Ticker
	closed   chan struct{}

	perp           float64 // the perplexity of the affinities in use
	ready          bool    // the atlas is prepared: the dial, genes and scores work
	exampleOpts    sampledata.Options
	inputs         []session.Input // the files read, with their hashes
	sessionPath    string          // the session the view was opened from, if any
	pendingGene    string          // a gene to paint by once the atlas is prepared
	atlasTab       *container.TabItem
	tabs           *container.AppTabs
	markers        *markersState
	sweep          *sweepState
	fidelityCancel context.CancelFunc
	settingsBusy   bool
}

// newAtlasView returns the view of an atlas; p may be partial (a session's
// stored map before its atlas is prepared: no graph, affinities or
// expression), in which case the view is not ready.
func newAtlasView(u *ui, src source, d *atlas.Dataset, p *pipeline.Prepared) *atlasView {
	v := &atlasView{u: u, src: src, data: d, prep: p, groupSel: -1, closed: make(chan struct{}),
		perp: p.Settings.Perplexity, ready: p.P != nil, exampleOpts: sampledata.DefaultOptions()}
	if p.P != nil {
		v.tsne = &live.TSNE{P: p.P, Seed: p.Settings.Seed, Threads: p.Settings.Threads}
		v.engine = live.New(v.tsne, p.Settings.Perplexity, p.Init, v.frameReady)
	} else {
		v.engine = live.New(nil, p.Settings.Perplexity, p.Init, v.frameReady)
	}
	v.build()
	return v
}

// showAtlas replaces the window's content with the atlas view and starts
// the first run.
func (u *ui) showAtlas(src source, d *atlas.Dataset, p *pipeline.Prepared) {
	if u.atlas != nil {
		u.atlas.close()
	}
	v := newAtlasView(u, src, d, p)
	u.atlas = v
	u.win.SetTitle("Lodestone — " + src.name())
	u.win.SetContent(v.content())
	v.setPaint(v.defaultPaint())
	v.engine.Restart(v.dial.Value, freshIterations)
	v.startTicker()
	if !src.example {
		v.hashInputs()
	}
	if u.selfTestDone != nil {
		u.selfTestAtlasShown(v)
	}
}

// startTicker refreshes the status line four times a second and autosaves
// every few minutes.
func (v *atlasView) startTicker() {
	v.ticker = time.NewTicker(250 * time.Millisecond)
	lastSave := time.Now()
	go func() {
		for {
			select {
			case <-v.closed:
				return
			case <-v.ticker.C:
				save := time.Since(lastSave) >= autosaveEvery
				if save {
					lastSave = time.Now()
				}
				fyne.Do(func() {
					v.tick()
					if save && v.u.autosaveOn {
						v.autosave(false)
					}
				})
			}
		}
	}()
}

// close stops the view's background work.
func (v *atlasView) close() {
	select {
	case <-v.closed:
		return
	default:
	}
	close(v.closed)
	if v.ticker != nil {
		v.ticker.Stop()
	}
	v.engine.Stop()
	if v.fidelityCancel != nil {
		v.fidelityCancel()
	}
}

func (u *ui) closeAtlas() {
	if u.atlas == nil {
		return
	}
	u.atlas.close()
	u.atlas = nil
	u.showStart()
}

// frameReady is called by the engine from its goroutine; it schedules one
// redraw at a time on the UI goroutine.
func (v *atlasView) frameReady() {
	if v.framePending.CompareAndSwap(false, true) {
		fyne.Do(func() {
			v.framePending.Store(false)
			v.showFrame()
		})
	}
}

// showFrame draws the newest layout and updates the run's status.
func (v *atlasView) showFrame() {
	select {
	case <-v.closed:
		return
	default:
	}
	layout, st := v.engine.Latest()
	if len(layout) > 0 && (len(v.shown) != len(layout) || &v.shown[0] != &layout[0]) {
		first := v.shown == nil
		v.shown = layout
		v.mapView.SetLayout(layout)
		if first {
			// the map chose a point style for this many cells
			r, o := v.mapView.PointStyle()
			v.dotSlider.SetValue(r)
			v.inkSlider.SetValue(o)
		}
	}
	v.updateRunStatus(st)
	if v.wasRunning && !st.Running {
		v.runEnded(st)
	}
	v.wasRunning = st.Running
}

func (v *atlasView) tick() {
	_, st := v.engine.Latest()
	v.updateRunStatus(st)
}

func (v *atlasView) updateRunStatus(st live.Status) {
	switch {
	case st.Err != nil:
		v.stage.SetText("the optimiser stopped: " + st.Err.Error())
	case st.Running && math.IsInf(st.Attraction, 1):
		v.stage.SetText("moving to the spectral layout")
	case st.Running:
		v.stage.SetText("optimising at attraction " + lcanvas.FormatAttraction(st.Attraction))
	case st.Runs == 0:
		v.stage.SetText("ready")
	case st.Settled:
		v.stage.SetText("settled")
	default:
		v.stage.SetText("stopped")
	}
	if st.Iterations > 0 {
		v.progress.SetValue(float64(st.Iteration) / float64(st.Iterations))
	}
	v.elapsed.SetText(fmt.Sprintf("%.1f s", st.Elapsed.Seconds()))
	kl := "—"
	if !math.IsNaN(st.KL) {
		kl = fmt.Sprintf("%.3f", st.KL)
	}
	v.runInfo.SetText(fmt.Sprintf("iteration %d/%d · KL %s", st.Iteration, st.Iterations, kl))
	if st.Running {
		v.stopBtn.SetText("Stop")
		v.stopBtn.SetIcon(theme.MediaStopIcon())
	} else {
		v.stopBtn.SetText("Continue")
		v.stopBtn.SetIcon(theme.MediaPlayIcon())
	}
}

// runEnded is called once when a run stops: the fidelity of the map it
// left is computed in the background.
func (v *atlasView) runEnded(st live.Status) {
	v.scoreFidelity()
	if v.u.selfTestDone != nil {
		v.u.selfTestRunEnded(v, st)
	}
}

// build creates the view's widgets.
func (v *atlasView) build() {
	v.mapView = lcanvas.NewMap()
	v.mapView.HoverText = v.hoverText
	v.mapView.OnSelection = func(n int) { v.selectionChanged(n) }

	v.dial = lcanvas.NewDial(1)
	v.dial.OnChanged = func(x float64) {
		if v.ready {
			v.turn(x)
		}
	}

	v.key = lcanvas.NewKey()
	v.key.OnToggle = v.toggleEntry
	v.key.OnIsolate = v.isolateEntry

	v.stage = widget.NewLabel("")
	v.progress = widget.NewProgressBar()
	v.progress.TextFormatter = func() string { return "" }
	v.elapsed = widget.NewLabel("")
	v.runInfo = widget.NewLabel("")
	v.fidelity = widget.NewLabel("fidelity: after the run")
	v.selLabel = widget.NewLabel("nothing selected")
	v.stopBtn = widget.NewButtonWithIcon("Stop", theme.MediaStopIcon(), v.stopOrContinue)
	v.clustersBtn = widget.NewButtonWithIcon("Leiden clusters…", theme.ViewRefreshIcon(), v.askClusters)
}

// content lays the view out: the map with its tool strip on the left, the
// instrument column on the right, the status line at the bottom.
func (v *atlasView) content() fyne.CanvasObject {
	v.tools = widget.NewRadioGroup([]string{"Move", "Lasso +", "Lasso −"}, func(s string) {
		switch s {
		case "Lasso +":
			v.mapView.SetTool(lcanvas.LassoAdd)
		case "Lasso −":
			v.mapView.SetTool(lcanvas.LassoSubtract)
		default:
			v.mapView.SetTool(lcanvas.Move)
		}
	})
	v.tools.Horizontal = true
	v.tools.Required = true
	v.tools.SetSelected("Move")
	fit := widget.NewButtonWithIcon("Fit", theme.ZoomFitIcon(), v.mapView.Fit)
	size := widget.NewSlider(0.4, 8)
	size.Step = 0.1
	size.OnChanged = func(r float64) { _, o := v.mapView.PointStyle(); v.mapView.SetPointStyle(r, o) }
	alpha := widget.NewSlider(0.1, 1)
	alpha.Step = 0.05
	alpha.OnChanged = func(o float64) { r, _ := v.mapView.PointStyle(); v.mapView.SetPointStyle(r, o) }
	v.dotSlider, v.inkSlider = size, alpha
	group := widget.NewButtonWithIcon("Make a group", theme.ContentAddIcon(), v.groupFromSelection)
	clearSel := widget.NewButtonWithIcon("", theme.ContentClearIcon(), v.mapView.ClearSelection)
	strip := container.NewHBox(v.tools, fit, widget.NewSeparator(),
		widget.NewLabel("dot"), container.NewGridWrap(fyne.NewSize(90, 36), size),
		widget.NewLabel("ink"), container.NewGridWrap(fyne.NewSize(90, 36), alpha),
		layout.NewSpacer(), v.selLabel, group, clearSel)

	frame := fynecanvas.NewRectangle(theme.Color(theme.ColorNameInputBorder))
	mapArea := container.NewBorder(strip, nil, nil, nil, container.NewStack(frame, container.NewPadded(v.mapView)))

	v.atlasTab = container.NewTabItem("Atlas", v.atlasPanel())
	v.tabs = container.NewAppTabs(
		container.NewTabItem("Paint", v.paintPanel()),
		container.NewTabItem("Groups", v.groupsPanel()),
		container.NewTabItem("Markers", v.markersPanel()),
		container.NewTabItem("Sweep", v.sweepPanel()),
		v.atlasTab,
	)
	column := container.NewBorder(v.dialPanel(), nil, nil, nil, v.tabs)
	columnBox := container.New(&fixedWidth{width: 340}, column)

	status := container.NewHBox(v.stage, container.NewGridWrap(fyne.NewSize(160, 20), v.progress), v.elapsed,
		widget.NewSeparator(), v.runInfo, widget.NewSeparator(), v.fidelity)
	return container.NewBorder(nil, container.NewPadded(status), nil, columnBox, mapArea)
}

// dialPanel holds the attraction dial and the run's controls.
func (v *atlasView) dialPanel() fyne.CanvasObject {
	title := widget.NewLabelWithStyle("Attraction", fyne.TextAlignLeading, fyne.TextStyle{Bold: true})
	v.perplexity = widget.NewEntry()
	v.perplexity.SetText(strconv.FormatFloat(v.prep.Settings.Perplexity, 'g', -1, 64))
	v.perplexity.OnSubmitted = func(string) { v.applyPerplexity() }
	v.iterations = widget.NewEntry()
	v.iterations.SetText(strconv.Itoa(warmIterations))
	restart := widget.NewButtonWithIcon("Restart", theme.MediaReplayIcon(), func() {
		v.engine.Restart(v.dial.Value, freshIterations)
	})
	form := container.NewGridWithColumns(4,
		widget.NewLabel("perplexity"), v.perplexity,
		widget.NewLabel("iterations"), v.iterations)
	v.restartBtn = restart
	buttons := container.NewGridWithColumns(2, v.stopBtn, restart)
	if !v.ready {
		v.stopBtn.Disable()
		v.clustersBtn.Disable()
		restart.Disable()
		v.perplexity.Disable()
	}
	return container.NewVBox(container.NewBorder(nil, nil, title, nil, container.NewCenter(v.dial)), form, buttons, widget.NewSeparator())
}

// turn reruns the optimiser from the layout on screen at attraction x.
func (v *atlasView) turn(x float64) {
	v.engine.Turn(x, v.iterationsPerTurn())
}

func (v *atlasView) iterationsPerTurn() int {
	n, err := strconv.Atoi(strings.TrimSpace(v.iterations.Text))
	if err != nil || n < 1 {
		n = warmIterations
		v.iterations.SetText(strconv.Itoa(n))
	}
	return min(n, 100000)
}

// enableControls turns on what needs the prepared atlas.
func (v *atlasView) enableControls() {
	v.stopBtn.Enable()
	v.restartBtn.Enable()
	v.clustersBtn.Enable()
	v.perplexity.Enable()
	if v.prep.Expression != nil {
		v.geneBox.Enable()
		v.geneBox.SetPlaceHolder("gene name or symbol…")
	}
}

// refreshAtlasPanel rebuilds the summary after the atlas changed.
func (v *atlasView) refreshAtlasPanel() {
	v.atlasTab.Content = v.atlasPanel()
}

func (v *atlasView) stopOrContinue() {
	if _, st := v.engine.Latest(); st.Running {
		v.engine.Stop()
		v.showFrame()
		return
	}
	v.turn(v.dial.Value)
}

// applyPerplexity recomputes the affinities for a new perplexity in the
// background (finding more neighbours first when the graph has too few),
// then reruns from the layout on screen.
func (v *atlasView) applyPerplexity() {
	perp, err := strconv.ParseFloat(strings.TrimSpace(v.perplexity.Text), 64)
	if err != nil || perp < 2 || perp > 50 || v.settingsBusy {
		if err != nil || perp < 2 || perp > 50 {
			v.u.showError("Perplexity", fmt.Errorf("give a number from 2 to 50 (now %q)", v.perplexity.Text))
		}
		return
	}
	v.settingsBusy = true
	v.engine.Stop()
	v.stage.SetText("affinities for perplexity " + v.perplexity.Text + "…")
	p := v.prep
	go func() {
		g, P, used, err := pipeline.Reaffine(context.Background(), p, perp)
		fyne.Do(func() {
			v.settingsBusy = false
			if err != nil {
				v.u.showError("Could not change the perplexity", err)
				return
			}
			// p.Settings keeps the perplexity of the preparation, so that a
			// session can redo it; the history records the new one.
			p.Graph, p.P = g, P
			v.perp = used
			v.perplexity.SetText(strconv.FormatFloat(used, 'g', 4, 64))
			v.tsne = &live.TSNE{P: P, Seed: p.Settings.Seed, Threads: p.Settings.Threads}
			v.engine.SetOptimizer(v.tsne, used)
			v.turn(v.dial.Value)
		})
	}()
}

// hoverText names the cell under the pointer and its annotations.
func (v *atlasView) hoverText(i int) string {
	var b strings.Builder
	b.WriteString(v.prep.CellIDs[i])
	for k := range v.prep.Annotations {
		c := &v.prep.Annotations[k]
		if l := c.Label(i); l != "" {
			fmt.Fprintf(&b, "\n%s: %s", c.Name, l)
		}
	}
	if v.painted != nil && v.painted.Source == paint.Gene {
		fmt.Fprintf(&b, "\n%s: %s", v.painted.Name, paint.FormatValue(v.paintValue(i)))
	}
	return b.String()
}

func (v *atlasView) selectionChanged(n int) {
	if n == 0 {
		v.selLabel.SetText("nothing selected")
	} else {
		v.selLabel.SetText(fmt.Sprintf("%d selected", n))
	}
}

func (v *atlasView) setTool(t lcanvas.Tool) {
	v.tools.SetSelected([]string{"Move", "Lasso +", "Lasso −"}[t])
}

// toggleLasso switches to the lasso, or between adding and removing.
func (v *atlasView) toggleLasso() {
	if v.mapView.Tool() == lcanvas.LassoAdd {
		v.setTool(lcanvas.LassoSubtract)
	} else {
		v.setTool(lcanvas.LassoAdd)
	}
}
