package live

import (
	"context"
	"fmt"
	"math"
)

// Replay reproduces the layout a history of steps led to: starting from
// initial, each step runs as it ran in the engine for the number of
// iterations (or glide frames) it had done, each warm or spectral step
// starting from the previous step's result. optimizerFor returns the
// optimiser for a step's setting. With the same optimisers, seed and thread
// count the result is identical, bit for bit, to the layout the engine
// showed.
func Replay(ctx context.Context, initial []float32, steps []Step, optimizerFor func(setting float64) (Optimizer, error)) ([]float32, error) {
	layout := initial
	for i, s := range steps {
		if s.Done == 0 {
			continue // turned away from before it showed anything
		}
		opt, err := optimizerFor(s.Setting)
		if err != nil {
			return nil, fmt.Errorf("step %d: %w", i+1, err)
		}
		from := layout
		switch {
		case s.Kind == Fresh:
			from = initial
		case s.Compact:
			from = Compact(from)
		}
		switch {
		case s.Done < 0:
			return nil, fmt.Errorf("step %d: negative iteration count %d", i+1, s.Done)
		case s.Kind == Spectral:
			target, err := opt.Spectral(ctx, from)
			if err != nil {
				return nil, fmt.Errorf("step %d: %w", i+1, err)
			}
			layout = glideFrame(from, target, min(s.Done, SpectralGlide))
		case s.Kind == Fresh || s.Kind == Warm:
			if math.IsInf(s.Attraction, 0) || math.IsNaN(s.Attraction) {
				return nil, fmt.Errorf("step %d: attraction %v for a %s run", i+1, s.Attraction, s.Kind)
			}
			layout, err = opt.Run(ctx, from, RunOptions{Attraction: s.Attraction, Tail: s.Tail, Iterations: s.Done, Early: s.Kind == Fresh}, nil)
			if err != nil {
				return nil, fmt.Errorf("step %d: %w", i+1, err)
			}
		default:
			return nil, fmt.Errorf("step %d: unknown kind %q", i+1, s.Kind)
		}
	}
	return layout, nil
}
