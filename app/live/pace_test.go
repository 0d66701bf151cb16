package live

import (
	"sync"
	"testing"
	"time"
)

// TestPacerSpacesFramesByTheirCost checks the pacer's rule, interval =
// clamp(cost / FrameShare, MinFrameInterval, MaxFrameInterval), from its
// prior to measured costs, and the running mean of the costs.
func TestPacerSpacesFramesByTheirCost(t *testing.T) {
	p := NewPacer(200000)
	// Prior: 200,000 points × 40 ns = 8 ms a frame, so 160 ms apart.
	if got, want := p.Interval(), 160*time.Millisecond; got != want {
		t.Fatalf("prior interval %v, want %v", got, want)
	}
	if got := NewPacer(100).Interval(); got != MinFrameInterval {
		t.Fatalf("a small map's frames are %v apart, want the least, %v", got, MinFrameInterval)
	}
	now := time.Unix(1000, 0)
	if w := p.Wait(now); w != 0 {
		t.Fatalf("the first frame waits %v", w)
	}
	// Frames of 20 ms: the first measurement replaces the prior.
	p.Shown(now)
	p.Spend(15 * time.Millisecond)
	p.Spend(5 * time.Millisecond)
	now = now.Add(time.Second)
	p.Shown(now)
	if got, want := p.Interval(), 400*time.Millisecond; got != want {
		t.Fatalf("after a 20 ms frame the interval is %v, want %v", got, want)
	}
	if got, want := p.Wait(now.Add(100*time.Millisecond)), 300*time.Millisecond; got != want {
		t.Fatalf("100 ms after a frame the next waits %v, want %v", got, want)
	}
	if w := p.Wait(now.Add(time.Second)); w != 0 {
		t.Fatalf("a frame past due waits %v", w)
	}
	// A 30 ms frame moves the mean by 0.3 of the difference: 23 ms.
	p.Spend(30 * time.Millisecond)
	now = now.Add(time.Second)
	p.Shown(now)
	if got, want := p.Cost(), 23*time.Millisecond; got != want {
		t.Fatalf("running mean %v, want %v", got, want)
	}
	// Very costly frames are shown once a second at least.
	for i := 0; i < 20; i++ {
		p.Spend(500 * time.Millisecond)
		now = now.Add(time.Second)
		p.Shown(now)
	}
	if got := p.Interval(); got != MaxFrameInterval {
		t.Fatalf("500 ms frames are %v apart, want %v", got, MaxFrameInterval)
	}
	// A frame period without work (the layout did not change) counts as
	// no measurement, not as a free frame.
	c := p.Cost()
	now = now.Add(time.Second)
	p.Shown(now)
	if p.Cost() != c {
		t.Fatalf("an idle period changed the cost from %v to %v", c, p.Cost())
	}
}

// TestPacerFromManyGoroutines lets the UI's and the engine's goroutines use
// a pacer at once (run with -race).
func TestPacerFromManyGoroutines(t *testing.T) {
	p := NewPacer(70000)
	var wg sync.WaitGroup
	for g := 0; g < 4; g++ {
		wg.Add(1)
		go func() {
			defer wg.Done()
			for i := 0; i < 1000; i++ {
				p.Spend(time.Millisecond)
				p.Shown(time.Now())
				_ = p.Wait(time.Now()) + p.Interval() + p.Cost()
			}
		}()
	}
	wg.Wait()
	if d := p.Interval(); d < MinFrameInterval || d > MaxFrameInterval {
		t.Fatalf("interval %v out of its bounds", d)
	}
}
