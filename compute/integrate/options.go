package integrate

import (
	"errors"
	"fmt"
	"math"
	"strings"

	"lodestone/compute/atlas"
	"lodestone/compute/progress"
)

// Defaults of the parameters, from the publication's software defaults
// (Korsunsky et al. 2019).
const (
	DefaultTheta     = 2.0  // diversity penalty θ of each batch column
	DefaultLambda    = 1.0  // ridge penalty λ of each batch column
	DefaultSigma     = 0.1  // width σ of the soft assignments
	DefaultRounds    = 10   // rounds of clustering and correction, at most
	DefaultIter      = 20   // clustering iterations per round, at most
	DefaultTolerance = 1e-4 // relative change of the objective between rounds that ends the run
	// DefaultClusterTolerance is the relative change of the objective,
	// between the means of the last two windows of ConvergenceWindow
	// iterations, that ends a round's clustering.
	DefaultClusterTolerance = 1e-5
	DefaultBlockShare       = 0.05 // share of the cells reassigned at a time in (5)
	// ConvergenceWindow is the number of clustering iterations averaged in
	// the convergence test of a round (the block updates make single
	// iterations noisy).
	ConvergenceWindow = 3
	// MaxClustersDefault and CellsPerCluster give the default number of
	// clusters: min(MaxClustersDefault, round(N / CellsPerCluster)), at least 1.
	MaxClustersDefault = 100
	CellsPerCluster    = 30
	// MinBatchCells is the fewest cells a batch level may have: a smaller
	// batch cannot be told apart from a cell state.
	MinBatchCells = 10
)

// Sentinel errors wrapped by the errors of this package; test with
// errors.Is.
var (
	ErrNoColumn       = errors.New("does not exist")
	ErrRepeated       = errors.New("is named twice")
	ErrNotCategorical = errors.New("is not a categorical column")
	ErrMissing        = errors.New("has cells without a value")
	ErrOneBatch       = errors.New("has only one value among the cells: there is nothing to integrate")
	ErrSmallBatch     = errors.New("has a batch with too few cells")
	ErrShape          = errors.New("lengths do not match")
	ErrParam          = errors.New("parameter out of range")
	ErrNotFinite      = errors.New("value is NaN or infinite")
)

// BatchError reports a batch column that cannot be integrated: the column's
// name and one of the sentinel errors, with details.
type BatchError struct {
	Column string
	Detail string // what exactly, e.g. which level is too small
	Err    error
}

func (e *BatchError) Error() string {
	s := fmt.Sprintf("column %q %v", e.Column, e.Err)
	if e.Detail != "" {
		s += " (" + e.Detail + ")"
	}
	return s
}

// Unwrap returns the sentinel error.
func (e *BatchError) Unwrap() error { return e.Err }

// Covariate is one batch column: the level of each cell and the penalties
// of the column.
type Covariate struct {
	Name   string   // the column's name, for messages
	Levels []string // the levels that occur, each in at least MinBatchCells cells
	Codes  []int32  // per cell, an index into Levels
	// Theta is the diversity penalty θ ≥ 0 of (3): 0 lets clusters be
	// made of one batch, larger values push harder for mixed clusters.
	Theta float64
	// Lambda is the ridge penalty λ > 0 of (6): larger values shrink the
	// correction.
	Lambda float64
}

// NewCovariate checks that the annotation column c can name batches and
// returns it as a Covariate with DefaultTheta and DefaultLambda. A column
// must be categorical, give every cell a value, and have at least two levels
// that occur; each level that occurs must hold at least MinBatchCells cells.
// Levels without cells are dropped. Otherwise NewCovariate returns a
// *BatchError naming the column and the problem.
func NewCovariate(c *atlas.Column) (Covariate, error) {
	if c.Kind != atlas.Categorical {
		return Covariate{}, &BatchError{Column: c.Name, Err: ErrNotCategorical,
			Detail: "its values are numbers; batches are named by labels such as donor or run"}
	}
	if m := c.MissingCount(); m > 0 {
		return Covariate{}, &BatchError{Column: c.Name, Err: ErrMissing,
			Detail: fmt.Sprintf("%d of %d cells have no value", m, len(c.Codes))}
	}
	counts := c.Counts()
	keep := make([]int32, len(c.Levels))
	var levels []string
	var small []string
	for l, n := range counts {
		keep[l] = -1
		if n == 0 {
			continue
		}
		if n < MinBatchCells {
			small = append(small, fmt.Sprintf("%q has %d", c.Levels[l], n))
		}
		keep[l] = int32(len(levels))
		levels = append(levels, c.Levels[l])
	}
	if len(levels) < 2 {
		d := "no cells"
		if len(levels) == 1 {
			d = fmt.Sprintf("every cell is %q", levels[0])
		}
		return Covariate{}, &BatchError{Column: c.Name, Err: ErrOneBatch, Detail: d}
	}
	if len(small) > 0 {
		return Covariate{}, &BatchError{Column: c.Name, Err: ErrSmallBatch,
			Detail: fmt.Sprintf("%s; each needs at least %d cells", strings.Join(small, ", "), MinBatchCells)}
	}
	codes := make([]int32, len(c.Codes))
	for i, v := range c.Codes {
		codes[i] = keep[v]
	}
	return Covariate{Name: c.Name, Levels: levels, Codes: codes, Theta: DefaultTheta, Lambda: DefaultLambda}, nil
}

// Options are the parameters of Harmony other than the batch columns. The
// zero value takes the defaults.
type Options struct {
	// Clusters is the number of clusters K; 0 means
	// min(MaxClustersDefault, round(N / CellsPerCluster)), at least 1.
	Clusters int
	// Sigma is the width σ > 0 of the soft assignments in (2) and (5):
	// smaller values make harder assignments. 0 means DefaultSigma.
	Sigma float64
	// Rounds bounds the rounds of clustering and correction; 0 means
	// DefaultRounds.
	Rounds int
	// Iterations bounds the clustering iterations in each round; 0 means
	// DefaultIter.
	Iterations int
	// Tolerance ends the run when the objective falls by less than this
	// share between two rounds; 0 means DefaultTolerance.
	Tolerance float64
	// ClusterTolerance ends a round's clustering when the mean objective of
	// the last ConvergenceWindow iterations falls by less than this share
	// from the window before; 0 means DefaultClusterTolerance.
	ClusterTolerance float64
	// BlockShare is the share of the cells reassigned at a time in (5); 0
	// means DefaultBlockShare.
	BlockShare float64
	// Seed seeds the order of the cells and the initial centroids.
	Seed int64
	// Threads is the number of goroutines; < 1 means all processors. The
	// result is the same for the same seed and thread count.
	Threads int
	// Progress, when not nil, receives the clustering iterations done out
	// of Rounds × (Iterations + 1) (each round's correction counts as one);
	// when the run converges early it jumps to the total.
	Progress progress.Func
}

// DefaultClusters returns the default number of clusters for n cells:
// min(MaxClustersDefault, round(n / CellsPerCluster)), at least 1.
func DefaultClusters(n int) int {
	return max(1, min(MaxClustersDefault, int(math.Round(float64(n)/CellsPerCluster))))
}

// WithDefaults returns o with its zero fields replaced by the defaults,
// except Clusters, whose default depends on the number of cells.
func (o Options) WithDefaults() Options {
	if o.Sigma == 0 {
		o.Sigma = DefaultSigma
	}
	if o.Rounds == 0 {
		o.Rounds = DefaultRounds
	}
	if o.Iterations == 0 {
		o.Iterations = DefaultIter
	}
	if o.Tolerance == 0 {
		o.Tolerance = DefaultTolerance
	}
	if o.ClusterTolerance == 0 {
		o.ClusterTolerance = DefaultClusterTolerance
	}
	if o.BlockShare == 0 {
		o.BlockShare = DefaultBlockShare
	}
	return o
}

// withDefaults returns o with its zero fields replaced by the defaults for n
// cells, or an error naming a field out of range.
func (o Options) withDefaults(n int) (Options, error) {
	if o.Clusters == 0 {
		o.Clusters = DefaultClusters(n)
	}
	o = o.WithDefaults()
	bad := func(name string, v any, want string) error {
		return fmt.Errorf("integrate: %w: %s = %v (want %s)", ErrParam, name, v, want)
	}
	switch {
	case o.Clusters < 1 || o.Clusters > n:
		return o, bad("clusters", o.Clusters, fmt.Sprintf("1 … %d, the number of cells", n))
	case !(o.Sigma > 0) || math.IsInf(o.Sigma, 0):
		return o, bad("sigma", o.Sigma, "a positive number")
	case o.Rounds < 1:
		return o, bad("rounds", o.Rounds, "at least 1")
	case o.Iterations < 1:
		return o, bad("iterations", o.Iterations, "at least 1")
	case !(o.Tolerance > 0) || o.Tolerance >= 1:
		return o, bad("tolerance", o.Tolerance, "in (0, 1)")
	case !(o.ClusterTolerance > 0) || o.ClusterTolerance >= 1:
		return o, bad("cluster tolerance", o.ClusterTolerance, "in (0, 1)")
	case !(o.BlockShare > 0) || o.BlockShare > 1:
		return o, bad("block share", o.BlockShare, "in (0, 1]")
	}
	return o, nil
}
