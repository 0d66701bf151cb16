package session

import (
	"context"
	"errors"
	"fmt"

	"lodestone/app/live"
	"lodestone/compute/atlas"
	"lodestone/compute/ingest"
	"lodestone/compute/neighbors"
	"lodestone/compute/pipeline"
	"lodestone/compute/sparse"
	"lodestone/sampledata"
)

// FromSettings stores pipeline settings.
func FromSettings(p pipeline.Settings) Settings {
	return Settings{
		MinGenes: p.Prep.QC.MinGenes, MinCells: p.Prep.QC.MinCells, MinCounts: p.Prep.QC.MinCounts,
		MaxCounts: p.Prep.QC.MaxCounts, MaxMitoFraction: p.Prep.QC.MaxMitoFraction,
		Target: p.Prep.Target, Genes: p.Prep.Genes,
		Components: p.Prep.PCA.Components, Oversample: p.Prep.PCA.Oversample,
		PowerIterations: p.Prep.PCA.PowerIterations, Standardize: p.Prep.PCA.Standardize,
		Perplexity: p.Perplexity, Neighbors: p.Neighbors, Metric: metricName(p.Metric), Method: methodName(p.Method),
		Uniform: p.Uniform, Init: string(p.Init), Seed: p.Seed, Threads: p.Threads,
	}
}

// Pipeline returns the stored settings as pipeline settings.
func (s Settings) Pipeline() (pipeline.Settings, error) {
	p := pipeline.Default()
	p.Prep.QC.MinGenes, p.Prep.QC.MinCells = s.MinGenes, s.MinCells
	p.Prep.QC.MinCounts, p.Prep.QC.MaxCounts, p.Prep.QC.MaxMitoFraction = s.MinCounts, s.MaxCounts, s.MaxMitoFraction
	p.Prep.Target, p.Prep.Genes = s.Target, s.Genes
	p.Prep.PCA.Components, p.Prep.PCA.Oversample = s.Components, s.Oversample
	p.Prep.PCA.PowerIterations, p.Prep.PCA.Standardize = s.PowerIterations, s.Standardize
	p.Perplexity, p.Neighbors, p.Uniform = s.Perplexity, s.Neighbors, s.Uniform
	p.Init, p.Seed, p.Threads = pipeline.Init(s.Init), s.Seed, s.Threads
	var ok bool
	if p.Metric, ok = metrics[s.Metric]; !ok {
		return p, fmt.Errorf("%w: unknown metric %q", ErrCorrupt, s.Metric)
	}
	if p.Method, ok = methods[s.Method]; !ok {
		return p, fmt.Errorf("%w: unknown search method %q", ErrCorrupt, s.Method)
	}
	return p, nil
}

var metrics = map[string]neighbors.Metric{"euclidean": neighbors.Euclidean, "cosine": neighbors.Cosine}
var methods = map[string]neighbors.Method{"auto": neighbors.Auto, "exact": neighbors.ExactSearch, "approximate": neighbors.ApproximateSearch}

func metricName(m neighbors.Metric) string {
	for k, v := range metrics {
		if v == m {
			return k
		}
	}
	return "euclidean"
}

func methodName(m neighbors.Method) string {
	for k, v := range methods {
		if v == m {
			return k
		}
	}
	return "auto"
}

// FromSteps stores a history of runs.
func FromSteps(h []live.Step) []Step {
	out := make([]Step, len(h))
	for i, s := range h {
		out[i] = Step{Kind: string(s.Kind), Attraction: Attraction(s.Attraction), Iterations: s.Iterations, Done: s.Done, Setting: s.Setting, Compact: s.Compact}
	}
	return out
}

// Steps returns the stored history of runs.
func (s *Session) Steps() []live.Step {
	out := make([]live.Step, len(s.History))
	for i, st := range s.History {
		out[i] = live.Step{Kind: live.StepKind(st.Kind), Attraction: float64(st.Attraction), Iterations: st.Iterations, Done: st.Done, Setting: st.Setting, Compact: st.Compact}
	}
	return out
}

// FromColumns stores annotation columns.
func FromColumns(cols []atlas.Column) []Column {
	out := make([]Column, len(cols))
	for i, c := range cols {
		out[i] = Column{Name: c.Name, Kind: c.Kind.String(), Levels: c.Levels, Codes: c.Codes, Values: c.Values}
	}
	return out
}

// Annotations returns the stored annotation columns.
func (s *Session) Annotations() []atlas.Column {
	out := make([]atlas.Column, len(s.Columns))
	for i, c := range s.Columns {
		k := atlas.Continuous
		if c.Kind == "categorical" {
			k = atlas.Categorical
		}
		out[i] = atlas.Column{Name: c.Name, Kind: k, Levels: c.Levels, Codes: c.Codes, Values: c.Values}
	}
	return out
}

// Members lists the cells marked in a selection, ascending.
func Members(cells []bool) []uint32 {
	var out []uint32
	for i, in := range cells {
		if in {
			out = append(out, uint32(i))
		}
	}
	return out
}

// Mask returns the group's cells as one flag per cell of n.
func (g *Group) Mask(n int) []bool {
	out := make([]bool, n)
	for _, m := range g.Members {
		out[m] = true
	}
	return out
}

// Source says where the atlas of a session comes from: the path it was
// opened from, or the example.
func (s *Session) Source() string {
	if s.Example != nil {
		return "the example atlas"
	}
	return s.OpenedPath
}

// ErrNoInputs is returned by Load for a session that names no input.
var ErrNoInputs = errors.New("the session names no input to recompute from")

// Load reads the atlas a session was made from: the example (regenerated
// with its options), or the path it was opened from.
func (s *Session) Load(ctx context.Context, report func(stage string, done, total int64)) (*atlas.Dataset, error) {
	if report == nil {
		report = func(string, int64, int64) {}
	}
	if s.Example != nil {
		opt := sampledata.DefaultOptions()
		opt.Cells, opt.Genes, opt.Seed = s.Example.Cells, s.Example.Genes, s.Example.Seed
		opt.Progress = func(done, total int64) { report("read", done, total) }
		d, _, err := sampledata.Generate(ctx, opt)
		return d, err
	}
	if s.OpenedPath == "" {
		return nil, ErrNoInputs
	}
	return ingest.Open(ctx, s.OpenedPath, ingest.Options{Progress: func(done, total int64) { report("read", done, total) }})
}

// Prepare reads the inputs and reruns the preparation with the stored
// settings; the cells it keeps must be the session's cells.
func (s *Session) Prepare(ctx context.Context, report func(stage string, done, total int64)) (*pipeline.Prepared, *atlas.Dataset, error) {
	set, err := s.Settings.Pipeline()
	if err != nil {
		return nil, nil, err
	}
	d, err := s.Load(ctx, report)
	if err != nil {
		return nil, nil, err
	}
	p, err := pipeline.Prepare(ctx, d, set, report)
	if err != nil {
		return nil, nil, err
	}
	if len(p.CellIDs) != len(s.CellIDs) {
		return nil, nil, fmt.Errorf("the inputs now give %d cells, the session has %d", len(p.CellIDs), len(s.CellIDs))
	}
	for i, id := range p.CellIDs {
		if id != s.CellIDs[i] {
			return nil, nil, fmt.Errorf("cell %d is %q in the inputs but %q in the session", i+1, id, s.CellIDs[i])
		}
	}
	return p, d, nil
}

// Replayer builds the optimiser for each setting (perplexity) of a history,
// growing the neighbour graph as the window did, so that a replay uses the
// same affinities as the runs it repeats.
type Replayer struct {
	p      *pipeline.Prepared
	g      *neighbors.Graph
	cached map[float64]*live.TSNE
}

// NewReplayer returns a Replayer over p (not modified).
func NewReplayer(p *pipeline.Prepared) *Replayer {
	return &Replayer{p: p, g: p.Graph, cached: map[float64]*live.TSNE{}}
}

// Optimizer returns the optimiser for a perplexity.
func (r *Replayer) Optimizer(ctx context.Context, perp float64) (live.Optimizer, error) {
	if t, ok := r.cached[perp]; ok {
		return t, nil
	}
	var P *sparse.CSR
	if perp == r.p.Settings.Perplexity && r.g == r.p.Graph {
		P = r.p.P
	} else {
		q := *r.p
		q.Graph = r.g
		g, newP, _, err := pipeline.Reaffine(ctx, &q, perp)
		if err != nil {
			return nil, err
		}
		r.g, P = g, newP
	}
	t := &live.TSNE{P: P, Seed: r.p.Settings.Seed, Threads: r.p.Settings.Threads}
	r.cached[perp] = t
	return t, nil
}

// Recompute reruns the preparation and replays the history; it returns the
// prepared atlas and the layout it leads to, which for the same seed,
// thread count and platform equals the stored one bit for bit.
func (s *Session) Recompute(ctx context.Context, report func(stage string, done, total int64)) (*pipeline.Prepared, []float32, error) {
	p, _, err := s.Prepare(ctx, report)
	if err != nil {
		return nil, nil, err
	}
	r := NewReplayer(p)
	layout, err := live.Replay(ctx, p.Init, s.Steps(), func(setting float64) (live.Optimizer, error) {
		return r.Optimizer(ctx, setting)
	})
	if err != nil {
		return nil, nil, err
	}
	return p, layout, nil
}
