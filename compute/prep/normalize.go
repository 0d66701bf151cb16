package prep

import (
	"context"
	"math"

	"lodestone/compute/parallel"
	"lodestone/compute/progress"
	"lodestone/compute/sparse"
)

// DefaultTarget is the number of counts each cell is scaled to before the
// logarithm (common practice).
const DefaultTarget = 1e4

// Normalize scales each cell (row) of counts to target counts in all and
// takes the logarithm of one plus each value:
//
//	y_ij = log(1 + x_ij · target / Σ_j x_ij)
//
// with the row sum taken over the stored entries of row i in float64. A row
// without counts stays zero. The result has the pattern of counts: its RowPtr
// and ColIdx slices alias those of counts and its values are new, so the
// result must be treated as read-only when counts is.
//
// Counts must be finite and non-negative and target a finite number above
// zero; otherwise Normalize returns an *Error naming the first bad entry in
// row order. threads < 1 means one goroutine per processor. prog, when not
// nil, receives the progress in rows.
func Normalize(ctx context.Context, counts *sparse.CSR, target float64, threads int, prog progress.Func) (*sparse.CSR, error) {
	const stage = "normalize"
	if !(target > 0) || math.IsInf(target, 1) {
		return nil, errOption(stage, "target = %v is not a finite number above zero", target)
	}
	if err := checkCSR(stage, counts); err != nil {
		return nil, err
	}
	out := &sparse.CSR{
		Rows:   counts.Rows,
		Cols:   counts.Cols,
		RowPtr: counts.RowPtr,
		ColIdx: counts.ColIdx,
		Val:    make([]float32, len(counts.Val)),
	}
	sp := sparseSplit(counts.RowPtr, parallel.Threads(threads))
	bad := make([]*Error, sp.blocks())
	counter := progress.NewCounter(prog, int64(counts.Rows), int64(counts.Rows/100))
	err := sp.run(ctx, func(lo, hi, b int) {
		if bad[b] != nil {
			return
		}
		for i := lo; i < hi; i++ {
			cols, vals := counts.Row(i)
			var total float64
			for k, v := range vals {
				x := float64(v)
				if e := checkCount(stage, i, int(cols[k]), x); e != nil {
					bad[b] = e
					return
				}
				total += x
			}
			dst := out.Val[counts.RowPtr[i]:counts.RowPtr[i+1]]
			if total == 0 {
				clear(dst)
				continue
			}
			scale := target / total
			for k, v := range vals {
				dst[k] = float32(math.Log1p(float64(v) * scale))
			}
		}
		counter.Add(int64(hi - lo))
	})
	if err != nil {
		return nil, err
	}
	if err := firstError(bad); err != nil {
		return nil, err
	}
	counter.Finish()
	return out, nil
}

// NormalizeView returns v (a view of counts, cells × genes) log-normalised
// as Normalize does, without computing a single value: the result reads
//
//	y_ij = sparse.LogNorm(x_ij, target / Σ_j x_ij)
//
// as it is read, with the row sum taken over the stored entries of row i of
// v, in column order, in float64, exactly as Normalize takes it. A row
// without counts stays zero. The result shares v's indices. For counts with
// 16-bit columns and a sparse.Tally, the sum is the row's tallied total less
// its counts in the columns v leaves out: whole numbers, so the same float64
// while the total is at most sparse.MaxExact (rows above it are summed).
//
// Values must be finite and non-negative and target a finite number above
// zero; otherwise NormalizeView returns an *Error naming the first bad entry
// in row order. threads < 1 means one goroutine per processor. prog, when
// not nil, receives the progress in rows.
func NormalizeView(ctx context.Context, v *sparse.View, target float64, threads int, prog progress.Func) (*sparse.View, error) {
	const stage = "normalize"
	if !(target > 0) || math.IsInf(target, 1) {
		return nil, errOption(stage, "target = %v is not a finite number above zero", target)
	}
	if v.Normalized() {
		return nil, errOption(stage, "the view is normalised already")
	}
	n, _ := v.Dims()
	scale := make([]float64, n)
	sp := sparseSplit(v.RowPtr(), parallel.Threads(threads))
	bad := make([]*Error, sp.blocks())
	bufs := newRowBuffers(sp.blocks())
	src := viewSource{v}
	// Counts with 16-bit columns and a tally: a row's total over the view's
	// columns is its tallied total less its counts in the columns left out.
	x, rows, _ := v.Source()
	tallied := x.Tally != nil && x.Real == nil && x.Col32 == nil && len(x.Tally.RowTotal) == x.Rows
	colOf := v.ColumnMap()
	counter := progress.NewCounter(prog, int64(n), int64(n/100))
	err := sp.run(ctx, func(lo, hi, b int) {
		if bad[b] != nil {
			return
		}
		for i := lo; i < hi; i++ {
			if tallied {
				if total, ok := keptTotal(x, rows[i], colOf); ok {
					if total > 0 {
						scale[i] = target / total
					}
					continue
				}
			}
			cols, vals := bufs.row(src, i, b)
			var total float64
			for k, x := range vals {
				if !(x >= 0 && x <= math.MaxFloat32) {
					bad[b] = checkCount(stage, i, int(cols[k]), float64(x))
					return
				}
				total += float64(x)
			}
			if total > 0 {
				scale[i] = target / total
			}
		}
		counter.Add(int64(hi - lo))
	})
	if err != nil {
		return nil, err
	}
	if err := firstError(bad); err != nil {
		return nil, err
	}
	counter.Finish()
	return v.WithScale(scale)
}

// keptTotal returns the sum of the counts of row r of x (counts with 16-bit
// columns and a tally) in the columns whose colOf is not negative (all when
// colOf is nil): the tallied total less the counts left out. It returns
// false when the total exceeds sparse.MaxExact; below, every sum of the
// row's counts is exact, so the result equals a float64 sum of the kept
// counts in any order.
func keptTotal(x *sparse.Counts, r int, colOf []int32) (float64, bool) {
	total := x.Tally.RowTotal[r]
	if !(total <= sparse.MaxExact) {
		return 0, false
	}
	if colOf == nil {
		return total, true
	}
	lo, hi := x.RowPtr[r], x.RowPtr[r+1]
	small := x.Small[lo:hi]
	var out int64
	var large float64
	for k, c := range x.Col16[lo:hi] {
		if colOf[c] >= 0 {
			continue
		}
		if s := small[k]; s != sparse.LargeMark {
			out += int64(s)
		} else {
			large += float64(x.Value(lo + int64(k)))
		}
	}
	return total - float64(out) - large, true
}
