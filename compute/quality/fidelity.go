package quality

import (
	"context"
	"errors"
	"fmt"
	"math"

	"lodestone/compute/atlas"
)

// Defaults of FidelityOptions: the fields left at zero take these values.
const (
	// DefaultFidelitySample is the number of cells the scores are computed
	// on: enough for two decimals of each score (the standard error of a
	// share over 2,000 cells is at most 0.011), and fast enough to score
	// every map the window shows (all four scores of 70,000 cells in 50
	// dimensions take about 0.9 s on two cores: BenchmarkFidelity70k).
	DefaultFidelitySample = 2000
	// DefaultFidelityK is the neighbourhood compared (common practice for
	// neighbour graphs of single-cell data).
	DefaultFidelityK = 15
)

// FidelityOptions says how Fidelity scores a map. The zero value scores
// DefaultFidelitySample cells drawn with seed 0, with DefaultFidelityK
// neighbours, on all processors, without labels.
type FidelityOptions struct {
	// Sample is the number of cells scored, drawn by Sample(N, Sample,
	// Seed); 0 means DefaultFidelitySample, and N or more means every cell.
	Sample int
	// Seed is the seed of the sample, used as given (0 is a seed like any
	// other). The window and the headless commands pass the atlas's seed.
	Seed int64
	// K is the number of neighbours compared; 0 means DefaultFidelityK.
	K int
	// Threads is the number of goroutines; < 1 means all processors. The
	// neighbour scores do not depend on it; the distance correlation may
	// differ with it in the last bits.
	Threads int
	// Labels, when not nil, holds one category code per cell (−1 for
	// missing), and Fidelity also scores how well a cell's map neighbours
	// predict its label.
	Labels []int32
}

// withDefaults returns o with its zero fields replaced by the defaults.
func (o FidelityOptions) withDefaults() FidelityOptions {
	if o.Sample == 0 {
		o.Sample = DefaultFidelitySample
	}
	if o.K == 0 {
		o.K = DefaultFidelityK
	}
	return o
}

// FidelityScores are the scores of one map, all on the same sample of cells.
type FidelityScores struct {
	Cells int // cells in the sample
	K     int // neighbours compared
	// KNN is the kNN preservation (KNNPreservation): the share of each
	// sampled cell's K nearest neighbours in the data that stay among its K
	// nearest in the map, neighbours taken among all cells.
	KNN float64
	// Trust is the trustworthiness of Venna & Kaski (2001)
	// (Trustworthiness), both spaces restricted to the sample.
	Trust float64
	// Labels is the label accuracy (LabelAccuracy) of the K nearest map
	// neighbours; NaN when no labels were given or no sampled cell has one.
	Labels float64
	// DCor is the distance correlation of Székely, Rizzo & Bakirov (2007)
	// between the Euclidean distances in the data and in the map among the
	// sampled cells: a global score, where the others are local. A few far
	// cells can dominate it.
	DCor float64
}

// Fidelity scores how faithfully layout (2N interleaved coordinates) keeps
// the structure of high (N cells × d features, usually the principal
// components the map was computed from): kNN preservation, trustworthiness,
// label accuracy when o.Labels is set, and distance correlation, all on one
// seeded sample of cells so that the same options give the same numbers in
// the window and on the command line. Zero options take the defaults listed
// at FidelityOptions. Preconditions: the sample holds more than 2K cells;
// labels, when given, one per cell. It returns an error naming the bad input,
// or ctx.Err() when ctx is cancelled (checked before each sampled cell of each
// score).
func Fidelity(ctx context.Context, high *atlas.Dense, layout []float32, o FidelityOptions) (FidelityScores, error) {
	o = o.withDefaults()
	if high == nil || len(high.Data) != high.Rows*high.Cols || high.Cols < 1 {
		return FidelityScores{}, &InputError{Input: "high", Row: -1, Err: ErrShape}
	}
	n := high.Rows
	if o.Sample < 0 {
		return FidelityScores{}, &InputError{Input: "sample", Row: -1, Err: fmt.Errorf("%w: size %d", ErrSample, o.Sample)}
	}
	if o.K < 0 {
		return FidelityScores{}, &InputError{Input: "k", Row: -1, Err: fmt.Errorf("%w: k = %d", ErrK, o.K)}
	}
	if o.Labels != nil && len(o.Labels) != n {
		return FidelityScores{}, &InputError{Input: "labels", Row: -1, Err: fmt.Errorf("%w: %d labels for %d cells", ErrShape, len(o.Labels), n)}
	}
	sample := Sample(n, o.Sample, o.Seed)
	s := FidelityScores{Cells: len(sample), K: o.K, Labels: math.NaN()}
	var err error
	if s.KNN, err = KNNPreservation(ctx, high, layout, o.K, sample, o.Threads); err != nil {
		return FidelityScores{}, err
	}
	if s.Trust, err = Trustworthiness(ctx, high, layout, o.K, sample, o.Threads); err != nil {
		return FidelityScores{}, err
	}
	if o.Labels != nil {
		s.Labels, err = LabelAccuracy(layout, o.Labels, o.K, sample)
		switch {
		case errors.Is(err, ErrNoLabels):
			s.Labels = math.NaN()
		case err != nil:
			return FidelityScores{}, err
		}
		if err := ctx.Err(); err != nil {
			return FidelityScores{}, err
		}
	}
	dim := high.Cols
	rows := make([]float32, len(sample)*dim)
	for r, i := range sample {
		copy(rows[r*dim:(r+1)*dim], high.Row(i))
	}
	if s.DCor, err = distanceCorrelation(ctx, len(sample), o.Threads, denseRows(rows, dim), layoutRows(layout, sample)); err != nil {
		return FidelityScores{}, err
	}
	return s, nil
}
