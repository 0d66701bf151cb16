package prep

import (
	"context"
	"math"

	"gonum.org/v1/gonum/blas"
	"gonum.org/v1/gonum/blas/blas64"
	"gonum.org/v1/gonum/floats"

	"lodestone/compute/atlas"
)

// Clip is the bound on standardised values: after per-column
// standardisation every value is clipped to [−Clip, Clip] (common practice).
const Clip = 10

// centred is the N × G matrix whose principal components are sought, kept
// implicit. From the input X (sparse or dense) and a per-column map f_j it is
//
//	S_ij = f_j(X_ij) − f_j(0)   for stored entries of a sparse X (S_ij = 0 elsewhere)
//	S_ij = f_j(X_ij)            for a dense X
//	A    = S − 1cᵀ,  c_j = (1/N) Σ_i S_ij
//
// with f_j(x) = x, or f_j(x) = clip((x − μ_j)/σ_j, −Clip, Clip) when
// standardising (μ_j and σ_j the mean and standard deviation of column j of
// X, f_j ≡ 0 when σ_j = 0).
//
// Centring A commutes with adding a constant to a column, so A is exactly the
// centred matrix of f_j(X_ij) — clipping included — although only stored
// entries are ever visited: an unstored zero of a sparse X maps to the
// column constant f_j(0), which the centring removes. In particular the
// implicit zeros of a column whose mean exceeds Clip standard deviations are
// clipped to −Clip like any other value below the bound.
type centred struct {
	n, g        int
	sp          source // the sparse X, read row by row; nil for a dense X
	dense       *atlas.Dense
	standardize bool
	mu, sd      []float64 // mean and standard deviation (denominator N−1) of each column of X
	inv, shift  []float64 // 1/σ_j (0 when σ_j = 0) and f_j(0), when standardising
	c           []float64 // column means of S
	stored      []int64   // stored entries per column (N for a dense X)
	totalVar    float64   // Σ_j of the variance (denominator N−1) of column j of A
	split       split     // rows into blocks and chunks
	threads     int
	bufs        *rowBuffers // per block: a row of a sparse X being read

	// Workspace of the products, reused between calls.
	acc     [][]float64 // per block: G × l accumulator of Aᵀ·src
	colSum  [][]float64 // per block: column sums of src
	scratch [][]float64 // per block, dense X only: transformed rows
	r       []float64   // cᵀ·src
}

// newCentred checks X and computes the column statistics of A. Exactly one
// of sp and dense is not nil.
func newCentred(ctx context.Context, sp source, dense *atlas.Dense, standardize bool, threads int) (*centred, error) {
	a := &centred{sp: sp, dense: dense, standardize: standardize, threads: threads}
	if sp != nil {
		a.n, a.g = sp.dims()
		a.split = sparseSplit(sp.ptr(), threads)
	} else {
		a.n, a.g = dense.Rows, dense.Cols
		a.split = evenSplit(a.n, threads, a.denseRows())
	}
	a.bufs = newRowBuffers(a.split.blocks())
	n := float64(a.n)

	// Means of X, counts of stored entries, and a check of every value.
	a.stored = make([]int64, a.g)
	sums, err := a.columnSums(ctx, func(j int, x float32) float64 { return float64(x) }, a.stored)
	if err != nil {
		return nil, err
	}
	a.mu = sums
	for j := range a.mu {
		a.mu[j] /= n
	}
	// Variances of X, from squared deviations (two passes for accuracy).
	sq, err := a.columnSums(ctx, func(j int, x float32) float64 {
		d := float64(x) - a.mu[j]
		return d * d
	}, nil)
	if err != nil {
		return nil, err
	}
	a.sd = make([]float64, a.g)
	for j := range a.sd {
		v := (sq[j] + float64(int64(a.n)-a.stored[j])*a.mu[j]*a.mu[j]) / (n - 1)
		a.sd[j] = math.Sqrt(v)
		if !standardize {
			a.totalVar += v
		}
	}
	if !standardize {
		a.c = a.mu
		return a, nil
	}

	a.inv = make([]float64, a.g)
	a.shift = make([]float64, a.g)
	for j, s := range a.sd {
		if s > 0 {
			a.inv[j] = 1 / s
		}
		if sp != nil {
			a.shift[j] = clip(-a.mu[j] * a.inv[j])
		}
	}
	a.c, err = a.columnSums(ctx, a.value, nil)
	if err != nil {
		return nil, err
	}
	for j := range a.c {
		a.c[j] /= n
	}
	sq, err = a.columnSums(ctx, func(j int, x float32) float64 {
		d := a.value(j, x) - a.c[j]
		return d * d
	}, nil)
	if err != nil {
		return nil, err
	}
	for j := range sq {
		a.totalVar += (sq[j] + float64(int64(a.n)-a.stored[j])*a.c[j]*a.c[j]) / (n - 1)
	}
	return a, nil
}

// value returns S_ij for a stored entry x of column j.
func (a *centred) value(j int, x float32) float64 {
	if !a.standardize {
		return float64(x)
	}
	return clip((float64(x)-a.mu[j])*a.inv[j]) - a.shift[j]
}

// clip returns z bounded to [−Clip, Clip].
func clip(z float64) float64 { return max(-Clip, min(Clip, z)) }

// columnSums returns, for each column j, the sum of h(j, x) over the stored
// entries x of column j of X, with per-block accumulators summed in block
// order. When count is not nil it also counts the stored entries and checks
// that every value is finite.
func (a *centred) columnSums(ctx context.Context, h func(j int, x float32) float64, count []int64) ([]float64, error) {
	const stage = "pca"
	nb := a.split.blocks()
	sums := make([][]float64, nb)
	counts := make([][]int64, nb)
	bad := make([]*Error, nb)
	err := a.split.run(ctx, func(lo, hi, b int) {
		if bad[b] != nil {
			return
		}
		if sums[b] == nil {
			sums[b] = make([]float64, a.g)
			counts[b] = make([]int64, a.g)
		}
		s, c := sums[b], counts[b]
		for i := lo; i < hi; i++ {
			var cols []int32
			var vals []float32
			if a.sp != nil {
				cols, vals = a.bufs.row(a.sp, i, b)
			} else {
				vals = a.dense.Row(i)
			}
			for k, x := range vals {
				j := k
				if cols != nil {
					j = int(cols[k])
				}
				if count != nil {
					if f := float64(x); math.IsNaN(f) || math.IsInf(f, 0) {
						bad[b] = errAt(stage, i, j, ErrNotFinite, "%v", f)
						return
					}
					c[j]++
				}
				s[j] += h(j, x)
			}
		}
	})
	if err != nil {
		return nil, err
	}
	if err := firstError(bad); err != nil {
		return nil, err
	}
	out := make([]float64, a.g)
	for b := range sums {
		if sums[b] == nil {
			continue
		}
		for j := range out {
			out[j] += sums[b][j]
			if count != nil {
				count[j] += counts[b][j]
			}
		}
	}
	return out, nil
}

// denseRows is the number of rows of a dense X in a chunk, transformed at
// once before a matrix product: about chunkEntries values.
func (a *centred) denseRows() int { return max(1, min(chunkRows, chunkEntries/max(1, a.g))) }

// prepare sizes the workspace of the products for l columns.
func (a *centred) prepare(l int) {
	nb := a.split.blocks()
	if len(a.r) == l {
		return
	}
	a.r = make([]float64, l)
	a.acc = make([][]float64, nb)
	a.colSum = make([][]float64, nb)
	a.scratch = make([][]float64, nb)
	for b := range nb {
		a.acc[b] = make([]float64, a.g*l)
		a.colSum[b] = make([]float64, l)
		if a.dense != nil {
			a.scratch[b] = make([]float64, a.denseRows()*a.g)
		}
	}
}

// transformRows writes S_ij for rows [lo, hi) of a dense X into dst
// ((hi−lo) × G, row-major).
func (a *centred) transformRows(dst []float64, lo, hi int) {
	for i := lo; i < hi; i++ {
		out := dst[(i-lo)*a.g : (i-lo+1)*a.g]
		for j, x := range a.dense.Row(i) {
			out[j] = a.value(j, x)
		}
	}
}

// mul sets dst (N × l, row-major) to A·src for src (G × l, row-major):
//
//	dst_i = Σ_j S_ij src_j − cᵀ·src
//
// in parallel over rows.
func (a *centred) mul(ctx context.Context, dst, src []float64, l int) error {
	a.prepare(l)
	r := a.r
	clear(r)
	for j := range a.g {
		floats.AddScaled(r, a.c[j], src[j*l:(j+1)*l])
	}
	return a.split.run(ctx, func(lo, hi, b int) {
		if a.dense != nil {
			a.mulDense(dst, src, l, lo, hi, b)
			return
		}
		for i := lo; i < hi; i++ {
			y := dst[i*l : (i+1)*l]
			for t := range y {
				y[t] = -r[t]
			}
			cols, vals := a.bufs.row(a.sp, i, b)
			if a.standardize {
				for k, j := range cols {
					jj := int(j)
					floats.AddScaled(y, a.value(jj, vals[k]), src[jj*l:jj*l+l])
				}
				continue
			}
			for k, j := range cols {
				jj := int(j)
				floats.AddScaled(y, float64(vals[k]), src[jj*l:jj*l+l])
			}
		}
	})
}

// mulDense is mul for rows [lo, hi) of a dense X (one chunk, at most
// denseRows rows), by a matrix product of the transformed rows.
func (a *centred) mulDense(dst, src []float64, l, lo, hi, b int) {
	z := a.scratch[b][:(hi-lo)*a.g]
	a.transformRows(z, lo, hi)
	y := dst[lo*l : hi*l]
	for i := range hi - lo {
		copy(y[i*l:(i+1)*l], a.r)
	}
	blas64.Gemm(blas.NoTrans, blas.NoTrans, 1,
		blas64.General{Rows: hi - lo, Cols: a.g, Stride: a.g, Data: z},
		blas64.General{Rows: a.g, Cols: l, Stride: l, Data: src},
		-1, blas64.General{Rows: hi - lo, Cols: l, Stride: l, Data: y})
}

// mulT sets dst (G × l, row-major) to Aᵀ·src for src (N × l, row-major):
//
//	dst_j = Σ_i S_ij src_i − c_j Σ_i src_i
//
// Each block of rows accumulates into its own G × l array; the arrays are
// summed in block order.
func (a *centred) mulT(ctx context.Context, dst, src []float64, l int) error {
	a.prepare(l)
	nb := a.split.blocks()
	for b := range nb {
		clear(a.acc[b])
		clear(a.colSum[b])
	}
	err := a.split.run(ctx, func(lo, hi, b int) {
		acc, cs := a.acc[b], a.colSum[b]
		for i := lo; i < hi; i++ {
			floats.Add(cs, src[i*l:(i+1)*l])
		}
		if a.dense != nil {
			a.mulTDense(acc, src, l, lo, hi, b)
			return
		}
		for i := lo; i < hi; i++ {
			x := src[i*l : (i+1)*l]
			cols, vals := a.bufs.row(a.sp, i, b)
			if a.standardize {
				for k, j := range cols {
					jj := int(j)
					floats.AddScaled(acc[jj*l:jj*l+l], a.value(jj, vals[k]), x)
				}
				continue
			}
			for k, j := range cols {
				jj := int(j)
				floats.AddScaled(acc[jj*l:jj*l+l], float64(vals[k]), x)
			}
		}
	})
	if err != nil {
		return err
	}
	copy(dst, a.acc[0])
	sum := a.r
	copy(sum, a.colSum[0])
	for b := 1; b < nb; b++ {
		floats.Add(dst, a.acc[b])
		floats.Add(sum, a.colSum[b])
	}
	for j := range a.g {
		floats.AddScaled(dst[j*l:(j+1)*l], -a.c[j], sum)
	}
	return nil
}

// mulTDense is the accumulation of mulT for rows [lo, hi) of a dense X (one
// chunk, at most denseRows rows).
func (a *centred) mulTDense(acc, src []float64, l, lo, hi, b int) {
	z := a.scratch[b][:(hi-lo)*a.g]
	a.transformRows(z, lo, hi)
	blas64.Gemm(blas.Trans, blas.NoTrans, 1,
		blas64.General{Rows: hi - lo, Cols: a.g, Stride: a.g, Data: z},
		blas64.General{Rows: hi - lo, Cols: l, Stride: l, Data: src[lo*l : hi*l]},
		1, blas64.General{Rows: a.g, Cols: l, Stride: l, Data: acc})
}
