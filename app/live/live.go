// Package live runs the embedding optimiser in the background for the window
// and hands its newest layout over to the UI.
//
// An Engine owns at most one run at a time. Turning the attraction dial
// cancels the run in flight and starts a new one from the newest layout, the
// one on screen; the new run waits for the old goroutine to return before it
// begins, so two runs never overlap. Everything shared with the UI is behind
// one mutex, and layouts are handed over as fresh slices that nobody writes
// after publication.
package live

import (
	"context"
	"errors"
	"math"
	"sync"
	"time"

	"lodestone/compute/embed"
)

// Frame is one published state of a run.
type Frame struct {
	Layout     []float32 // interleaved x,y; never modified after publication
	Iteration  int       // iterations done in this run
	Iterations int       // iterations planned for this run
	KL         float64   // estimated KL divergence of the layout (NaN when unknown)
	Settled    bool      // the layout has stopped moving
}

// RunOptions are the settings of one run of the optimiser.
type RunOptions struct {
	Attraction float64 // the attraction dial (finite)
	// Tail is the kernel's tail α (embed.Params.Tail): 1 is t-SNE, and 0
	// means 1.
	Tail       float64
	Iterations int  // iterations to run (at most, with Settle)
	Early      bool // begin with the early-exaggeration phase (a fresh run)
	// Settle ends the run once the layout has settled (embed.Params.StopSettled),
	// which makes Iterations a ceiling.
	Settle bool
	// FrameEvery is the least time between two frames (embed's
	// snapshots); 0 means embed.DefaultSnapshotEvery.
	FrameEvery time.Duration
}

// Optimizer is what an Engine drives: the t-SNE optimiser with its affinities
// and the spectral layout of the same graph.
type Optimizer interface {
	// Run optimises from init (not modified) with the options' attraction
	// and tail for their iterations, with an early-exaggeration phase first
	// when they ask for it, calling publish with frames from the calling
	// goroutine. It returns the final layout, or the last one and ctx.Err()
	// when cancelled.
	Run(ctx context.Context, init []float32, o RunOptions, publish func(Frame)) ([]float32, error)
	// Spectral returns the spectral (Laplacian-eigenmap) layout, scaled and
	// turned to match like as closely as a rotation, reflection and uniform
	// scale allow.
	Spectral(ctx context.Context, like []float32) ([]float32, error)
}

// Preparer is an Optimizer that can compute ahead the first iteration of
// runs from given layouts (TSNE does): the engine has it prepare the runs
// a turn of the dial may start, while the map stands still.
type Preparer interface {
	// Prepare prepares runs from each of the layouts with the tail; a
	// later Run from one of them gives the same layout as without, sooner.
	// It returns ctx.Err() when cancelled.
	Prepare(ctx context.Context, tail float64, layouts ...[]float32) error
}

// Status describes the engine's current run.
type Status struct {
	Running    bool
	Attraction float64
	Tail       float64 // the kernel's tail of the run (1: t-SNE)
	Iteration  int
	Iterations int
	KL         float64
	Settled    bool
	Started    time.Time     // when the current or last run started
	Elapsed    time.Duration // how long it ran (so far)
	Err        error         // the last run's error, other than cancellation
	Runs       int           // how many runs were started
}

// StepKind says how a step of the history moved the map.
type StepKind string

// The kinds of steps.
const (
	Fresh    StepKind = "fresh"    // from the initial layout, with early exaggeration
	Warm     StepKind = "warm"     // from the layout on screen, without early exaggeration
	Spectral StepKind = "spectral" // a glide from the layout on screen to the spectral layout
)

// Step is one run in the history of the map on screen. Replaying the steps
// in order from the initial layout reproduces the layout bit for bit (for
// the same seed and thread count): each step starts where the previous one
// was shown when it was stopped or turned away from.
type Step struct {
	Kind       StepKind `json:"kind"`
	Attraction float64  `json:"attraction"` // +Inf for Spectral
	Iterations int      `json:"iterations"` // planned
	// Done is the number of iterations (glide frames for Spectral) whose
	// result was on screen when the step ended.
	Done int `json:"done"`
	// Setting is the optimiser's setting in force (the window stores the
	// perplexity of the affinities).
	Setting float64 `json:"setting"`
	// Compact reports that the step started from the layout compacted to
	// unit size (see Compact): a warm step that raised the attraction.
	Compact bool `json:"compact"`
	// Tail is the kernel's tail α in force (RunOptions.Tail); 0, as in
	// histories from before the tail could be set, means t-SNE's 1. A
	// spectral step records it without depending on it.
	Tail float64 `json:"tail,omitempty"`
	// Settled reports that the step ended because its layout had settled
	// (RunOptions.Settle), after Done of its Iterations. Replays run Done
	// iterations either way.
	Settled bool `json:"settled,omitempty"`
}

// TailOf returns the tail of the last step of history (1 when there is none
// or it records none): the tail of the map the history leads to.
func TailOf(history []Step) float64 {
	if n := len(history); n > 0 && history[n-1].Tail != 0 {
		return history[n-1].Tail
	}
	return 1
}

// Iteration counts of the runs the window starts; the headless commands
// that reproduce its maps use the same.
const (
	// FreshIterations is the length of a run from the initial layout,
	// early exaggeration included.
	FreshIterations = embed.DefaultIterations
	// WarmIterations is the length of a run after a turn of the dial, and
	// of each map of a sweep.
	WarmIterations = 500
)

// Compact returns y centred and scaled to a root-mean-square radius of 1.
//
// A warm run that raises the attraction starts from the compacted layout:
// the shape is the one on screen (the view fits it), but at a size where
// the stronger attraction can pull the map's groups together along their
// connections, as it does when a run at that attraction starts from a
// small initial layout. Started at the old size, strong attraction only
// shrinks each group in place and leaves the groups stranded far apart.
func Compact(y []float32) []float32 {
	n := len(y) / 2
	out := make([]float32, len(y))
	if n == 0 {
		return out
	}
	var cx, cy float64
	for i := 0; i < n; i++ {
		cx += float64(y[2*i])
		cy += float64(y[2*i+1])
	}
	cx /= float64(n)
	cy /= float64(n)
	var r2 float64
	for i := 0; i < n; i++ {
		dx, dy := float64(y[2*i])-cx, float64(y[2*i+1])-cy
		r2 += dx*dx + dy*dy
	}
	f := 1.0
	if r2 > 0 {
		f = 1 / math.Sqrt(r2/float64(n))
	}
	for i := 0; i < n; i++ {
		out[2*i] = float32((float64(y[2*i]) - cx) * f)
		out[2*i+1] = float32((float64(y[2*i+1]) - cy) * f)
	}
	return out
}

// raises reports whether a warm step at attraction a after the given
// history raises the attraction of the map on screen.
func raises(history []Step, a float64) bool {
	n := len(history)
	return n > 0 && !math.IsInf(a, 1) && a > history[n-1].Attraction
}

// Engine runs an Optimizer in the background. The zero value is not usable;
// call New.
type Engine struct {
	opt     Optimizer
	setting float64
	initial []float32
	onFrame func()
	history []Step

	mu         sync.Mutex
	tail       float64       // of the runs to come (SetTail)
	frameEvery time.Duration // of the runs to come (SetFrameEvery)
	layout     []float32
	status     Status
	gen        uint64
	cancel     context.CancelFunc
	done       chan struct{}
	prepCancel context.CancelFunc // cancels the preparation in flight
	prepDone   chan struct{}      // closed when the last preparation started has ended
}

// New returns an engine showing initial until its first run. onFrame, when
// not nil, is called from the run's goroutine after each new frame and after
// a run ends; it must not block (the window schedules a redraw).
// setting is recorded in the history (see Step).
func New(opt Optimizer, setting float64, initial []float32, onFrame func()) *Engine {
	done := make(chan struct{})
	close(done)
	return &Engine{opt: opt, setting: setting, tail: 1, initial: initial, layout: initial, onFrame: onFrame, done: done,
		prepDone: done, status: Status{KL: math.NaN(), Tail: 1}}
}

// Latest returns the newest layout and the status. The layout must not be
// modified.
func (e *Engine) Latest() ([]float32, Status) {
	e.mu.Lock()
	defer e.mu.Unlock()
	s := e.status
	if s.Running {
		s.Elapsed = time.Since(s.Started)
	}
	return e.layout, s
}

// Initial returns the layout fresh runs start from.
func (e *Engine) Initial() []float32 {
	e.mu.Lock()
	defer e.mu.Unlock()
	return e.initial
}

// Reset stops any run and starts over on another preparation of the atlas
// (its samples integrated, say): opt from now on, with setting recorded in
// the history, and initial as the layout fresh runs start from and the
// layout on screen, reached by no step yet.
func (e *Engine) Reset(opt Optimizer, setting float64, initial []float32) {
	e.mu.Lock()
	e.stopLocked()
	e.opt, e.setting, e.initial, e.layout = opt, setting, initial, initial
	e.history = nil
	e.status.Iteration = 0
	e.mu.Unlock()
	e.notify()
}

// SetLayout stops any run and shows layout, reached by the given history
// (for example both read from a session); the runs that follow use the
// history's tail (TailOf) until SetTail changes it.
func (e *Engine) SetLayout(layout []float32, history []Step) {
	e.mu.Lock()
	e.stopLocked()
	e.layout = layout
	e.history = append([]Step(nil), history...)
	e.tail = TailOf(history)
	e.status.Tail = e.tail
	e.status.Iteration, e.status.Settled = 0, false
	if n := len(history); n > 0 {
		e.status.Iteration, e.status.Settled = history[n-1].Done, history[n-1].Settled
	}
	e.prepareLocked()
	e.mu.Unlock()
	e.notify()
}

// History returns the steps that led to the layout on screen.
func (e *Engine) History() []Step {
	e.mu.Lock()
	defer e.mu.Unlock()
	h := append([]Step(nil), e.history...)
	if n := len(h); n > 0 {
		e.endStep(&h[n-1])
	}
	return h
}

// endStep records in s, the last step, how far the run on screen got.
func (e *Engine) endStep(s *Step) {
	s.Done = e.status.Iteration
	s.Settled = s.Kind == Warm && e.status.Settled && !e.status.Running && s.Done > 0
}

// SetFrameEvery sets the least time between two frames of the runs started
// from now on (RunOptions.FrameEvery); the window sets it from its pacer.
func (e *Engine) SetFrameEvery(d time.Duration) {
	e.mu.Lock()
	e.frameEvery = d
	e.mu.Unlock()
}

// SetOptimizer stops any run and drives opt from now on (for example after
// the affinities changed); the layout on screen stays. setting is recorded
// in the history of the steps that follow.
func (e *Engine) SetOptimizer(opt Optimizer, setting float64) {
	e.mu.Lock()
	e.stopLocked()
	e.opt = opt
	e.setting = setting
	e.prepareLocked()
	e.mu.Unlock()
}

// SetTail sets the kernel's tail α of the runs started from now on (see
// embed.Params.Tail; 0 means 1); it does not start one: a turn at the dial's
// value does (Turn). The run in flight keeps its tail.
func (e *Engine) SetTail(tail float64) {
	if tail == 0 {
		tail = 1
	}
	e.mu.Lock()
	changed := tail != e.tail
	e.tail = tail
	if changed && !e.status.Running {
		e.prepareLocked()
	}
	e.mu.Unlock()
}

// Tail returns the tail the next run will use.
func (e *Engine) Tail() float64 {
	e.mu.Lock()
	defer e.mu.Unlock()
	return e.tail
}

// Turn starts a warm run at the given attraction from the layout on screen,
// without early exaggeration, with the tail set by SetTail: it ends once
// the layout has settled, after at most iterations iterations. An
// attraction of +Inf moves to the spectral layout instead.
func (e *Engine) Turn(attraction float64, iterations int) {
	e.start(attraction, iterations, false)
}

// Restart starts a fresh run from the initial layout, with early
// exaggeration, at the given attraction.
func (e *Engine) Restart(attraction float64, iterations int) {
	e.start(attraction, iterations, true)
}

// Stop cancels the run in flight, keeping the layout it reached.
func (e *Engine) Stop() {
	e.mu.Lock()
	e.stopLocked()
	e.mu.Unlock()
}

// Wait blocks until the current run, and the preparation of the next
// (WaitPrepared), have returned.
func (e *Engine) Wait() {
	e.mu.Lock()
	done := e.done
	e.mu.Unlock()
	<-done
	e.WaitPrepared() // the run, ending, may have started one
}

// WaitPrepared blocks until the preparation of the next run has ended. When
// the optimiser is a Preparer, the engine has it prepare the runs a turn
// may start — from the layout on screen and from its compacted form
// (Compact), with the tail of the next run — whenever the map comes to
// rest: at the end of a run, after SetLayout, and after SetTail between
// runs. A run, or a new preparation, cancels the one in flight.
func (e *Engine) WaitPrepared() {
	e.mu.Lock()
	prep := e.prepDone
	e.mu.Unlock()
	<-prep
}

// prepareLocked starts preparing the runs from the layout on screen (see
// WaitPrepared). Errors are left to the runs, which meet them again.
func (e *Engine) prepareLocked() {
	e.cancelPrepLocked()
	pr, ok := e.opt.(Preparer)
	if !ok || len(e.layout) == 0 || len(e.history) == 0 {
		return
	}
	ctx, cancel := context.WithCancel(context.Background())
	done := make(chan struct{})
	e.prepCancel, e.prepDone = cancel, done
	layout, tail := e.layout, e.tail
	go func() {
		defer close(done)
		defer cancel()
		_ = pr.Prepare(ctx, tail, Compact(layout), layout)
	}()
}

// cancelPrepLocked cancels the preparation in flight.
func (e *Engine) cancelPrepLocked() {
	if e.prepCancel != nil {
		e.prepCancel()
		e.prepCancel = nil
	}
}

func (e *Engine) stopLocked() {
	e.gen++
	if e.cancel != nil {
		e.cancel()
		e.cancel = nil
	}
	e.cancelPrepLocked()
	e.status.Running = false
}

func (e *Engine) notify() {
	if e.onFrame != nil {
		e.onFrame()
	}
}

func (e *Engine) start(attraction float64, iterations int, fresh bool) {
	e.mu.Lock()
	e.stopLocked()
	gen := e.gen
	from := e.layout
	if n := len(e.history); n > 0 {
		e.endStep(&e.history[n-1])
	}
	tail, frameEvery := e.tail, e.frameEvery
	step := Step{Kind: Warm, Attraction: attraction, Iterations: iterations, Setting: e.setting, Tail: tail}
	switch {
	case math.IsInf(attraction, 1):
		step.Kind, step.Iterations = Spectral, SpectralGlide
	case fresh:
		from = e.initial
		step.Kind = Fresh
		e.history = e.history[:0]
	case raises(e.history, attraction):
		step.Compact = true
		from = Compact(from)
	}
	e.history = append(e.history, step)
	ctx, cancel := context.WithCancel(context.Background())
	e.cancel = cancel
	prev, prevPrep := e.done, e.prepDone
	opt := e.opt
	done := make(chan struct{})
	e.done = done
	e.status = Status{Running: true, Attraction: attraction, Tail: tail, Iterations: iterations, KL: math.NaN(),
		Started: time.Now(), Runs: e.status.Runs + 1}
	e.mu.Unlock()

	go func() {
		defer close(done)
		defer cancel()
		<-prev
		<-prevPrep // cancelled: it ends within milliseconds
		if ctx.Err() != nil {
			return
		}
		var err error
		if math.IsInf(attraction, 1) {
			err = e.toSpectral(ctx, opt, gen, from)
		} else {
			o := RunOptions{Attraction: attraction, Tail: tail, Iterations: iterations, Early: fresh,
				Settle: !fresh, FrameEvery: frameEvery}
			_, err = opt.Run(ctx, from, o, func(f Frame) { e.publish(gen, f) })
		}
		e.finish(gen, err)
	}()
}

// publish stores f when it belongs to the current run.
func (e *Engine) publish(gen uint64, f Frame) {
	e.mu.Lock()
	if gen != e.gen {
		e.mu.Unlock()
		return
	}
	e.layout = f.Layout
	e.status.Iteration = f.Iteration
	e.status.Iterations = f.Iterations
	if !math.IsNaN(f.KL) {
		e.status.KL = f.KL
	}
	e.status.Settled = f.Settled
	e.mu.Unlock()
	e.notify()
}

func (e *Engine) finish(gen uint64, err error) {
	e.mu.Lock()
	if gen != e.gen {
		e.mu.Unlock()
		return
	}
	e.status.Running = false
	e.status.Elapsed = time.Since(e.status.Started)
	if err != nil && !errors.Is(err, context.Canceled) {
		e.status.Err = err
	}
	e.cancel = nil
	if err == nil {
		e.prepareLocked()
	}
	e.mu.Unlock()
	e.notify()
}

// glideFrame returns frame s of the glide from from to target: a smoothstep
// blend, and target itself at the last frame.
func glideFrame(from, target []float32, s int) []float32 {
	if s >= SpectralGlide {
		return target
	}
	t := float32(s) / SpectralGlide
	t = t * t * (3 - 2*t) // smoothstep
	frame := make([]float32, len(from))
	for i := range frame {
		frame[i] = from[i] + t*(target[i]-from[i])
	}
	return frame
}

// SpectralGlide is how many frames the move to the spectral layout takes, so
// that the map glides there instead of jumping; a Spectral step that ran to
// its end has Done = SpectralGlide.
const SpectralGlide = 15

func (e *Engine) toSpectral(ctx context.Context, opt Optimizer, gen uint64, from []float32) error {
	target, err := opt.Spectral(ctx, from)
	if err != nil {
		return err
	}
	if len(target) != len(from) {
		return errors.New("live: spectral layout has the wrong length")
	}
	tick := time.NewTicker(time.Second / 30)
	defer tick.Stop()
	for s := 1; s <= SpectralGlide; s++ {
		e.publish(gen, Frame{Layout: glideFrame(from, target, s), Iteration: s, Iterations: SpectralGlide, KL: math.NaN(), Settled: s == SpectralGlide})
		select {
		case <-ctx.Done():
			return ctx.Err()
		case <-tick.C:
		}
	}
	return nil
}
