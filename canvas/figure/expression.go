package figure

import (
	"context"
	"math"
	"slices"

	"lodestone/compute/parallel"
	"lodestone/compute/sparse"
)

// ExpressionTable holds, for chosen genes (columns) and the groups of an
// annotation (rows), the share of each group's cells that express each gene
// and the gene's mean expression in the group.
type ExpressionTable struct {
	Genes  []string
	Groups []string
	// Fraction[g][j] is the share of group g's cells with a value > 0 for
	// gene j, and Mean[g][j] the mean value over all of group g's cells;
	// both are NaN for a group without cells.
	Fraction, Mean [][]float64
}

// expressionCheckRows is how many rows a worker of Expression handles
// between looks at its context.
const expressionCheckRows = 1024

// Expression computes the table of genes (columns of X, named geneNames)
// across the groups named groupNames, for cells (rows of X) whose group is
// groupCodes[cell] (−1: in no group, left out):
//
//	Fraction[g][j] = #{c ∈ g : X[c, genes[j]] > 0} / n_g
//	Mean[g][j]     = Σ_{c ∈ g} X[c, genes[j]] / n_g
//
// with n_g the number of cells in group g; a group without cells gets NaN.
// X holds log-normalised values (finite, ≥ 0) and must be a valid CSR
// matrix (X.Validate() == nil: column indices increase within each row);
// genes may repeat. Rows are split into blocks, one per processor, each
// summing into its own accumulators, which are added in block order, so the
// result is the same on every run with the same number of processors.
//
// Expression returns an *InputError wrapping ErrMatrix for a malformed X,
// ErrIndex for a gene or group code out of range (Index is its position),
// ErrLength when geneNames or groupCodes has the wrong length, and ErrValue
// for a negative or non-finite value of a chosen gene (Index is the cell);
// and ctx.Err() when ctx is cancelled.
//
// X is a *sparse.CSR, or any other Matrix (such as a *sparse.View of
// log-normalised counts), of which only the chosen genes are read.
func Expression(ctx context.Context, X Matrix, genes []int, geneNames []string, groupCodes []int32, groupNames []string) (*ExpressionTable, error) {
	if m, ok := X.(*sparse.CSR); ok {
		return expression(ctx, m, genes, geneNames, groupCodes, groupNames)
	}
	if v, ok := X.(*sparse.View); X == nil || ok && v == nil {
		return nil, inputError("X", -1, ErrMatrix)
	}
	_, cols := X.Dims()
	distinct := make([]int, 0, len(genes))
	for j, g := range genes {
		if g < 0 || g >= cols {
			return nil, inputError("genes", j, ErrIndex)
		}
		distinct = append(distinct, g)
	}
	slices.Sort(distinct)
	distinct = slices.Compact(distinct)
	sub, err := X.Columns(distinct, 0)
	if err != nil {
		return nil, inputError("X", -1, ErrMatrix)
	}
	at := make([]int, len(genes))
	for j, g := range genes {
		at[j], _ = slices.BinarySearch(distinct, g)
	}
	return expression(ctx, sub, at, geneNames, groupCodes, groupNames)
}

// Matrix is a cells × genes matrix from which Expression takes the columns
// it needs. *sparse.CSR and *sparse.View are matrices.
type Matrix interface {
	Dims() (rows, cols int)
	// Columns returns the given columns (ascending, distinct) as a CSR
	// matrix with a row per cell and the columns renumbered from 0.
	Columns(cols []int, threads int) (*sparse.CSR, error)
}

// expression is Expression for a CSR matrix.
func expression(ctx context.Context, X *sparse.CSR, genes []int, geneNames []string, groupCodes []int32, groupNames []string) (*ExpressionTable, error) {
	if X == nil || X.Rows < 0 || X.Cols < 0 || len(X.RowPtr) != X.Rows+1 || X.RowPtr[0] != 0 ||
		X.RowPtr[X.Rows] != int64(len(X.ColIdx)) || len(X.Val) != len(X.ColIdx) {
		return nil, inputError("X", -1, ErrMatrix)
	}
	if len(geneNames) != len(genes) {
		return nil, inputError("geneNames", -1, ErrLength)
	}
	if len(groupCodes) != X.Rows {
		return nil, inputError("groupCodes", -1, ErrLength)
	}
	k := len(groupNames)
	for i, c := range groupCodes {
		if c < -1 || int(c) >= k {
			return nil, inputError("groupCodes", i, ErrIndex)
		}
	}
	// Distinct genes in increasing order, and where each requested one is.
	slot := make(map[int]int, len(genes))
	var distinct []int32
	for j, g := range genes {
		if g < 0 || g >= X.Cols {
			return nil, inputError("genes", j, ErrIndex)
		}
		slot[g] = 0
	}
	for g := range slot {
		distinct = append(distinct, int32(g))
	}
	slices.Sort(distinct)
	for s, g := range distinct {
		slot[int(g)] = s
	}
	m := len(distinct)

	threads := parallel.Threads(0)
	nb := len(parallel.Blocks(X.Rows, threads)) - 1
	sums := make([][]float64, nb) // sums[block][group·m + s]
	expr := make([][]int64, nb)
	errs := make([]error, nb)
	parallel.For(X.Rows, threads, func(lo, hi, block int) {
		sum := make([]float64, k*m)
		cnt := make([]int64, k*m)
		sums[block], expr[block] = sum, cnt
		for i := lo; i < hi; i++ {
			if (i-lo)%expressionCheckRows == 0 && ctx.Err() != nil {
				errs[block] = ctx.Err()
				return
			}
			a, b := X.RowPtr[i], X.RowPtr[i+1]
			if b < a || b > int64(len(X.ColIdx)) {
				errs[block] = inputError("X row", i, ErrMatrix)
				return
			}
			g := groupCodes[i]
			if g < 0 {
				continue
			}
			if !accumulateRow(X.ColIdx[a:b], X.Val[a:b], distinct, sum[int(g)*m:int(g+1)*m], cnt[int(g)*m:int(g+1)*m]) {
				errs[block] = inputError("X row", i, ErrValue)
				return
			}
		}
	})
	for _, err := range errs {
		if err != nil {
			return nil, err
		}
	}

	size := make([]int64, k)
	for _, c := range groupCodes {
		if c >= 0 {
			size[c]++
		}
	}
	t := &ExpressionTable{
		Genes:    append([]string(nil), geneNames...),
		Groups:   append([]string(nil), groupNames...),
		Fraction: make([][]float64, k),
		Mean:     make([][]float64, k),
	}
	for g := 0; g < k; g++ {
		t.Fraction[g] = make([]float64, len(genes))
		t.Mean[g] = make([]float64, len(genes))
		for j, gene := range genes {
			s := slot[gene]
			if size[g] == 0 {
				t.Fraction[g][j], t.Mean[g][j] = math.NaN(), math.NaN()
				continue
			}
			var total float64
			var n int64
			for b := 0; b < nb; b++ {
				total += sums[b][g*m+s]
				n += expr[b][g*m+s]
			}
			t.Fraction[g][j] = float64(n) / float64(size[g])
			t.Mean[g][j] = total / float64(size[g])
		}
	}
	return t, nil
}

// accumulateRow adds the values of one row (column indices cols, increasing,
// and values vals) at the distinct genes to sum, and counts the positive
// ones in cnt. It looks each gene up by binary search from where the last
// was found when the row is long, and walks the row otherwise. It returns
// false, having added part of the row, at a negative or non-finite value of
// a chosen gene.
func accumulateRow(cols []int32, vals []float32, distinct []int32, sum []float64, cnt []int64) bool {
	p := 0
	for s, g := range distinct {
		if len(cols)-p > 8*len(distinct) {
			lo, hi := p, len(cols)
			for lo < hi {
				mid := int(uint(lo+hi) >> 1)
				if cols[mid] < g {
					lo = mid + 1
				} else {
					hi = mid
				}
			}
			p = lo
		} else {
			for p < len(cols) && cols[p] < g {
				p++
			}
		}
		if p == len(cols) {
			return true
		}
		if cols[p] != g {
			continue
		}
		v := float64(vals[p])
		if !(v >= 0) || math.IsInf(v, 1) {
			return false
		}
		sum[s] += v
		if v > 0 {
			cnt[s]++
		}
	}
	return true
}
