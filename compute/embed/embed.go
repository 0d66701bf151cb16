// Package embed lays out cells in two dimensions from their affinities: the
// t-SNE optimiser with an attraction factor (the dial), its repulsion by
// FFT-accelerated interpolation, and the spectral layout at the dial's
// infinite end.
//
// Layouts are []float32 of length 2N holding interleaved coordinates
// x0,y0,x1,y1,…; internally the optimiser works in float64.
//
// The optimiser minimises, for the affinities P (symmetric, Σ p_ij = 1) and
// an attraction factor ρ,
//
//	C_ρ(Y) = −ρ Σ_ij p_ij log w_ij + log Z = ρ·KL(P‖Q) + (1−ρ)·log Z + const,
//	w_ij = 1 / (1 + |y_i − y_j|²),   Z = Σ_{k≠l} w_kl,   q_ij = w_ij / Z,
//
// whose gradient is
//
//	∂C_ρ/∂y_i = 4 [ ρ Σ_j p_ij w_ij (y_i − y_j) − (1/Z) Σ_j w_ij² (y_i − y_j) ].
//
// ρ = 1 is t-SNE (van der Maaten & Hinton 2008); larger ρ is exaggeration,
// which closes the gaps between groups and tends, as ρ → ∞, to the Laplacian
// eigenmap of P (Linderman & Steinerberger 2019; Arora, Hu & Kothari 2018).
// For ρ < 1, C_ρ has no minimum: under a uniform scale s of the map it falls
// as 2(ρ−1)·log s, so the map keeps growing slowly while its shape, and
// KL(P‖Q), settle.
package embed

import (
	"context"
	"fmt"
	"math"
	"math/rand/v2"
	"time"

	"lodestone/compute/parallel"
	"lodestone/compute/sparse"
)

// Params control a run of the optimiser. The zero value of a field means its
// default where one is stated.
type Params struct {
	// Attraction is ρ, the factor on the attractive forces after the early
	// phase: the dial, from 0.5 (separate groups) to 100 (continuous paths).
	// math.Inf(1) asks for the spectral layout instead of optimising.
	Attraction float64
	// Iterations is the number of iterations, early phase included;
	// 0 means 750.
	Iterations int
	// EarlyIterations is the length of the early-exaggeration phase: 250 for
	// a fresh run, 0 for a warm restart.
	EarlyIterations int
	// EarlyExaggeration is ρ during the early phase; 0 means 12.
	EarlyExaggeration float64
	// LearningRate is the step size η applied to the gradient without its
	// constant factor 4 (the convention of Belkina et al. 2019). 0 means
	// automatic: η = N/ρ for the ρ of each phase, N/12 during early
	// exaggeration.
	LearningRate float64
	// Tail is α, the degree of freedom of the similarity kernel
	// w = (1 + d²/α)^(−α) ("Heavy-tailed kernels reveal a finer cluster
	// structure in t-SNE visualisations", ECML PKDD 2019): 1 is t-SNE,
	// smaller values split groups into their finer parts, larger ones pull
	// them together; from MinTail to MaxTail, 0 means 1. Run gives the same
	// layout, bit for bit, for 0 and 1. The spectral layout (Attraction
	// +Inf) does not depend on it.
	Tail float64
	// Seed seeds the random initial layout when Run is given none.
	Seed int64
	// Threads is the number of goroutines; 0 means all processors. Results
	// are identical, bit for bit, for the same inputs and Threads.
	Threads int
	// SnapshotEvery is the least time between two snapshots; 0 means 33 ms,
	// about 30 per second.
	SnapshotEvery time.Duration
	// StopSettled ends the run after the first iteration at which the
	// layout has settled (see Snapshot.Settled): Iterations becomes a
	// ceiling. The iterations done are those of a run without it, so a run
	// of as many iterations gives the same layout, bit for bit.
	StopSettled bool
	// Start, when not nil, holds the forces of the first iteration computed
	// ahead by PrepareStart; a run from the layout, with the tail and
	// threads it was made for (on the same checked affinities, through
	// RunChecked) uses them instead of computing them, and ignores it
	// otherwise. The layout is the same, bit for bit, with or without it.
	Start *Start
}

// Defaults of Params.
const (
	DefaultIterations        = 750
	DefaultEarlyIterations   = 250
	DefaultEarlyExaggeration = 12
	DefaultSnapshotEvery     = 33 * time.Millisecond
)

// DefaultParams returns the parameters of a fresh run at attraction 1
// (t-SNE): 750 iterations of which 250 with early exaggeration 12 and
// automatic learning rates.
func DefaultParams() Params {
	return Params{
		Attraction:        1,
		Iterations:        DefaultIterations,
		EarlyIterations:   DefaultEarlyIterations,
		EarlyExaggeration: DefaultEarlyExaggeration,
		Seed:              1,
		SnapshotEvery:     DefaultSnapshotEvery,
	}
}

// Snapshot is the state of a run, published while it runs.
type Snapshot struct {
	Layout     []float32 // a copy of the layout; owned by the receiver
	Iteration  int       // iterations done
	Iterations int       // iterations planned
	// KL is the Kullback–Leibler divergence KL(P‖Q) of the layout, for P
	// itself (not the exaggerated P), estimated from the interpolated Z at
	// the start of an iteration; a new estimate is made at least 1 s and
	// 10 iterations after the previous one, so the value can lag the
	// layout by that much (the last snapshot carries the last
	// iteration's). It is NaN until the first
	// estimate (the first snapshot of a run is published as soon as
	// possible, without one) and for the spectral layout.
	KL         float64
	Attraction float64 // the attraction of the run (Params.Attraction)
	// Settled reports that the layout has settled (see SettledMotion), from
	// the 30th iteration on (before, momentum is still building up).
	Settled bool
	Done    bool // the last snapshot of a run that finished
}

// SettledMotion is the motion below which a layout counts as settled. Every
// 10 iterations the optimiser measures how far the layout's shape moved in
// the last 10 iterations, on average over the points, in units of its
// root-mean-square radius:
//
//	m(t) = (1/N) Σ_i |ŷ_i(t) − ŷ_i(t−10)|,   ŷ_i = (y_i − ȳ) / rms(y),
//
// so that neither a drift of the whole map nor a uniform growth (which a
// view fitted to the map does not show) counts. The layout counts as
// settled from the first measurement with m below SettledMotion until the
// next measurement.
const SettledMotion = 0.005

// initialStd is the standard deviation of a random or rescaled initial
// layout (common practice: small enough that the first iterations are
// governed by P alone).
const initialStd = 1e-4

// Run optimises a layout for the affinities P, starting from init, and
// returns the final layout.
//
// init holds 2·P.Rows interleaved coordinates and is copied, not modified;
// nil starts from a random Gaussian layout of standard deviation 1e-4 drawn
// with p.Seed (van der Maaten & Hinton 2008). The optimiser is gradient
// descent on C_ρ (see the package documentation) with momentum 0.5 during the
// early phase and 0.8 after, per-coordinate gains (+0.2 when the gradient's
// sign differs from the last update's, ×0.8 otherwise, at least 0.01), the
// layout kept centred, and each point's step capped at half the layout's
// root-mean-square radius, which keeps points from being flung out under
// strong attraction. A warm restart (EarlyIterations 0) starts with fresh
// gains and no momentum.
//
// P must be symmetric (it is not checked) and is used as P/ΣP. The repulsion
// is summed exactly for fewer than 1,000 points and otherwise by
// FFT-accelerated interpolation (Linderman et al. 2019) with the near field
// summed exactly (Phillips & White 1997), to a relative error of about 1e-4.
// With
// p.Attraction = +Inf, Run returns the spectral layout of P (Spectral) turned
// and scaled to match init by ScaleLike, or with unit standard deviation when
// init is nil.
//
// publish, when not nil, is called from Run's goroutine with snapshots: after
// the first iteration, then at most once per p.SnapshotEvery, and with Done
// set after the last iteration. It must return quickly; the layout it receives
// is its own.
//
// Run checks ctx every iteration and inside the long passes; when ctx is
// cancelled it returns within a few milliseconds the layout of the last
// completed iteration and ctx.Err(). Bad input returns an *AffinityError,
// *LayoutError or *ParamError.
func Run(ctx context.Context, P *sparse.CSR, init []float32, p Params, publish func(Snapshot)) ([]float32, error) {
	if err := p.check(); err != nil {
		return nil, err
	}
	n := -1
	if init != nil {
		if len(init)%2 != 0 {
			return nil, &LayoutError{What: "initial layout", Point: -1, Err: ErrShape}
		}
		n = len(init) / 2
	}
	a, err := checkAffinity(P, n, p.Threads)
	if err != nil {
		return nil, err
	}
	return run(ctx, a, init, p, publish)
}

// Checked is an affinity matrix that CheckAffinities found fit for Run, with
// the sums the optimiser needs: a caller that runs the optimiser again and
// again on the same P (the window, with every turn of the dial) checks it
// once and saves each run a pass over P.
type Checked struct {
	p   *sparse.CSR
	sum float64
}

// CheckAffinities checks P as Run does (threads < 1: all processors). P must
// not be modified afterwards while the result is used.
func CheckAffinities(P *sparse.CSR, threads int) (*Checked, error) {
	a, err := checkAffinity(P, -1, parallel.Threads(threads))
	if err != nil {
		return nil, err
	}
	return &Checked{p: a.CSR, sum: a.sum}, nil
}

// RunChecked is Run on affinities checked by CheckAffinities; it gives the
// same layout as Run on the same P, bit for bit.
func RunChecked(ctx context.Context, c *Checked, init []float32, p Params, publish func(Snapshot)) ([]float32, error) {
	if err := p.check(); err != nil {
		return nil, err
	}
	if init != nil && len(init) != 2*c.p.Rows {
		return nil, &LayoutError{What: "initial layout", Point: -1, Err: ErrShape}
	}
	return run(ctx, &affinities{CSR: c.p, sum: c.sum}, init, p, publish)
}

// run optimises on checked affinities; see Run.
func run(ctx context.Context, a *affinities, init []float32, p Params, publish func(Snapshot)) ([]float32, error) {
	P := a.CSR
	if math.IsInf(p.Attraction, 1) {
		return runSpectral(ctx, P, init, p, publish)
	}
	var (
		y   []float64
		err error
	)
	if init != nil {
		if y, err = toFloat64(init, "initial layout"); err != nil {
			return nil, err
		}
	} else {
		y = randomLayout(P.Rows, p.Seed)
	}
	o := newOptimizer(a, y, p)
	defer o.close()
	if p.Start.fits(a, init, p) {
		o.start = p.Start
	}
	return o.run(ctx, publish)
}

// check validates p and fills in defaults.
func (p *Params) check() error {
	switch {
	case math.IsNaN(p.Attraction) || !(p.Attraction > 0) || math.IsInf(p.Attraction, -1):
		return &ParamError{Name: "Attraction", Value: p.Attraction, Reason: "must be positive (+Inf for the spectral layout)"}
	case p.Iterations < 0:
		return &ParamError{Name: "Iterations", Value: float64(p.Iterations), Reason: "must not be negative"}
	case p.EarlyIterations < 0:
		return &ParamError{Name: "EarlyIterations", Value: float64(p.EarlyIterations), Reason: "must not be negative"}
	case math.IsNaN(p.EarlyExaggeration) || p.EarlyExaggeration < 0 || math.IsInf(p.EarlyExaggeration, 0):
		return &ParamError{Name: "EarlyExaggeration", Value: p.EarlyExaggeration, Reason: "must be positive and finite"}
	case math.IsNaN(p.LearningRate) || p.LearningRate < 0 || math.IsInf(p.LearningRate, 0):
		return &ParamError{Name: "LearningRate", Value: p.LearningRate, Reason: "must be positive and finite (0 for automatic)"}
	case p.SnapshotEvery < 0:
		return &ParamError{Name: "SnapshotEvery", Value: p.SnapshotEvery.Seconds(), Reason: "must not be negative"}
	}
	if p.Tail == 0 {
		p.Tail = 1
	}
	if err := checkTail(p.Tail); err != nil {
		return err
	}
	if p.Iterations == 0 {
		p.Iterations = DefaultIterations
	}
	if p.EarlyIterations > p.Iterations {
		return &ParamError{Name: "EarlyIterations", Value: float64(p.EarlyIterations), Reason: "must not exceed Iterations"}
	}
	if p.EarlyExaggeration == 0 {
		p.EarlyExaggeration = DefaultEarlyExaggeration
	}
	if p.SnapshotEvery == 0 {
		p.SnapshotEvery = DefaultSnapshotEvery
	}
	p.Threads = parallel.Threads(p.Threads)
	return nil
}

// randomLayout returns n points drawn from N(0, initialStd² I) with seed.
func randomLayout(n int, seed int64) []float64 {
	rng := rand.New(rand.NewPCG(uint64(seed), 0x1a70_0a7))
	y := make([]float64, 2*n)
	for i := range y {
		y[i] = initialStd * rng.NormFloat64()
	}
	return y
}

// runSpectral answers Run at infinite attraction.
func runSpectral(ctx context.Context, P *sparse.CSR, init []float32, p Params, publish func(Snapshot)) ([]float32, error) {
	layout, _, err := Spectral(ctx, P, p.Threads)
	if err != nil {
		return nil, err
	}
	if init != nil {
		if layout, err = ScaleLike(layout, init); err != nil {
			return nil, err
		}
	}
	if publish != nil {
		publish(Snapshot{Layout: append([]float32(nil), layout...), Iteration: 1, Iterations: 1,
			KL: math.NaN(), Attraction: p.Attraction, Settled: true, Done: true})
	}
	return layout, nil
}

// checkTail reports a tail outside [MinTail, MaxTail].
func checkTail(tail float64) error {
	if !(tail >= MinTail && tail <= MaxTail) {
		return &ParamError{Name: "Tail", Value: tail, Reason: fmt.Sprintf("must be from %g to %g (1 for t-SNE)", float64(MinTail), float64(MaxTail))}
	}
	return nil
}
