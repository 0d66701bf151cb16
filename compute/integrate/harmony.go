package integrate

import (
	"context"
	"fmt"
	"math"
	"math/rand/v2"
	"slices"

	"lodestone/compute/atlas"
	"lodestone/compute/parallel"
)

// chunkCells is the number of storage positions in an aligned chunk: cells
// are grouped by their combination of levels within each chunk, and the
// assignment pass works through a block in pieces of at most this many
// cells. A multiple of tileRows.
const chunkCells = 240

// Streams of the random generator (the second word of its PCG seed).
const (
	streamOrder   = 0x4a4d_0001
	streamCentres = 0x4a4d_0002
)

// Result is the outcome of Harmony.
type Result struct {
	// Corrected holds Ẑ, the corrected components: N × d, rows in the
	// order of the input.
	Corrected *atlas.Dense
	// Clusters is the number of clusters K used.
	Clusters int
	// Rounds is the number of rounds of clustering and correction run.
	Rounds int
	// Converged reports whether the objective fell by less than the
	// tolerance between the last two rounds (false when the run stopped at
	// the round limit).
	Converged bool
	// Objective holds J (see the package documentation): after the initial
	// assignment, then after every clustering iteration, in order.
	Objective []float64
	// RoundEnd holds, for each round, the index in Objective of its last
	// clustering iteration, whose value is the round's objective.
	RoundEnd []int
}

// Harmony corrects the components z (N cells × d) for the batch columns
// covs, as the package documentation describes: starting from spherical
// k-means centroids, each round runs up to o.Iterations clustering
// iterations (centroids by (4), then assignments by (5) block by block) and
// then the correction (6)–(7) of the input components; the run ends when the
// objective J falls by less than o.Tolerance between rounds, or after
// o.Rounds rounds.
//
// Preconditions: z holds finite values and at least 2 rows; covs holds at
// least one covariate, each with one code per row in [0, len(Levels)), a
// finite Theta ≥ 0 and a finite Lambda > 0 (NewCovariate makes such a
// covariate from an annotation column). Harmony returns an error wrapping
// ErrShape, ErrNotFinite or ErrParam otherwise, and ctx.Err() when ctx is
// cancelled (checked before every block of cells). The result depends only on
// the inputs, o.Seed and the thread count.
func Harmony(ctx context.Context, z *atlas.Dense, covs []Covariate, o Options) (*Result, error) {
	if z == nil || z.Rows < 2 || z.Cols < 1 || len(z.Data) != z.Rows*z.Cols {
		return nil, fmt.Errorf("integrate: components: %w (want at least 2 cells and 1 component)", ErrShape)
	}
	n := z.Rows
	if len(covs) == 0 {
		return nil, fmt.Errorf("integrate: %w: no batch column", ErrParam)
	}
	for _, c := range covs {
		if len(c.Codes) != n {
			return nil, fmt.Errorf("integrate: batch column %q: %w: %d values for %d cells", c.Name, ErrShape, len(c.Codes), n)
		}
		for i, v := range c.Codes {
			if v < 0 || int(v) >= len(c.Levels) {
				return nil, fmt.Errorf("integrate: batch column %q, cell %d: %w: code %d outside its %d levels", c.Name, i, ErrParam, v, len(c.Levels))
			}
		}
		if !(c.Theta >= 0) || math.IsInf(c.Theta, 0) {
			return nil, fmt.Errorf("integrate: batch column %q: %w: theta = %v (want a number ≥ 0)", c.Name, ErrParam, c.Theta)
		}
		if !(c.Lambda > 0) || math.IsInf(c.Lambda, 0) {
			return nil, fmt.Errorf("integrate: batch column %q: %w: lambda = %v (want a positive number)", c.Name, ErrParam, c.Lambda)
		}
	}
	o, err := o.withDefaults(n)
	if err != nil {
		return nil, err
	}
	for i, v := range z.Data {
		if math.IsNaN(float64(v)) || math.IsInf(float64(v), 0) {
			return nil, fmt.Errorf("integrate: components, cell %d, component %d: %w", i/z.Cols, i%z.Cols, ErrNotFinite)
		}
	}
	h := newHarmony(z, covs, o)
	return h.run(ctx)
}

// harmony is the state of one run. Cells are held in storage order: position
// s holds input row order[s]. Arrays of cells have npad ≥ n+5 rows so that
// the kernel may read whole groups of six rows past any position; the rows
// past n are zero.
type harmony struct {
	o        Options
	threads  int
	n, npad  int
	d, dz    int // components; row length of z and zcos (a multiple of tileRows)
	k, kp    int // clusters; row length of r and yt (a multiple of tileCols)
	dp       int // row length of the correction matrices (a multiple of tileCols)
	sigma    float64
	levels   int       // levels of all covariates together (L)
	pi       []float64 // per level, its share of the cells
	theta    []float64 // per level, the θ of its column
	lambda   []float64 // per level, the λ of its column
	ncov     int
	combos   int     // distinct combinations of levels
	comboLev []int32 // combos × ncov: the (global) level of each column
	order    []int32 // storage position → input row
	combo    []int32 // storage position → combination (npad entries)

	z    []float32 // npad × dz: the input components
	zcos []float32 // npad × dz: the corrected components scaled to unit length
	r    []float32 // npad × kp: the soft assignments
	yt   []float32 // dz × kp: the centroids, one per column
	out  *atlas.Dense

	blocks  []int     // boundaries of the assignment blocks
	contrib []float64 // per block: k × (levels+1) sums of R (level columns, then all)
	total   []float64 // k × (levels+1): the sum of contrib over the blocks
	logpen  []float32 // combos × kp: log of the penalty factor of (5) minus 2/σ (zero past K)
	yacc    []float64 // dz × kp: centroid sums
	workers []worker
	// iterated, when not nil, is called after every clustering iteration
	// with its objective, before the centroids move (tests evaluate the
	// objective independently there).
	iterated func(j float64)
}

// worker is the scratch space of one goroutine.
type worker struct {
	dots   []float32 // chunkCells+tileRows rows × kp
	tile   []float32 // max(dz × kp, tileRows × dp)
	a, ex  []float64 // kp
	ysum   []float64 // dz × kp
	sums   []float64 // combos × kp: Σ R over the cells of each combination
	s      []float64 // combos × d × k: Σ R_ki Z_i over the cells of each combination
	km, en float64   // k-means error and Σ R log R of the cells assigned
}

func ceilTo(x, m int) int { return (x + m - 1) / m * m }

func newHarmony(z *atlas.Dense, covs []Covariate, o Options) *harmony {
	n, d := z.Rows, z.Cols
	h := &harmony{o: o, threads: parallel.Threads(o.Threads), n: n, npad: n + tileRows, d: d,
		dz: ceilTo(d, tileRows), k: o.Clusters, kp: ceilTo(o.Clusters, tileCols), dp: ceilTo(d, tileCols),
		sigma: o.Sigma, ncov: len(covs)}
	// Levels of all columns, one after another.
	off := make([]int, len(covs))
	for c, cv := range covs {
		off[c] = h.levels
		counts := make([]int, len(cv.Levels))
		for _, v := range cv.Codes {
			counts[v]++
		}
		for _, m := range counts {
			h.pi = append(h.pi, float64(m)/float64(n))
			h.theta = append(h.theta, cv.Theta)
			h.lambda = append(h.lambda, cv.Lambda)
		}
		h.levels += len(cv.Levels)
	}
	// Combinations, numbered in order of first appearance.
	ids := map[string]int32{}
	cellCombo := make([]int32, n)
	key := make([]byte, 4*len(covs))
	for i := 0; i < n; i++ {
		for c, cv := range covs {
			v := int32(off[c]) + cv.Codes[i]
			key[4*c], key[4*c+1], key[4*c+2], key[4*c+3] = byte(v), byte(v>>8), byte(v>>16), byte(v>>24)
		}
		id, ok := ids[string(key)]
		if !ok {
			id = int32(len(ids))
			ids[string(key)] = id
			for c, cv := range covs {
				h.comboLev = append(h.comboLev, int32(off[c])+cv.Codes[i])
			}
		}
		cellCombo[i] = id
	}
	h.combos = len(ids)

	// Storage order: a seeded random permutation, then grouped by
	// combination within each aligned chunk.
	rng := rand.New(rand.NewPCG(uint64(o.Seed), streamOrder))
	h.order = make([]int32, n)
	for i := range h.order {
		h.order[i] = int32(i)
	}
	for i := n - 1; i > 0; i-- {
		j := rng.IntN(i + 1)
		h.order[i], h.order[j] = h.order[j], h.order[i]
	}
	for s := 0; s < n; s += chunkCells {
		ch := h.order[s:min(s+chunkCells, n)]
		slices.SortStableFunc(ch, func(a, b int32) int { return int(cellCombo[a] - cellCombo[b]) })
	}
	h.combo = make([]int32, h.npad)
	h.z = make([]float32, h.npad*h.dz)
	h.zcos = make([]float32, h.npad*h.dz)
	for s, i := range h.order {
		h.combo[s] = cellCombo[i]
		copy(h.z[s*h.dz:s*h.dz+d], z.Row(int(i)))
	}
	parallel.For(n, h.threads, func(lo, hi, _ int) {
		for s := lo; s < hi; s++ {
			unitRow(h.zcos[s*h.dz:s*h.dz+d], h.z[s*h.dz:s*h.dz+d])
		}
	})
	h.r = make([]float32, h.npad*h.kp)
	h.yt = make([]float32, h.dz*h.kp)
	h.yacc = make([]float64, h.dz*h.kp)
	h.out = atlas.NewDense(n, d)

	bs := max(1, int(math.Ceil(o.BlockShare*float64(n))))
	for b := 0; b < n; b += bs {
		h.blocks = append(h.blocks, b)
	}
	h.blocks = append(h.blocks, n)
	w := h.k * (h.levels + 1)
	h.contrib = make([]float64, (len(h.blocks)-1)*w)
	h.total = make([]float64, w)
	h.logpen = make([]float32, h.combos*h.kp)

	h.workers = make([]worker, h.threads)
	for t := range h.workers {
		h.workers[t] = worker{
			dots: make([]float32, (chunkCells+tileRows)*h.kp),
			tile: make([]float32, max(h.dz*h.kp, tileRows*h.dp)),
			a:    make([]float64, h.kp), ex: make([]float64, h.kp),
			ysum: make([]float64, h.dz*h.kp),
			sums: make([]float64, h.combos*h.kp),
			s:    make([]float64, h.combos*h.d*h.k),
		}
	}
	return h
}

// unitRow writes src scaled to unit Euclidean length into dst (zeros stay
// zeros).
func unitRow(dst, src []float32) {
	var s float64
	for _, v := range src {
		s += float64(v) * float64(v)
	}
	if s == 0 {
		copy(dst, src)
		return
	}
	inv := 1 / math.Sqrt(s)
	for j, v := range src {
		dst[j] = float32(float64(v) * inv)
	}
}

// run performs the whole correction.
func (h *harmony) run(ctx context.Context) (*Result, error) {
	o := h.o
	res := &Result{Clusters: h.k}
	total := int64(o.Rounds * (o.Iterations + 1))
	var done int64
	report := func() { o.Progress.Report(done, total) }
	report()

	if err := h.initCentroids(ctx); err != nil {
		return nil, err
	}
	// The initial assignment by distance alone (θ = 0 in (5)), which also
	// fills O and E.
	j0, err := h.assign(ctx, false, false)
	if err != nil {
		return nil, err
	}
	res.Objective = append(res.Objective, j0)
	last := math.NaN()
	for round := 1; round <= o.Rounds; round++ {
		if err := h.centroids(ctx); err != nil {
			return nil, err
		}
		start := len(res.Objective)
		for it := 1; it <= o.Iterations; it++ {
			// Each pass assigns with the centroids in yt and gathers the
			// sums of the next centroids (4) as it goes.
			j, err := h.assign(ctx, true, true)
			if err != nil {
				return nil, err
			}
			if h.iterated != nil {
				h.iterated(j)
			}
			h.normaliseCentroids()
			res.Objective = append(res.Objective, j)
			done++
			report()
			if clusteringConverged(res.Objective[start:], o.ClusterTolerance) {
				break
			}
		}
		done = int64(round * (o.Iterations + 1))
		res.RoundEnd = append(res.RoundEnd, len(res.Objective)-1)
		if err := h.correct(ctx); err != nil {
			return nil, err
		}
		report()
		res.Rounds = round
		j := res.Objective[len(res.Objective)-1]
		if round > 1 && (last-j)/math.Abs(last) < o.Tolerance {
			res.Converged = true
			break
		}
		last = j
	}
	done = total
	report()
	res.Corrected = h.out
	return res, nil
}

// clusteringConverged reports whether the mean of the last
// ConvergenceWindow values of j falls by less than tol (relative) from the
// mean of the window before.
func clusteringConverged(j []float64, tol float64) bool {
	w := ConvergenceWindow
	if len(j) < 2*w {
		return false
	}
	var prev, cur float64
	for _, v := range j[len(j)-2*w : len(j)-w] {
		prev += v
	}
	for _, v := range j[len(j)-w:] {
		cur += v
	}
	return (prev-cur)/math.Abs(prev) < tol
}

// assign runs the assignment step (5) over every block of cells, with the
// diversity penalty when penalty is set (without it, the assignments are
// the soft k-means assignments to the centroids), and returns the objective
// J of the new assignments and the current centroids. With sums set it
// also gathers the centroid sums of (4) from the new assignments into yacc.
func (h *harmony) assign(ctx context.Context, penalty, sums bool) (float64, error) {
	w := h.k * (h.levels + 1)
	// O and E from the blocks' sums, afresh, so that rounding does not
	// accumulate over the iterations.
	clear(h.total)
	for b := 0; b+1 < len(h.blocks); b++ {
		for e, v := range h.contrib[b*w : (b+1)*w] {
			h.total[e] += v
		}
	}
	for t := range h.workers {
		wk := &h.workers[t]
		wk.km, wk.en = 0, 0
		if sums {
			clear(wk.ysum)
		}
	}
	for b := 0; b+1 < len(h.blocks); b++ {
		if err := ctx.Err(); err != nil {
			return 0, err
		}
		lo, hi := h.blocks[b], h.blocks[b+1]
		blk := h.contrib[b*w : (b+1)*w]
		// Take the block out of O and E.
		for e, v := range blk {
			h.total[e] -= v
		}
		if penalty || b == 0 {
			h.penalties(penalty)
		}
		for t := range h.workers {
			clear(h.workers[t].sums)
		}
		parallel.For(hi-lo, h.threads, func(a, z, t int) {
			h.workers[t].assign(h, lo+a, lo+z, sums)
		})
		// Put it back with its new assignments.
		clear(blk)
		L := h.levels
		for t := range h.workers {
			sum := h.workers[t].sums
			for c := 0; c < h.combos; c++ {
				lev := h.comboLev[c*h.ncov : (c+1)*h.ncov]
				for k, v := range sum[c*h.kp : c*h.kp+h.k] {
					row := blk[k*(L+1) : (k+1)*(L+1)]
					row[L] += v
					for _, l := range lev {
						row[l] += v
					}
				}
			}
		}
		for e, v := range blk {
			h.total[e] += v
		}
	}
	var km, en float64
	for t := range h.workers {
		km += h.workers[t].km
		en += h.workers[t].en
	}
	return km + h.sigma*en + h.sigma*h.diversity(), nil
}

// diversity returns Σ_k Σ_l θ_l O_kl log((O_kl + 1)/(E_kl + 1)), term (3)
// of the objective without its factor σ, from the current totals.
func (h *harmony) diversity() float64 {
	L := h.levels
	var s float64
	for k := 0; k < h.k; k++ {
		row := h.total[k*(L+1) : (k+1)*(L+1)]
		for l := 0; l < L; l++ {
			if h.theta[l] == 0 {
				continue
			}
			o, e := row[l], h.pi[l]*row[L]
			s += h.theta[l] * o * math.Log((o+1)/(e+1))
		}
	}
	return s
}

// penalties sets logpen, for every combination of levels and cluster, to
// the logarithm of the penalty factor of (5) from the current O and E,
//
//	log pen_ck = Σ_columns θ_l (log(E_kl + 1) − log(O_kl + 1)),  l the column's level in c,
//
// (0 without penalty) minus 2/σ, the constant of the distance term.
func (h *harmony) penalties(penalty bool) {
	L := h.levels
	shift := 2 / h.sigma
	for c := 0; c < h.combos; c++ {
		lev := h.comboLev[c*h.ncov : (c+1)*h.ncov]
		lp := h.logpen[c*h.kp : (c+1)*h.kp]
		for k := 0; k < h.k; k++ {
			row := h.total[k*(L+1) : (k+1)*(L+1)]
			var s float64
			for _, l := range lev {
				if th := h.theta[l]; th != 0 && penalty {
					s += th * (math.Log1p(h.pi[l]*row[L]) - math.Log1p(row[l]))
				}
			}
			lp[k] = float32(s - shift)
		}
	}
}

// assign reassigns the cells at storage positions [lo, hi) by (5) with the
// penalties in h.logpen, adds their k-means error and Σ R log R to wk.km and
// wk.en, their new assignments to wk.sums by combination, and, with sums set,
// their terms of the centroid sums (4) to wk.ysum.
func (wk *worker) assign(h *harmony, lo, hi int, sums bool) {
	kp, dz, K := h.kp, h.dz, h.k
	scale := float32(2 / h.sigma)
	for s := lo; s < hi; s += chunkCells {
		e := min(s+chunkCells, hi)
		for g := s; g < e; g += tileRows {
			mm6x16(h.zcos[g*dz:], dz, 1, h.yt, kp, wk.dots[(g-s)*kp:], kp, h.d, kp/tileCols)
		}
		for i := s; i < e; i++ {
			c := int(h.combo[i])
			// −‖Z̃_i − Y_k‖²/σ = 2(Y_k·Z̃_i − 1)/σ, plus the log penalty.
			sum, t0, t1, t2 := softmaxRow(wk.dots[(i-s)*kp:(i-s+1)*kp], h.logpen[c*kp:(c+1)*kp],
				h.r[i*kp:(i+1)*kp], wk.sums[c*kp:(c+1)*kp], K, scale)
			wk.km += 2 * (float64(t0) - float64(t2))
			wk.en += float64(t1) - float64(t0)*math.Log(float64(sum))
		}
		if sums {
			wk.centroidSums(h, s, e)
		}
	}
}

// centroidSums adds Σ_i R_ki Z̃_i over the storage positions [s, e) (at most
// chunkCells) to wk.ysum.
func (wk *worker) centroidSums(h *harmony, s, e int) {
	kp, dz := h.kp, h.dz
	for r0 := 0; r0 < dz; r0 += tileRows {
		mm6x16(h.zcos[s*dz+r0:], 1, dz, h.r[s*kp:], kp, wk.tile[r0*kp:], kp, e-s, kp/tileCols)
	}
	for j := 0; j < h.d; j++ {
		dst := wk.ysum[j*kp : j*kp+h.k]
		for k, v := range wk.tile[j*kp : j*kp+h.k] {
			dst[k] += float64(v)
		}
	}
}

// centroids sets the centroids by (4) from the current assignments.
func (h *harmony) centroids(ctx context.Context) error {
	for t := range h.workers {
		clear(h.workers[t].ysum)
	}
	chunks := (h.n + chunkCells - 1) / chunkCells
	parallel.For(chunks, h.threads, func(clo, chi, t int) {
		for ch := clo; ch < chi; ch++ {
			if ctx.Err() != nil {
				return
			}
			h.workers[t].centroidSums(h, ch*chunkCells, min((ch+1)*chunkCells, h.n))
		}
	})
	if err := ctx.Err(); err != nil {
		return err
	}
	h.normaliseCentroids()
	return nil
}

// normaliseCentroids sums the workers' centroid sums in worker order and
// sets each centroid to its sum scaled to unit length. A cluster whose sum
// is zero keeps its centroid.
func (h *harmony) normaliseCentroids() {
	kp := h.kp
	clear(h.yacc)
	for t := range h.workers {
		for e, v := range h.workers[t].ysum {
			h.yacc[e] += v
		}
	}
	for k := 0; k < h.k; k++ {
		var s float64
		for j := 0; j < h.d; j++ {
			v := h.yacc[j*kp+k]
			s += v * v
		}
		if s == 0 {
			continue
		}
		inv := 1 / math.Sqrt(s)
		for j := 0; j < h.d; j++ {
			h.yt[j*kp+k] = float32(h.yacc[j*kp+k] * inv)
		}
	}
}
