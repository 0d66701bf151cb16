package embed

import (
	"context"
	"slices"
)

// Start holds the forces of a run's first iteration on its initial layout,
// computed ahead of the run by PrepareStart: the attractive and repulsive
// sums of every point and Z. They do not depend on the attraction ρ, the
// learning rate or the early phase, only on the layout, P, the tail and the
// number of threads. A Start is read-only once made and may be shared.
type Start struct {
	p       *Checked
	init    []float32 // the layout, as given
	tail    float64
	threads int
	attr    []float64
	rep     []float64
	z       float64
}

// PrepareStart computes the first iteration's forces of a run of
// RunChecked on c from init with p's tail and threads (its other fields do
// not matter), so that such a run, given the result as p.Start, begins
// with the step: the window prepares them while the map stands still, and
// the first frame after a turn of the dial then costs a step, not an
// iteration. A run with the Start gives the same layout, bit for bit, as one
// without. It returns ctx.Err() when cancelled, and the errors of
// RunChecked for bad input.
func PrepareStart(ctx context.Context, c *Checked, init []float32, p Params) (*Start, error) {
	if err := ctx.Err(); err != nil {
		return nil, err
	}
	p.Attraction = 1
	if err := p.check(); err != nil {
		return nil, err
	}
	if len(init) != 2*c.p.Rows {
		return nil, &LayoutError{What: "initial layout", Point: -1, Err: ErrShape}
	}
	y, err := toFloat64(init, "initial layout")
	if err != nil {
		return nil, err
	}
	o := newOptimizer(&affinities{CSR: c.p, sum: c.sum}, y, p)
	defer o.close()
	stop := cancelled(ctx)
	_, z, ok := o.forces(false, stop)
	if !ok {
		return nil, ctx.Err()
	}
	return &Start{p: c, init: slices.Clone(init), tail: p.Tail, threads: p.Threads, attr: o.attr, rep: o.rep, z: z}, nil
}

// fits reports whether s holds the forces of a run on a from init with the
// checked parameters p.
func (s *Start) fits(a *affinities, init []float32, p Params) bool {
	return s != nil && s.p.p == a.CSR && s.p.sum == a.sum && s.tail == p.Tail && s.threads == p.Threads &&
		slices.Equal(s.init, init)
}
