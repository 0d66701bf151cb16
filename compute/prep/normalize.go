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
// without counts stays zero. The result shares v's indices.
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
	counter := progress.NewCounter(prog, int64(n), int64(n/100))
	err := sp.run(ctx, func(lo, hi, b int) {
		if bad[b] != nil {
			return
		}
		for i := lo; i < hi; i++ {
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
