package window

import (
	"context"
	"math"
	"runtime"
	"testing"
	"time"

	"fyne.io/fyne/v2"

	"lodestone/app/live"
	"lodestone/internal/threadcpu"
)

// TestRapidTurnsThroughTheFramePump turns the dial 30 times while frames
// come in, as a user spinning it does (run with -race: the engine's
// goroutine, the pacer's timers and the UI goroutine meet in the frame
// pump). Afterwards the last turn ends settled, the status line says so,
// the map shows the engine's layout, and the history replays to it bit for
// bit.
func TestRapidTurnsThroughTheFramePump(t *testing.T) {
	u := newTestUI(t, chooserAnswering())
	v := openFixture(t, u)
	values := []float64{2, 4, 1, 10, 30, 0.5, 6}
	for i := 0; i < 30; i++ {
		onUI(func() { v.run.turnTo(values[i%len(values)]) })
		time.Sleep(time.Duration(i%4) * time.Millisecond)
	}
	onUI(func() { v.run.turnTo(4) })
	waitForRun(t, v, 32)
	var shown []float32
	var st live.Status
	var stage string
	onUI(func() { shown, st, stage = v.st.layout, v.st.run, v.status.stage.Text })
	layout, est := v.run.engine.Latest()
	if !sameLayout(shown, layout) || !sameLayout(v.mapP.mapView.Layout(), layout) {
		t.Fatal("the map does not show the engine's last layout")
	}
	if !st.Settled || est.Iteration >= v.run.iterationsPerTurn() || stage != "settled" {
		t.Fatalf("the last turn: status %+v, stage %q; want settled before %d iterations", st, stage, v.run.iterationsPerTurn())
	}
	p := v.st.prep
	replayed, err := live.Replay(context.Background(), v.run.engine.Initial(), v.run.engine.History(),
		func(float64) (live.Optimizer, error) {
			return &live.TSNE{P: p.P, Seed: p.Settings.Seed, Threads: p.Settings.Threads}, nil
		})
	if err != nil {
		t.Fatal(err)
	}
	for i := range layout {
		if math.Float32bits(layout[i]) != math.Float32bits(replayed[i]) {
			t.Fatalf("the replayed history differs from the map at %d: %v, shown %v", i, replayed[i], layout[i])
		}
	}
}

// TestFramesArePaced checks the frame pump's pacing: when frames cost
// much (here each frame spins for 30 ms, as drawing a large atlas takes),
// a run shows its first frame at once and then a frame no more often than
// every cost / live.FrameShare, while the engine runs unhindered.
func TestFramesArePaced(t *testing.T) {
	u := newTestUI(t, chooserAnswering())
	v := openFixture(t, u)
	const frameCost = 30 * time.Millisecond
	var shown0 int
	onUI(func() {
		// Every frame costs: also the last of a run, whose layout may equal
		// the one shown before (no topicFrame then, but topicRun).
		v.st.on(topicRun, func() { burn(frameCost) })
		shown0 = v.run.framesShown
	})
	// The pacer's cost is a running mean (weight costWeight) that starts from
	// the fixture's cheap frames: fresh runs until it has seen eight costly
	// ones, however few frames a run shows on a fast or a loaded machine.
	run := 1
	for shown := 0; shown < 8; {
		run++
		if run > 40 {
			t.Fatalf("%d costly frames in %d runs", shown, run-1)
		}
		onUI(v.run.restart) // a fresh run: no settling, 750 iterations
		waitForRun(t, v, run)
		onUI(func() { shown = v.run.framesShown - shown0 })
	}
	run++
	onUI(v.run.restart)
	waitFor(t, "the first frame of the run", 10*time.Second, func() bool { return v.st.run.Runs == run && v.st.run.Iteration > 0 })
	var before int
	var start time.Time
	onUI(func() { before, start = v.run.framesShown, time.Now() })
	waitForRun(t, v, run)
	var frames int
	onUI(func() { frames = v.run.framesShown - before })
	elapsed := time.Since(start)
	cost, interval := v.run.pacer.Cost(), v.run.pacer.Interval()
	if cost < frameCost*3/4 || interval < time.Duration(float64(cost)/live.FrameShare)*9/10 {
		t.Fatalf("frames measured at %v each, %v apart; each spun for %v", cost, interval, frameCost)
	}
	// At most one frame an interval (the measured cost rose from the
	// fixture's small one in the first frames), and the last on ending.
	if most := 3 + int(elapsed/interval); frames > most {
		t.Fatalf("%d frames in %v with frames %v apart; want at most %d", frames, elapsed, interval, most)
	}
	t.Logf("%d frames in %v, each measured at %v, %v apart", frames, elapsed, cost, interval)
}

// TestDialDragTurnsWhenTheNeedleRests drags the dial's needle across its
// face as a user does: the moves of the drag start no run (each would be
// cancelled by the next); the map turns once the needle rests, or when it
// is released, once.
func TestDialDragTurnsWhenTheNeedleRests(t *testing.T) {
	u := newTestUI(t, chooserAnswering())
	v := openFixture(t, u)
	runs := func() int { _, st := v.run.engine.Latest(); return st.Runs }
	drag := func(k int) {
		d := v.run.dial
		c := fyne.NewPos(d.Size().Width/2, d.Size().Height/2)
		// Around the face from the left towards the top.
		p := c.Add(fyne.NewPos(-60+float32(4*k), -float32(3*k)))
		d.Dragged(&fyne.DragEvent{PointEvent: fyne.PointEvent{Position: p}, Dragged: fyne.NewDelta(4, -3)})
	}
	before := runs()
	onUI(func() {
		for k := 0; k < 12; k++ {
			drag(k)
		}
	})
	if got := runs(); got != before {
		t.Fatalf("a drag's moves started %d runs", got-before)
	}
	onUI(v.run.dial.DragEnd)
	if got := runs(); got != before+1 {
		t.Fatalf("releasing the needle started %d runs, want 1", got-before)
	}
	var turned float64
	onUI(func() { turned = v.st.run.Attraction })
	if turned != v.run.dial.Value {
		t.Fatalf("the run is at %v, the needle at %v", turned, v.run.dial.Value)
	}
	// A drag that rests: the map turns after the rest, and the release
	// at the same place does not turn it again.
	before = runs()
	onUI(func() { drag(20) })
	waitFor(t, "the turn after the needle rested", 5*time.Second, func() bool { return runs() == before+1 })
	onUI(v.run.dial.DragEnd)
	time.Sleep(2 * dialRest)
	if got := runs(); got != before+1 {
		t.Fatalf("a rested drag and its release started %d runs, want 1", got-before)
	}
}

// burn keeps the processor busy for d of the calling thread's processor
// time (of wall time where threads cannot be measured), as costly work
// would on a loaded machine.
func burn(d time.Duration) {
	runtime.LockOSThread()
	defer runtime.UnlockOSThread()
	id, ok := threadcpu.Self()
	start, ok2 := threadcpu.Used(id)
	wall := time.Now()
	for {
		if ok && ok2 {
			if now, _ := threadcpu.Used(id); now-start >= d {
				return
			}
		} else if time.Since(wall) >= d {
			return
		}
	}
}
