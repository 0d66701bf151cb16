package prep

import (
	"cmp"
	"context"
	"fmt"
	"math"
	"slices"

	"lodestone/compute/parallel"
	"lodestone/compute/progress"
	"lodestone/compute/sparse"
)

// DefaultGenes is the number of highly variable genes kept by default.
const DefaultGenes = 2000

// MeanBins is the number of bins genes are placed into by their mean
// expression before their dispersions are compared (Zheng et al. 2017).
const MeanBins = 20

// GeneSelection is the result of SelectGenes. The per-gene slices are
// indexed by the columns of the input.
type GeneSelection struct {
	// Genes holds the selected columns, ascending.
	Genes []int
	// Mean and Dispersion hold each gene's mean and variance/mean of the
	// normalised expression on the linear scale, exp(y)−1.
	Mean, Dispersion []float64
	// Score holds each gene's normalised dispersion: its dispersion minus
	// the median dispersion of its bin, divided by the bin's median
	// absolute deviation. It is 0 for genes that are not ranked.
	Score []float64
	// Bin holds each gene's mean bin (0 … MeanBins−1), or −1 for genes
	// that are not ranked.
	Bin []int
	// Ranked reports for each gene whether it took part in the ranking;
	// genes with the same value in every cell (zero variance) do not.
	Ranked []bool
	// Notes says where the selection differs from what was asked.
	Notes []string
	// Batches is the number of batches the genes were selected within and
	// InBatches, per gene, how many of them selected it (SelectGenesWithin);
	// 0 and nil for a selection on all cells pooled.
	Batches   int
	InBatches []int
}

// SelectGenes selects the n most highly variable genes (columns) of norm, a
// cells × genes matrix of log-normalised expression such as Normalize
// returns, by mean-binned normalised dispersion (Zheng et al. 2017,
// Nat. Commun. 8:14049, Methods). The method works on the normalised
// expression before the logarithm, so every value is first mapped back with
// x = exp(y)−1. For gene j over the N cells:
//
//	μ_j = (1/N) Σ_i x_ij
//	σ²_j = 1/(N−1) Σ_i (x_ij − μ_j)²
//	d_j = σ²_j / μ_j                    (dispersion; no logarithm is taken)
//
// Genes whose values are all equal (σ²_j = 0, including genes without
// counts) are not ranked. The ranked genes are sorted by mean (ties by
// column) and cut into MeanBins bins of equal numbers of genes: the gene at
// sorted position r goes to bin ⌊MeanBins·r/m⌋ of m ranked genes, except
// that a gene whose mean equals that of the gene before it joins that gene's
// bin. Within each bin b
//
//	s_j = (d_j − median_b(d)) / median_b(|d − median_b(d)|)
//
// (a median of an even count is the mean of the two middle values; when the
// median absolute deviation of a bin is 0, every gene of the bin scores 0).
// The n genes with the highest scores are selected, ties going to the
// smaller column; when fewer than n genes are ranked, all of them are.
//
// The publication says only that genes are placed into 20 bins by mean;
// equal-count bins keep enough genes in every bin for a median and its
// absolute deviation. Neither the normalisation target nor the N−1 in the
// variance changes the ranking: both scale every dispersion of a bin alike.
//
// Values of norm must be finite and non-negative, norm must have at least two
// rows and n must be at least 1; otherwise SelectGenes returns an *Error.
// threads < 1 means one goroutine per processor; prog, when not nil, receives
// the progress.
func SelectGenes(ctx context.Context, norm *sparse.CSR, n, threads int, prog progress.Func) (*GeneSelection, error) {
	const stage = "genes"
	if err := checkCSR(stage, norm); err != nil {
		return nil, err
	}
	return selectGenes(ctx, csrSource{norm}, n, MeanBins, threads, prog)
}

// SelectGenesView is SelectGenes for a view of counts log-normalised by
// NormalizeView: each value is computed as it is read, and the selection
// equals that of SelectGenes on the same values held in a CSR matrix.
func SelectGenesView(ctx context.Context, norm *sparse.View, n, threads int, prog progress.Func) (*GeneSelection, error) {
	return selectGenes(ctx, viewSource{norm}, n, MeanBins, threads, prog)
}

// selectGenes is SelectGenes with the number of mean bins as a parameter.
func selectGenes(ctx context.Context, norm source, n, bins, threads int, prog progress.Func) (*GeneSelection, error) {
	const stage = "genes"
	if n < 1 {
		return nil, errOption(stage, "asked for %d genes", n)
	}
	rows, g := norm.dims()
	if rows < 2 {
		return nil, errAt(stage, -1, -1, ErrTooFewCells, "%d cells; a variance needs at least 2", rows)
	}
	st, err := linearMoments(ctx, norm, parallel.Threads(threads), prog)
	if err != nil {
		return nil, err
	}
	sel := &GeneSelection{
		Mean:       st.mean,
		Dispersion: make([]float64, g),
		Score:      make([]float64, g),
		Bin:        make([]int, g),
		Ranked:     make([]bool, g),
	}
	var ranked []int
	for j := range g {
		sel.Bin[j] = -1
		if st.constant[j] {
			continue
		}
		sel.Ranked[j] = true
		sel.Dispersion[j] = st.variance[j] / st.mean[j]
		ranked = append(ranked, j)
	}
	if len(ranked) == 0 {
		return nil, errAt(stage, -1, -1, ErrTooFewGenes, "none of %d genes varies across cells", g)
	}

	// Bins of equal numbers of genes by mean; equal means share a bin.
	slices.SortFunc(ranked, func(a, b int) int {
		return cmp.Or(cmp.Compare(sel.Mean[a], sel.Mean[b]), cmp.Compare(a, b))
	})
	m := len(ranked)
	for r, j := range ranked {
		b := bins * r / m
		if r > 0 && sel.Mean[j] == sel.Mean[ranked[r-1]] {
			b = sel.Bin[ranked[r-1]]
		}
		sel.Bin[j] = b
	}
	buf := make([]float64, 0, m)
	for lo := 0; lo < m; {
		hi := lo + 1
		for hi < m && sel.Bin[ranked[hi]] == sel.Bin[ranked[lo]] {
			hi++
		}
		members := ranked[lo:hi]
		buf = buf[:0]
		for _, j := range members {
			buf = append(buf, sel.Dispersion[j])
		}
		med := median(buf)
		for k, j := range members {
			buf[k] = math.Abs(sel.Dispersion[j] - med)
		}
		mad := median(buf)
		if mad > 0 {
			for _, j := range members {
				sel.Score[j] = (sel.Dispersion[j] - med) / mad
			}
		}
		lo = hi
	}

	// The n best scores, ties to the smaller column.
	slices.SortFunc(ranked, func(a, b int) int {
		return cmp.Or(cmp.Compare(sel.Score[b], sel.Score[a]), cmp.Compare(a, b))
	})
	if m < n {
		sel.Notes = append(sel.Notes, fmt.Sprintf("asked for %d highly variable genes; only %d genes vary, all of them kept", n, m))
		n = m
	}
	sel.Genes = slices.Clone(ranked[:n])
	slices.Sort(sel.Genes)
	return sel, nil
}

// median sorts x in place and returns its median, the mean of the two middle
// values when len(x) is even. x must not be empty.
func median(x []float64) float64 {
	slices.Sort(x)
	h := len(x) / 2
	if len(x)%2 == 1 {
		return x[h]
	}
	return (x[h-1] + x[h]) / 2
}

// moments holds per-column statistics of exp(y)−1 over the rows of a matrix.
type moments struct {
	mean, variance []float64
	constant       []bool // every row holds the same value
}

// linearMoments returns the mean, the variance (denominator N−1) and the
// constancy of exp(y)−1 for each column of norm, in two passes (means, then
// squared deviations) with per-block accumulators summed in block order.
func linearMoments(ctx context.Context, norm source, threads int, prog progress.Func) (*moments, error) {
	const stage = "genes"
	n, g := norm.dims()
	sp := sparseSplit(norm.ptr(), threads)
	nb := sp.blocks()
	lin := newLinearRows(norm, nb)
	type acc struct {
		col      []geneSums // per column; one cache line holds a column's sums
		sq       []meanSq
		bad      *Error
		prepared bool
	}
	accs := make([]acc, nb)
	s := steps{f: prog, n: 2}

	counter := s.pass(0, n)
	err := sp.run(ctx, func(lo, hi, b int) {
		a := &accs[b]
		if a.bad != nil {
			return
		}
		if !a.prepared {
			a.col = make([]geneSums, g)
			for j := range a.col {
				a.col[j].lo, a.col[j].hi = math.Inf(1), math.Inf(-1)
			}
			a.prepared = true
		}
		col := a.col
		for i := lo; i < hi; i++ {
			cols, xs := lin.row(i, b)
			for k, x := range xs {
				j := cols[k]
				if !(x >= 0 && x <= math.MaxFloat64) {
					a.bad = checkCount(stage, i, int(j), x)
					return
				}
				c := &col[j]
				c.sum += x
				c.count++
				if x < c.lo {
					c.lo = x
				}
				if x > c.hi {
					c.hi = x
				}
			}
		}
		counter.Add(int64(hi - lo))
	})
	if err != nil {
		return nil, err
	}
	for b := range accs {
		if accs[b].bad != nil {
			return nil, accs[b].bad
		}
	}
	st := &moments{mean: make([]float64, g), variance: make([]float64, g), constant: make([]bool, g)}
	for j := range g {
		var sum float64
		var count int64
		lo, hi := math.Inf(1), math.Inf(-1)
		for b := range accs {
			a := &accs[b]
			if !a.prepared {
				continue
			}
			c := &a.col[j]
			sum += c.sum
			count += c.count
			lo, hi = min(lo, c.lo), max(hi, c.hi)
		}
		st.mean[j] = sum / float64(n)
		switch {
		case count == 0:
			st.constant[j] = true
		case count < int64(n):
			// Unstored entries are zeros.
			st.constant[j] = lo == 0 && hi == 0
		default:
			st.constant[j] = lo == hi
		}
	}

	counter = s.pass(1, n)
	err = sp.run(ctx, func(lo, hi, b int) {
		a := &accs[b]
		if a.sq == nil {
			// Each column's mean beside its sum of squares: one
			// cache line per entry.
			a.sq = make([]meanSq, g)
			for j := range a.sq {
				a.sq[j].mean = st.mean[j]
			}
		}
		sq := a.sq
		for i := lo; i < hi; i++ {
			cols, xs := lin.row(i, b)
			for k, x := range xs {
				c := &sq[cols[k]]
				d := x - c.mean
				c.sq += d * d
			}
		}
		counter.Add(int64(hi - lo))
	})
	if err != nil {
		return nil, err
	}
	s.finish()
	for j := range g {
		if st.constant[j] {
			continue
		}
		var sq float64
		var count int64
		for b := range accs {
			if accs[b].sq != nil {
				sq += accs[b].sq[j].sq
				count += accs[b].col[j].count
			}
		}
		mu := st.mean[j]
		sq += float64(int64(n)-count) * mu * mu
		st.variance[j] = sq / float64(n-1)
	}
	return st, nil
}

// meanSq holds a column's mean and one block's sum of squared deviations
// from it.
type meanSq struct{ mean, sq float64 }

// geneSums holds one block's first-pass sums of one column: the sum and
// number of its stored values and their least and greatest.
type geneSums struct {
	sum, lo, hi float64
	count       int64
}
