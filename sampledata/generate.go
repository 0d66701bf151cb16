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

// libraryMedian is the median library size of healthy cells in each run:
// run 2 captured fewer molecules per cell.
var libraryMedian = [2]float64{1700, 1300}

// Limits of Options.
const (
	minGenes = 100
	maxGenes = 100000
	maxCells = 2000000
)

// Options say what to generate.
type Options struct {
	Cells int   // number of cells, 1 … 2,000,000
	Genes int   // number of genes, 100 … 100,000, of which 12 mitochondrial-like
	Seed  int64 // seed of every random draw; the same seed gives the same atlas

	// Threads is the number of goroutines; < 1 means all processors. The
	// atlas does not depend on it.
	Threads int
	// Progress, when not nil, receives the number of cells generated so far.
	Progress progress.Func
}

// DefaultSeed is the seed of the example atlas.
const DefaultSeed = 52963

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
	// relative abundance (1 for mitochondrial-like genes): a log-normal
	// capture factor, times the handling fold change for HandlingGenes.
	BatchFactor []float64
	// HandlingGenes are raised in run 2 only, in every state (a response to
	// its handling): with the capture factors and run 2's smaller
	// libraries, the batch effect between the runs.
	HandlingGenes []int

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
// counts, zeros not stored), CellIDs, GeneIDs, GeneSymbols and the annotation
// columns day, lineage, state and batch (categorical) and maturation
// (continuous, in [0, 1]). It returns the generator's Truth beside it.
//
// The result depends only on opt.Cells, opt.Genes and opt.Seed: it is
// bit-identical for every number of threads. The first k cells of an atlas of
// n ≥ k cells equal the atlas of k cells with the same genes and seed.
//
// Generate returns an *OptionError wrapping ErrOption when opt is out of
// range, and ctx.Err() (wrapped) when ctx ends first.
func Generate(ctx context.Context, opt Options) (*atlas.Dataset, *Truth, error) {
	var b *sparse.CountsBuilder
	d, t, err := Stream(ctx, opt, func(r Rows) error {
		if b == nil {
			b = sparse.NewCountsBuilder(opt.Cells, opt.Genes, int64(1.05*r.Detected*float64(opt.Cells)))
		}
		for i := 0; i+1 < len(r.RowPtr); i++ {
			for k := r.RowPtr[i]; k < r.RowPtr[i+1]; k++ {
				b.Add(int(r.Cols[k]), r.Vals[k])
			}
			b.EndRow()
		}
		return nil
	})
	if err != nil {
		return nil, nil, err
	}
	d.Counts = b.Counts()
	return d, t, nil
}

// Rows is a batch of consecutive cells of a generated atlas as Stream hands
// them out: cell First+i has the genes Cols[RowPtr[i]:RowPtr[i+1]]
// (ascending) with the counts Vals[RowPtr[i]:RowPtr[i+1]].
type Rows struct {
	First  int
	RowPtr []int64 // from 0, one more than the cells of the batch
	Cols   []int32
	Vals   []float32
	// Detected is the expected number of genes a cell of median library
	// size stores, for sizing what the batches fill.
	Detected float64
}

// streamBatch is the number of cells Stream generates between two calls of
// its emit function.
const streamBatch = 64 * chunkCells

// Stream generates the atlas of opt as Generate does, but hands its counts to
// emit batch by batch, in the order of the cells, instead of keeping them:
// memory holds one batch (8,192 cells) at a time, so an atlas of any size
// can be written out. The batches are valid only during the call. It
// returns the dataset without Counts, and the Truth. An error from emit
// stops the generation and is returned.
func Stream(ctx context.Context, opt Options, emit func(Rows) error) (*atlas.Dataset, *Truth, error) {
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
	chunks := streamBatch / chunkCells
	chunkWorker := make([]int32, chunks)
	chunkStart := make([]int64, chunks)
	detected := m.expectedDetected()
	// Room for a worker's share of a batch, with some to spare, so that the
	// buffers rarely grow.
	capacity := int(1.2*detected) * (min(n, streamBatch)/threads + 2*chunkCells)
	counter := progress.NewCounter(opt.Progress, int64(n), progressEveryCells)
	out := Rows{RowPtr: make([]int64, streamBatch+1), Detected: detected}
	for first := 0; first < n; first += streamBatch {
		cells := min(n-first, streamBatch)
		for w := range workers {
			workers[w].cols = workers[w].cols[:0]
			workers[w].vals = workers[w].vals[:0]
		}
		rowLen := out.RowPtr[1 : cells+1]
		err := parallel.ForChunks(ctx, cells, chunkCells, threads, func(lo, hi, w int) {
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
				m.cell(wk, first+i, opt.Seed, &lab)
				rowLen[i] = int64(len(wk.cols) - before)
			}
			counter.Add(int64(hi - lo))
		})
		if err != nil {
			return nil, nil, fmt.Errorf("sampledata: generating cells: %w", err)
		}
		out.First = first
		out.RowPtr[0] = 0
		for i := range cells {
			out.RowPtr[i+1] += out.RowPtr[i]
		}
		nnz := out.RowPtr[cells]
		out.Cols = slices.Grow(out.Cols[:0], int(nnz))[:nnz]
		out.Vals = slices.Grow(out.Vals[:0], int(nnz))[:nnz]
		for c := 0; c*chunkCells < cells; c++ {
			wk := &workers[chunkWorker[c]]
			dst := out.RowPtr[c*chunkCells]
			end := out.RowPtr[min((c+1)*chunkCells, cells)]
			src := chunkStart[c]
			copy(out.Cols[dst:end], wk.cols[src:src+end-dst])
			copy(out.Vals[dst:end], wk.vals[src:src+end-dst])
		}
		batch := out
		batch.RowPtr = out.RowPtr[:cells+1]
		if err := emit(batch); err != nil {
			return nil, nil, err
		}
		clear(out.RowPtr)
	}
	counter.Finish()

	d := &atlas.Dataset{
		Name:        "brine comb regrowth (invented example)",
		CellIDs:     make([]string, n),
		GeneIDs:     make([]string, opt.Genes),
		GeneSymbols: m.symbols,
		Annotations: []atlas.Column{
			{Name: ColumnDay, Kind: atlas.Categorical, Levels: slices.Clone(days[:]), Codes: lab.day},
			{Name: ColumnLineage, Kind: atlas.Categorical, Levels: slices.Clone(lineages[:]), Codes: lab.lineage},
			{Name: ColumnState, Kind: atlas.Categorical, Levels: slices.Clone(states[:]), Codes: lab.state},
			{Name: ColumnBatch, Kind: atlas.Categorical, Levels: slices.Clone(batches[:]), Codes: lab.batch},
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
		HandlingGenes:     slices.Clone(m.handling),
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
	// Every cell has a fate, one of the paths. A progenitor has not yet
	// committed to it but is primed: the path's programmes are already
	// faintly on, so the seedbed runs continuously into each lineage.
	fate := s.pick(lineageWeights)
	p := &paths[fate]
	lineage, state, t := 0, seedbedState, commitAt*s.uniform()
	if s.uniform() >= progenitorShare[day] {
		dm := dayMaturation[day]
		t = commitAt + (1-commitAt)*s.beta(dm*maturationConcentration, (1-dm)*maturationConcentration)
		lineage, state = fate+1, nearestState(p, t)
	}
	lowQuality := s.uniform() < lowQualityShare

	// Programme activities.
	clear(wk.act[:])
	wk.act[seedbedState] = activity(t, seedbedCentre)
	wk.act[slotMaturation] = t
	for j, st := range p.states {
		wk.act[st] = activity(t, p.centres[j])
	}
	if lineage > 0 {
		wk.act[slotRamp0+fate] = (t - commitAt) / (1 - commitAt)
	}
	mean := wk.mean[b]
	total := m.total[b]
	for _, g := range m.active[fate] {
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
	for _, g := range m.active[fate] {
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
