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
	"fyne.io/fyne/v2/container"
	"fyne.io/fyne/v2/theme"
	"fyne.io/fyne/v2/widget"

	"lodestone/app/live"
	lcanvas "lodestone/canvas"
	"lodestone/compute/pipeline"
)

// statusEvery is how often the run's status is refreshed while a run goes
// and no frame has shown it for as long (the elapsed time of a run that
// shows no frames, such as the spectral layout's computation).
const statusEvery = time.Second

// errorShower shows an error in a dialog; the window stays usable.
type errorShower interface {
	showError(title string, err error)
}

// runPanel is the attraction dial, the grain control beside it (the
// kernel's tail α, from finer groups to smoother ones) and the run's
// controls (perplexity, iterations per turn, Stop/Continue, Restart). It owns
// the optimiser and its engine, and publishes every new layout and the run's
// status in the atlas state.
//
// A new control that changes how the map is optimised belongs here: it
// joins the form in content, its value joins runSnapshot, and turn and
// restart hand it to the engine.
type runPanel struct {
	st   *atlasState
	jobs *viewJobs
	errs errorShower

	engine       *live.Engine
	optimizer    *live.TSNE
	perp         float64 // the perplexity of the affinities in use
	affinityBusy bool    // affinities for a new perplexity are being computed
	framePending atomic.Bool
	pacer        *live.Pacer  // spaces the frames of a run (see live.FrameShare)
	meter        *frameMeter  // what the window's work costs
	framesShown  int          // frames shown since the view opened
	lastShown    time.Time    // when the last frame or status was shown
	shownRun     atomic.Int64 // the run whose iterations are on screen (Status.Runs; 0 before its first)
	buttonShows  string       // what the Stop/Continue button shows
	turnedTo     float64      // the attraction of the last run started
	resting      bool         // a turn waits for the needle to rest (turnWhenResting)
	restGen      int          // counts turns, so that a waiting one knows it was overtaken

	dial       *lcanvas.Dial
	grain      *grainControl
	perplexity *widget.Entry
	iterations *widget.Entry
	stopBtn    *widget.Button
	restartBtn *widget.Button
	box        fyne.CanvasObject
}

// runSnapshot is what a computation that continues the map needs: the map
// on screen, the history that led to it, the optimiser and the controls'
// values.
type runSnapshot struct {
	layout     []float32
	initial    []float32
	history    []live.Step
	opt        live.Optimizer
	perplexity float64
	attraction float64
	tail       float64 // the grain control's kernel tail α (1: t-SNE)
	iterations int     // per turn
}

func newRunPanel(st *atlasState, jobs *viewJobs, errs errorShower) *runPanel {
	r := &runPanel{st: st, jobs: jobs, errs: errs, perp: st.prep.Settings.Perplexity, pacer: live.NewPacer(st.cells()), meter: newFrameMeter()}
	var opt live.Optimizer
	if p := st.prep; p.P != nil {
		r.optimizer = &live.TSNE{P: p.P, Seed: p.Settings.Seed, Threads: p.Settings.Threads}
		opt = r.optimizer
	}
	r.engine = live.New(opt, r.perp, st.prep.Init, r.frameReady)

	r.dial = lcanvas.NewDial(1)
	r.turnedTo = r.dial.Value
	r.dial.OnChanged = func(x float64) { // with each move of a drag, and before OnChangeEnded
		if r.st.ready {
			r.turnWhenResting(x)
		}
	}
	r.dial.OnChangeEnded = func(x float64) { // released, tapped, wheel or key
		if r.st.ready && (x != r.turnedTo || r.resting) {
			r.turn(x)
		}
	}
	r.grain = newGrainControl(func(tail float64) {
		r.engine.SetTail(tail)
		if !r.st.ready {
			return
		}
		if math.IsInf(r.dial.Value, 1) {
			r.st.tell(fmt.Sprintf("grain %s: the spectral layout at ∞ does not depend on it; it applies from the next finite dial value", formatTail(tail)))
			return
		}
		r.turn(r.dial.Value)
	})
	title := widget.NewLabelWithStyle("Attraction", fyne.TextAlignLeading, fyne.TextStyle{Bold: true})
	r.perplexity = widget.NewEntry()
	r.perplexity.SetText(strconv.FormatFloat(r.perp, 'g', -1, 64))
	r.perplexity.OnSubmitted = func(string) { r.applyPerplexity() }
	r.iterations = widget.NewEntry()
	r.iterations.SetText(strconv.Itoa(live.WarmIterations))
	r.stopBtn = widget.NewButtonWithIcon("Stop", theme.MediaStopIcon(), r.stopOrContinue)
	r.restartBtn = widget.NewButtonWithIcon("Restart", theme.MediaReplayIcon(), r.restart)
	form := container.NewGridWithColumns(4,
		widget.NewLabel("perplexity"), r.perplexity,
		widget.NewLabel("iterations"), r.iterations)
	buttons := container.NewGridWithColumns(2, r.stopBtn, r.restartBtn)
	r.box = container.NewVBox(container.NewBorder(nil, nil, title, nil, container.NewCenter(r.dial)), r.grain.box, form, buttons, widget.NewSeparator())
	r.enable()
	st.on(topicAtlas, r.enable)
	st.on(topicRun, r.showRunning)
	return r
}

// content returns the panel's widgets.
func (r *runPanel) content() fyne.CanvasObject { return r.box }

// startTicker keeps the run's status fresh (the elapsed time) while the
// view is open.
func (r *runPanel) startTicker() {
	r.jobs.run(func(ctx context.Context) {
		t := time.NewTicker(statusEvery)
		defer t.Stop()
		for {
			select {
			case <-ctx.Done():
				return
			case <-t.C:
				r.jobs.do(r.showStatus)
			}
		}
	})
}

// close stops the run in flight.
func (r *runPanel) close() { r.engine.Stop() }

// enable turns on what needs the prepared atlas.
func (r *runPanel) enable() {
	for _, w := range []fyne.Disableable{r.stopBtn, r.restartBtn, r.perplexity} {
		if r.st.ready {
			w.Enable()
		} else {
			w.Disable()
		}
	}
}

// frameReady is called by the engine from its goroutine; it schedules one
// frame at a time on the UI goroutine: at once for the first frame of a run
// and when a run has ended, otherwise when the pacer says the next frame is
// due, so that drawing takes at most a share of the optimiser's time.
func (r *runPanel) frameReady() {
	if !r.framePending.CompareAndSwap(false, true) {
		return
	}
	show := func() {
		fyne.Do(func() {
			r.framePending.Store(false)
			if !r.jobs.closed() {
				r.showFrame()
			}
		})
	}
	_, st := r.engine.Latest()
	if wait := r.pacer.Wait(time.Now()); wait > 0 && st.Running && int64(st.Runs) == r.shownRun.Load() {
		time.AfterFunc(wait, show)
		return
	}
	show()
}

// frameDrawn records what drawing a frame of the map cost, unless the
// meter measures the UI's threads whole (which includes the drawing).
func (r *runPanel) frameDrawn(cost time.Duration) {
	if !r.meter.whole {
		r.pacer.Spend(cost)
	}
}

// showFrame publishes the newest layout and the run's status. The window's
// work since the previous frame is that frame's cost.
func (r *runPanel) showFrame() {
	start := time.Now()
	if d, ok := r.meter.sinceLast(); ok {
		r.pacer.Spend(d)
	}
	r.pacer.Shown(start)
	r.lastShown = start
	layout, st := r.engine.Latest()
	if len(layout) == 0 {
		layout = r.st.layout
	}
	if st.Iteration > 0 {
		r.shownRun.Store(int64(st.Runs))
	}
	r.framesShown++
	cost := r.meter.section(func() { r.st.setLayout(layout, st) })
	if !r.meter.whole {
		r.pacer.Spend(cost)
	}
}

// showStatus refreshes the status of a run that has shown nothing for
// statusEvery (its elapsed time) and leaves the map as it is: new layouts
// come through frameReady, paced. Nothing is redrawn while no run goes.
func (r *runPanel) showStatus() {
	_, st := r.engine.Latest()
	if !st.Running || time.Since(r.lastShown) < statusEvery {
		return
	}
	r.lastShown = time.Now()
	r.st.setLayout(r.st.layout, st)
}

// showRunning shows Stop while a run goes, Continue otherwise.
func (r *runPanel) showRunning() {
	want := "Continue"
	if r.st.run.Running {
		want = "Stop"
	}
	if r.buttonShows == want {
		return // unchanged: no refresh of the button with every frame
	}
	r.buttonShows = want
	if r.st.run.Running {
		r.stopBtn.SetText("Stop")
		r.stopBtn.SetIcon(theme.MediaStopIcon())
	} else {
		r.stopBtn.SetText("Continue")
		r.stopBtn.SetIcon(theme.MediaPlayIcon())
	}
}

// dialRest is how long the needle must rest during a drag before the map
// turns to it. A drag reports every move of the pointer; on a large atlas
// a run started with each would be cancelled before it showed anything,
// and only keep the processors from the run that counts.
const dialRest = 100 * time.Millisecond

// turnWhenResting turns to x once the needle has rested at it for
// dialRest, unless a later change or turn comes first.
func (r *runPanel) turnWhenResting(x float64) {
	r.restGen++
	gen := r.restGen
	r.resting = true
	time.AfterFunc(dialRest, func() {
		r.jobs.do(func() {
			if r.restGen == gen {
				r.turn(x)
			}
		})
	})
}

// turn reruns the optimiser from the layout on screen at attraction x.
func (r *runPanel) turn(x float64) {
	r.restGen++
	r.resting, r.turnedTo = false, x
	r.engine.SetFrameEvery(r.pacer.Interval())
	r.engine.Turn(x, r.iterationsPerTurn())
	r.showFrame()
}

// turnTo moves the dial to x and turns, as a user's drag and release of
// the needle does.
func (r *runPanel) turnTo(x float64) {
	r.dial.SetValue(x)
	r.dial.OnChanged(x)
	r.dial.OnChangeEnded(x)
}

// restart starts a fresh run from the initial layout.
func (r *runPanel) restart() {
	if !r.st.ready {
		return
	}
	r.restGen++
	r.resting, r.turnedTo = false, r.dial.Value
	r.engine.SetFrameEvery(r.pacer.Interval())
	r.engine.Restart(r.dial.Value, live.FreshIterations)
	r.showFrame()
}

func (r *runPanel) stopOrContinue() {
	if !r.st.ready {
		return
	}
	if _, st := r.engine.Latest(); st.Running {
		r.engine.Stop()
		r.showFrame()
		return
	}
	r.turn(r.dial.Value)
}

// iterationsPerTurn reads the iterations of a turn, putting the default
// back when the entry holds no positive number.
func (r *runPanel) iterationsPerTurn() int {
	n, err := strconv.Atoi(strings.TrimSpace(r.iterations.Text))
	if err != nil || n < 1 {
		n = live.WarmIterations
		r.iterations.SetText(strconv.Itoa(n))
	}
	return min(n, 100000)
}

// snapshot returns what a computation that continues the map needs.
func (r *runPanel) snapshot() runSnapshot {
	layout, _ := r.engine.Latest()
	s := runSnapshot{layout: layout, initial: r.engine.Initial(), history: r.engine.History(),
		perplexity: r.perp, attraction: r.dial.Value, tail: r.grain.tail, iterations: r.iterationsPerTurn()}
	if r.optimizer != nil {
		s.opt = r.optimizer
	}
	return s
}

// show stops any run and shows layout, reached by history, with the dial
// at attraction and the grain at the history's tail.
func (r *runPanel) show(layout []float32, history []live.Step, attraction float64) {
	r.engine.SetLayout(layout, history)
	r.dial.SetValue(attraction)
	r.grain.set(live.TailOf(history))
	r.restGen++
	r.resting, r.turnedTo = false, attraction
	if n := len(history); n > 0 {
		r.setPerplexity(history[n-1].Setting)
	}
	r.showFrame()
}

// attach drives opt, the optimiser of the prepared atlas, from now on.
func (r *runPanel) attach(opt *live.TSNE, perplexity float64) {
	r.optimizer = opt
	r.setPerplexity(perplexity)
	r.engine.SetOptimizer(opt, perplexity)
	r.showFrame()
}

// reset drives the optimiser of another preparation of the atlas from its
// initial layout, with an empty history, and starts a fresh run at the
// dial's value.
func (r *runPanel) reset(p *pipeline.Prepared) {
	r.optimizer = &live.TSNE{P: p.P, Seed: p.Settings.Seed, Threads: p.Settings.Threads}
	r.setPerplexity(p.Settings.Perplexity)
	r.engine.Reset(r.optimizer, p.Settings.Perplexity, p.Init)
	r.restart()
}

func (r *runPanel) setPerplexity(p float64) {
	r.perp = p
	r.perplexity.SetText(strconv.FormatFloat(p, 'g', 4, 64))
}

// applyPerplexity recomputes the affinities for a new perplexity in the
// background (finding more neighbours first when the graph has too few),
// then reruns from the layout on screen.
func (r *runPanel) applyPerplexity() {
	if !r.st.ready || r.affinityBusy {
		return
	}
	perp, err := strconv.ParseFloat(strings.TrimSpace(r.perplexity.Text), 64)
	if err != nil || perp < 2 || perp > 50 {
		r.errs.showError("Perplexity", fmt.Errorf("give a number from 2 to 50 (now %q)", r.perplexity.Text))
		return
	}
	r.affinityBusy = true
	r.engine.Stop()
	r.st.tell("affinities for perplexity " + r.perplexity.Text + "…")
	p := r.st.prep
	r.jobs.run(func(ctx context.Context) {
		g, P, used, err := pipeline.Reaffine(ctx, p, perp)
		r.jobs.do(func() {
			r.affinityBusy = false
			if err != nil {
				r.errs.showError("Could not change the perplexity", err)
				return
			}
			// p.Settings keeps the perplexity of the preparation, so that a
			// session can redo it; the history records the new one.
			p.Graph, p.P = g, P
			r.attach(&live.TSNE{P: P, Seed: p.Settings.Seed, Threads: p.Settings.Threads}, used)
			r.st.tell(fmt.Sprintf("affinities for perplexity %g", used))
			r.turn(r.dial.Value)
		})
	})
}

// setTail moves the grain control to tail (0 means 1) and runs with it from
// now on, without starting a run (a session's stored control).
func (r *runPanel) setTail(tail float64) {
	if tail == 0 {
		tail = 1
	}
	r.grain.set(tail)
	r.engine.SetTail(tail)
}
