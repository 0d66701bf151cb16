// Package sampledata generates Lodestone's example atlas: an invented,
// simulated single-cell time course with known structure, for trying the
// program and for testing the stages that should find that structure.
//
// The scenario is invented. It simulates the regrowth of the brine comb, a
// salt-excreting crest on the gill arch of a fictional shore amphibian (the
// glasscrest newt), in the ten days after a moult. A progenitor pool (the
// seedbed state) branches into three lineages: veilward (veil-sprout,
// veil-spread, veil-sheet), brinewell (brine-bud, brine-swell, brine-gland)
// and keelcord (keel-thread, keel-cord). Cells are sampled on days 2, 4, 6, 8
// and 10 and sequenced in two runs. Every cell carries a maturation score in
// [0, 1], its position along its lineage; its state is the one whose
// programme peaks nearest to that score, so the data has both discrete groups
// and continuous paths.
//
// Counts are negative binomial around gene-programme means. For cell c and
// nuclear gene g,
//
//	μ_cg = L_c (1 − f_c) · a_bg exp(Σ_s A_s(t_c) λ_sg) / Σ_h a_bh exp(Σ_s A_s(t_c) λ_sh)
//
// where L_c is the cell's log-normal library size, f_c its share of
// mitochondrial-like counts, a_bg the gene's abundance in run b (run 2
// multiplies it by a per-gene log-normal factor), A_s(t) the activity of
// programme s at maturation t and λ_sg the gene's log fold change in that
// programme. The mitochondrial-like genes share L_c f_c between them.
package sampledata

import (
	"context"
	"fmt"
	"math"
	"slices"

	"lodestone/compute/atlas"
	"lodestone/compute/parallel"
	"lodestone/compute/progress"
	"lodestone/compute/sparse"
)

// QCMinGenes is the loose default quality rule the atlas is built around: a
// cell with fewer detected genes is of low quality. Every cell in
// Truth.LowQuality has fewer detected genes than this.
const QCMinGenes = 200

// Library sizes and mitochondrial-like shares.
const (
	libraryLogSD       = 0.35 // sd of log library size of healthy cells
	mitoMedian         = 0.03 // median share of mitochondrial-like counts, healthy cells
	mitoLogSD          = 0.3  // sd of the log of that share
	lowQualityShare    = 0.012
	lowQualityLibrary  = 140 // median library size of low-quality cells
	lowQualityLogSD    = 0.3
	lowQualityMitoMin  = 0.2 // low-quality cells' mitochondrial share is uniform
	lowQualityMitoMax  = 0.45
	run2Share          = 0.48 // chance that a cell was sequenced in run 2
	chunkCells         = 128  // cells handed to a goroutine at a time
	progressEveryCells = 1024
)

// libraryMedian is the median library size of healthy cells in each run.
var libraryMedian = [2]float64{2200, 2500}

// Limits of Options.
const (
	minGenes = 100
	maxGenes = 100000
	maxCells = 5000000
)

// Options say what to generate.
type Options struct {
	Cells int   // number of cells, 1 … 5,000,000
	Genes int   // number of genes, 100 … 100,000, of which 12 mitochondrial-like
	Seed  int64 // seed of every random draw; the same seed gives the same atlas

	// Threads is the number of goroutines; < 1 means all processors. The
	// atlas does not depend on it.
	Threads int
	// Progress, when not nil, receives the number of cells generated so far.
	Progress progress.Func
}

// DefaultSeed is the seed of the example atlas.
const DefaultSeed = 20240611

// DefaultOptions returns the options of the example atlas: 30,000 cells,
// 2,000 genes and DefaultSeed.
func DefaultOptions() Options {
	return Options{Cells: 30000, Genes: defaultGenes, Seed: DefaultSeed}
}

// Truth is what the generator knows about the atlas it made: the hidden
// parameters that later stages should recover.
type Truth struct {
	// StateProgrammes maps each state name to the genes (column indices,
	// ascending) of its programme, which is up-regulated in that state.
	StateProgrammes map[string][]int
	// LineageProgrammes maps each lineage name (not the progenitor pool) to
	// the genes that rise steadily along that lineage.
	LineageProgrammes map[string][]int
	// MaturationGenes rise with maturation in every lineage.
	MaturationGenes []int
	// Housekeeping genes are highly and steadily expressed in every cell.
	Housekeeping []int
	// Mito are the mitochondrial-like genes, whose symbols start with
	// MitoPrefix.
	Mito []int
	// LogFold is, per gene, the natural-log fold change of its programme at
	// full activity; 0 for genes in no programme.
	LogFold []float64
	// Dispersion is, per gene, the size r of its negative binomial law
	// (variance μ + μ²/r).
	Dispersion []float64
	// BatchFactor is, per gene, the factor by which run 2 multiplies its
	// relative abundance (1 for mitochondrial-like genes).
	BatchFactor []float64

	// LowQuality lists the damaged cells (ascending): few detected genes
	// (fewer than QCMinGenes) and a high mitochondrial-like share.
	LowQuality []int
	// LibrarySize is, per cell, the expected total count L_c.
	LibrarySize []float64
	// MitoFraction is, per cell, the expected share f_c of its counts in the
	// mitochondrial-like genes.
	MitoFraction []float64

	// LibraryLogMean is, per run, the mean of log L_c over healthy cells;
	// LibraryLogSD is its standard deviation.
	LibraryLogMean [2]float64
	LibraryLogSD   float64
	// MitoLogMean and MitoLogSD are the mean and standard deviation of
	// log f_c over healthy cells.
	MitoLogMean, MitoLogSD float64
}

func (o *Options) check() error {
	for _, c := range []struct {
		field    string
		v, lo, h int64
	}{
		{"Cells", int64(o.Cells), 1, maxCells},
		{"Genes", int64(o.Genes), minGenes, maxGenes},
	} {
		if c.v < c.lo || c.v > c.h {
			return &OptionError{Field: c.field, Value: c.v, Min: c.lo, Max: c.h, Err: ErrOption}
		}
	}
	return nil
}

// cellLabels holds the per-cell draws that become annotations and truth.
type cellLabels struct {
	day, lineage, state, batch []int32
	maturation                 []float64
	library, mito              []float64
	lowQuality                 []bool
}

// worker is the scratch space of one goroutine.
type worker struct {
	mean [2][]float64 // per run, the relative abundances, modified per cell and restored
	act  [slotCount]float64
	cols []int32 // the rows generated by this worker, one after another
	vals []float32
}

// Generate builds the example atlas for opt: Counts (cells × genes, integer
// counts stored as float32, zeros not stored), CellIDs, GeneIDs, GeneSymbols
// and the annotation columns day, lineage, state and batch (categorical) and
// maturation (continuous, in [0, 1]). It returns the generator's Truth beside
// it.
//
// The result depends only on opt.Cells, opt.Genes and opt.Seed: it is
// bit-identical for every number of threads. The first k cells of an atlas of
// n ≥ k cells equal the atlas of k cells with the same genes and seed.
//
// Generate returns an *OptionError wrapping ErrOption when opt is out of
// range, and ctx.Err() (wrapped) when ctx ends first.
func Generate(ctx context.Context, opt Options) (*atlas.Dataset, *Truth, error) {
	if err := opt.check(); err != nil {
		return nil, nil, err
	}
	m := newGeneModel(opt.Seed, opt.Genes)
	n := opt.Cells
	lab := cellLabels{
		day: make([]int32, n), lineage: make([]int32, n), state: make([]int32, n), batch: make([]int32, n),
		maturation: make([]float64, n), library: make([]float64, n), mito: make([]float64, n),
		lowQuality: make([]bool, n),
	}
	threads := parallel.Threads(opt.Threads)
	workers := make([]worker, threads)
	chunks := (n + chunkCells - 1) / chunkCells
	chunkWorker := make([]int32, chunks)
	chunkStart := make([]int64, chunks)
	rowLen := make([]int64, n)
	// Room for a worker's share of the rows, with some to spare, so that the
	// buffers rarely grow.
	capacity := int(1.2*m.expectedDetected()) * (n/threads + 2*chunkCells)
	counter := progress.NewCounter(opt.Progress, int64(n), progressEveryCells)
	err := parallel.ForChunks(ctx, n, chunkCells, threads, func(lo, hi, w int) {
		wk := &workers[w]
		if wk.mean[0] == nil {
			wk.mean[0] = slices.Clone(m.abundance[0])
			wk.mean[1] = slices.Clone(m.abundance[1])
			wk.cols = make([]int32, 0, capacity)
			wk.vals = make([]float32, 0, capacity)
		}
		c := lo / chunkCells
		chunkWorker[c] = int32(w)
		chunkStart[c] = int64(len(wk.cols))
		for i := lo; i < hi; i++ {
			before := len(wk.cols)
			m.cell(wk, i, opt.Seed, &lab)
			rowLen[i] = int64(len(wk.cols) - before)
		}
		counter.Add(int64(hi - lo))
	})
	if err != nil {
		return nil, nil, fmt.Errorf("sampledata: generating cells: %w", err)
	}

	counts := &sparse.CSR{Rows: n, Cols: opt.Genes, RowPtr: make([]int64, n+1)}
	for i, l := range rowLen {
		counts.RowPtr[i+1] = counts.RowPtr[i] + l
	}
	nnz := counts.RowPtr[n]
	counts.ColIdx = make([]int32, nnz)
	counts.Val = make([]float32, nnz)
	parallel.For(chunks, threads, func(lo, hi, _ int) {
		for c := lo; c < hi; c++ {
			wk := &workers[chunkWorker[c]]
			dst := counts.RowPtr[c*chunkCells]
			end := counts.RowPtr[min((c+1)*chunkCells, n)]
			src := chunkStart[c]
			copy(counts.ColIdx[dst:end], wk.cols[src:src+end-dst])
			copy(counts.Val[dst:end], wk.vals[src:src+end-dst])
		}
	})
	counter.Finish()

	d := &atlas.Dataset{
		Name:        "brine comb regrowth (invented example)",
		CellIDs:     make([]string, n),
		GeneIDs:     make([]string, opt.Genes),
		GeneSymbols: m.symbols,
		Counts:      counts,
		Annotations: []atlas.Column{
			{Name: ColumnDay, Kind: atlas.Categorical, Levels: slices.Clone(days), Codes: lab.day},
			{Name: ColumnLineage, Kind: atlas.Categorical, Levels: slices.Clone(lineages), Codes: lab.lineage},
			{Name: ColumnState, Kind: atlas.Categorical, Levels: slices.Clone(states), Codes: lab.state},
			{Name: ColumnBatch, Kind: atlas.Categorical, Levels: slices.Clone(batches), Codes: lab.batch},
			{Name: ColumnMaturation, Kind: atlas.Continuous, Values: lab.maturation},
		},
	}
	for i := range d.CellIDs {
		d.CellIDs[i] = cellID(i)
	}
	for g := range d.GeneIDs {
		d.GeneIDs[g] = geneID(g)
	}
	return d, m.truth(&lab), nil
}

// truth assembles the Truth of an atlas from the gene model and the cells.
func (m *geneModel) truth(lab *cellLabels) *Truth {
	t := &Truth{
		StateProgrammes:   make(map[string][]int, len(states)),
		LineageProgrammes: make(map[string][]int, len(paths)),
		MaturationGenes:   slices.Clone(m.programmes[slotMaturation]),
		Housekeeping:      slices.Clone(m.housekeeping),
		LogFold:           m.logFold,
		Dispersion:        m.size,
		BatchFactor:       m.factor,
		LibrarySize:       lab.library,
		MitoFraction:      lab.mito,
		LibraryLogMean:    [2]float64{math.Log(libraryMedian[0]), math.Log(libraryMedian[1])},
		LibraryLogSD:      libraryLogSD,
		MitoLogMean:       math.Log(mitoMedian),
		MitoLogSD:         mitoLogSD,
	}
	for s, name := range states {
		t.StateProgrammes[name] = slices.Clone(m.programmes[s])
	}
	for l := range paths {
		t.LineageProgrammes[lineages[l+1]] = slices.Clone(m.programmes[slotRamp0+l])
	}
	for g := m.nuclear; g < m.genes; g++ {
		t.Mito = append(t.Mito, g)
	}
	for i, lq := range lab.lowQuality {
		if lq {
			t.LowQuality = append(t.LowQuality, i)
		}
	}
	return t
}

// expectedDetected returns the expected number of detected genes of a
// healthy cell of median library size in run 1 whose programmes are off:
//
//	Σ_g 1 − (r_g/(r_g+μ_g))^(r_g).
func (m *geneModel) expectedDetected() float64 {
	var d float64
	library := libraryMedian[0]
	for g, a := range m.abundance[0] {
		mu, r := library*(1-mitoMedian)*a/m.total[0], m.size[g]
		d += 1 - powSize(r/(r+mu), r)
	}
	for j, sh := range m.mitoShare {
		mu, r := library*mitoMedian*sh, m.size[m.nuclear+j]
		d += 1 - powSize(r/(r+mu), r)
	}
	return d
}

// cell draws cell i: its labels into lab and its row of counts onto the
// worker's buffers.
func (m *geneModel) cell(wk *worker, i int, seed int64, lab *cellLabels) {
	s := newStream(seed, purposeCells, uint64(i))
	b := 0
	if s.uniform() < run2Share {
		b = 1
	}
	day := s.pick(dayWeights)
	lineage, t := 0, commitAt*s.uniform()
	if s.uniform() >= progenitorShare[day] {
		lineage = 1 + s.pick(lineageWeights)
		mean := dayMaturation[day]
		t = commitAt + (1-commitAt)*s.beta(mean*maturationConcentration, (1-mean)*maturationConcentration)
	}
	state := seedbedState
	if lineage > 0 {
		state = nearestState(&paths[lineage-1], t)
	}
	lowQuality := s.uniform() < lowQualityShare

	// Programme activities.
	clear(wk.act[:])
	wk.act[seedbedState] = activity(t, seedbedCentre)
	wk.act[slotMaturation] = t
	if lineage > 0 {
		p := &paths[lineage-1]
		for j, st := range p.states {
			wk.act[st] = activity(t, p.centres[j])
		}
		wk.act[slotRamp0+lineage-1] = (t - commitAt) / (1 - commitAt)
	}
	mean := wk.mean[b]
	total := m.total[b]
	for _, g := range m.active[lineage] {
		base := m.abundance[b][g]
		v := base * math.Exp(wk.act[m.slot[g]]*m.logFold[g])
		mean[g] = v
		total += v - base
	}

	var library, mito float64
	for {
		start := len(wk.cols)
		if lowQuality {
			library = lowQualityLibrary * math.Exp(lowQualityLogSD*s.normal())
			mito = lowQualityMitoMin + (lowQualityMitoMax-lowQualityMitoMin)*s.uniform()
		} else {
			library = libraryMedian[b] * math.Exp(libraryLogSD*s.normal())
			mito = mitoMedian * math.Exp(mitoLogSD*s.normal())
		}
		scale := library * (1 - mito) / total
		for g, v := range mean {
			if k := s.negBinomial(scale*v, m.size[g]); k > 0 {
				wk.cols = append(wk.cols, int32(g))
				wk.vals = append(wk.vals, float32(k))
			}
		}
		scale = library * mito
		for j, sh := range m.mitoShare {
			g := m.nuclear + j
			if k := s.negBinomial(scale*sh, m.size[g]); k > 0 {
				wk.cols = append(wk.cols, int32(g))
				wk.vals = append(wk.vals, float32(k))
			}
		}
		// A damaged cell is one whose capture yielded few genes: draw again
		// until it does (each draw succeeds with high probability).
		if !lowQuality || len(wk.cols)-start < QCMinGenes {
			break
		}
		wk.cols = wk.cols[:start]
		wk.vals = wk.vals[:start]
	}
	for _, g := range m.active[lineage] {
		mean[g] = m.abundance[b][g]
	}

	lab.day[i] = int32(day)
	lab.lineage[i] = int32(lineage)
	lab.state[i] = int32(state)
	lab.batch[i] = int32(b)
	lab.maturation[i] = t
	lab.library[i] = library
	lab.mito[i] = mito
	lab.lowQuality[i] = lowQuality
}
