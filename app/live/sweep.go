package live

import (
	"context"
	"math"
)

// SweepMap is one map of a sweep: its attraction, its layout, and the
// history that leads to it from the initial layout.
type SweepMap struct {
	Attraction float64
	Layout     []float32
	History    []Step
}

// Sweep computes a map at each attraction in values, each run warm from the
// previous map (the first from base, the map that history leads to), the
// way the dial moves the map: iterations iterations per map, starting from
// the compacted layout when the attraction rises, and the spectral layout
// for +Inf. setting is recorded in each step. before, when not nil, is called
// with each map's index before it is computed; each is called with every
// map as soon as it is done and may stop the sweep by returning an error.
// Sweep returns the first error of a run or of each (ctx.Err() when
// cancelled).
func Sweep(ctx context.Context, opt Optimizer, base []float32, history []Step, values []float64, iterations int,
	setting float64, before func(k int), each func(SweepMap) error) error {
	prev, steps := base, history
	for k, a := range values {
		if before != nil {
			before(k)
		}
		var (
			layout []float32
			step   Step
			err    error
		)
		if math.IsInf(a, 1) {
			layout, err = opt.Spectral(ctx, prev)
			step = Step{Kind: Spectral, Attraction: a, Iterations: SpectralGlide, Done: SpectralGlide, Setting: setting}
		} else {
			step = Step{Kind: Warm, Attraction: a, Iterations: iterations, Done: iterations, Setting: setting}
			from := prev
			if raises(steps, a) {
				step.Compact = true
				from = Compact(prev)
			}
			layout, err = opt.Run(ctx, from, a, iterations, false, nil)
		}
		if err != nil {
			return err
		}
		steps = append(append([]Step(nil), steps...), step)
		if err := each(SweepMap{Attraction: a, Layout: layout, History: steps}); err != nil {
			return err
		}
		prev = layout
	}
	return nil
}
