package embed

import (
	"math"
	"slices"

	"lodestone/compute/parallel"
	"lodestone/compute/sparse"
)

// relabelAbove is the number of points from which the optimiser renumbers
// the points in the order of a space-filling curve through the initial
// layout. Each attractive pass gathers the coordinates of every point's
// neighbours; in the curve's order neighbours in the map sit close together
// in memory, which matters once the layout (16 bytes a point) no longer
// fits in a core's cache. It costs a copy of P for the run (8 bytes an
// entry). Measured on 250,000 points of a 50-D mixture (2 cores): a default
// run 135 s → 115 s. (A variable so that tests can take the relabelled path
// with few points.)
var relabelAbove = 100_000

// rows is P as the optimiser reads it: p in the layout's numbering (cols
// its column indices) and, when the points were renumbered, rowOf[k], the
// caller's number of layout point k.
type rows struct {
	p     *sparse.CSR
	cols  []int32
	rowOf []int32
}

// plainRows reads P in its own numbering.
func plainRows(p *sparse.CSR) *rows { return &rows{p: p, cols: p.ColIdx} }

// row returns the column indices and values of layout point k's row.
func (r *rows) row(k int) ([]int32, []float32) {
	lo, hi := r.p.RowPtr[k], r.p.RowPtr[k+1]
	return r.cols[lo:hi], r.p.Val[lo:hi]
}

// curveOrder returns the points of the interleaved layout y in the order of
// the Z-order (Morton) curve through a 65,536 × 65,536 grid over its bounding
// box, ties by point id, and its inverse.
func curveOrder(y []float64, threads int) (order, rank []int32) {
	n := len(y) / 2
	xmin, xmax, ymin, ymax := math.Inf(1), math.Inf(-1), math.Inf(1), math.Inf(-1)
	for i := 0; i < n; i++ {
		xmin, xmax = min(xmin, y[2*i]), max(xmax, y[2*i])
		ymin, ymax = min(ymin, y[2*i+1]), max(ymax, y[2*i+1])
	}
	sx, sy := 65535/max(xmax-xmin, 1e-300), 65535/max(ymax-ymin, 1e-300)
	keys := make([]uint64, n)
	parallel.For(n, threads, func(lo, hi, _ int) {
		for i := lo; i < hi; i++ {
			gx := uint32(min(max((y[2*i]-xmin)*sx, 0), 65535))
			gy := uint32(min(max((y[2*i+1]-ymin)*sy, 0), 65535))
			keys[i] = uint64(spreadBits(gx)|spreadBits(gy)<<1)<<32 | uint64(i)
		}
	})
	slices.Sort(keys)
	order, rank = make([]int32, n), make([]int32, n)
	for k, key := range keys {
		i := int32(key & math.MaxUint32)
		order[k], rank[i] = i, int32(k)
	}
	return order, rank
}

// spreadBits moves bit b of the low 16 bits of v to bit 2b.
func spreadBits(v uint32) uint32 {
	v &= 0xffff
	v = (v | v<<8) & 0x00ff00ff
	v = (v | v<<4) & 0x0f0f0f0f
	v = (v | v<<2) & 0x33333333
	v = (v | v<<1) & 0x55555555
	return v
}

// relabel renumbers the layout y (in place) and P in curve order and
// returns P in the new numbering: a copy whose rows are stored in the new
// order, so that a pass over the points streams through it.
func relabel(p *sparse.CSR, y []float64, threads int) *rows {
	order, rank := curveOrder(y, threads)
	old := append([]float64(nil), y...)
	for k, i := range order {
		y[2*k], y[2*k+1] = old[2*i], old[2*i+1]
	}
	q := &sparse.CSR{Rows: p.Rows, Cols: p.Cols, RowPtr: make([]int64, p.Rows+1),
		ColIdx: make([]int32, len(p.ColIdx)), Val: make([]float32, len(p.Val))}
	for k, i := range order {
		q.RowPtr[k+1] = q.RowPtr[k] + p.RowPtr[i+1] - p.RowPtr[i]
	}
	parallel.For(p.Rows, threads, func(lo, hi, _ int) {
		for k := lo; k < hi; k++ {
			i := order[k]
			src, dst := p.RowPtr[i], q.RowPtr[k]
			cols := p.ColIdx[src:p.RowPtr[i+1]]
			out := q.ColIdx[dst : dst+int64(len(cols))]
			for e, c := range cols {
				out[e] = rank[c]
			}
			copy(q.Val[dst:], p.Val[src:p.RowPtr[i+1]])
		}
	})
	return &rows{p: q, cols: q.ColIdx, rowOf: order}
}
