package live

import (
	"context"
	"math"
	"time"

	"lodestone/compute/atlas"
	"lodestone/compute/pipeline"
	"lodestone/compute/quality"
)

// SweepMap is one map of a sweep: its attraction and tail, its layout, and
// the history that leads to it from the initial layout.
type SweepMap struct {
	Attraction float64
	Tail       float64 // the kernel's tail (1: t-SNE)
	Layout     []float32
	History    []Step
}

// SweepPoint is the setting of both controls for one map of a sweep.
type SweepPoint struct {
	Attraction float64 // the dial; +Inf for the spectral layout
	Tail       float64 // the kernel's tail; 0 means 1
}

// SweepPoints computes a map at each setting of points, each run warm from
// the previous map (the first from base, the map that history leads to),
// the way the controls move the map: a run that ends once the layout has
// settled, after at most iterations iterations (RunOptions.Settle),
// starting from the compacted layout when the attraction rises, and the
// spectral layout for +Inf. setting is recorded in each step. before, when
// not nil, is called with each map's index before it is computed; each is
// called with every map as soon as it is done and may stop the sweep by
// returning an error. SweepPoints returns the first error of a run or of
// each (ctx.Err() when cancelled).
func SweepPoints(ctx context.Context, opt Optimizer, base []float32, history []Step, points []SweepPoint, iterations int,
	setting float64, before func(k int), each func(SweepMap) error) error {
	prev, steps := base, history
	for k, pt := range points {
		if before != nil {
			before(k)
		}
		a, tail := pt.Attraction, pt.Tail
		if tail == 0 {
			tail = 1
		}
		var (
			layout []float32
			step   Step
			err    error
		)
		if math.IsInf(a, 1) {
			layout, err = opt.Spectral(ctx, prev)
			step = Step{Kind: Spectral, Attraction: a, Iterations: SpectralGlide, Done: SpectralGlide, Setting: setting, Tail: tail}
		} else {
			step = Step{Kind: Warm, Attraction: a, Iterations: iterations, Setting: setting, Tail: tail}
			from := prev
			if raises(steps, a) {
				step.Compact = true
				from = Compact(prev)
			}
			// Only the last frame is wanted: how far the run went.
			o := RunOptions{Attraction: a, Tail: tail, Iterations: iterations, Settle: true, FrameEvery: time.Duration(math.MaxInt64)}
			layout, err = opt.Run(ctx, from, o, func(f Frame) { step.Done, step.Settled = f.Iteration, f.Settled })
		}
		if err != nil {
			return err
		}
		steps = append(append([]Step(nil), steps...), step)
		if err := each(SweepMap{Attraction: a, Tail: tail, Layout: layout, History: steps}); err != nil {
			return err
		}
		prev = layout
	}
	return nil
}

// FidelityOptions returns the options the window scores maps with
// (quality.Fidelity): the default sample size and neighbourhood, the
// atlas's seed and thread count, and labels when not nil. The headless
// commands that reproduce the window's scores use them too.
func FidelityOptions(s pipeline.Settings, labels []int32) quality.FidelityOptions {
	return quality.FidelityOptions{Seed: s.Seed, Threads: s.Threads, Labels: labels}
}

// ScoredMap is a map of a sweep with its fidelity.
type ScoredMap struct {
	SweepMap
	Fidelity quality.FidelityScores
}

// AtTail returns the sweep points of the attractions values at one tail
// (0 means 1): a sweep of the dial.
func AtTail(values []float64, tail float64) []SweepPoint {
	points := make([]SweepPoint, len(values))
	for k, a := range values {
		points[k] = SweepPoint{Attraction: a, Tail: tail}
	}
	return points
}

// AtAttraction returns the sweep points of the tails tails at one
// attraction: a sweep of the kernel's tail. At +Inf every map would be the
// spectral layout, which does not depend on the tail.
func AtAttraction(attraction float64, tails []float64) []SweepPoint {
	points := make([]SweepPoint, len(tails))
	for k, t := range tails {
		points[k] = SweepPoint{Attraction: attraction, Tail: t}
	}
	return points
}

// ScoredSweep runs SweepPoints (see there for ctx, opt, base, history,
// points, iterations, setting and before) and scores each map by
// quality.Fidelity against high (the features the maps were computed from)
// with fo, before handing it to each. The window's sweep and the headless
// sweep command both run through it, so the same inputs give the same maps
// and scores. It returns the first error of a run, of a score or of each.
func ScoredSweep(ctx context.Context, opt Optimizer, base []float32, history []Step, points []SweepPoint, iterations int,
	setting float64, high *atlas.Dense, fo quality.FidelityOptions, before func(k int), each func(ScoredMap) error) error {
	return SweepPoints(ctx, opt, base, history, points, iterations, setting, before, func(m SweepMap) error {
		f, err := quality.Fidelity(ctx, high, m.Layout, fo)
		if err != nil {
			return err
		}
		return each(ScoredMap{SweepMap: m, Fidelity: f})
	})
}
