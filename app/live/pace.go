package live

import (
	"sync"
	"time"
)

// Frame pacing. While the optimiser runs it keeps every processor busy, and
// its parallel loops wait for their slowest part: whatever core a frame is
// drawn on, the time the window spends on it is taken from the optimiser.
// A Pacer therefore spaces the frames of a run so that drawing them takes
// at most FrameShare of the time:
//
//	interval = clamp(cost / FrameShare, MinFrameInterval, MaxFrameInterval)
//
// where cost is the running mean of what a frame kept the window busy. Small
// maps get about 30 frames a second; large ones, whose frames cost more,
// fewer, down to one a second.
const (
	// FrameShare is the share of the time that drawing frames may take
	// while the optimiser runs.
	FrameShare = 0.05
	// MinFrameInterval is the least time between two frames: about 30 a
	// second, as many as the eye follows.
	MinFrameInterval = 33 * time.Millisecond
	// MaxFrameInterval is the most: a map that moves shows at least one
	// frame a second, however much it costs.
	MaxFrameInterval = time.Second
)

// frameCostPerPoint is the prior of a frame's cost, per point, until the
// first frame has been measured: about what drawing one point and copying
// its coordinates cost on a laptop core.
const frameCostPerPoint = 40 * time.Nanosecond

// costWeight is the weight of a new measurement in the running mean.
const costWeight = 0.3

// Pacer chooses the time between two frames of a run from the measured cost
// of the frames (see FrameShare). The window tells it what its work cost
// (Spend: showing a frame, drawing the map, drawing it again for a pan or
// zoom) and when it shows a frame (Shown); the work between two frames is
// one frame's cost. The zero value is not usable: call NewPacer. Its
// methods may be called from any goroutine.
type Pacer struct {
	mu       sync.Mutex
	cost     time.Duration // running mean of the frames' costs
	measured bool          // cost is a measurement, not the prior
	spent    time.Duration // the work since the last frame was shown
	last     time.Time     // when the last frame was shown
}

// NewPacer returns a pacer for a map of n points, which assumes a frame
// costs n·40 ns until one has been measured.
func NewPacer(n int) *Pacer {
	return &Pacer{cost: time.Duration(n) * frameCostPerPoint}
}

// Spend records that the window was busy for d.
func (p *Pacer) Spend(d time.Duration) {
	if d <= 0 {
		return
	}
	p.mu.Lock()
	p.spent += d
	p.mu.Unlock()
}

// observe adds one frame's cost to the running mean.
func (p *Pacer) observe(cost time.Duration) {
	if !p.measured {
		p.cost, p.measured = cost, true
		return
	}
	p.cost += time.Duration(costWeight * float64(cost-p.cost))
}

// Cost returns the running mean of the frames' costs (the prior before the
// first measurement).
func (p *Pacer) Cost() time.Duration {
	p.mu.Lock()
	defer p.mu.Unlock()
	return p.cost
}

// Interval returns the least time between two frames.
func (p *Pacer) Interval() time.Duration {
	p.mu.Lock()
	defer p.mu.Unlock()
	return p.interval()
}

func (p *Pacer) interval() time.Duration {
	d := time.Duration(float64(p.cost) / FrameShare)
	return min(max(d, MinFrameInterval), MaxFrameInterval)
}

// Shown records that a frame was shown at t: the work spent since the
// previous one was that frame's cost.
func (p *Pacer) Shown(t time.Time) {
	p.mu.Lock()
	defer p.mu.Unlock()
	if !p.last.IsZero() && p.spent > 0 {
		p.observe(p.spent)
	}
	p.spent, p.last = 0, t
}

// Wait returns how long after now the next frame is due: 0 when it may be
// shown at once.
func (p *Pacer) Wait(now time.Time) time.Duration {
	p.mu.Lock()
	defer p.mu.Unlock()
	if p.last.IsZero() {
		return 0
	}
	return max(0, p.last.Add(p.interval()).Sub(now))
}
