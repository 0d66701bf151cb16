package live

import (
	"context"
	"math"
	"sync"
	"sync/atomic"
	"testing"
	"time"
)

// drift is a fake optimiser: each iteration adds attraction to every
// coordinate, so the layout tells which runs produced it and how far they
// got. It records the layouts runs started from.
type drift struct {
	mu      sync.Mutex
	starts  [][]float32
	running atomic.Int32
	overlap atomic.Bool
}

func (d *drift) Run(ctx context.Context, init []float32, o RunOptions, publish func(Frame)) ([]float32, error) {
	attraction, iterations := o.Attraction, o.Iterations
	if o.Tail != 0 {
		attraction *= o.Tail // the tail moves the drift too, so tests see it
	}
	if publish == nil {
		publish = func(Frame) {}
	}
	if d.running.Add(1) > 1 {
		d.overlap.Store(true)
	}
	defer d.running.Add(-1)
	d.mu.Lock()
	d.starts = append(d.starts, append([]float32(nil), init...))
	d.mu.Unlock()
	y := append([]float32(nil), init...)
	for it := 1; it <= iterations; it++ {
		if err := ctx.Err(); err != nil {
			return y, err
		}
		for i := range y {
			y[i] += float32(attraction)
		}
		publish(Frame{Layout: append([]float32(nil), y...), Iteration: it, Iterations: iterations, KL: 1 / float64(it)})
		time.Sleep(100 * time.Microsecond)
	}
	return y, nil
}

func (d *drift) Spectral(ctx context.Context, like []float32) ([]float32, error) {
	out := make([]float32, len(like))
	for i := range out {
		out[i] = -1
	}
	return out, nil
}

func TestTurnStartsFromTheLayoutOnScreen(t *testing.T) {
	opt := &drift{}
	e := New(opt, 0, []float32{0, 0, 0, 0}, nil)
	e.Turn(1, 5)
	e.Wait()
	got, st := e.Latest()
	if got[0] != 5 || st.Running || st.Iteration != 5 || st.KL != 0.2 {
		t.Fatalf("after a 5-step run: layout %v, status %+v", got, st)
	}
	e.Turn(0.5, 4)
	e.Wait()
	got, _ = e.Latest()
	if got[0] != 7 {
		t.Fatalf("warm run did not start from the layout on screen: %v", got)
	}
	// Raising the attraction starts from the layout compacted to unit
	// size: this one is a single point, which compacts to the origin.
	e.Turn(2, 3)
	e.Wait()
	got, _ = e.Latest()
	if got[0] != 6 {
		t.Fatalf("a raising turn did not start from the compacted layout: %v", got)
	}
	if h := e.History(); !h[len(h)-1].Compact || h[len(h)-2].Compact {
		t.Fatalf("compaction not recorded as expected: %+v", h)
	}
	e.Restart(1, 2)
	e.Wait()
	got, _ = e.Latest()
	if got[0] != 2 {
		t.Fatalf("restart did not start from the initial layout: %v", got)
	}
}

func TestSpectralGlidesToTarget(t *testing.T) {
	e := New(&drift{}, 0, []float32{1, 1}, nil)
	e.Turn(math.Inf(1), 0)
	e.Wait()
	got, st := e.Latest()
	if got[0] != -1 || !st.Settled {
		t.Fatalf("spectral end: layout %v, status %+v", got, st)
	}
}

// TestRapidTurns turns the dial 50 times while frames are being read, as a
// user spinning the dial would; run it with -race. Runs must never overlap,
// and once the last run ends the layout is the last run's result.
func TestRapidTurns(t *testing.T) {
	opt := &drift{}
	var frames atomic.Int64
	e := New(opt, 0, make([]float32, 200), func() { frames.Add(1) })
	stop := make(chan struct{})
	var reader sync.WaitGroup
	reader.Add(1)
	go func() { // the UI side: reads frames as they come
		defer reader.Done()
		for {
			select {
			case <-stop:
				return
			default:
			}
			l, _ := e.Latest()
			_ = l[len(l)-1]
		}
	}()
	for i := 0; i < 50; i++ {
		e.Turn(float64(i%7+1), 40)
		time.Sleep(time.Duration(i%3) * time.Millisecond)
	}
	e.Turn(100, 10)
	e.Wait()
	close(stop)
	reader.Wait()
	if opt.overlap.Load() {
		t.Fatal("two runs overlapped")
	}
	got, st := e.Latest()
	opt.mu.Lock()
	last := opt.starts[len(opt.starts)-1]
	opt.mu.Unlock()
	if want := last[0] + 1000; got[0] != want || st.Iteration != 10 || st.Attraction != 100 {
		t.Fatalf("after the last turn: x0 = %v want %v, status %+v", got[0], want, st)
	}
	if frames.Load() == 0 {
		t.Fatal("no frame was announced")
	}
}

func TestStopKeepsLayout(t *testing.T) {
	e := New(&drift{}, 0, []float32{0, 0}, nil)
	e.Turn(1, 1_000_000)
	time.Sleep(5 * time.Millisecond)
	e.Stop()
	e.Wait()
	got, st := e.Latest()
	if st.Running || got[0] == 0 {
		t.Fatalf("after stop: layout %v, status %+v", got, st)
	}
	after, _ := e.Latest()
	time.Sleep(5 * time.Millisecond)
	if again, _ := e.Latest(); again[0] != after[0] {
		t.Fatal("layout changed after the run was stopped")
	}
}

// TestHistoryReplaysToTheLayoutOnScreen turns, stops and turns again, then
// replays the recorded history and compares with the layout shown.
func TestHistoryReplaysToTheLayoutOnScreen(t *testing.T) {
	opt := &drift{}
	e := New(opt, 30, []float32{0, 0, 0, 0}, nil)
	e.Restart(1, 7)
	e.Wait()
	e.Turn(2, 1_000_000)
	time.Sleep(3 * time.Millisecond)
	e.Stop()
	e.Wait()
	e.Turn(math.Inf(1), 0)
	e.Wait()
	e.Turn(3, 4)
	e.Wait()
	want, _ := e.Latest()
	h := e.History()
	if len(h) != 4 || h[0].Kind != Fresh || h[0].Done != 7 || h[2].Kind != Spectral || h[2].Done != SpectralGlide || h[3].Done != 4 {
		t.Fatalf("history %+v", h)
	}
	if h[1].Done == 0 || h[1].Done >= 1_000_000 || h[1].Setting != 30 {
		t.Fatalf("stopped step recorded as %+v", h[1])
	}
	got, err := Replay(context.Background(), []float32{0, 0, 0, 0}, h, func(float64) (Optimizer, error) { return &drift{}, nil })
	if err != nil {
		t.Fatal(err)
	}
	for i := range want {
		if got[i] != want[i] {
			t.Fatalf("replayed layout %v, shown %v", got, want)
		}
	}
}

func TestCompactKeepsShape(t *testing.T) {
	y := []float32{0, 0, 4, 0, 0, 3, 4, 3}
	c := Compact(y)
	// Centre (2, 1.5); RMS radius 2.5; so the corners go to (±0.8, ±0.6).
	want := []float32{-0.8, -0.6, 0.8, -0.6, -0.8, 0.6, 0.8, 0.6}
	for i := range want {
		if math.Abs(float64(c[i]-want[i])) > 1e-6 {
			t.Fatalf("Compact = %v, want %v", c, want)
		}
	}
}

// TestResetStartsOver checks that Reset stops the run in flight and makes a
// new optimiser, initial layout and empty history current: the layout on
// screen is the new initial one, and the next fresh run starts from it with
// the new optimiser, recording the new setting.
func TestResetStartsOver(t *testing.T) {
	first, second := &drift{}, &drift{}
	e := New(first, 30, []float32{0, 0}, nil)
	e.Turn(1, 100000)
	e.Reset(second, 12, []float32{5, 5})
	e.Wait()
	got, st := e.Latest()
	if got[0] != 5 || st.Running || st.Iteration != 0 || len(e.History()) != 0 || e.Initial()[0] != 5 {
		t.Fatalf("after Reset: layout %v, status %+v, history %v", got, st, e.History())
	}
	e.Restart(1, 3)
	e.Wait()
	got, _ = e.Latest()
	if got[0] != 8 || len(second.starts) != 1 || second.starts[0][0] != 5 {
		t.Fatalf("fresh run after Reset: layout %v, starts %v", got, second.starts)
	}
	if h := e.History(); len(h) != 1 || h[0].Kind != Fresh || h[0].Setting != 12 {
		t.Fatalf("history after Reset and a fresh run: %+v", h)
	}
}
