package embed

import (
	"math"
	"sort"
	"sync/atomic"
)

// ExactRepulsion computes the repulsive sums of the layout y (interleaved
// x0,y0,x1,y1,…, float64) exactly, over all pairs, for the kernel of tail α
// (see MinTail):
//
//	dst_i = Σ_{j≠i} w_ij u_ij (y_i − y_j),   Z = Σ_{i≠j} w_ij,
//	u_ij = 1 / (1 + |y_i − y_j|²/α),   w_ij = u_ij^α,
//
// and returns Z; at α = 1, w_ij u_ij = w_ij² with w_ij = 1/(1 + |y_i − y_j|²).
// dst must have the length of y. The cost is O(N²); it is the reference for
// the interpolated repulsion and is used for small layouts. threads < 1
// means all processors; the result is deterministic for a given thread count.
func ExactRepulsion(dst, y []float64, tail float64, threads int) float64 {
	tm := newTeam(threads)
	defer tm.close()
	return newExactRepulsion(tm, tail).compute(dst, y)
}

// exactRepulsion computes ExactRepulsion's sums on a team (see team: a call
// allocates nothing).
type exactRepulsion struct {
	team    *team
	tail    tailKernel
	partial []float64 // per block: Σ w_ij over the block's points
	y, dst  []float64 // the current call's layout and sums
	body    func(lo, hi, block int)
}

// newExactRepulsion returns the exact repulsion for the kernel of tail α on
// the team's goroutines.
func newExactRepulsion(tm *team, tail float64) *exactRepulsion {
	e := &exactRepulsion{team: tm, tail: newTail(tail), partial: make([]float64, tm.threads)}
	e.body = e.block
	return e
}

// compute is ExactRepulsion.
func (e *exactRepulsion) compute(dst, y []float64) float64 {
	e.y, e.dst = y, dst
	clear(e.partial)
	e.team.For(len(y)/2, e.body)
	e.y, e.dst = nil, nil
	var z float64
	for _, v := range e.partial {
		z += v
	}
	return z
}

// block is compute for the points [lo, hi).
func (e *exactRepulsion) block(lo, hi, block int) {
	y, k := e.y, e.tail
	n := len(y) / 2
	var z float64
	for i := lo; i < hi; i++ {
		xi, yi := y[2*i], y[2*i+1]
		var fx, fy, zi float64
		if k.cauchy() {
			for j := 0; j < n; j++ {
				dx, dy := xi-y[2*j], yi-y[2*j+1]
				w := 1 / (1 + dx*dx + dy*dy)
				zi += w
				w *= w
				fx += w * dx
				fy += w * dy
			}
		} else {
			for j := 0; j < n; j++ {
				kx, ky, kw := k.at(xi-y[2*j], yi-y[2*j+1])
				zi += kw
				fx += kx
				fy += ky
			}
		}
		e.dst[2*i], e.dst[2*i+1] = fx, fy
		z += zi - 1 // the j = i term has w = 1
	}
	e.partial[block] = z
}

// rowChunk and columnChunk are the lines per chunk of the FFT's passes.
const (
	rowChunk    = 8
	columnChunk = 4
)

// Settings of the interpolated repulsion, chosen by measuring the relative
// error of the forces against ExactRepulsion on clustered and t-SNE layouts
// of 5,000 points (repulsion_test.go): about 1e-4 with these values, against
// 3e-3 to 7e-3 for degree-2 interpolation with the same near field and 1e-2 to
// 8e-2 for the grid alone at node spacings of 1/3 to 1/2.
const (
	// interpNodes is the number of interpolation nodes per cell and axis,
	// the cell's two ends included (polynomials of degree 4); neighbouring
	// cells share nodes.
	interpNodes = 5
	// targetCells is the least number of cells along the layout's longer
	// side. Cell widths are powers of 2^(1/8), so the kernel transforms are
	// recomputed only when the layout has grown or shrunk by 9 % or the cost
	// model moves to another width.
	targetCells = 8
	// fineCellWidth is the width at or below which the grid alone is accurate
	// (node spacing 1/8) for t-SNE's kernel: no near-field correction. The
	// kernel of a tail α < 1 varies on a scale √α near 0 (its fourth-order
	// term is (α+1)/(2α)·d⁴), and its width is scaled by √α (fineWidth).
	fineCellWidth = 0.5
	// nearBudget is the number of near-field pairs per point that the first
	// guess of the cell width aims at, for a layout of uniform density.
	nearBudget = 400
	// maxNearWork bounds the near-field work per point (Σ_c n_c Σ n_c' / N);
	// beyond it the grid alone is used.
	maxNearWork = 1024
	// maxFFTLen caps the padded grid per axis; beyond it the cells widen with
	// the layout and the accuracy of the far field degrades.
	maxFFTLen = 4096
	// stopEvery is how many points a loop handles between checks of stop.
	stopEvery = 4096
)

// cellNodes is the number of nodes per cell, for array sizes.
const cellNodes = interpNodes * interpNodes

// fftRepulsion computes the sums of ExactRepulsion in O(N) per call by
// polynomial interpolation on a regular grid and FFT convolution (Linderman,
// Rachh, Hoskins, Steinerberger & Kluger 2019), with the interactions of
// nearby points precorrected (Phillips & White 1997).
//
// Kernels. Instead of spreading the four charges (1, y_x, y_y, |y|²) and
// convolving each with w², it spreads the unit charge once and convolves it
// with the three kernels of the tail α (see tailKernel; u = w^(1/α))
//
//	K_x(d) = d_x w(d) u(d),   K_y(d) = d_y w(d) u(d),   K_w(d) = w(d)
//
// which give Σ_j w_ij u_ij (y_i − y_j) and Σ_j w_ij directly: the same sums
// with one forward and three inverse transforms instead of four and four, no
// cancellation between y_i·Σw² and Σw²y_j in large layouts, and any α at
// the same cost (the expansion into charges relies on α = 1).
//
// Grid. The layout's bounding box is covered by square cells of width h;
// each cell holds interpNodes × interpNodes equispaced nodes, its corners
// included, so the nodes of all cells form one uniform grid of spacing
// δ = h/(interpNodes−1). A point's charge is spread to the nodes of its cell
// with the Lagrange weights L_a(x)·L_b(y), the node-to-node sums are a
// discrete convolution done by zero-padded FFTs (gonum's real and complex
// 1-D transforms along rows, then columns), and the potentials are
// interpolated back with the same weights.
//
// Near field. Interpolation is accurate for pairs far apart compared with h,
// but not for close pairs, whose kernel varies on a scale of 1. When
// h > fineWidth(α), the grid's contribution between points of the same or
// adjacent cells is subtracted — cell by cell, from the cells' own charges and
// the node-to-node kernel between them — and replaced by the exact sum over
// those pairs.
//
// Cell width. With the near field exact, the remaining error comes from pairs
// at least one cell apart, whose kernel varies on the scale of their distance,
// so it hardly depends on h: h only trades the size of the FFT (which grows as
// h shrinks) against the near-field work (which grows with h² times the local
// density). setGrid picks h by a cost model each call.
//
// The transforms of the kernels and the near-field blocks are computed once
// per grid size and cell width and kept, and all buffers are reused between
// calls.
type fftRepulsion struct {
	team    *team
	threads int
	tail    tailKernel

	// Current grid: nx × ny cells of width h from (x0, y0); mx × my nodes at
	// spacing delta, embedded in an lx × ly periodic grid.
	h, delta, x0, y0 float64
	nx, ny           int
	mx, my, lx, ly   int
	near             bool

	// Kernel spectra for (lx, ly, kernelDelta), scaled by 1/(lx·ly), on the
	// half spectrum: ly rows of lx/2+1. K_w's spectrum is real, those of the
	// odd kernels K_x and K_y imaginary; only those parts are stored.
	kernelDelta    float64
	kw, kxIm, kyIm []float64
	// Near-field blocks for blockH: for each cell offset o ∈ [−1,1]², source
	// node s of cell c + o, target node t of cell c and kernel k,
	// nearKernel[(o·cellNodes+s)·blockRows + 3t+k] = (K_x, K_y, K_w)_k(node_t − node_s − o·h),
	// column-major blocks of blockRows rows (those past 3·cellNodes zero).
	blockH     float64
	nearKernel []float64

	// Per point: cell, Lagrange weights (x then y; in the points' order
	// with the grid alone, in the sorted order with the near field), and
	// Σ_j w_ij.
	cellOf   []int32
	wts      []float64
	zval     []float64
	cellWork []int64 // near field only: cumulative work of cells 0…c−1

	// Points sorted by cell (near field only): cell start offsets, where
	// each block of points starts in each cell (count), point ids and their
	// coordinates in that order, and the same relative to the corner of
	// their cell in float32 (for the exact pairs).
	start      []int32
	blockStart []int32
	order      []int32
	sx, sy     []float64
	rx, ry     []float32
	// Near field only: per cell, the charges on its nodes; cell boundaries
	// of the parts handled by each thread; per part, the accumulated sums
	// (K_x, K_y, K_w) for each sorted point, in float32.
	cellQ            []float64
	parts            []int
	accX, accY, accW []float32

	charge []float64    // per block: my × mx spread charges
	spec   []complex128 // ly × (lx/2+1)
	half   []complex128 // 3 × my × (lx/2+1): rows needed after the column pass
	pot    []float64    // 3 × my × mx potentials: K_x, K_y, K_w
	zpart  []float64    // per block partial sums of Σ_j w_ij

	rows    *rplan // transforms of the padded grid's rows (length lx)
	cols    *cplan // and columns (length ly)
	workers []fftWorker

	// The inputs and outputs of the current call, for the loops' bodies:
	// the layout, the repulsive sums, stop and whether it reported true,
	// whether locate computes weights, the pass of spreadCells.
	y       []float64
	dst     []float64
	stop    func() bool
	stopped atomic.Bool
	withWts bool
	pass    int
	loops   fftLoops
}

// fftLoops holds the bodies of fftRepulsion's parallel loops, made once so
// that a call allocates nothing (see team).
type fftLoops struct {
	zsum, locate, count, bin, weights, spread, sumGrids, cellCharges, cellRows,
	rowsForward, columns, rowsInverse, interpolate, near, gather func(lo, hi, block int)
}

// fftWorker holds one goroutine's line buffers and the transforms' scratch.
type fftWorker struct {
	line    []float64
	col     []complex128
	product []complex128
	work    []complex128
}

// newFFTRepulsion returns a repulsion engine that runs on the team's
// goroutines, for the kernel of tail α.
func newFFTRepulsion(tm *team, tail float64) *fftRepulsion {
	r := &fftRepulsion{team: tm, threads: tm.threads, tail: newTail(tail), workers: make([]fftWorker, tm.threads), zpart: make([]float64, tm.threads)}
	r.loops = fftLoops{
		zsum: r.zsumBlock, locate: r.locateBlock, count: r.countBlock, bin: r.binBlock, weights: r.weightsBlock,
		spread: r.spreadBlock, sumGrids: r.sumGridsBlock, cellCharges: r.cellChargesBlock, cellRows: r.cellRowsBlock,
		rowsForward: r.rowsForwardBlock, columns: r.columnsBlock, rowsInverse: r.rowsInverseBlock,
		interpolate: r.interpolateBlock, near: r.nearBlock, gather: r.gatherBlock,
	}
	return r
}

// lagrange returns the weights of the interpNodes nodes t_a = a/(interpNodes−1)
// of the interval [0, 1] for interpolation at t:
//
//	L_a(t) = Π_{b≠a} (t − t_b) / (t_a − t_b)
//
// The numerators come from prefix and suffix products of the t − t_b, the
// denominators from lagrangeScale.
func lagrange(t float64) [interpNodes]float64 {
	const d = interpNodes - 1
	var e, pre, w [interpNodes]float64
	for b := range e {
		e[b] = t - float64(b)/d
	}
	p := 1.0
	for a := range pre {
		pre[a] = p
		p *= e[a]
	}
	p = 1
	for a := interpNodes - 1; a >= 0; a-- {
		w[a] = pre[a] * p * lagrangeScale[a]
		p *= e[a]
	}
	return w
}

// lagrangeScale holds 1 / Π_{b≠a} (t_a − t_b) for each node a of lagrange.
var lagrangeScale = func() [interpNodes]float64 {
	const d = interpNodes - 1
	var s [interpNodes]float64
	for a := range s {
		den := 1.0
		for b := 0; b < interpNodes; b++ {
			if b != a {
				den *= float64(a-b) / d
			}
		}
		s[a] = 1 / den
	}
	return s
}()

// goodFFTLen returns the smallest even n ≥ min whose only prime factors are
// 2, 3 and 5, the lengths the FFT handles fastest.
func goodFFTLen(min int) int {
	for n := max(min, 2); ; n++ {
		if n%2 != 0 {
			continue
		}
		m := n
		for _, f := range []int{2, 3, 5} {
			for m%f == 0 {
				m /= f
			}
		}
		if m == 1 {
			return n
		}
	}
}

// fineWidth returns the cell width at or below which the grid alone is
// accurate for the kernel of tail α: fineCellWidth, times √α for α < 1.
func fineWidth(alpha float64) float64 {
	return fineCellWidth * math.Sqrt(min(alpha, 1))
}

// ladder rounds v > 0 up to a power of 2^(1/8).
func ladder(v float64) float64 {
	return math.Exp2(math.Ceil(8*math.Log2(v)) / 8)
}

// compute writes the interpolated repulsive sums Σ_j w_ij u_ij (y_i − y_j) of the
// layout y to dst and returns Z = Σ_{i≠j} w_ij. bounds is the layout's
// bounding box (xmin, xmax, ymin, ymax). It returns false, leaving dst
// partly written, when stop reports true part-way.
func (r *fftRepulsion) compute(dst, y []float64, bounds [4]float64, stop func() bool) (float64, bool) {
	n := len(y) / 2
	r.y, r.dst, r.stop = y, dst, stop
	r.stopped.Store(false)
	r.setGrid(bounds)
	var ok bool
	if r.near {
		ok = r.spreadCells() && r.convolve() && r.interpolateNear()
	} else {
		ok = r.spread() && r.convolve() && r.interpolate()
	}
	r.y, r.dst, r.stop = nil, nil, nil
	if !ok {
		return 0, false
	}
	// Σ_i Σ_j w_ij, summed per block in block order.
	clear(r.zpart)
	r.team.For(n, r.loops.zsum)
	var z float64
	for _, v := range r.zpart {
		z += v
	}
	return z - float64(n), true
}

// zsumBlock sums Σ_j w_ij over the points [lo, hi) into zpart[block].
func (r *fftRepulsion) zsumBlock(lo, hi, block int) {
	var z float64
	for _, v := range r.zval[lo:hi] {
		z += v
	}
	r.zpart[block] = z
}

// halt reports whether stop reported true, now or in an earlier check of
// the call, and records it.
func (r *fftRepulsion) halt() bool {
	if r.stopped.Load() {
		return true
	}
	if r.stop() {
		r.stopped.Store(true)
		return true
	}
	return false
}

// setGrid chooses the cells for the layout r.y with the given bounding box and
// locates every point. With the grid alone it computes the points' Lagrange
// weights in their own order; when the near field is corrected, it sorts
// the points by cell and computes the weights in the sorted order. It
// prepares the kernel spectra and buffers.
func (r *fftRepulsion) setGrid(bounds [4]float64) {
	const d = interpNodes - 1
	n := len(r.y) / 2
	ex, ey := bounds[1]-bounds[0], bounds[3]-bounds[2]
	extent := max(ex, ey, 1e-150)
	r.cellOf = grow32(r.cellOf, n)
	r.wts = grow(r.wts, 2*interpNodes*n)
	r.zval = grow(r.zval, n)
	fine := fineWidth(r.tail.alpha)
	cells := func(e, h float64) int { return max(1, int(math.Ceil(e/h))) }
	fftLen := func(e, h float64) int { return goodFFTLen(2 * (cells(e, h)*d + 1)) }
	place := func(h float64) {
		r.h, r.delta, r.x0, r.y0 = h, h/d, bounds[0], bounds[2]
		r.nx, r.ny = cells(ex, h), cells(ey, h)
		r.near = h > fine
	}
	// The narrowest cells the FFT allows.
	hMin := ladder(extent / float64((maxFFTLen/2-1)/d))
	// A first guess: the width at which a layout of uniform density over its
	// bounding box would have nearBudget near pairs per point, at most
	// extent/targetCells.
	area := max(ex*ey, extent*extent/float64(targetCells*targetCells))
	h0 := max(hMin, ladder(min(extent/targetCells, math.Sqrt(nearBudget*area/(9*float64(n))))))
	if coarse := max(hMin, ladder(extent/targetCells)); coarse <= fine {
		// A layout this small is covered by targetCells cells fine enough
		// for the grid alone; more cells would only cost time.
		h0 = coarse
	}
	place(h0)
	if !r.near {
		r.locate(true)
		r.finishGrid()
		return
	}
	// Choose among widths 2^(k/4)·h0 by a cost model: the FFT grows as the
	// cells narrow, the near field shrinks (its pairs as h², its occupied
	// cells as 1/h², both extrapolated from the census at h0).
	r.locate(false)
	work0, occ0 := r.tally(n)
	cost := func(h float64) float64 {
		lx, ly := fftLen(ex, h), fftLen(ey, h)
		c := costFFT * float64(lx*ly) * math.Log2(float64(max(lx, ly)))
		if h > fine {
			s := (h / h0) * (h / h0)
			c += costPair*float64(work0)*s + costCell*min(float64(occ0)/s, float64(cells(ex, h)*cells(ey, h)))
		}
		return c
	}
	best, bestCost := h0, cost(h0)
	for k := -12; k <= 8; k++ {
		h := h0 * math.Exp2(float64(k)/4)
		if h < hMin || k == 0 {
			continue
		}
		if c := cost(h); c < bestCost {
			best, bestCost = h, c
		}
	}
	place(best)
	if r.near && best != h0 {
		// The census counted the points in the cells of width h0; these
		// cells need their own count.
		r.locate(false)
		work0, _ = r.tally(n)
	}
	if r.near {
		r.bin()
		if work0 > maxNearWork*int64(n) {
			// Only a layout with a few points very far from the rest gets
			// here (the cells are as narrow as the FFT allows and still
			// crowded): the grid alone bounds the time of a call, at a loss
			// of accuracy.
			r.near = false
		}
	}
	if r.near {
		r.sortedWeights()
	} else {
		r.locate(true)
	}
	r.finishGrid()
}

// Relative costs for choosing the cell width, in nanoseconds of one core as
// measured on the development machine with the AVX2 kernels (only their
// ratios matter): per unit of near-field work (each pair counts twice), per
// occupied cell (its near-field potentials), and per padded node and level of
// the four FFTs. On a 70,000-point map they choose cells of width about 3
// with some 400 near pairs per point.
const (
	costPair = 0.3
	costCell = 1000
	costFFT  = 13
)

// finishGrid sizes the FFT for the chosen cells and prepares the kernel
// spectra, near-field blocks and buffers.
func (r *fftRepulsion) finishGrid() {
	const d = interpNodes - 1
	r.mx, r.my = r.nx*d+1, r.ny*d+1
	lx, ly := goodFFTLen(2*r.mx), goodFFTLen(2*r.my)
	if lx != r.lx || ly != r.ly || r.delta != r.kernelDelta {
		r.lx, r.ly = lx, ly
		r.resize()
		r.kernelSpectra()
	}
	if r.near && r.h != r.blockH {
		r.nearBlocks()
	}
	r.charge = grow(r.charge, r.threads*r.mx*r.my)
	r.pot = grow(r.pot, 3*r.mx*r.my)
	r.half = growComplex(r.half, 3*r.my*(r.lx/2+1))
}

// locate records each point's cell and, with weights, its Lagrange weights.
func (r *fftRepulsion) locate(weights bool) {
	r.withWts = weights
	r.team.For(len(r.y)/2, r.loops.locate)
}

// locateBlock is locate for the points [lo, hi).
func (r *fftRepulsion) locateBlock(lo, hi, _ int) {
	y := r.y
	for i := lo; i < hi; i++ {
		cx, ux := r.axis(y[2*i], r.x0, r.nx)
		cy, uy := r.axis(y[2*i+1], r.y0, r.ny)
		r.cellOf[i] = int32(cy*r.nx + cx)
		if r.withWts {
			w := (*[2 * interpNodes]float64)(r.wts[2*interpNodes*i:])
			wx, wy := lagrange(ux), lagrange(uy)
			copy(w[:interpNodes], wx[:])
			copy(w[interpNodes:], wy[:])
		}
	}
}

// axis returns the cell along one axis that holds coordinate v and the
// position of v in it, in cell widths.
func (r *fftRepulsion) axis(v, origin float64, cells int) (int, float64) {
	u := (v - origin) / r.h
	k := min(max(int(math.Floor(u)), 0), cells-1)
	return k, u - float64(k)
}

// count counts the points of each cell, one block of points per thread,
// and records in start where each cell's points begin in the order sorted
// by cell (stable in point id), and in blockStart[b·cells + c] where those
// of block b begin.
func (r *fftRepulsion) count(n int) {
	cells := r.nx * r.ny
	blocks := min(r.threads, n)
	r.blockStart = grow32(r.blockStart, blocks*cells)
	r.team.For(n, r.loops.count)
	r.start = grow32(r.start, cells+1)
	var at int32
	for c := 0; c < cells; c++ {
		r.start[c] = at
		for b := 0; b < blocks; b++ {
			k := r.blockStart[b*cells+c]
			r.blockStart[b*cells+c] = at
			at += k
		}
	}
	r.start[cells] = at
}

// countBlock counts the points [lo, hi) of each cell into block b's
// row of blockStart.
func (r *fftRepulsion) countBlock(lo, hi, b int) {
	cells := r.nx * r.ny
	h := r.blockStart[b*cells : (b+1)*cells]
	clear(h)
	for _, c := range r.cellOf[lo:hi] {
		h[c]++
	}
}

// tally counts the points of each cell (count), splits the cells into parts
// of about equal near-field work, and returns the work,
// Σ_c n_c Σ_{c' adjacent or equal} n_c' (each pair counted twice), and the
// number of occupied cells.
func (r *fftRepulsion) tally(n int) (int64, int) {
	cells := r.nx * r.ny
	r.count(n)
	// Work per cell: its pairs with the cells around it, plus the fixed
	// cost of its node potentials (worth about 4·cellNodes pairs).
	r.cellWork = grow64(r.cellWork, cells+1)
	var work, total int64
	occupied := 0
	for cy := 0; cy < r.ny; cy++ {
		for cx := 0; cx < r.nx; cx++ {
			c := cy*r.nx + cx
			cnt := int64(r.start[c+1] - r.start[c])
			var cost int64
			if cnt > 0 {
				var around int64
				for oy := max(cy-1, 0); oy <= min(cy+1, r.ny-1); oy++ {
					lo, hi := oy*r.nx+max(cx-1, 0), oy*r.nx+min(cx+1, r.nx-1)
					around += int64(r.start[hi+1] - r.start[lo])
				}
				work += cnt * around
				cost = cnt*around/2 + 4*cellNodes
				occupied++
			}
			total += cost
			r.cellWork[c+1] = total
		}
	}
	// Contiguous parts of about equal work, one per thread.
	r.parts = r.parts[:0]
	r.parts = append(r.parts, 0)
	for p := 1; p < r.threads; p++ {
		goal := total * int64(p) / int64(r.threads)
		c := sort.Search(cells, func(c int) bool { return r.cellWork[c+1] >= goal })
		r.parts = append(r.parts, max(c, r.parts[len(r.parts)-1]))
	}
	r.parts = append(r.parts, cells)
	return work, occupied
}

// bin sorts the points by cell (counting sort, stable in point id; each
// block of points placed by its own thread from the block offsets of the
// last tally, which must have counted the points in the current cells).
func (r *fftRepulsion) bin() {
	n := len(r.y) / 2
	r.order = grow32(r.order, n)
	r.sx, r.sy = grow(r.sx, n), grow(r.sy, n)
	r.rx, r.ry = growF32(r.rx, n), growF32(r.ry, n)
	r.team.For(n, r.loops.bin)
}

// binBlock places the points [lo, hi) of block b in the sorted order.
func (r *fftRepulsion) binBlock(lo, hi, b int) {
	cells := r.nx * r.ny
	next := r.blockStart[b*cells : (b+1)*cells]
	for i := lo; i < hi; i++ {
		c := r.cellOf[i]
		k := next[c]
		x, y := r.y[2*i], r.y[2*i+1]
		r.order[k] = int32(i)
		r.sx[k], r.sy[k] = x, y
		r.rx[k] = float32(x - (r.x0 + float64(int(c)%r.nx)*r.h))
		r.ry[k] = float32(y - (r.y0 + float64(int(c)/r.nx)*r.h))
		next[c]++
	}
}

// sortedWeights computes the Lagrange weights of the sorted points (bin),
// in the sorted order.
func (r *fftRepulsion) sortedWeights() {
	r.team.For(len(r.sx), r.loops.weights)
}

// weightsBlock is sortedWeights for the sorted points [lo, hi).
func (r *fftRepulsion) weightsBlock(lo, hi, _ int) {
	for k := lo; k < hi; k++ {
		_, ux := r.axis(r.sx[k], r.x0, r.nx)
		_, uy := r.axis(r.sy[k], r.y0, r.ny)
		w := (*[2 * interpNodes]float64)(r.wts[2*interpNodes*k:])
		wx, wy := lagrange(ux), lagrange(uy)
		copy(w[:interpNodes], wx[:])
		copy(w[interpNodes:], wy[:])
	}
}

// resize makes the per-size buffers and transforms fit lx × ly.
func (r *fftRepulsion) resize() {
	hw := r.lx/2 + 1
	r.spec = growComplex(r.spec, r.ly*hw)
	r.kw = grow(r.kw, r.ly*hw)
	r.kxIm = grow(r.kxIm, r.ly*hw)
	r.kyIm = grow(r.kyIm, r.ly*hw)
	if r.rows == nil || r.rows.n != r.lx {
		r.rows = newRPlan(r.lx)
	}
	if r.cols == nil || r.cols.n != r.ly {
		r.cols = newCPlan(r.ly)
	}
	for w := range r.workers {
		wk := &r.workers[w]
		wk.line = grow(wk.line, r.lx)
		wk.col = growComplex(wk.col, r.ly)
		wk.product = growComplex(wk.product, r.ly)
		wk.work = growComplex(wk.work, max(r.lx, r.ly))
	}
}

// kernelSpectra computes the transforms of K_x, K_y and K_w sampled at the
// node offsets of the current grid, wrapped onto the lx × ly periodic grid.
func (r *fftRepulsion) kernelSpectra() {
	r.kernelDelta = r.delta
	lx, ly, hw := r.lx, r.ly, r.lx/2+1
	for k, dst := range [][]float64{r.kxIm, r.kyIm, r.kw} {
		// Rows 0 … ly/2 of the kernel, transformed along x into spec. Each
		// kernel is odd or even along each axis (K_x odd in x, K_y odd in y,
		// even otherwise), so the columns past lx/2 are those before it,
		// negated for K_x, and the rows past ly/2 have the transforms of the
		// rows before it, negated for K_y: the values of evaluating them, bit
		// for bit, at a quarter of the kernel evaluations and half the row
		// transforms. The Nyquist offsets ±l/2 share one sample; leaving them
		// zero keeps the odd kernels exactly odd. (The convolution never uses
		// offsets beyond ±(l/2 − 1).)
		r.team.For(ly/2+1, func(lo, hi, block int) {
			wk := &r.workers[block]
			line := wk.line[:lx]
			for row := lo; row < hi; row++ {
				clear(line)
				if row != ly/2 {
					dy := float64(row) * r.delta
					for col := 0; col < lx/2; col++ {
						kx, ky, kw := r.tail.at(float64(col)*r.delta, dy)
						v := [3]float64{kx, ky, kw}[k]
						line[col] = v
						if col > 0 && k == 0 {
							line[lx-col] = -v
						} else if col > 0 {
							line[lx-col] = v
						}
					}
				}
				r.rows.coefficients(r.spec[row*hw:(row+1)*hw], line, wk.work)
			}
		})
		r.team.For(ly-ly/2-1, func(lo, hi, _ int) {
			for row := ly/2 + 1 + lo; row < ly/2+1+hi; row++ {
				src, out := r.spec[(ly-row)*hw:(ly-row+1)*hw], r.spec[row*hw:(row+1)*hw]
				if k == 1 {
					for c, v := range src {
						out[c] = -v
					}
				} else {
					copy(out, src)
				}
			}
		})
		scale := 1 / float64(lx*ly)
		r.team.For(hw, func(lo, hi, block int) {
			wk := &r.workers[block]
			for c := lo; c < hi; c++ {
				for row := 0; row < ly; row++ {
					wk.col[row] = r.spec[row*hw+c]
				}
				r.cols.transform(wk.col, wk.work, false)
				for row := 0; row < ly; row++ {
					if k == 2 {
						dst[row*hw+c] = real(wk.col[row]) * scale
					} else {
						dst[row*hw+c] = imag(wk.col[row]) * scale
					}
				}
			}
		})
	}
}

// nearBlocks computes the node-to-node kernels between a cell and its nine
// neighbours (itself included) for the current cell width.
func (r *fftRepulsion) nearBlocks() {
	r.blockH = r.h
	if r.nearKernel == nil {
		r.nearKernel = make([]float64, 9*cellNodes*blockRows)
	}
	for o := 0; o < 9; o++ {
		ox, oy := float64(o%3-1), float64(o/3-1)
		for t := 0; t < cellNodes; t++ {
			for s := 0; s < cellNodes; s++ {
				// Target node t of cell c, source node s of cell c + o.
				dx := float64(t%interpNodes-s%interpNodes)*r.delta - ox*r.h
				dy := float64(t/interpNodes-s/interpNodes)*r.delta - oy*r.h
				kx, ky, kw := r.tail.at(dx, dy)
				col := r.nearKernel[(o*cellNodes+s)*blockRows:]
				col[3*t], col[3*t+1], col[3*t+2] = kx, ky, kw
			}
		}
	}
}

// spread adds each point's unit charge to the nodes of its cell, with the
// Lagrange weights as coefficients, on one grid per block, then sums the
// block grids into the first in block order.
func (r *fftRepulsion) spread() bool {
	r.team.For(len(r.y)/2, r.loops.spread)
	if r.stopped.Load() {
		return false
	}
	r.team.For(r.mx*r.my, r.loops.sumGrids)
	return true
}

// spreadBlock spreads the points [lo, hi) on block's grid.
func (r *fftRepulsion) spreadBlock(lo, hi, block int) {
	const d = interpNodes - 1
	mx, cells := r.mx, r.mx*r.my
	grid := r.charge[block*cells : (block+1)*cells]
	clear(grid)
	for i := lo; i < hi; i++ {
		if (i-lo)%stopEvery == stopEvery-1 && r.halt() {
			return
		}
		c := int(r.cellOf[i])
		base := (c/r.nx)*d*mx + (c%r.nx)*d
		w := r.wts[2*interpNodes*i:]
		for b := 0; b < interpNodes; b++ {
			row := grid[base+b*mx:]
			wy := w[interpNodes+b]
			for a := 0; a < interpNodes; a++ {
				row[a] += wy * w[a]
			}
		}
	}
}

// sumGridsBlock adds the nodes [lo, hi) of the blocks' grids into the
// first grid, in block order.
func (r *fftRepulsion) sumGridsBlock(lo, hi, _ int) {
	cells := r.mx * r.my
	blocks := min(r.threads, len(r.y)/2)
	sum := r.charge[lo:hi]
	for b := 1; b < blocks; b++ {
		part := r.charge[b*cells+lo : b*cells+hi]
		for c := range sum {
			sum[c] += part[c]
		}
	}
}

// spreadCells is spread for the points sorted by cell (near field): it
// computes each occupied cell's charges on its own nodes, which the near
// field needs, from the sorted points' weights (one contiguous part of the
// cells per thread), then adds the cells' charges into the charge grid, the
// rows of cells in two passes (even, then odd) whose nodes do not overlap,
// so that each node sums its cells in a fixed order.
func (r *fftRepulsion) spreadCells() bool {
	r.cellQ = grow(r.cellQ, r.nx*r.ny*cellNodes)
	r.team.For(len(r.parts)-1, r.loops.cellCharges)
	if r.halt() {
		return false
	}
	clear(r.charge[:r.mx*r.my])
	for r.pass = 0; r.pass < 2; r.pass++ {
		r.team.For((r.ny-r.pass+1)/2, r.loops.cellRows)
	}
	return !r.halt()
}

// cellChargesBlock computes the charges on the nodes of the cells of the
// parts [lo, hi).
func (r *fftRepulsion) cellChargesBlock(lo, hi, _ int) {
	for p := lo; p < hi; p++ {
		for c := r.parts[p]; c < r.parts[p+1]; c++ {
			q := (*[cellNodes]float64)(r.cellQ[c*cellNodes:])
			*q = [cellNodes]float64{}
			for k := r.start[c]; k < r.start[c+1]; k++ {
				w := (*[2 * interpNodes]float64)(r.wts[2*interpNodes*int(k):])
				for b := 0; b < interpNodes; b++ {
					wy, row := w[interpNodes+b], q[b*interpNodes:(b+1)*interpNodes]
					for a := range row {
						row[a] += wy * w[a]
					}
				}
			}
		}
	}
}

// cellRowsBlock adds the charges of the cells of rows 2·row + pass, row in
// [lo, hi), into the charge grid.
func (r *fftRepulsion) cellRowsBlock(lo, hi, _ int) {
	const d = interpNodes - 1
	nx, mx := r.nx, r.mx
	charge := r.charge[:mx*r.my]
	for row := lo; row < hi; row++ {
		cy := 2*row + r.pass
		for cx := 0; cx < nx; cx++ {
			c := cy*nx + cx
			if r.start[c] == r.start[c+1] {
				continue
			}
			q := r.cellQ[c*cellNodes : (c+1)*cellNodes]
			base := cy*d*mx + cx*d
			for b := 0; b < interpNodes; b++ {
				dst := charge[base+b*mx : base+b*mx+interpNodes]
				for a := range dst {
					dst[a] += q[b*interpNodes+a]
				}
			}
		}
	}
}

// convolve transforms the charge grid, multiplies by the three kernel
// spectra and transforms back, leaving the potentials in r.pot. The rows
// and columns go in chunks handed out as the goroutines come free
// (team.Chunks; each line is transformed on its own, with the worker's
// buffers).
func (r *fftRepulsion) convolve() bool {
	// Rows: real transforms of the my charged rows; the others are zero.
	r.team.Chunks(r.my, rowChunk, r.loops.rowsForward)
	if r.halt() {
		return false
	}
	// Columns: forward transform, then for each kernel the product and its
	// inverse, of which only the first my rows are kept.
	r.team.Chunks(r.lx/2+1, columnChunk, r.loops.columns)
	if r.halt() {
		return false
	}
	// Rows: inverse real transforms of the rows that hold nodes.
	r.team.Chunks(3*r.my, rowChunk, r.loops.rowsInverse)
	return true
}

// rowsForwardBlock transforms the charge grid's rows [lo, hi) into spec,
// with worker's buffers.
func (r *fftRepulsion) rowsForwardBlock(lo, hi, worker int) {
	mx, hw := r.mx, r.lx/2+1
	wk := &r.workers[worker]
	for row := lo; row < hi; row++ {
		r.rows.coefficients(r.spec[row*hw:(row+1)*hw], r.charge[row*mx:(row+1)*mx], wk.work)
	}
}

// columnsBlock transforms the columns [lo, hi) of spec, multiplies them by
// the three kernels' spectra and transforms the products back into half.
func (r *fftRepulsion) columnsBlock(lo, hi, worker int) {
	my, ly, hw := r.my, r.ly, r.lx/2+1
	cells := my * hw
	wk := &r.workers[worker]
	for c := lo; c < hi; c++ {
		// Rows my … ly−1 of the padded grid are zero.
		for row := 0; row < my; row++ {
			wk.col[row] = r.spec[row*hw+c]
		}
		clear(wk.col[my:ly])
		r.cols.transform(wk.col, wk.work, false)
		for k := 0; k < 3; k++ {
			for row := 0; row < ly; row++ {
				v := wk.col[row]
				switch k {
				case 0: // multiply by i·Im K̂_x
					s := r.kxIm[row*hw+c]
					wk.product[row] = complex(-imag(v)*s, real(v)*s)
				case 1:
					s := r.kyIm[row*hw+c]
					wk.product[row] = complex(-imag(v)*s, real(v)*s)
				case 2:
					s := r.kw[row*hw+c]
					wk.product[row] = complex(real(v)*s, imag(v)*s)
				}
			}
			r.cols.transform(wk.product, wk.work, true)
			out := r.half[k*cells:]
			for row := 0; row < my; row++ {
				out[row*hw+c] = wk.product[row]
			}
		}
	}
}

// rowsInverseBlock transforms the rows [lo, hi) of half back into the
// potentials.
func (r *fftRepulsion) rowsInverseBlock(lo, hi, worker int) {
	mx, hw := r.mx, r.lx/2+1
	wk := &r.workers[worker]
	for kr := lo; kr < hi; kr++ {
		r.rows.sequence(r.pot[kr*mx:(kr+1)*mx], r.half[kr*hw:(kr+1)*hw], wk.work)
	}
}

// interpolate evaluates the three potentials at each point with the same
// Lagrange weights used to spread, writing the repulsive sums to r.dst and
// Σ_j w_ij to r.zval.
func (r *fftRepulsion) interpolate() bool {
	r.team.For(len(r.dst)/2, r.loops.interpolate)
	return !r.stopped.Load()
}

// interpolateBlock is interpolate for the points [lo, hi).
func (r *fftRepulsion) interpolateBlock(lo, hi, _ int) {
	const d = interpNodes - 1
	mx, cells := r.mx, r.mx*r.my
	pot := r.pot[:3*cells]
	for i := lo; i < hi; i++ {
		if (i-lo)%stopEvery == stopEvery-1 && r.halt() {
			return
		}
		c := int(r.cellOf[i])
		base := (c/r.nx)*d*mx + (c%r.nx)*d
		w := r.wts[2*interpNodes*i:]
		var f [3]float64
		for b := 0; b < interpNodes; b++ {
			wy := w[interpNodes+b]
			for a := 0; a < interpNodes; a++ {
				wt, node := wy*w[a], base+b*mx+a
				f[0] += wt * pot[node]
				f[1] += wt * pot[cells+node]
				f[2] += wt * pot[2*cells+node]
			}
		}
		r.dst[2*i], r.dst[2*i+1], r.zval[i] = f[0], f[1], f[2]
	}
}

// interpolateNear is interpolate with the near field precorrected, for the
// points sorted by cell and the cells' charges of spreadCells. For each
// occupied cell c: the potentials on its nodes less the grid's contribution
// from the charges of cells c + o, o ∈ [−1,1]², interpolated to its points;
// plus the exact sums over the pairs of points in those cells, each pair
// visited once (c with itself and with its four forward neighbours) and
// added to both points. The cells are split into one contiguous part per
// thread with about equal work; each part accumulates into its own arrays,
// which are summed in part order.
func (r *fftRepulsion) interpolateNear() bool {
	n, parts := len(r.sx), len(r.parts)-1
	r.accX, r.accY, r.accW = growF32(r.accX, parts*n), growF32(r.accY, parts*n), growF32(r.accW, parts*n)
	r.team.For(parts, r.loops.near)
	if r.stopped.Load() {
		return false
	}
	r.team.For(n, r.loops.gather)
	return true
}

// nearBlock is interpolateNear's work for the parts [lo, hi).
func (r *fftRepulsion) nearBlock(lo, hi, _ int) {
	const d = interpNodes - 1
	n, nx, ny, mx, grid := len(r.sx), r.nx, r.ny, r.mx, r.mx*r.my
	for p := lo; p < hi; p++ {
		ax, ay, aw := r.accX[p*n:(p+1)*n], r.accY[p*n:(p+1)*n], r.accW[p*n:(p+1)*n]
		clear(ax)
		clear(ay)
		clear(aw)
		for c := r.parts[p]; c < r.parts[p+1]; c++ {
			if c%64 == 0 && r.halt() {
				return
			}
			if r.start[c] == r.start[c+1] {
				continue
			}
			cx, cy := c%nx, c/nx
			// v = grid potentials on the cell's nodes − the near part.
			// Node t's three potentials are v[3t], v[3t+1], v[3t+2].
			var v [blockRows]float64
			base := cy*d*mx + cx*d
			for t := 0; t < cellNodes; t++ {
				node := base + (t/interpNodes)*mx + t%interpNodes
				v[3*t], v[3*t+1], v[3*t+2] = r.pot[node], r.pot[grid+node], r.pot[2*grid+node]
			}
			for o := 0; o < 9; o++ {
				sx, sy := cx+o%3-1, cy+o/3-1
				if sx < 0 || sx >= nx || sy < 0 || sy >= ny {
					continue
				}
				src := sy*nx + sx
				if r.start[src] == r.start[src+1] {
					continue
				}
				subBlock(&v, r.nearKernel[o*cellNodes*blockRows:(o+1)*cellNodes*blockRows], r.cellQ[src*cellNodes:(src+1)*cellNodes])
			}
			for k := r.start[c]; k < r.start[c+1]; k++ {
				w := (*[2 * interpNodes]float64)(r.wts[2*interpNodes*int(k):])
				var f [3]float64
				for b := 0; b < interpNodes; b++ {
					var g [3]float64
					row := v[3*interpNodes*b : 3*interpNodes*(b+1)]
					for a := 0; a < interpNodes; a++ {
						g[0] += w[a] * row[3*a]
						g[1] += w[a] * row[3*a+1]
						g[2] += w[a] * row[3*a+2]
					}
					wy := w[interpNodes+b]
					f[0] += wy * g[0]
					f[1] += wy * g[1]
					f[2] += wy * g[2]
				}
				ax[k] += float32(f[0])
				ay[k] += float32(f[1])
				aw[k] += float32(f[2] + 1) // the exact self term, w_ii = 1
			}
			// Exact pairs: within the cell, then with the forward neighbours.
			r.pairs(ax, ay, aw, r.start[c], r.start[c+1], r.start[c], r.start[c+1], 0, 0, true)
			for _, o := range [4][2]int{{1, 0}, {-1, 1}, {0, 1}, {1, 1}} {
				sx, sy := cx+o[0], cy+o[1]
				if sx < 0 || sx >= nx || sy >= ny {
					continue
				}
				src := sy*nx + sx
				// In the neighbour's frame, the cell's corner lies at −o·h.
				ox, oy := float32(-float64(o[0])*r.h), float32(-float64(o[1])*r.h)
				r.pairs(ax, ay, aw, r.start[c], r.start[c+1], r.start[src], r.start[src+1], ox, oy, false)
			}
		}
	}
}

// gatherBlock sums the parts' accumulators for the sorted points [lo, hi)
// in part order and writes them to the points' own places in r.dst and
// r.zval.
func (r *fftRepulsion) gatherBlock(lo, hi, _ int) {
	n, parts := len(r.sx), len(r.parts)-1
	for k := lo; k < hi; k++ {
		var f [3]float64
		for p := 0; p < parts; p++ {
			f[0] += float64(r.accX[p*n+k])
			f[1] += float64(r.accY[p*n+k])
			f[2] += float64(r.accW[p*n+k])
		}
		i := r.order[k]
		r.dst[2*i], r.dst[2*i+1], r.zval[i] = f[0], f[1], f[2]
	}
}

// pairs adds the exact kernel sums between the sorted points [alo, ahi) and
// [blo, bhi) to the sums (ax, ay, aw), each pair once to both points, in
// float32 (pairSums). The coordinates are those relative to the corners of
// the points' cells; (ox, oy) is the corner of the first range's cell
// relative to the second's. With same, the two ranges are one cell and only
// pairs a < b count.
func (r *fftRepulsion) pairs(ax, ay, aw []float32, alo, ahi, blo, bhi int32, ox, oy float32, same bool) {
	for a := alo; a < ahi; a++ {
		from := blo
		if same {
			from = a + 1
		}
		if from >= bhi {
			continue
		}
		xa, ya := r.rx[a]+ox, r.ry[a]+oy
		var fx, fy, fw float64
		if r.tail.cauchy() {
			fx, fy, fw = pairSums(xa, ya, r.rx[from:bhi], r.ry[from:bhi], ax[from:bhi], ay[from:bhi], aw[from:bhi])
		} else {
			fx, fy, fw = pairSumsTail(xa, ya, r.tail, r.rx[from:bhi], r.ry[from:bhi], ax[from:bhi], ay[from:bhi], aw[from:bhi])
		}
		ax[a] += float32(fx)
		ay[a] += float32(fy)
		aw[a] += float32(fw)
	}
}

// grow returns s resized to n, reallocating only when its capacity is short.
func grow(s []float64, n int) []float64 {
	if cap(s) < n {
		return make([]float64, n)
	}
	return s[:n]
}

// growF32 is grow for float32 slices.
func growF32(s []float32, n int) []float32 {
	if cap(s) < n {
		return make([]float32, n)
	}
	return s[:n]
}

// grow64 is grow for int64 slices.
func grow64(s []int64, n int) []int64 {
	if cap(s) < n {
		return make([]int64, n)
	}
	return s[:n]
}

// grow32 is grow for int32 slices.
func grow32(s []int32, n int) []int32 {
	if cap(s) < n {
		return make([]int32, n)
	}
	return s[:n]
}

// growComplex is grow for complex slices.
func growComplex(s []complex128, n int) []complex128 {
	if cap(s) < n {
		return make([]complex128, n)
	}
	return s[:n]
}
