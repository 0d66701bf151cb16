package live

import (
	"context"
	"slices"
	"sync"

	"lodestone/compute/embed"
	"lodestone/compute/sparse"
)

// TSNE is the Optimizer of the window: t-SNE on fixed affinities P, checked
// once, with the spectral layout of P computed once and kept. P must not be
// modified once a run has started.
type TSNE struct {
	P       *sparse.CSR
	Seed    int64
	Threads int

	mu       sync.Mutex
	spectral []float32
	info     *embed.SpectralInfo
	checkMu  sync.Mutex     // guards checked (mu is held through the spectral layout's computation)
	checked  *embed.Checked // P, checked once for every run

	startMu sync.Mutex
	starts  []prepared // see Prepare
}

// prepared is the first iteration of a run from layout, computed ahead.
type prepared struct {
	layout []float32
	start  *embed.Start
}

// Prepare computes ahead, for each of the layouts in turn, the forces of
// the first iteration of a run from it with the given tail
// (embed.PrepareStart), replacing those prepared before: a later Run from
// one of these layouts (the same values) with that tail begins with its
// step, and gives the same layout as without. It returns ctx.Err() when
// cancelled, keeping what it prepared by then.
func (t *TSNE) Prepare(ctx context.Context, tail float64, layouts ...[]float32) error {
	c, err := t.check()
	if err != nil {
		return err
	}
	p := embed.DefaultParams()
	p.Tail, p.Seed, p.Threads = tail, t.Seed, t.Threads
	t.startMu.Lock()
	t.starts = nil
	t.startMu.Unlock()
	for _, l := range layouts {
		s, err := embed.PrepareStart(ctx, c, l, p)
		if err != nil {
			return err
		}
		t.startMu.Lock()
		t.starts = append(t.starts, prepared{layout: l, start: s})
		t.startMu.Unlock()
	}
	return nil
}

// takeStart returns the Start prepared for a run from init, if any, and
// lets go of all of them: a run moves the map away from every one.
func (t *TSNE) takeStart(init []float32) *embed.Start {
	t.startMu.Lock()
	defer t.startMu.Unlock()
	var s *embed.Start
	for _, pr := range t.starts {
		if slices.Equal(pr.layout, init) {
			s = pr.start
			break
		}
	}
	t.starts = nil
	return s
}

// Run optimises with embed.Run; see Optimizer. publish may be nil.
func (t *TSNE) Run(ctx context.Context, init []float32, o RunOptions, publish func(Frame)) ([]float32, error) {
	p := embed.DefaultParams()
	p.Attraction = o.Attraction
	p.Tail = o.Tail
	p.Iterations = o.Iterations
	if !o.Early {
		p.EarlyIterations = 0
	} else if p.EarlyIterations > o.Iterations {
		p.EarlyIterations = o.Iterations
	}
	p.Seed = t.Seed
	p.Threads = t.Threads
	p.StopSettled = o.Settle
	p.Start = t.takeStart(init)
	if o.FrameEvery > 0 {
		p.SnapshotEvery = o.FrameEvery
	}
	var pub func(embed.Snapshot)
	if publish != nil {
		pub = func(s embed.Snapshot) {
			publish(Frame{Layout: s.Layout, Iteration: s.Iteration, Iterations: s.Iterations, KL: s.KL, Settled: s.Settled})
		}
	}
	c, err := t.check()
	if err != nil {
		return nil, err
	}
	return embed.RunChecked(ctx, c, init, p, pub)
}

// check returns P checked for the optimiser, checking it on the first call
// only: a turn of the dial then starts without a pass over P.
func (t *TSNE) check() (*embed.Checked, error) {
	t.checkMu.Lock()
	defer t.checkMu.Unlock()
	if t.checked == nil {
		c, err := embed.CheckAffinities(t.P, t.Threads)
		if err != nil {
			return nil, err
		}
		t.checked = c
	}
	return t.checked, nil
}

// Spectral returns the Laplacian eigenmap of P turned and scaled like like;
// the eigenmap itself is computed on the first call only.
func (t *TSNE) Spectral(ctx context.Context, like []float32) ([]float32, error) {
	base, _, err := t.SpectralLayout(ctx)
	if err != nil {
		return nil, err
	}
	return embed.ScaleLike(base, like)
}

// SpectralLayout returns the Laplacian eigenmap of P and how it was found,
// computing it on the first call.
func (t *TSNE) SpectralLayout(ctx context.Context) ([]float32, *embed.SpectralInfo, error) {
	t.mu.Lock()
	defer t.mu.Unlock()
	if t.spectral == nil {
		y, info, err := embed.Spectral(ctx, t.P, t.Threads)
		if err != nil {
			return nil, nil, err
		}
		t.spectral, t.info = y, info
	}
	return t.spectral, t.info, nil
}
