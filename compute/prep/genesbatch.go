package prep

import (
	"cmp"
	"context"
	"errors"
	"fmt"
	"slices"

	"lodestone/compute/progress"
	"lodestone/compute/sparse"
)

// SelectGenesWithin selects n highly variable genes within each batch and
// combines the selections, as is common practice before integrating batches:
// a gene that differs between batches but not within them (a technical
// shift) then ranks low, where SelectGenes on the pooled cells would rank it
// high. batches holds one code per row of norm (≥ 0).
//
// Each batch with at least two cells and a varying gene is ranked by
// SelectGenes on its rows alone; a gene's rank in the combination is by
//
//  1. the number of batches whose n selected genes include it (more first),
//  2. the mean of its normalised dispersion over the batches where it was
//     ranked (higher first),
//  3. its column (smaller first),
//
// and the first n genes are selected (all ranked genes when fewer). The
// result's Mean and Dispersion are the means over those batches, Score the
// mean normalised dispersion, Bin is −1, Ranked says whether any batch
// ranked the gene, InBatches counts the batches that selected it and
// Batches the batches used. Batches that cannot be ranked are named in
// Notes. It returns an *Error when no batch can be ranked, or when batches
// does not hold one code ≥ 0 per row.
func SelectGenesWithin(ctx context.Context, norm *sparse.CSR, batches []int32, n, threads int, prog progress.Func) (*GeneSelection, error) {
	if err := checkCSR("genes", norm); err != nil {
		return nil, err
	}
	return selectGenesWithin(ctx, csrSource{norm}, batches, n, threads, prog, func(rows []int) (source, error) {
		return csrSource{norm.SelectRows(rows)}, nil
	})
}

// SelectGenesWithinView is SelectGenesWithin for a view of counts
// log-normalised by NormalizeView: each batch is read through a view of its
// rows with their factors, and the selection equals that of
// SelectGenesWithin on the same values held in a CSR matrix.
func SelectGenesWithinView(ctx context.Context, norm *sparse.View, batches []int32, n, threads int, prog progress.Func) (*GeneSelection, error) {
	x, viewRows, cols := norm.Source()
	scale := norm.Scale()
	return selectGenesWithin(ctx, viewSource{norm}, batches, n, threads, prog, func(rows []int) (source, error) {
		sub := make([]int, len(rows))
		var subScale []float64
		if scale != nil {
			subScale = make([]float64, len(rows))
		}
		for k, r := range rows {
			sub[k] = viewRows[r]
			if scale != nil {
				subScale[k] = scale[r]
			}
		}
		v, err := sparse.NewView(x, sub, cols, threads)
		if err == nil {
			v, err = v.WithScale(subScale)
		}
		if err != nil {
			return nil, errAt("genes", -1, -1, ErrMalformed, "%v", err)
		}
		return viewSource{v}, nil
	})
}

// selectGenesWithin is SelectGenesWithin for any source; subset returns
// the source of the given rows.
func selectGenesWithin(ctx context.Context, norm source, batches []int32, n, threads int, prog progress.Func,
	subset func(rows []int) (source, error)) (*GeneSelection, error) {
	const stage = "genes"
	if n < 1 {
		return nil, errOption(stage, "asked for %d genes", n)
	}
	nrows, g := norm.dims()
	if len(batches) != nrows {
		return nil, errAt(stage, -1, -1, ErrShape, "%d batch codes for %d cells", len(batches), nrows)
	}
	var rows [][]int
	for i, b := range batches {
		if b < 0 {
			return nil, errAt(stage, i, -1, ErrOption, "cell %d has no batch", i)
		}
		for int(b) >= len(rows) {
			rows = append(rows, nil)
		}
		rows[b] = append(rows[b], i)
	}
	out := &GeneSelection{Mean: make([]float64, g), Dispersion: make([]float64, g), Score: make([]float64, g),
		Bin: make([]int, g), Ranked: make([]bool, g), InBatches: make([]int, g)}
	ranked := make([]int, g) // batches that ranked each gene
	for b, r := range rows {
		if len(r) == 0 {
			continue
		}
		if err := ctx.Err(); err != nil {
			return nil, err
		}
		src, err := subset(r)
		if err != nil {
			return nil, err
		}
		s, err := selectGenes(ctx, src, n, MeanBins, threads, nil)
		if err != nil {
			if errors.Is(err, ErrTooFewCells) || errors.Is(err, ErrTooFewGenes) {
				out.Notes = append(out.Notes, fmt.Sprintf("batch %d (%d cells) left out of the gene selection: %v", b, len(r), err))
				continue
			}
			return nil, err
		}
		out.Batches++
		for _, j := range s.Genes {
			out.InBatches[j]++
		}
		for j := range g {
			if s.Ranked[j] {
				ranked[j]++
				out.Mean[j] += s.Mean[j]
				out.Dispersion[j] += s.Dispersion[j]
				out.Score[j] += s.Score[j]
			}
		}
		prog.Report(int64(b+1), int64(len(rows)))
	}
	if out.Batches == 0 {
		return nil, errAt(stage, -1, -1, ErrTooFewGenes, "no batch has two cells and a gene that varies among them")
	}
	var genes []int
	for j := range g {
		out.Bin[j] = -1
		if k := ranked[j]; k > 0 {
			out.Ranked[j] = true
			out.Mean[j] /= float64(k)
			out.Dispersion[j] /= float64(k)
			out.Score[j] /= float64(k)
			genes = append(genes, j)
		}
	}
	slices.SortFunc(genes, func(a, b int) int {
		return cmp.Or(cmp.Compare(out.InBatches[b], out.InBatches[a]), cmp.Compare(out.Score[b], out.Score[a]), cmp.Compare(a, b))
	})
	if len(genes) < n {
		out.Notes = append(out.Notes, fmt.Sprintf("asked for %d highly variable genes; only %d genes vary within a batch, all of them kept", n, len(genes)))
		n = len(genes)
	}
	out.Genes = slices.Clone(genes[:n])
	slices.Sort(out.Genes)
	return out, nil
}
