// Package pipeline chains Lodestone's compute stages from a dataset in
// memory to the inputs of the embedding: quality control, normalisation,
// gene selection and PCA (package prep), the neighbour graph (neighbors), the
// affinities (affinity) and the initial layout (embed).
//
// The window and the headless commands both call Prepare, so every number
// the window shows can be reproduced from the command line.
package pipeline

import (
	"context"
	"errors"
	"fmt"
	"math"
	"runtime"

	"lodestone/compute/affinity"
	"lodestone/compute/atlas"
	"lodestone/compute/cluster"
	"lodestone/compute/embed"
	"lodestone/compute/neighbors"
	"lodestone/compute/prep"
	"lodestone/compute/sparse"
)

// Stage names, in the order Prepare runs them. The prep stages report under
// their own names ("check", "qc", "normalize", "genes", "pca").
const (
	StageNeighbors  = "neighbours"
	StageAffinities = "affinities"
	StageInit       = "initial layout"
)

// Stages lists the stages Prepare reports, in order, with a label for
// people.
var Stages = []struct{ Name, Label string }{
	{"check", "checking the table"},
	{"qc", "quality control"},
	{"normalize", "normalisation"},
	{"genes", "gene selection"},
	{"pca", "principal components"},
	{StageIntegrate, "integrating samples"},
	{StageNeighbors, "nearest neighbours"},
	{StageAffinities, "affinities"},
	{StageInit, "initial layout"},
}

// Init names how the first layout is made.
type Init string

// Initial layouts.
const (
	InitPCA      Init = "pca"      // the first two principal components, scaled to standard deviation 1e-4
	InitSpectral Init = "spectral" // the Laplacian eigenmap of the affinities, scaled likewise
)

// Settings are every parameter of the preparation. The zero value is not
// meaningful; start from Default.
type Settings struct {
	Prep       prep.Options     // quality control, normalisation, genes, PCA
	Perplexity float64          // effective number of neighbours of the affinities
	Neighbors  int              // neighbours in the graph; 0 means ⌈3·Perplexity⌉
	Metric     neighbors.Metric // distance in feature space
	Method     neighbors.Method // exact or approximate search (Auto chooses by size)
	Uniform    bool             // uniform kNN affinities instead of perplexity-calibrated ones
	Init       Init             // how the first layout is made
	Seed       int64            // seeds PCA, integration, the neighbour search and the optimiser
	Threads    int              // goroutines; 0 means all processors
	// Integrate, when on, corrects the principal components for the
	// batches named by annotation columns (Harmony) before the neighbour
	// graph: the graph, the map, clusters and fidelity scores then use the
	// corrected components; expression (gene paint, markers) stays as
	// measured.
	Integrate Integration
}

// Default returns the settings of a new analysis: prep's defaults, perplexity
// 30 on 90 neighbours, Euclidean distance, PCA initialisation, seed 1.
func Default() Settings {
	return Settings{Prep: prep.DefaultOptions(), Perplexity: 30, Init: InitPCA, Seed: 1}
}

// MinCells is the fewest cells a map is made of. The perplexity is at most
// a third of each cell's n − 1 neighbours; with fewer cells it would have to
// fall below MinPerplexity.
const MinCells = 10

// MinPerplexity is the smallest perplexity the preparation lowers a larger
// one to, when there are too few cells for it.
const MinPerplexity = 3

// MaxThreads bounds Threads: each goroutine holds buffers of its own, and
// more goroutines than this gain nothing on any machine Lodestone runs on.
// The bound is fixed, not the processor count, so that a result computed
// with a thread count can be recomputed with it on a smaller machine.
const MaxThreads = 128

// ErrSetting is wrapped by the errors of Settings.Validate.
var ErrSetting = errors.New("setting out of range")

// ErrTooFewCells is wrapped by the error of Features when fewer than
// MinCells cells pass quality control (it is prep's).
var ErrTooFewCells = prep.ErrTooFewCells

// Validate reports the first setting outside its range, naming it: the
// perplexity must be a finite number from 1 (one effective neighbour) to a
// third of neighbors.MaxK; Neighbors 0 (automatic) … neighbors.MaxK; Threads
// 0 (all processors) … MaxThreads; components, genes and the QC thresholds
// as prep checks them.
func (s Settings) Validate() error {
	switch p := s.Perplexity; {
	case math.IsNaN(p) || math.IsInf(p, 0) || p < 1 || p > neighbors.MaxK/3:
		return fmt.Errorf("pipeline: %w: Perplexity = %v: want a number from 1 to %d", ErrSetting, p, neighbors.MaxK/3)
	case s.Neighbors < 0 || s.Neighbors > neighbors.MaxK:
		return fmt.Errorf("pipeline: %w: Neighbors = %d: want 0 (three times the perplexity) to %d", ErrSetting, s.Neighbors, neighbors.MaxK)
	case s.Threads < 0 || s.Threads > MaxThreads:
		return fmt.Errorf("pipeline: %w: Threads = %d: want 0 (all processors) to %d", ErrSetting, s.Threads, MaxThreads)
	case s.Prep.PCA.Components < 0:
		return fmt.Errorf("pipeline: %w: Components = %d is negative", ErrSetting, s.Prep.PCA.Components)
	case s.Prep.Genes < 0:
		return fmt.Errorf("pipeline: %w: Genes = %d is negative", ErrSetting, s.Prep.Genes)
	}
	return nil
}

// GraphK returns the number of neighbours the graph is built with for n
// cells: Neighbors, or ⌈3·Perplexity⌉ (van der Maaten 2014), at most n−1 and
// neighbors.MaxK.
func (s Settings) GraphK(n int) int {
	k := s.Neighbors
	if k <= 0 {
		k = int(math.Ceil(3 * s.Perplexity))
	}
	if k > neighbors.MaxK {
		k = neighbors.MaxK
	}
	if k > n-1 {
		k = n - 1
	}
	return k
}

// Prepared holds everything the embedding and the window need about the
// cells that passed quality control.
type Prepared struct {
	Settings Settings
	Sources  []string    // the files the atlas was read from
	Files    atlas.Files // which of them gave which part
	// CellIDs and Annotations describe the kept cells, in the order of the
	// rows of Features. Annotations holds the input's columns followed by
	// the quality metrics of each cell when the input was counts.
	CellIDs     []string
	Annotations []atlas.Column
	// GeneIDs and GeneSymbols name the columns of Expression.
	GeneIDs, GeneSymbols []string
	// Expression holds the expression shown when the map is painted by a
	// gene and used for marker genes: log-normalised counts of the kept
	// cells and genes (a view of the dataset's counts, each value computed
	// as it is read), or the values of a wide numeric table. It is nil for a
	// narrow table (features used as they are).
	Expression *sparse.View
	Features   *atlas.Dense // the space neighbours are found in (corrected when integrated)
	// Uncorrected holds the principal components before integration, and
	// Integrated how the integration went; both nil without integration.
	Uncorrected *atlas.Dense
	Integrated  *IntegrationReport
	Graph       *neighbors.Graph // GraphK neighbours of every cell
	P           *sparse.CSR      // symmetric affinities summing to 1
	Init        []float32        // the layout fresh runs start from
	Prep        *prep.Result     // reports of quality control, gene selection and PCA
	Notes       []string         // where the preparation differs from what was asked
}

// Cells returns the number of kept cells.
func (p *Prepared) Cells() int { return len(p.CellIDs) }

// Prepare runs the stages from d to the initial layout. report, when not nil,
// receives the progress of each stage by name (see Stages); it may be called
// from several goroutines and must return quickly.
func Prepare(ctx context.Context, d *atlas.Dataset, s Settings, report func(stage string, done, total int64)) (*Prepared, error) {
	if report == nil {
		report = func(string, int64, int64) {}
	}
	out, err := Features(ctx, d, s, report)
	if err != nil {
		return nil, err
	}
	return out, Graph(ctx, out, report)
}

// Features runs the preparation up to the features (quality control,
// normalisation, genes, PCA) and returns a Prepared without graph,
// affinities or initial layout; Graph completes it.
func Features(ctx context.Context, d *atlas.Dataset, s Settings, report func(stage string, done, total int64)) (*Prepared, error) {
	if report == nil {
		report = func(string, int64, int64) {}
	}
	if err := s.Validate(); err != nil {
		return nil, err
	}
	if err := CheckIntegration(d, s.Integrate); err != nil {
		return nil, err
	}
	po := s.Prep
	po.GeneBatches = s.Integrate.geneBatches(d)
	po.Threads = s.Threads
	po.PCA.Seed = s.Seed
	po.Progress = report
	res, err := prep.Prepare(ctx, d, po)
	if err != nil {
		return nil, err
	}
	// PCA leaves its copy of the selected genes' counts and its workspace
	// behind (about 1.5 GB at a million cells): collect them before the
	// neighbour search, as between the later stages.
	runtime.GC()
	if n := len(res.Cells); n < MinCells {
		have := fmt.Sprintf("the table has %d", n)
		if res.QC != nil {
			have = fmt.Sprintf("%d passed quality control (%s)", n, res.QC.Summary())
		}
		if s.Neighbors > 0 { // a graph of fixed k (clustering): no perplexity involved
			asks := ""
			if s.Neighbors > n-1 {
				asks = fmt.Sprintf(", and the graph asks for %d", s.Neighbors)
			}
			return nil, fmt.Errorf("pipeline: %w: a neighbour graph needs at least %d cells, and %s: each has at most %d neighbours%s",
				ErrTooFewCells, MinCells, have, max(n-1, 0), asks)
		}
		return nil, fmt.Errorf("pipeline: %w: a map needs at least %d cells, and %s: with fewer, the perplexity (%g) would have to fall below %d, a third of each cell's %d neighbours",
			ErrTooFewCells, MinCells, have, s.Perplexity, MinPerplexity, MinCells-1)
	}
	out := &Prepared{Settings: s, Sources: d.Sources, Files: d.Files, Prep: res, Features: res.Features, Notes: append([]string(nil), res.Notes...)}
	out.CellIDs = make([]string, len(res.Cells))
	for i, c := range res.Cells {
		out.CellIDs[i] = d.CellIDs[c]
	}
	out.Annotations = subsetColumns(d.Annotations, res.Cells)
	if res.QC != nil {
		out.Annotations = append(out.Annotations,
			continuous("total counts", res.QC.Kept.TotalCounts),
			continuous("detected genes", res.QC.Kept.DetectedGenes),
			continuous("mitochondrial fraction", res.QC.Kept.MitoFraction))
	}
	switch {
	case res.Normalized != nil:
		out.Expression = res.Normalized
		out.GeneIDs = make([]string, len(res.KeptGenes))
		out.GeneSymbols = make([]string, len(res.KeptGenes))
		for j, g := range res.KeptGenes {
			out.GeneIDs[j] = d.GeneIDs[g]
			out.GeneSymbols[j] = d.GeneSymbols[g]
		}
	case d.Table != nil && d.Table.Cols > prep.MaxFeatureColumns:
		out.Expression, err = sparse.NewView(denseRowsToCounts(d.Table, res.Cells), nil, nil, s.Threads)
		if err != nil {
			return nil, err
		}
		out.GeneIDs, out.GeneSymbols = d.GeneIDs, d.GeneSymbols
	}
	if s.Integrate.On() {
		if err := integrateFeatures(ctx, out, s, report); err != nil {
			return nil, err
		}
	}
	return out, nil
}

// Graph completes a Prepared made by Features: the neighbour graph, the
// affinities and the initial layout.
func Graph(ctx context.Context, out *Prepared, report func(stage string, done, total int64)) error {
	if report == nil {
		report = func(string, int64, int64) {}
	}
	s := out.Settings
	n := out.Cells()
	k := s.GraphK(n)
	if k < 1 {
		return fmt.Errorf("pipeline: %d cells passed quality control; at least 2 are needed for a map", n)
	}
	if want := int(math.Ceil(3 * s.Perplexity)); s.Neighbors <= 0 && k < want {
		out.Notes = append(out.Notes, fmt.Sprintf("only %d neighbours per cell are available (perplexity %g asks for %d)", k, s.Perplexity, want))
	}
	g, err := neighbors.Find(ctx, out.Features, neighbors.Options{
		K: k, Metric: s.Metric, Method: s.Method, Seed: s.Seed, Threads: s.Threads,
		Progress: func(done, total int64) { report(StageNeighbors, done, total) },
	})
	if err != nil {
		return fmt.Errorf("nearest neighbours: %w", err)
	}
	out.Graph = g
	// At a million cells the search leaves gigabytes of candidate lists
	// and trees behind, and the affinities allocate as much again: collect
	// the garbage between the stages, so that the peak of the process stays
	// near what is live instead of depending on when the collector last ran.
	runtime.GC()

	report(StageAffinities, 0, 1)
	if s.Uniform {
		out.P, err = affinity.Uniform(g, g.K)
	} else {
		perp := s.Perplexity
		if maxPerp := float64(g.K) / 3; perp > maxPerp {
			out.Notes = append(out.Notes, fmt.Sprintf("perplexity lowered from %g to %.3g to fit %d neighbours", perp, maxPerp, g.K))
			perp = maxPerp
		}
		out.P, err = affinity.Perplexity(ctx, g, perp, s.Threads)
	}
	if err != nil {
		return fmt.Errorf("affinities: %w", err)
	}
	runtime.GC() // the affinities' temporaries, before the layout's arrays
	report(StageAffinities, 1, 1)

	report(StageInit, 0, 1)
	out.Init, err = initialLayout(ctx, out, s)
	if err != nil {
		return fmt.Errorf("initial layout: %w", err)
	}
	report(StageInit, 1, 1)
	return nil
}

func initialLayout(ctx context.Context, p *Prepared, s Settings) ([]float32, error) {
	if s.Init == InitSpectral {
		return embed.SpectralInit(ctx, p.P, s.Threads)
	}
	return embed.InitPCA(p.Features)
}

func continuous(name string, v []float32) atlas.Column {
	c := atlas.Column{Name: name, Kind: atlas.Continuous, Values: make([]float64, len(v))}
	for i, x := range v {
		c.Values[i] = float64(x)
	}
	return c
}

// subsetColumns returns the columns restricted to the given rows.
func subsetColumns(cols []atlas.Column, rows []int) []atlas.Column {
	out := make([]atlas.Column, len(cols))
	for k, c := range cols {
		o := atlas.Column{Name: c.Name, Kind: c.Kind, Levels: c.Levels}
		if c.Kind == atlas.Categorical {
			o.Codes = make([]int32, len(rows))
			for i, r := range rows {
				o.Codes[i] = c.Codes[r]
			}
		} else {
			o.Values = make([]float64, len(rows))
			for i, r := range rows {
				o.Values[i] = c.Values[r]
			}
		}
		out[k] = o
	}
	return out
}

// denseRowsToCounts returns the given rows of m as a sparse matrix of their
// non-zero values.
func denseRowsToCounts(m *atlas.Dense, rows []int) *sparse.Counts {
	b := sparse.NewCountsBuilder(len(rows), m.Cols, 0)
	for _, r := range rows {
		for j, v := range m.Row(r) {
			b.Add(j, v)
		}
		b.EndRow()
	}
	return b.Counts()
}

// Reaffine returns the neighbour graph and affinities for a new perplexity:
// the affinities are recomputed on p's graph when it has at least ⌈3·perp⌉
// neighbours (at most n−1 and neighbors.MaxK), and the graph is first found
// again with that many neighbours when it has fewer. The perplexity used is
// at most a third of the graph's neighbours. p is not modified.
func Reaffine(ctx context.Context, p *Prepared, perp float64) (*neighbors.Graph, *sparse.CSR, float64, error) {
	if perp <= 0 || math.IsNaN(perp) || math.IsInf(perp, 0) {
		return nil, nil, 0, fmt.Errorf("pipeline: perplexity %v must be a positive number", perp)
	}
	g := p.Graph
	need := min(int(math.Ceil(3*perp)), p.Cells()-1, neighbors.MaxK)
	if need > g.K {
		s := p.Settings
		var err error
		g, err = neighbors.Find(ctx, p.Features, neighbors.Options{K: need, Metric: s.Metric, Method: s.Method,
			Seed: s.Seed, Threads: s.Threads})
		if err != nil {
			return nil, nil, 0, fmt.Errorf("nearest neighbours: %w", err)
		}
		runtime.GC() // the search's garbage, as in Graph
	}
	perp = math.Min(perp, float64(g.K)/3)
	P, err := affinity.Perplexity(ctx, g, perp, p.Settings.Threads)
	if err != nil {
		return nil, nil, 0, fmt.Errorf("affinities: %w", err)
	}
	runtime.GC() // the affinities' temporaries, as in Graph
	return g, P, perp, nil
}

// Clusters finds Leiden clusters (Traag et al. 2019) on the union graph of
// each cell's k nearest neighbours in p's features: the same call the
// window makes. Clusters are numbered from 0 by decreasing size.
func Clusters(ctx context.Context, p *Prepared, k int, resolution float64, prog func(done, total int64)) ([]int32, float64, error) {
	s := p.Settings
	g := p.Graph
	if g == nil || g.K < k {
		var err error
		g, err = neighbors.Find(ctx, p.Features, neighbors.Options{K: min(k, p.Cells()-1), Metric: s.Metric, Method: s.Method,
			Seed: s.Seed, Threads: s.Threads})
		if err != nil {
			return nil, 0, fmt.Errorf("nearest neighbours: %w", err)
		}
	}
	a, err := cluster.FromKNN(g, min(k, g.K))
	if err != nil {
		return nil, 0, err
	}
	return cluster.Leiden(ctx, a, cluster.Options{Resolution: resolution, Seed: s.Seed, Progress: prog})
}
