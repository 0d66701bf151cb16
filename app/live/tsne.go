package live

import (
	"context"
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
