package prep

import (
	"context"
	"errors"
	"fmt"
	"math"

	"lodestone/compute/atlas"
	"lodestone/compute/parallel"
	"lodestone/compute/progress"
	"lodestone/compute/sparse"
)

// MaxFeatureColumns is the widest dense table used as features as it is; a
// wider table is reduced by principal component analysis.
const MaxFeatureColumns = atlas.MaxFeatureColumns

// minCells is the least number of cells the preparation can work on: a
// variance needs two.
const minCells = 2

// Options control Prepare.
type Options struct {
	QC QCOptions // quality filters
	// Target is the number of counts each cell is scaled to; 0 means
	// DefaultTarget.
	Target float64
	// Genes is the number of highly variable genes analysed; 0 means
	// DefaultGenes.
	Genes int
	PCA   PCAOptions // principal component analysis
	// GeneBatches, when not nil, holds a batch code (≥ 0) for every cell
	// of the input: the highly variable genes are then selected within each
	// batch and combined (SelectGenesWithin) instead of on all cells.
	GeneBatches []int32
	// Threads, when not zero, is the number of goroutines of every stage,
	// overriding QC.Threads and PCA.Threads.
	Threads int
	// Progress, when not nil, receives the progress of each stage: "check",
	// "qc", "normalize", "genes" or "pca", with the units done and in all
	// within that stage. It may be called from several goroutines at once
	// and must return quickly.
	Progress func(stage string, done, total int64)
}

// DefaultOptions returns the defaults of every stage: DefaultQC, 10,000
// counts per cell, 2,000 genes and DefaultPCA.
func DefaultOptions() Options {
	return Options{QC: DefaultQC(), Target: DefaultTarget, Genes: DefaultGenes, PCA: DefaultPCA()}
}

// Result is the outcome of Prepare.
type Result struct {
	// Cells holds the indices of the kept cells in the input, ascending;
	// row i of Features and Normalized is cell Cells[i].
	Cells []int
	// Features holds the features of the kept cells, len(Cells) × d:
	// principal component scores, or the input table itself when it is
	// narrow enough to be used as it is (then Features aliases it).
	Features *atlas.Dense
	// Normalized holds the log-normalised expression of the kept cells in
	// all kept genes (nil for a table that is not counts): a view of the
	// counts that computes each value as it is read.
	Normalized *sparse.View
	// KeptGenes holds, for each column of Normalized, its gene's index in
	// the input.
	KeptGenes []int
	// QC is the quality report (nil for a table that is not counts).
	QC *QCReport
	// Genes is the selection of highly variable genes; its indices refer
	// to the columns of Normalized (nil for a table that is not counts).
	Genes *GeneSelection
	// PCA is the principal component analysis (nil when the table was used
	// as it is).
	PCA *PCA
	// Notes says where the preparation differs from what was asked.
	Notes []string
}

// Prepare turns a dataset into the features of its cells.
//
// A counts matrix goes through QC, Normalize (to Target counts per cell),
// SelectGenes (Genes genes) and RunPCA on the selected genes; the features
// are the principal component scores. A dense table with at most
// MaxFeatureColumns columns is used as it is. A wider table is treated as
// counts when all its values are non-negative integers, and otherwise reduced
// by DensePCA.
//
// Values must be finite, and at least two cells must remain after QC;
// otherwise Prepare returns an *Error naming the stage and, where there is
// one, the offending entry.
func Prepare(ctx context.Context, d *atlas.Dataset, opt Options) (*Result, error) {
	const stage = "prepare"
	if d == nil || (d.Counts == nil && d.Table == nil) {
		return nil, errAt(stage, -1, -1, ErrNoMatrix, "")
	}
	if opt.Target == 0 {
		opt.Target = DefaultTarget
	}
	if opt.Genes == 0 {
		opt.Genes = DefaultGenes
	}
	if opt.Threads != 0 {
		opt.QC.Threads, opt.PCA.Threads = opt.Threads, opt.Threads
	}
	threads := parallel.Threads(opt.Threads)
	report := func(name string) progress.Func {
		if opt.Progress == nil {
			return nil
		}
		return func(done, total int64) { opt.Progress(name, done, total) }
	}
	opt.QC.Progress = report("qc")
	opt.PCA.Progress = report("pca")

	if d.Counts != nil {
		return prepareCounts(ctx, d, opt, threads, report)
	}

	t := d.Table
	if t.Rows < 0 || t.Cols < 0 || len(t.Data) != t.Rows*t.Cols {
		return nil, errAt(stage, -1, -1, ErrShape, "%d values for a %d × %d table", len(t.Data), t.Rows, t.Cols)
	}
	if len(d.CellIDs) != 0 && len(d.CellIDs) != t.Rows {
		return nil, errAt(stage, -1, -1, ErrShape, "%d cell IDs for %d rows", len(d.CellIDs), t.Rows)
	}
	if t.Rows < minCells {
		return nil, errAt(stage, -1, -1, ErrTooFewCells, "%d cells; at least %d are needed", t.Rows, minCells)
	}
	counts, err := scanTable(ctx, t, threads, report("check"))
	if err != nil {
		return nil, err
	}
	res := &Result{Cells: make([]int, t.Rows)}
	for i := range res.Cells {
		res.Cells[i] = i
	}
	if t.Cols <= MaxFeatureColumns {
		res.Features = t
		res.Notes = append(res.Notes, fmt.Sprintf("the table's %d columns are used as features as they are", t.Cols))
		return res, nil
	}
	if counts {
		c := *d
		c.Table = nil
		c.Counts = denseToCounts(t)
		res, err := prepareCounts(ctx, &c, opt, threads, report)
		if res != nil {
			res.Notes = append([]string{fmt.Sprintf("the %d-column table holds only non-negative integers and is treated as counts", t.Cols)}, res.Notes...)
		}
		return res, err
	}
	p, err := DensePCA(ctx, t, opt.PCA)
	if err != nil {
		return nil, err
	}
	res.PCA, res.Features = p, p.Scores
	res.Notes = append(res.Notes, fmt.Sprintf("the table's %d columns are reduced to %d principal components", t.Cols, p.Scores.Cols))
	res.Notes = append(res.Notes, p.Notes...)
	return res, nil
}

// prepareCounts runs the counts path of Prepare.
func prepareCounts(ctx context.Context, d *atlas.Dataset, opt Options, threads int, report func(string) progress.Func) (*Result, error) {
	const stage = "prepare"
	keepCells, keepGenes, qc, err := QC(ctx, d, opt.QC)
	var pe *Error
	if err != nil && qc != nil && errors.As(err, &pe) && (pe.Err == ErrTooFewCells || pe.Err == ErrTooFewGenes) {
		return nil, errAt("qc", -1, -1, pe.Err, "%s", qc.Summary())
	}
	if err != nil {
		return nil, err
	}
	if len(keepCells) < minCells {
		return nil, errAt(stage, -1, -1, ErrTooFewCells, "at least %d cells are needed; quality control %s", minCells, qc.Summary())
	}
	// The kept cells and genes, then their log-normalised values, are views
	// of the counts: no stage holds a second copy of the matrix.
	sub, err := sparse.NewView(d.Counts, keepCells, keepGenes, threads)
	if err != nil {
		return nil, errAt(stage, -1, -1, ErrMalformed, "%v", err)
	}
	norm, err := NormalizeView(ctx, sub, opt.Target, threads, report("normalize"))
	if err != nil {
		return nil, err
	}
	var sel *GeneSelection
	if opt.GeneBatches != nil {
		if len(opt.GeneBatches) != d.Cells() {
			return nil, errAt(stage, -1, -1, ErrShape, "%d batch codes for %d cells", len(opt.GeneBatches), d.Cells())
		}
		kept := make([]int32, len(keepCells))
		for i, c := range keepCells {
			kept[i] = opt.GeneBatches[c]
		}
		sel, err = SelectGenesWithinView(ctx, norm, kept, opt.Genes, threads, report("genes"))
	} else {
		sel, err = SelectGenesView(ctx, norm, opt.Genes, threads, report("genes"))
	}
	if err != nil {
		return nil, err
	}
	// PCA reads the selected genes many times: it gets a compact copy of
	// their counts, read through the same factors.
	selected := make([]int, len(sel.Genes))
	for k, j := range sel.Genes {
		selected[k] = keepGenes[j]
	}
	pcaCounts := d.Counts.SelectRowsCols(keepCells, selected)
	scale := norm.Scale()
	if pcaCounts.IsReal() {
		// Real values have no small counts to remember the normalised
		// values of: normalise the copy once instead of on every pass.
		parallel.For(pcaCounts.Rows, threads, func(lo, hi, _ int) {
			for i := lo; i < hi; i++ {
				for k := pcaCounts.RowPtr[i]; k < pcaCounts.RowPtr[i+1]; k++ {
					pcaCounts.Real[k] = sparse.LogNorm(pcaCounts.Real[k], scale[i])
				}
			}
		})
		scale = nil
	}
	pcaView, err := sparse.NewView(pcaCounts, nil, nil, threads)
	if err == nil {
		pcaView, err = pcaView.WithScale(scale)
	}
	if err != nil {
		return nil, errAt(stage, -1, -1, ErrMalformed, "%v", err)
	}
	p, err := RunPCAView(ctx, pcaView, opt.PCA)
	if err != nil {
		return nil, err
	}
	res := &Result{
		Cells:      keepCells,
		Features:   p.Scores,
		Normalized: norm,
		KeptGenes:  keepGenes,
		QC:         qc,
		Genes:      sel,
		PCA:        p,
	}
	res.Notes = append(res.Notes, sel.Notes...)
	res.Notes = append(res.Notes, p.Notes...)
	return res, nil
}

// scanTable checks that every value of t is finite and reports whether all
// of them are non-negative integers.
func scanTable(ctx context.Context, t *atlas.Dense, threads int, prog progress.Func) (counts bool, err error) {
	sp := evenSplit(t.Rows, threads, chunkEntries/max(1, t.Cols))
	nb := sp.blocks()
	bad := make([]*Error, nb)
	notCounts := make([]bool, nb)
	counter := progress.NewCounter(prog, int64(t.Rows), int64(t.Rows/100))
	err = sp.run(ctx, func(lo, hi, b int) {
		if bad[b] != nil {
			return
		}
		for i := lo; i < hi; i++ {
			for j, v := range t.Row(i) {
				x := float64(v)
				if math.IsNaN(x) || math.IsInf(x, 0) {
					bad[b] = errAt("prepare", i, j, ErrNotFinite, "%v", x)
					return
				}
				if x < 0 || x != math.Trunc(x) {
					notCounts[b] = true
				}
			}
		}
		counter.Add(int64(hi - lo))
	})
	if err != nil {
		return false, err
	}
	if err := firstError(bad); err != nil {
		return false, err
	}
	counter.Finish()
	for _, nc := range notCounts {
		if nc {
			return false, nil
		}
	}
	return true, nil
}

// denseToCounts returns the non-zero entries of t as a sparse matrix.
func denseToCounts(t *atlas.Dense) *sparse.Counts {
	b := sparse.NewCountsBuilder(t.Rows, t.Cols, 0)
	for i := range t.Rows {
		for j, v := range t.Row(i) {
			b.Add(j, v)
		}
		b.EndRow()
	}
	return b.Counts()
}
