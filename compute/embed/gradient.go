package embed

import (
	"context"
	"math"
	"sort"
	"sync"
	"sync/atomic"

	"lodestone/compute/parallel"
	"lodestone/compute/sparse"
)

// affinities is a checked affinity matrix with the sums the optimiser needs.
type affinities struct {
	*sparse.CSR
	sum     float64 // Σ p_ij over the stored entries
	entropy float64 // Σ p̃_ij log p̃_ij with p̃ = p / sum, once known
	known   bool    // entropy has been computed
}

// setEntropy records Σ p log p, summed by blocks, as Σ p̃ log p̃ = (Σ p log p)/S − log S.
func (a *affinities) setEntropy(plogp []float64) {
	var e float64
	for _, v := range plogp {
		e += v
	}
	a.entropy, a.known = e/a.sum-math.Log(a.sum), true
}

// checkAffinity validates P for a layout of n points (n < 0: any) and
// computes its sums. Every row is checked; the fault with the smallest row
// and entry is reported.
func checkAffinity(p *sparse.CSR, n, threads int) (*affinities, error) {
	if p == nil || p.Rows != p.Cols || p.Rows < 2 || len(p.RowPtr) != p.Rows+1 ||
		p.RowPtr[0] != 0 || p.RowPtr[p.Rows] != int64(len(p.ColIdx)) || len(p.ColIdx) != len(p.Val) {
		if p != nil && p.Rows == p.Cols && p.Rows < 2 {
			return nil, &AffinityError{Row: -1, Entry: -1, Err: ErrEmpty}
		}
		return nil, &AffinityError{Row: -1, Entry: -1, Err: ErrShape}
	}
	if n >= 0 && p.Rows != n {
		return nil, &LayoutError{What: "initial layout", Point: -1, Err: ErrShape}
	}
	threads = parallel.Threads(threads)
	sums := make([]float64, threads)
	var (
		mu    sync.Mutex
		fault *AffinityError
	)
	parallel.For(p.Rows, threads, func(lo, hi, block int) {
		var s float64
		for i := lo; i < hi; i++ {
			start, end := p.RowPtr[i], p.RowPtr[i+1]
			if end < start || end > int64(len(p.ColIdx)) {
				mu.Lock()
				if fault == nil || i < fault.Row {
					fault = &AffinityError{Row: i, Entry: -1, Err: ErrShape}
				}
				mu.Unlock()
				return
			}
			prev := int32(-1)
			for k := start; k < end; k++ {
				c, v := p.ColIdx[k], float64(p.Val[k])
				var err error
				switch {
				case c <= prev || int(c) >= p.Cols:
					err = ErrColumn
				case math.IsNaN(v) || math.IsInf(v, 0):
					err = ErrNotFinite
				case v < 0:
					err = ErrNegative
				}
				if err != nil {
					mu.Lock()
					if fault == nil || i < fault.Row {
						fault = &AffinityError{Row: i, Entry: int(k - start), Err: err}
					}
					mu.Unlock()
					return
				}
				prev = c
				s += v
			}
		}
		sums[block] = s
	})
	if fault != nil {
		return nil, fault
	}
	var s float64
	for _, v := range sums {
		s += v
	}
	if !(s > 0) {
		return nil, &AffinityError{Row: -1, Entry: -1, Err: ErrEmpty}
	}
	return &affinities{CSR: p, sum: s}, nil
}

// attract is attraction.sums on a team of threads goroutines made for the
// call (threads < 1 means all processors).
func attract(dst, y []float64, p *sparse.CSR, alpha float64, logs, plogp []float64, threads int, stop func() bool) bool {
	tm := newTeam(threads)
	defer tm.close()
	return newAttraction(tm, p, alpha).sums(dst, y, logs, plogp, stop)
}

// attraction computes the attractive sums of layouts for the affinities P
// and the kernel of tail α, on a team (see team: a call allocates nothing).
type attraction struct {
	team  *team
	p     *sparse.CSR
	alpha float64
	rows  []int // the blocks of rows (rowBlocks)

	// The inputs and outputs of the current call, for the loops' bodies.
	y           []float64
	y32         []float32
	dst         []float64
	logs, plogp []float64
	stop        func() bool
	stopped     atomic.Bool

	body, body32 func(lo, hi, block int)
}

// newAttraction returns the attractive sums of P for the kernel of tail α,
// computed on the team's goroutines.
func newAttraction(tm *team, p *sparse.CSR, alpha float64) *attraction {
	a := &attraction{team: tm, p: p, alpha: alpha, rows: rowBlocks(p, tm.threads)}
	a.body, a.body32 = a.block, a.block32
	return a
}

// rowBlocks splits the rows of P into at most parts blocks of contiguous
// rows holding about equal numbers of stored entries (the work of the
// attraction; some rows of a symmetrised neighbour graph hold several times
// as many as others), and returns their boundaries.
func rowBlocks(p *sparse.CSR, parts int) []int {
	parts = max(1, min(parts, p.Rows))
	bounds := make([]int, parts+1)
	nnz := p.RowPtr[p.Rows]
	for b := 1; b < parts; b++ {
		goal := nnz * int64(b) / int64(parts)
		bounds[b] = max(bounds[b-1], sort.Search(p.Rows, func(i int) bool { return p.RowPtr[i] >= goal }))
	}
	bounds[parts] = p.Rows
	return bounds
}

// halt reports whether stop reported true, now or in an earlier check of
// the call, and records it.
func (a *attraction) halt() bool {
	if a.stopped.Load() {
		return true
	}
	if a.stop() {
		a.stopped.Store(true)
		return true
	}
	return false
}

// sums writes the attractive sums of the layout y to dst, for the kernel
// of tail α,
//
//	dst_i = Σ_j p_ij u_ij (y_i − y_j),   u_ij = 1 / (1 + |y_i − y_j|²/α) = α / (α + |y_i − y_j|²),
//
// over the stored entries of P, one block of rows per goroutine
// (rowBlocks); dst may be nil when only the sums below are wanted. When
// logs is not nil it also stores in logs[block] the block's Σ p_ij log(α + |y_i − y_j|²) (at α = 1,
// −Σ p_ij log w_ij), and when plogp is not nil as well the block's
// Σ p_ij log p_ij, for the KL divergence. It returns false when stop
// reported true part-way.
func (a *attraction) sums(dst, y []float64, logs, plogp []float64, stop func() bool) bool {
	a.dst, a.y, a.logs, a.plogp, a.stop = dst, y, logs, plogp, stop
	a.stopped.Store(false)
	a.team.Split(a.rows, a.body)
	a.dst, a.y, a.logs, a.plogp, a.stop = nil, nil, nil, nil, nil
	return !a.stopped.Load()
}

// block is sums for the rows [lo, hi).
func (a *attraction) block(lo, hi, block int) {
	p, y, alpha := a.p, a.y, a.alpha
	var ls, pl float64
	for i := lo; i < hi; i++ {
		if (i-lo)%stopEvery == stopEvery-1 && a.halt() {
			return
		}
		xi, yi := y[2*i], y[2*i+1]
		var fx, fy float64
		start, end := p.RowPtr[i], p.RowPtr[i+1]
		cols, vals := p.ColIdx[start:end], p.Val[start:end]
		if a.logs == nil {
			fx, fy = attractRow(xi, yi, alpha, y, cols, vals)
		} else {
			var l float64
			fx, fy, l = attractRowLog(xi, yi, alpha, y, cols, vals)
			ls += l
			if a.plogp != nil {
				for _, v := range vals {
					if v > 0 {
						pl += float64(v) * math.Log(float64(v))
					}
				}
			}
		}
		if a.dst != nil {
			a.dst[2*i], a.dst[2*i+1] = alpha*fx, alpha*fy
		}
	}
	if a.logs != nil {
		a.logs[block] = ls
	}
	if a.plogp != nil {
		a.plogp[block] = pl
	}
}

// sums32 is sums without the logarithms, for the optimiser, its rows in
// chunks handed out as the goroutines come free: the same sums computed in
// float32 from y32, the layout rounded to float32
// (attractRow32), then scaled by α in float64. Against the float64 sums of
// sums the relative error is about 1e-7 over a layout (the float32
// rounding of the coordinates, of the order of 1e-7 of the map's extent,
// dominates), far below the interpolated repulsion's 1e-4.
func (a *attraction) sums32(dst []float64, y32 []float32, stop func() bool) bool {
	a.dst, a.y32, a.stop = dst, y32, stop
	a.stopped.Store(false)
	a.team.Chunks(a.p.Rows, attractChunk, a.body32)
	a.dst, a.y32, a.stop = nil, nil, nil
	return !a.stopped.Load()
}

// attractChunk is the number of rows in a chunk of sums32 (team.Chunks).
const attractChunk = 1024

// block32 is sums32 for the rows [lo, hi), a chunk.
func (a *attraction) block32(lo, hi, _ int) {
	if a.halt() {
		return
	}
	p, y32, alpha := a.p, a.y32, a.alpha
	af := float32(alpha)
	for i := lo; i < hi; i++ {
		start, end := p.RowPtr[i], p.RowPtr[i+1]
		fx, fy := attractRow32(y32[2*i], y32[2*i+1], af, y32, p.ColIdx[start:end], p.Val[start:end])
		a.dst[2*i], a.dst[2*i+1] = alpha*fx, alpha*fy
	}
}

// attractRow32 is attractRow in float32 for the layout y of float32 pairs:
// Σ_k v_k (x_i − x_{j_k})/q_k and the same for y, q_k = a + |y_i − y_{j_k}|²,
// each term and its sum formed in float32. With AVX2 the first
// len(cols) &^ 7 entries go eight at a time, in eight lanes added in float64
// (attractRow32AVX2); the rest, and every entry elsewhere, go one by one in
// order into one float32 sum, so the two differ by float32 rounding. The
// kernel prefetches within cap(cols), as attractRow's does.
func attractRow32(xi, yi, a float32, y []float32, cols []int32, vals []float32) (fx, fy float64) {
	m := 0
	if haveAVX2 && len(cols) >= 8 {
		m = len(cols) &^ 7
		fx, fy = attractRow32AVX2(xi, yi, a, &y[0], &cols[0], &vals[0], m, cap(cols))
	}
	vals = vals[:len(cols)]
	var sx, sy float32
	for k, j := range cols[m:] {
		dx, dy := xi-y[2*j], yi-y[2*j+1]
		pw := vals[m+k] / (a + dx*dx + dy*dy)
		sx += pw * dx
		sy += pw * dy
	}
	return fx + float64(sx), fy + float64(sy)
}

// attractRow returns Σ_k v_k (x_i − x_{j_k})/q_k and Σ_k v_k (y_i − y_{j_k})/q_k,
// q_k = a + |y_i − y_{j_k}|², over the entries (cols, vals) of one row of
// P, for the point (xi, yi) of the interleaved layout y; a is the kernel's
// α (1 for t-SNE, where 1/q_k is the kernel w). With AVX2 the first
// len(cols) &^ 3 entries go four at a time (each lane summed separately, the
// lanes then added as (l0+l2)+(l1+l3)); the rest, and every entry elsewhere,
// go one by one in order. The kernel also prefetches the layout entries of
// the columns that follow within cap(cols): as a row of P, cols reaches on
// into the next rows.
func attractRow(xi, yi, a float64, y []float64, cols []int32, vals []float32) (fx, fy float64) {
	m := 0
	if haveAVX2 && len(cols) >= 4 {
		m = len(cols) &^ 3
		fx, fy = attractRowAVX2(xi, yi, a, &y[0], &cols[0], &vals[0], m, cap(cols))
	}
	vals = vals[:len(cols)]
	for k, j := range cols[m:] {
		dx, dy := xi-y[2*j], yi-y[2*j+1]
		pw := float64(vals[m+k]) / (a + dx*dx + dy*dy)
		fx += pw * dx
		fy += pw * dy
	}
	return fx, fy
}

// attractRowLog is attractRow that also returns Σ_k v_k log q_k.
// The AVX2 kernel computes the logarithm itself, to within 1e-12 relative
// (for the KL divergence of the snapshots); the portable code calls
// math.Log.
func attractRowLog(xi, yi, a float64, y []float64, cols []int32, vals []float32) (fx, fy, ls float64) {
	m := 0
	if haveAVX2 && len(cols) >= 4 {
		m = len(cols) &^ 3
		fx, fy, ls = attractRowLogAVX2(xi, yi, a, &y[0], &cols[0], &vals[0], m, cap(cols))
	}
	vals = vals[:len(cols)]
	for k, j := range cols[m:] {
		dx, dy := xi-y[2*j], yi-y[2*j+1]
		q := a + dx*dx + dy*dy
		v := float64(vals[m+k])
		pw := v / q
		fx += pw * dx
		fy += pw * dy
		ls += v * math.Log(q)
	}
	return fx, fy, ls
}

// KL returns the Kullback–Leibler divergence of the layout's similarities Q
// from P, for the kernel of tail α (see MinTail; 1 for t-SNE), computed
// exactly in O(N²):
//
//	KL(P‖Q) = Σ_ij p̃_ij log(p̃_ij / q_ij),   q_ij = w_ij / Z,
//	w_ij = (1 + |y_i − y_j|²/α)^(−α),   Z = Σ_{k≠l} w_kl,   p̃ = P / Σ P.
//
// layout holds the interleaved coordinates x0,y0,x1,y1,… of P.Rows points.
// P must be a valid affinity matrix (square, sorted columns, finite
// non-negative values, not all zero) and tail within [MinTail, MaxTail];
// otherwise KL returns an *AffinityError, a *LayoutError or a *ParamError.
// threads < 1 means all processors.
func KL(p *sparse.CSR, layout []float32, tail float64, threads int) (float64, error) {
	if err := checkTail(tail); err != nil {
		return 0, err
	}
	a, err := checkAffinity(p, len(layout)/2, threads)
	if err != nil {
		return 0, err
	}
	if len(layout) != 2*p.Rows {
		return 0, &LayoutError{What: "layout", Point: -1, Err: ErrShape}
	}
	y, err := toFloat64(layout, "layout")
	if err != nil {
		return 0, err
	}
	threads = parallel.Threads(threads)
	rep := make([]float64, len(y))
	z := ExactRepulsion(rep, y, tail, threads)
	logs, plogp := make([]float64, threads), make([]float64, threads)
	attract(rep, y, p, tail, logs, plogp, threads, func() bool { return false })
	a.setEntropy(plogp)
	return a.kl(logs, z, tail), nil
}

// Divergence returns KL(P‖Q) of the layout for the kernel of tail α as the
// optimiser estimates it (Snapshot.KL): exactly, as KL, below 1,000 points;
// above, with Z from the interpolated repulsion, whose relative error of
// about 1e-4 (repulsion_test.go) becomes an absolute error of about 1e-4 in
// KL, in O(N) time. Inputs and errors are those of KL; it returns ctx.Err()
// when ctx is cancelled.
func Divergence(ctx context.Context, p *sparse.CSR, layout []float32, tail float64, threads int) (float64, error) {
	if p != nil && p.Rows < exactBelow {
		return KL(p, layout, tail, threads)
	}
	if err := checkTail(tail); err != nil {
		return 0, err
	}
	a, err := checkAffinity(p, len(layout)/2, threads)
	if err != nil {
		return 0, err
	}
	if len(layout) != 2*p.Rows {
		return 0, &LayoutError{What: "layout", Point: -1, Err: ErrShape}
	}
	y, err := toFloat64(layout, "layout")
	if err != nil {
		return 0, err
	}
	threads = parallel.Threads(threads)
	stop := func() bool { return ctx.Err() != nil }
	b := [4]float64{math.Inf(1), math.Inf(-1), math.Inf(1), math.Inf(-1)}
	for i := 0; i < len(y); i += 2 {
		b[0], b[1] = min(b[0], y[i]), max(b[1], y[i])
		b[2], b[3] = min(b[2], y[i+1]), max(b[3], y[i+1])
	}
	rep := make([]float64, len(y))
	tm := newTeam(threads)
	defer tm.close()
	z, ok := newFFTRepulsion(tm, tail).compute(rep, y, b, stop)
	logs, plogp := make([]float64, threads), make([]float64, threads)
	if !ok || !newAttraction(tm, p, tail).sums(rep, y, logs, plogp, stop) {
		return 0, ctx.Err()
	}
	a.setEntropy(plogp)
	return a.kl(logs, z, tail), nil
}

// kl returns KL(P‖Q) from the blocks' sums Σ p log(α + d²) of attract, Z and
// α, once the entropy is known:
//
//	KL = Σ p̃ log p̃ − Σ p̃ log w + log Z,   −log w = α·(log(α + d²) − log α).
func (a *affinities) kl(logs []float64, z, alpha float64) float64 {
	var ls float64
	for _, v := range logs {
		ls += v
	}
	if alpha == 1 {
		return a.entropy + ls/a.sum + math.Log(z)
	}
	return a.entropy + alpha*(ls/a.sum-math.Log(alpha)) + math.Log(z)
}

// toFloat64 converts an interleaved float32 layout, rejecting NaN and ±Inf.
func toFloat64(layout []float32, what string) ([]float64, error) {
	y := make([]float64, len(layout))
	for k, v := range layout {
		f := float64(v)
		if math.IsNaN(f) || math.IsInf(f, 0) {
			return nil, &LayoutError{What: what, Point: k / 2, Err: ErrNotFinite}
		}
		y[k] = f
	}
	return y, nil
}
