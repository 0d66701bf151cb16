package prep

import (
	"context"
	"fmt"
	"math"
	"slices"
	"strings"

	"lodestone/compute/atlas"
	"lodestone/compute/parallel"
	"lodestone/compute/progress"
	"lodestone/compute/sparse"
)

// QCOptions are the thresholds of the per-cell and per-gene quality filters.
// A threshold that is off removes nothing.
type QCOptions struct {
	// MinGenes keeps cells with at least this many detected genes (genes
	// with a count above zero). 0 turns the filter off.
	MinGenes int
	// MinCells keeps genes detected in at least this many of the cells
	// that pass the cell filters. 0 turns the filter off.
	MinCells int
	// MinCounts keeps cells with at least this many counts in all. 0 turns
	// the filter off.
	MinCounts float64
	// MaxCounts keeps cells with at most this many counts in all. 0 turns
	// the filter off.
	MaxCounts float64
	// MaxMitoFraction keeps cells whose fraction of counts from
	// mitochondrial genes is at most this. The filter is on only for values
	// strictly between 0 and 1; 1 (or 0) turns it off.
	MaxMitoFraction float64

	// Threads is the number of goroutines to use; 0 means one per processor.
	Threads int
	// Progress, when not nil, receives the progress of QC.
	Progress progress.Func
}

// DefaultQC returns loose filters that are common practice: cells with at
// least 200 detected genes, genes detected in at least 3 cells, no limit on
// counts or on the mitochondrial fraction.
func DefaultQC() QCOptions {
	return QCOptions{MinGenes: 200, MinCells: 3, MaxMitoFraction: 1}
}

func (o *QCOptions) validate() error {
	const stage = "qc"
	switch {
	case o.MinGenes < 0:
		return errOption(stage, "MinGenes = %d is negative", o.MinGenes)
	case o.MinCells < 0:
		return errOption(stage, "MinCells = %d is negative", o.MinCells)
	case !(o.MinCounts >= 0) || math.IsInf(o.MinCounts, 1):
		return errOption(stage, "MinCounts = %v is not a finite number ≥ 0", o.MinCounts)
	case !(o.MaxCounts >= 0) || math.IsInf(o.MaxCounts, 1):
		return errOption(stage, "MaxCounts = %v is not a finite number ≥ 0", o.MaxCounts)
	case o.MaxCounts > 0 && o.MinCounts > o.MaxCounts:
		return errOption(stage, "MinCounts = %v exceeds MaxCounts = %v", o.MinCounts, o.MaxCounts)
	case !(o.MaxMitoFraction >= 0) || math.IsInf(o.MaxMitoFraction, 1):
		return errOption(stage, "MaxMitoFraction = %v is not a finite number ≥ 0", o.MaxMitoFraction)
	}
	return nil
}

// mitoOn reports whether the mitochondrial filter is on.
func (o *QCOptions) mitoOn() bool { return o.MaxMitoFraction > 0 && o.MaxMitoFraction < 1 }

// CellMetrics holds the quality metrics of a set of cells, one value per
// cell, computed over all genes of the input.
type CellMetrics struct {
	TotalCounts   []float32 // sum of the cell's counts (library size)
	DetectedGenes []float32 // number of genes with a count above zero
	MitoFraction  []float32 // counts of mitochondrial genes / TotalCounts; 0 for a cell without counts
}

// FilterStep says how many cells or genes one filter removed. Each cell or
// gene is counted in the first filter that removes it.
type FilterStep struct {
	Name  string // what the filter removes, e.g. "cells with fewer than 200 detected genes"
	Cells int    // cells it removed
	Genes int    // genes it removed
}

// QCReport describes what QC measured and removed.
type QCReport struct {
	Cells, Genes         int // size of the input
	CellsKept, GenesKept int // size after the filters
	MitoGenes            int // genes whose symbol marks them as mitochondrial

	// Filters lists the filters in the order they were applied.
	Filters []FilterStep

	// All holds the metrics of every input cell; Kept holds the same
	// metrics for the kept cells only, in the order of the kept indices.
	All, Kept CellMetrics

	// GeneCells holds, for every input gene, the number of cells that
	// passed the cell filters and have a count above zero for the gene.
	GeneCells []int32
}

// IsMitochondrial reports whether a gene symbol names a mitochondrial gene:
// it starts with "MT-" (human) or "mt-" (mouse), which is common practice.
func IsMitochondrial(symbol string) bool {
	return strings.HasPrefix(symbol, "MT-") || strings.HasPrefix(symbol, "mt-")
}

// Reasons a cell is removed, in the order the filters are applied.
const (
	keepCell uint8 = iota
	cellEmpty
	cellFewCounts
	cellManyCounts
	cellFewGenes
	cellMito
	cellEmptyAfter
)

// QC measures every cell of d.Counts (cells × genes) and applies the quality
// filters of opt in this order:
//
//  1. cells without counts (always);
//  2. cells with fewer than MinCounts counts;
//  3. cells with more than MaxCounts counts;
//  4. cells with fewer than MinGenes detected genes;
//  5. cells whose mitochondrial fraction exceeds MaxMitoFraction;
//  6. genes detected in none of the cells kept so far (always);
//  7. genes detected in fewer than MinCells of the cells kept so far;
//  8. cells left without counts in the kept genes (always).
//
// Filters that are off are skipped and not listed in the report. Step 8
// removes no count of a kept gene, so it cannot undo step 7. A gene is
// mitochondrial when IsMitochondrial accepts its symbol (GeneSymbols, or
// GeneIDs when there are no symbols).
//
// Counts with 16-bit columns and a sparse.Tally (gathered as the file was
// read) are not read again for the totals and the rows per gene: QC looks up
// only the mitochondrial genes of each cell, and counts the genes of the
// cells the cell filters removed when they are fewer than those kept. The
// results equal those of reading every entry, bit for bit. (Column indices
// are then trusted as the builder checked them.)
//
// QC returns the indices of the kept cells and genes, both ascending, and the
// report. Counts must be finite and non-negative; the first bad entry in row
// order is reported as an *Error. When no cell or no gene is left, QC returns
// the report with an *Error wrapping ErrTooFewCells or ErrTooFewGenes.
func QC(ctx context.Context, d *atlas.Dataset, opt QCOptions) (keepCells, keepGenes []int, report *QCReport, err error) {
	const stage = "qc"
	if err := opt.validate(); err != nil {
		return nil, nil, nil, err
	}
	if d == nil || d.Counts == nil {
		return nil, nil, nil, errAt(stage, -1, -1, ErrNoMatrix, "quality control needs a counts matrix")
	}
	m := d.Counts
	if err := checkCounts(stage, m); err != nil {
		return nil, nil, nil, err
	}
	if len(d.CellIDs) != 0 && len(d.CellIDs) != m.Rows {
		return nil, nil, nil, errAt(stage, -1, -1, ErrShape, "%d cell IDs for %d rows", len(d.CellIDs), m.Rows)
	}
	symbols := d.GeneSymbols
	if len(symbols) == 0 {
		symbols = d.GeneIDs
	}
	if len(symbols) != 0 && len(symbols) != m.Cols {
		return nil, nil, nil, errAt(stage, -1, -1, ErrShape, "%d gene names for %d columns", len(symbols), m.Cols)
	}
	mito := make([]bool, m.Cols)
	rep := &QCReport{Cells: m.Rows, Genes: m.Cols}
	for j, s := range symbols {
		if IsMitochondrial(s) {
			mito[j] = true
			rep.MitoGenes++
		}
	}
	threads := parallel.Threads(opt.Threads)
	prog := steps{f: opt.Progress, n: 3}
	// Counts with 16-bit columns and a tally have their totals and their
	// rows per gene counted already: QC reads only the mitochondrial
	// genes of each row, and the removed cells' genes.
	tally := m.Tally
	if m.Real != nil || m.Col32 != nil || tally != nil && (len(tally.RowTotal) != m.Rows || len(tally.ColRows) != m.Cols) {
		tally = nil
	}
	var mitoCols []uint16
	if tally != nil {
		for j, mt := range mito {
			if mt {
				mitoCols = append(mitoCols, uint16(j))
			}
		}
	}

	// Pass 1: per-cell metrics and the cell filters.
	n := m.Rows
	rep.All = CellMetrics{
		TotalCounts:   make([]float32, n),
		DetectedGenes: make([]float32, n),
		MitoFraction:  make([]float32, n),
	}
	reason := make([]uint8, n)
	sp := sparseSplit(m.RowPtr, threads)
	bad := make([]*Error, sp.blocks())
	bufs := newRowBuffers(sp.blocks())
	counter := prog.pass(0, n)
	err = sp.run(ctx, func(lo, hi, b int) {
		if bad[b] != nil {
			return
		}
		for i := lo; i < hi; i++ {
			var total, mt float64
			detected := 0
			if tally != nil {
				total := tally.RowTotal[i]
				detected := int(m.RowPtr[i+1] - m.RowPtr[i])
				frac := 0.0
				if total > 0 && len(mitoCols) > 0 {
					frac = maskedSum(m, i, mitoCols) / total
				}
				rep.All.TotalCounts[i] = float32(total)
				rep.All.DetectedGenes[i] = float32(detected)
				rep.All.MitoFraction[i] = float32(frac)
				reason[i] = cellReason(&opt, total, detected, frac)
				continue
			}
			if m.Real == nil && m.Col32 == nil {
				// Counts with 16-bit columns, read where they are
				// stored: every one is positive, and their sums are
				// exact in any order.
				var ok bool
				if total, mt, ok = countSums(m, i, mito); !ok {
					bad[b] = errAt(stage, i, -1, ErrMalformed, "column outside 0…%d", m.Cols-1)
					return
				}
				detected = int(m.RowPtr[i+1] - m.RowPtr[i])
				frac := 0.0
				if total > 0 {
					frac = mt / total
				}
				rep.All.TotalCounts[i] = float32(total)
				rep.All.DetectedGenes[i] = float32(detected)
				rep.All.MitoFraction[i] = float32(frac)
				reason[i] = cellReason(&opt, total, detected, frac)
				continue
			}
			cols, vals := bufs.counts(m, i, b)
			for k, v := range vals {
				x := float64(v)
				if cols[k] < 0 || int(cols[k]) >= m.Cols {
					bad[b] = errAt(stage, i, int(cols[k]), ErrMalformed, "column outside 0…%d", m.Cols-1)
					return
				}
				if e := checkCount(stage, i, int(cols[k]), x); e != nil {
					bad[b] = e
					return
				}
				if x > 0 {
					detected++
					total += x
					if mito[cols[k]] {
						mt += x
					}
				}
			}
			frac := 0.0
			if total > 0 {
				frac = mt / total
			}
			rep.All.TotalCounts[i] = float32(total)
			rep.All.DetectedGenes[i] = float32(detected)
			rep.All.MitoFraction[i] = float32(frac)
			reason[i] = cellReason(&opt, total, detected, frac)
		}
		counter.Add(int64(hi - lo))
	})
	if err != nil {
		return nil, nil, nil, err
	}
	if err := firstError(bad); err != nil {
		return nil, nil, nil, err
	}

	// Pass 2: detection of each gene among the cells kept so far.
	var kept []int
	for i, r := range reason {
		if r == keepCell {
			kept = append(kept, i)
		}
	}
	rep.GeneCells = make([]int32, m.Cols)
	// With a tally, the genes of the removed cells are taken off the rows
	// per gene when they are fewer than the kept cells: integers, the same
	// counts either way.
	count, sign := kept, int32(1)
	if tally != nil && n-len(kept) < len(kept) {
		count, sign = make([]int, 0, n-len(kept)), -1
		for i, r := range reason {
			if r != keepCell {
				count = append(count, i)
			}
		}
		for j, c := range tally.ColRows {
			rep.GeneCells[j] = int32(c)
		}
	}
	counter = prog.pass(1, len(count))
	kb := evenSplit(len(count), threads, chunkRows)
	partial := make([][]int32, kb.blocks())
	kbufs := newRowBuffers(kb.blocks())
	err = kb.run(ctx, func(lo, hi, b int) {
		if partial[b] == nil {
			partial[b] = make([]int32, m.Cols)
		}
		acc := partial[b]
		for _, i := range count[lo:hi] {
			if m.Col32 == nil {
				// Pass 1 has checked that every stored value is
				// positive.
				for _, c := range m.Col16[m.RowPtr[i]:m.RowPtr[i+1]] {
					acc[c]++
				}
				continue
			}
			cols, vals := kbufs.counts(m, i, b)
			for k, v := range vals {
				if v > 0 {
					acc[cols[k]]++
				}
			}
		}
		counter.Add(int64(hi - lo))
	})
	if err != nil {
		return nil, nil, nil, err
	}
	for _, acc := range partial {
		for j, c := range acc {
			rep.GeneCells[j] += sign * c
		}
	}
	var geneEmpty, geneRare int
	keepGene := make([]bool, m.Cols)
	for j, c := range rep.GeneCells {
		switch {
		case c == 0:
			geneEmpty++
		case int(c) < opt.MinCells:
			geneRare++
		default:
			keepGene[j] = true
			keepGenes = append(keepGenes, j)
		}
	}

	// Pass 3: cells left without counts in the kept genes.
	counter = prog.pass(2, len(kept))
	kb = evenSplit(len(kept), threads, chunkRows)
	kbufs = newRowBuffers(kb.blocks())
	err = kb.run(ctx, func(lo, hi, b int) {
		for _, i := range kept[lo:hi] {
			empty := true
			if m.Col32 == nil {
				for _, c := range m.Col16[m.RowPtr[i]:m.RowPtr[i+1]] {
					if keepGene[c] {
						empty = false
						break
					}
				}
				if empty {
					reason[i] = cellEmptyAfter
				}
				continue
			}
			cols, vals := kbufs.counts(m, i, b)
			for k, v := range vals {
				if v > 0 && keepGene[cols[k]] {
					empty = false
					break
				}
			}
			if empty {
				reason[i] = cellEmptyAfter
			}
		}
		counter.Add(int64(hi - lo))
	})
	if err != nil {
		return nil, nil, nil, err
	}
	for _, i := range kept {
		if reason[i] == keepCell {
			keepCells = append(keepCells, i)
		}
	}
	prog.finish()

	removed := make([]int, cellEmptyAfter+1)
	for _, r := range reason {
		removed[r]++
	}
	add := func(name string, cells, genes int) {
		rep.Filters = append(rep.Filters, FilterStep{Name: name, Cells: cells, Genes: genes})
	}
	add("cells without counts", removed[cellEmpty], 0)
	if opt.MinCounts > 0 {
		add(fmt.Sprintf("cells with fewer than %g counts", opt.MinCounts), removed[cellFewCounts], 0)
	}
	if opt.MaxCounts > 0 {
		add(fmt.Sprintf("cells with more than %g counts", opt.MaxCounts), removed[cellManyCounts], 0)
	}
	if opt.MinGenes > 0 {
		add(fmt.Sprintf("cells with fewer than %d detected genes", opt.MinGenes), removed[cellFewGenes], 0)
	}
	if opt.mitoOn() {
		add(fmt.Sprintf("cells with a mitochondrial fraction above %g", opt.MaxMitoFraction), removed[cellMito], 0)
	}
	add("genes detected in no kept cell", 0, geneEmpty)
	if opt.MinCells > 0 {
		add(fmt.Sprintf("genes detected in fewer than %d cells", opt.MinCells), 0, geneRare)
	}
	add("cells left without counts in the kept genes", removed[cellEmptyAfter], 0)

	rep.CellsKept, rep.GenesKept = len(keepCells), len(keepGenes)
	rep.Kept = CellMetrics{
		TotalCounts:   gather(rep.All.TotalCounts, keepCells),
		DetectedGenes: gather(rep.All.DetectedGenes, keepCells),
		MitoFraction:  gather(rep.All.MitoFraction, keepCells),
	}
	switch {
	case len(keepCells) == 0:
		return keepCells, keepGenes, rep, errAt(stage, -1, -1, ErrTooFewCells, "no cell of %d passes the filters", n)
	case len(keepGenes) == 0:
		return keepCells, keepGenes, rep, errAt(stage, -1, -1, ErrTooFewGenes, "no gene of %d passes the filters", m.Cols)
	}
	return keepCells, keepGenes, rep, nil
}

// countSums returns the sum of the counts of row i of m (counts with 16-bit
// columns) and the sum of those in the columns marked in mito, or false when
// a column is out of range. Counts are whole numbers, so the sums are exact
// (below 2^53) whatever their order.
func countSums(m *sparse.Counts, i int, mito []bool) (total, masked float64, ok bool) {
	lo, hi := m.RowPtr[i], m.RowPtr[i+1]
	small := m.Small[lo:hi]
	var sum, part int64
	large := false
	for k, c := range m.Col16[lo:hi] {
		if int(c) >= m.Cols {
			return 0, 0, false
		}
		s := small[k]
		if s == sparse.LargeMark {
			large = true
			continue
		}
		sum += int64(s)
		if mito[c] {
			part += int64(s)
		}
	}
	total, masked = float64(sum), float64(part)
	if large {
		t, _ := slices.BinarySearch(m.LargeAt, lo)
		for ; t < len(m.LargeAt) && m.LargeAt[t] < hi; t++ {
			v := float64(m.LargeVal[t])
			total += v
			if mito[m.Col16[m.LargeAt[t]]] {
				masked += v
			}
		}
	}
	return total, masked, true
}

// maskedSum returns the sum of the counts of row i of m (counts with 16-bit
// columns) in the columns cols (ascending), found by search: as countSums
// sums them, those below sparse.LargeMark as integers, then the large ones
// in column order.
func maskedSum(m *sparse.Counts, i int, cols []uint16) float64 {
	lo, hi := m.RowPtr[i], m.RowPtr[i+1]
	row := m.Col16[lo:hi]
	n := uint64(len(row))
	var part int64
	large := false
	for _, c := range cols {
		k := sparse.SearchFrom16(row, c, int(uint64(c)*n/uint64(max(1, m.Cols))))
		if k < 0 {
			continue
		}
		if s := m.Small[lo+int64(k)]; s != sparse.LargeMark {
			part += int64(s)
		} else {
			large = true
		}
	}
	sum := float64(part)
	if large {
		for _, c := range cols {
			if k := sparse.SearchFrom16(row, c, int(uint64(c)*n/uint64(max(1, m.Cols)))); k >= 0 && m.Small[lo+int64(k)] == sparse.LargeMark {
				sum += float64(m.Value(lo + int64(k)))
			}
		}
	}
	return sum
}

// cellReason returns the first cell filter of opt that removes a cell with
// the given metrics, or keepCell.
func cellReason(opt *QCOptions, total float64, detected int, mitoFrac float64) uint8 {
	switch {
	case detected == 0:
		return cellEmpty
	case opt.MinCounts > 0 && total < opt.MinCounts:
		return cellFewCounts
	case opt.MaxCounts > 0 && total > opt.MaxCounts:
		return cellManyCounts
	case detected < opt.MinGenes:
		return cellFewGenes
	case opt.mitoOn() && mitoFrac > opt.MaxMitoFraction:
		return cellMito
	}
	return keepCell
}

// checkCount returns an *Error when x, the entry at (row, col), is not a
// finite non-negative number.
func checkCount(stage string, row, col int, x float64) *Error {
	switch {
	case math.IsNaN(x) || math.IsInf(x, 0):
		return errAt(stage, row, col, ErrNotFinite, "%v", x)
	case x < 0:
		return errAt(stage, row, col, ErrNegative, "%v", x)
	}
	return nil
}

// checkCounts returns an *Error wrapping ErrMalformed when the shape, array
// lengths or row pointers of m are wrong. Column indices are checked as
// QC reads them.
func checkCounts(stage string, m *sparse.Counts) error {
	if m == nil {
		return errAt(stage, -1, -1, ErrMalformed, "nil matrix")
	}
	bad := func(format string, args ...any) error { return errAt(stage, -1, -1, ErrMalformed, format, args...) }
	if m.Rows < 0 || m.Cols < 0 || len(m.RowPtr) != m.Rows+1 || m.RowPtr[0] != 0 {
		return bad("%d×%d with %d row pointers", m.Rows, m.Cols, len(m.RowPtr))
	}
	nnz := m.RowPtr[m.Rows]
	for i := 0; i < m.Rows; i++ {
		if m.RowPtr[i+1] < m.RowPtr[i] {
			return bad("row %d has negative length", i)
		}
	}
	cols := int64(len(m.Col16))
	if m.Col32 != nil || m.Cols > sparse.MaxCols16 {
		cols = int64(len(m.Col32))
	}
	vals := int64(len(m.Small))
	if m.Real != nil {
		vals = int64(len(m.Real))
	}
	if cols != nnz || vals != nnz || len(m.LargeAt) != len(m.LargeVal) {
		return bad("%d column indices and %d values for %d entries", cols, vals, nnz)
	}
	return nil
}

// checkCSR returns an *Error wrapping ErrMalformed when m is not a valid CSR
// matrix.
func checkCSR(stage string, m *sparse.CSR) error {
	if m == nil {
		return errAt(stage, -1, -1, ErrMalformed, "nil matrix")
	}
	if err := m.Validate(); err != nil {
		return errAt(stage, -1, -1, ErrMalformed, "%v", err)
	}
	return nil
}

// gather returns x[idx[0]], x[idx[1]], ….
func gather(x []float32, idx []int) []float32 {
	out := make([]float32, len(idx))
	for k, i := range idx {
		out[k] = x[i]
	}
	return out
}
