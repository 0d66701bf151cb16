// Package markers finds the genes that distinguish a group of cells from the
// rest, or from a second group: the Wilcoxon rank-sum (Mann–Whitney U) test
// of every gene, its fold change, the share of cells that express it, and
// false-discovery-rate adjusted p-values.
package markers

import (
	"context"
	"fmt"
	"math"
	"slices"
	"sync"

	"lodestone/compute/parallel"
	"lodestone/compute/progress"
	"lodestone/compute/sparse"
)

// Options holds the settings of Rank. The zero value asks for the defaults.
type Options struct {
	// Threads is the number of goroutines; values < 1 mean all processors.
	// The results do not depend on it.
	Threads int

	// Progress, when not nil, receives the number of genes done out of all,
	// from one goroutine at a time.
	Progress progress.Func

	// NoContinuityCorrection drops the continuity correction of the normal
	// approximation. By default |U − n₁n₂/2| is reduced by ½ before it is
	// divided by σ, as scipy.stats.mannwhitneyu does with
	// use_continuity=True.
	NoContinuityCorrection bool

	// Pseudocount is ε in the fold change (see Result). Zero means
	// DefaultPseudocount; it must not be negative.
	Pseudocount float64
}

// DefaultPseudocount is the ε added to both mean expressions in the fold
// change: small enough not to shrink real fold changes, large enough to keep
// the ratio finite when one side does not express the gene at all.
const DefaultPseudocount = 1e-9

// Result is the comparison of one gene between the group (n₁ cells) and the
// reference (n₂ cells), with x the log-normalised expression (log(1+y) of
// normalised counts y):
//
//	U             = R₁ − n₁(n₁+1)/2, R₁ the sum of the group's ranks among all n₁+n₂ cells (ties share mid-ranks)
//	Z             = (U − n₁n₂/2 ∓ ½) / σ, the ½ shrinking |U − n₁n₂/2| (not below 0) unless NoContinuityCorrection
//	σ²            = n₁n₂/12 · [(n+1) − Σ_t (t³ − t) / (n(n−1))], n = n₁+n₂, t the sizes of the tie blocks
//	P             = 2 Φ(−|Z|), two-sided; Z = 0 and P = 1 when all values tie (σ = 0)
//	Q             = P adjusted by BenjaminiHochberg over all genes
//	LogFoldChange = log₂((mean₁(eˣ−1) + ε) / (mean₂(eˣ−1) + ε)), the fold change of mean normalised expression
//	MeanIn        = mean₁(x), MeanOut = mean₂(x), means of the log-normalised values
//	FractionIn    = share of group cells with x > 0, FractionOut likewise for the reference
//
// Z > 0 means higher expression in the group.
type Result struct {
	Gene                    int // column of the expression matrix
	LogFoldChange           float64
	U, Z, P, Q              float64
	FractionIn, FractionOut float64
	MeanIn, MeanOut         float64
}

// Expression is a cells × genes matrix of log-normalised expression, ready
// to compare any number of groups of cells. It reads the values from a view
// (sparse.View) gene range by gene range as each comparison needs them, so
// it holds no copy of the matrix: only the number of entries of each gene
// and, for a log-normalised view of counts, a dictionary of the values of
// small counts (see dictionary).
type Expression struct {
	cells, genes int
	x            *sparse.View
	geneNNZ      []int64     // stored entries of each gene
	dict         *dictionary // nil unless x normalises counts
}

// NewExpression checks x (cells × genes, log-normalised, non-negative) and
// prepares it for comparisons; x is not modified and is kept. It returns an
// *InputError wrapping ErrMatrix when x is nil, or ErrValue at the first
// negative, NaN or infinite value (in cell order), and ctx.Err() when ctx is
// cancelled. Values computed from counts are checked through their factors;
// values held as they are, one by one. It runs on all processors.
func NewExpression(ctx context.Context, x *sparse.View) (*Expression, error) {
	if x == nil {
		return nil, &InputError{What: "expression", Cell: -1, Gene: -1, Err: ErrMatrix}
	}
	cells, genes := x.Dims()
	src, _, _ := x.Source()
	scale := x.Scale()
	for c, s := range scale {
		if !(s >= 0) || math.IsInf(s, 1) {
			return nil, &InputError{What: "expression", Cell: c, Gene: -1,
				Err: fmt.Errorf("%w: normalisation factor %v", ErrValue, s)}
		}
	}
	threads := parallel.Threads(0)
	const chunk = 4096
	nb := (cells + chunk - 1) / chunk
	faults := make([]error, nb)
	partial := make([][]int64, threads)
	err := parallel.ForChunks(ctx, cells, chunk, threads, func(lo, hi, w int) {
		if partial[w] == nil {
			partial[w] = make([]int64, genes)
		}
		nnz := partial[w]
		var cols []int32
		var vals []float32
		for c := lo; c < hi; c++ {
			if !src.IsReal() {
				// Counts are positive, so their values are too: only
				// the columns are needed.
				cols, vals = x.RowCounts(c, cols, vals)
				for _, g := range cols {
					nnz[g]++
				}
				continue
			}
			cols, vals = x.Row(c, cols, vals)
			for p, g := range cols {
				nnz[g]++
				if v := vals[p]; !(v >= 0) || math.IsInf(float64(v), 1) {
					faults[lo/chunk] = &InputError{What: "expression", Cell: c, Gene: int(g),
						Err: fmt.Errorf("%w: %v", ErrValue, v)}
					return
				}
			}
		}
	})
	if err != nil {
		return nil, err
	}
	for _, err := range faults {
		if err != nil {
			return nil, err
		}
	}
	e := &Expression{cells: cells, genes: genes, x: x, geneNNZ: make([]int64, genes)}
	for _, nnz := range partial {
		for g, n := range nnz {
			e.geneNNZ[g] += n
		}
	}
	if !src.IsReal() {
		e.dict = newDictionary(scale)
	}
	return e, ctx.Err()
}

// Cells returns the number of cells.
func (e *Expression) Cells() int { return e.cells }

// Genes returns the number of genes.
func (e *Expression) Genes() int { return e.genes }

// Rank compares every gene of x (cells × genes, log-normalised, non-negative)
// between the cells marked in inGroup and those marked in reference, or all
// other cells when reference is nil. It is NewExpression followed by
// Expression.Rank; to compare several groups, make the Expression once.
func Rank(ctx context.Context, x *sparse.View, inGroup, reference []bool, opt Options) ([]Result, error) {
	e, err := NewExpression(ctx, x)
	if err != nil {
		return nil, err
	}
	return e.Rank(ctx, inGroup, reference, opt)
}

// Rank compares every gene between the cells marked in inGroup and those
// marked in reference (all other cells when reference is nil) by the
// Wilcoxon rank-sum test (Mann & Whitney 1947) with tie correction and the
// normal approximation, as described at Result, and adjusts the p-values for
// the false discovery rate (Benjamini & Hochberg 1995).
//
// The zeros of a gene form one tie block with mid-rank (n₀+1)/2; only its
// non-zero values are sorted. Genes are shared out over opt.Threads
// goroutines, each of which reads the values of up to 512 genes at a time
// in one pass over the cells: it holds their sort keys (4 bytes a value, at
// most 2^24 values) and a cursor per cell, no copy of the matrix.
//
// It returns one Result per gene sorted by descending Z (ties: larger
// LogFoldChange, then smaller gene index), so the genes most raised in the
// group come first and the most lowered last. Masks must have one entry per
// cell; the group and the reference must each hold at least one cell and
// share none. Otherwise Rank returns an *InputError wrapping ErrMaskLength,
// ErrEmptyGroup, ErrEmptyReference or ErrOverlap. It returns ctx.Err() when
// ctx is cancelled.
func (e *Expression) Rank(ctx context.Context, inGroup, reference []bool, opt Options) ([]Result, error) {
	if !(opt.Pseudocount >= 0) || math.IsInf(opt.Pseudocount, 1) {
		return nil, fmt.Errorf("markers: Options.Pseudocount = %v: %w", opt.Pseudocount, ErrOption)
	}
	eps := opt.Pseudocount
	if eps == 0 {
		eps = DefaultPseudocount
	}
	side, n1, n2, err := e.sides(inGroup, reference)
	if err != nil {
		return nil, err
	}
	threads := parallel.Threads(opt.Threads)
	t := test{n1: n1, n2: n2, continuity: !opt.NoContinuityCorrection, eps: eps}
	res := make([]Result, e.genes)
	report := opt.Progress
	if report != nil {
		// The workers count genes done; their reports reach the caller
		// one at a time.
		var mu sync.Mutex
		report = func(done, total int64) {
			mu.Lock()
			defer mu.Unlock()
			opt.Progress(done, total)
		}
	}
	counter := progress.NewCounter(report, int64(e.genes), max(1, int64(e.genes)/100))
	segments := e.segments(threads)
	errs := make([]error, len(segments))
	parallel.For(len(segments), len(segments), func(w, _, _ int) {
		errs[w] = e.rankSegment(ctx, segments[w], side, &t, res, counter)
	})
	for _, err := range errs {
		if err != nil {
			return nil, err
		}
	}
	p := make([]float64, len(res))
	for g := range res {
		p[g] = res[g].P
	}
	for g, q := range BenjaminiHochberg(p, p) {
		res[g].Q = q
	}
	slices.SortFunc(res, func(a, b Result) int {
		switch {
		case a.Z != b.Z:
			return cmpDesc(a.Z, b.Z)
		case a.LogFoldChange != b.LogFoldChange:
			return cmpDesc(a.LogFoldChange, b.LogFoldChange)
		}
		return a.Gene - b.Gene
	})
	counter.Finish()
	return res, nil
}

func cmpDesc(a, b float64) int {
	if a > b {
		return -1
	}
	return 1
}

// Sides of a cell in a comparison.
const (
	outside   = 0
	group     = 1
	reference = 2
)

// sides checks the masks and returns the side of every cell and the sizes of
// the group and the reference.
func (e *Expression) sides(inGroup, ref []bool) ([]uint8, int, int, error) {
	if len(inGroup) != e.cells {
		return nil, 0, 0, &InputError{What: "group", Cell: -1, Gene: -1,
			Err: fmt.Errorf("%w: %d entries for %d cells", ErrMaskLength, len(inGroup), e.cells)}
	}
	if ref != nil && len(ref) != e.cells {
		return nil, 0, 0, &InputError{What: "reference", Cell: -1, Gene: -1,
			Err: fmt.Errorf("%w: %d entries for %d cells", ErrMaskLength, len(ref), e.cells)}
	}
	side := make([]uint8, e.cells)
	n1, n2 := 0, 0
	for c, in := range inGroup {
		switch {
		case in && ref != nil && ref[c]:
			return nil, 0, 0, &InputError{What: "reference", Cell: c, Gene: -1, Err: ErrOverlap}
		case in:
			side[c] = group
			n1++
		case ref == nil || ref[c]:
			side[c] = reference
			n2++
		}
	}
	if n1 == 0 {
		return nil, 0, 0, &InputError{What: "group", Cell: -1, Gene: -1,
			Err: fmt.Errorf("%w: none of %d cells marked", ErrEmptyGroup, e.cells)}
	}
	if n2 == 0 {
		what := "no cell marked"
		if ref == nil {
			what = fmt.Sprintf("the group holds all %d cells", e.cells)
		}
		return nil, 0, 0, &InputError{What: "reference", Cell: -1, Gene: -1,
			Err: fmt.Errorf("%w: %s", ErrEmptyReference, what)}
	}
	return side, n1, n2, nil
}

// test holds what is common to the tests of all genes of one comparison.
type test struct {
	n1, n2     int
	continuity bool
	eps        float64
}

// gene fills r with the comparison of one gene from the sort keys of its
// non-zero values in the group and the reference: keys of values numbered by
// the dictionary d (number above one bit that is 1 for the reference), and
// keys of the other values (their bits, order-preserving for non-negative
// float32, above the same bit). buf (as long as both together) is scratch
// space. The values are walked in ascending order, equal ones of both kinds
// forming one block of ties.
func (t *test) gene(r *Result, known, other, buf []uint32, d *dictionary, memo *expm1Memo) {
	if d != nil {
		known = radixSortBits(known, buf[:len(known)], d.bits+1)
	}
	other = radixSort(other, buf[len(known):len(known)+len(other)])
	nz := len(known) + len(other)
	n1, n2 := float64(t.n1), float64(t.n2)
	n := t.n1 + t.n2
	zeros := n - nz
	// r1 and ties are sums of half-integers and integers below 2^52, exact
	// in any order; sum and sumExp are taken block by block of equal values,
	// in ascending order of the values.
	var r1 float64
	ties := cube(zeros) - int64(zeros)
	var sum, sumExp [3]float64
	nzIn := 0
	i, a, b := 0, 0, 0 // entries ranked; next of known; next of other
	for a < len(known) || b < len(other) {
		var v float32
		var e float64
		in, size := 0, 0
		if b < len(other) && (a == len(known) || math.Float32frombits(other[b]>>1) < d.v[known[a]>>1]) {
			// A block of values outside the dictionary only.
			key := other[b] >> 1
			v, e = math.Float32frombits(key), memo.expm1(key)
			for b < len(other) && other[b]>>1 == key {
				in += int(1 - other[b]&1)
				size++
				b++
			}
		} else {
			// A block of a value of the dictionary, with the equal values
			// outside it.
			id := known[a] >> 1
			v, e = d.v[id], d.e[id]
			a0 := a
			for a < len(known) && known[a]>>1 == id {
				in += int(known[a] & 1)
				a++
			}
			size = a - a0
			in = size - in
			for b < len(other) && math.Float32frombits(other[b]>>1) == v {
				in += int(1 - other[b]&1)
				size++
				b++
			}
		}
		j := i + size
		// The block holds ranks zeros+i+1 … zeros+j.
		r1 += float64(in) * (float64(zeros+i+1) + float64(zeros+j)) / 2
		ties += cube(size) - int64(size)
		x := float64(v)
		sum[group] += float64(in) * x
		sum[reference] += float64(size-in) * x
		sumExp[group] += float64(in) * e
		sumExp[reference] += float64(size-in) * e
		nzIn += in
		i = j
	}
	// Ranks 1…zeros share the mid-rank (zeros+1)/2.
	zerosIn := t.n1 - nzIn
	r1 += float64(zerosIn) * float64(zeros+1) / 2
	u := r1 - n1*(n1+1)/2
	d2 := u - n1*n2/2
	if t.continuity {
		d2 = math.Copysign(max(math.Abs(d2)-0.5, 0), d2)
	}
	// (n+1) − Σ(t³−t)/(n(n−1)) = (n³−n − Σ(t³−t)) / (n(n−1)), the numerator
	// exact in int64 for n below 2·10⁶.
	spread := cube(n) - int64(n) - ties
	z, p := 0.0, 1.0
	if spread > 0 {
		sigma := math.Sqrt(n1 * n2 / 12 * float64(spread) / (float64(n) * float64(n-1)))
		z = d2 / sigma
		p = math.Erfc(math.Abs(z) / math.Sqrt2)
	}
	*r = Result{
		LogFoldChange: math.Log2((sumExp[group]/n1 + t.eps) / (sumExp[reference]/n2 + t.eps)),
		U:             u,
		Z:             z,
		P:             p,
		FractionIn:    float64(nzIn) / n1,
		FractionOut:   float64(nz-nzIn) / n2,
		MeanIn:        sum[group] / n1,
		MeanOut:       sum[reference] / n2,
	}
}

// expm1Memo remembers exp(v)−1 of recent float32 values v by their bits, in
// a direct-mapped table: an atlas of counts holds few distinct values (a
// count times one of few library sizes), and they recur from gene to gene.
type expm1Memo struct {
	bits [1 << memoBits]uint32
	val  [1 << memoBits]float64
}

const memoBits = 16

// expm1 returns math.Expm1 of the float32 with the given bits.
func (m *expm1Memo) expm1(bits uint32) float64 {
	h := (bits * 0x9e3779b1) >> (32 - memoBits)
	if m.bits[h] == bits && bits != 0 {
		return m.val[h]
	}
	e := math.Expm1(float64(math.Float32frombits(bits)))
	m.bits[h], m.val[h] = bits, e
	return e
}

func cube(x int) int64 { return int64(x) * int64(x) * int64(x) }
