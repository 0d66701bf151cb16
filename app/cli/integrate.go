package cli

import (
	"math"
	"strconv"
	"strings"

	"lodestone/compute/integrate"
	"lodestone/compute/pipeline"
)

// integrateFlags are the flags of the integration of samples (Harmony),
// shared by every command that prepares an atlas.
type integrateFlags struct {
	columns, theta, lambda string
	genes                  string
	clusters               int
	sigma, tolerance       float64
	rounds, iterations     int
}

func (f *integrateFlags) register(fs *flags) {
	fs.StringVar(&f.columns, "integrate", "", "correct the principal components for the samples named by this annotation column (Harmony); several columns comma-separated, e.g. donor,protocol")
	fs.StringVar(&f.theta, "integrate-theta", "", "diversity penalty θ of each --integrate column, comma-separated (default "+ftoa(integrate.DefaultTheta)+"): larger values mix samples harder")
	fs.StringVar(&f.lambda, "integrate-lambda", "", "ridge penalty λ of each --integrate column, comma-separated (default "+ftoa(integrate.DefaultLambda)+"): larger values correct less")
	fs.StringVar(&f.genes, "integrate-genes", "within", "with --integrate, select the highly variable genes within each sample of the first column and combine them (within), or on all cells (pooled)")
	fs.IntVar(&f.clusters, "integrate-clusters", 0, "clusters of the integration (0: min(100, cells/30))")
	fs.Float64Var(&f.sigma, "integrate-sigma", integrate.DefaultSigma, "width σ of the integration's soft clusters")
	fs.IntVar(&f.rounds, "integrate-rounds", integrate.DefaultRounds, "rounds of clustering and correction, at most")
	fs.IntVar(&f.iterations, "integrate-iterations", integrate.DefaultIter, "clustering iterations per round, at most")
	fs.Float64Var(&f.tolerance, "integrate-tolerance", integrate.DefaultTolerance, "relative change of the objective between rounds that ends the integration")
}

func ftoa(v float64) string { return strconv.FormatFloat(v, 'g', -1, 64) }

// apply sets s.Integrate from the flags, or returns a usage error. The
// numeric flags' ranges were checked when they were parsed (see bounds).
func (f *integrateFlags) apply(s *pipeline.Settings) error {
	if f.columns == "" {
		if f.theta != "" || f.lambda != "" {
			return usagef("--integrate-theta and --integrate-lambda need --integrate")
		}
		return nil
	}
	var in pipeline.Integration
	for _, c := range strings.Split(f.columns, ",") {
		if c = strings.TrimSpace(c); c == "" {
			return usagef("--integrate %q: an empty column name", f.columns)
		}
		in.Columns = append(in.Columns, c)
	}
	var err error
	if in.Theta, err = perColumn("--integrate-theta", f.theta, len(in.Columns)); err != nil {
		return err
	}
	if in.Lambda, err = perColumn("--integrate-lambda", f.lambda, len(in.Columns)); err != nil {
		return err
	}
	switch f.genes {
	case "within":
	case "pooled":
		in.PooledGenes = true
	default:
		return usagef("--integrate-genes %q: want within or pooled", f.genes)
	}
	in.Clusters, in.Sigma, in.Rounds, in.Iterations, in.Tolerance = f.clusters, f.sigma, f.rounds, f.iterations, f.tolerance
	s.Integrate = in
	return nil
}

// perColumn parses a comma-separated list of positive numbers, one per
// column (empty: the defaults, returned as nil).
func perColumn(name, list string, columns int) ([]float64, error) {
	if list == "" {
		return nil, nil
	}
	parts := strings.Split(list, ",")
	if len(parts) != columns {
		return nil, usagef("%s %q: %d values for %d --integrate columns", name, list, len(parts), columns)
	}
	out := make([]float64, columns)
	for i, p := range parts {
		v, err := strconv.ParseFloat(strings.TrimSpace(p), 64)
		if err != nil || !(v > 0) || math.IsInf(v, 0) {
			return nil, usagef("%s %q: %q is not a positive number", name, list, p)
		}
		out[i] = v
	}
	return out, nil
}
