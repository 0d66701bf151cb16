package integrate

import (
	"context"
	"math"

	"lodestone/compute/parallel"
)

// correct runs the correction step: the ridge regressions (6) of the input
// components on the batch levels in every cluster, weighted by R, and the
// corrected components (7), written to h.out (input order) and, scaled to
// unit length, to h.zcos (storage order).
func (h *harmony) correct(ctx context.Context) error {
	K, d, L, kp, dp := h.k, h.d, h.levels, h.kp, h.dp
	for t := range h.workers {
		clear(h.workers[t].sums)
		clear(h.workers[t].s)
	}
	chunks := (h.n + chunkCells - 1) / chunkCells
	h.runs(ctx, chunks, func(wk *worker, s, e int, c int32) { wk.regressionSums(h, s, e, c) })
	if err := ctx.Err(); err != nil {
		return err
	}
	// Σ_i R_ki Z_i and Σ_i R_ki per combination, summed in worker order.
	sz := make([]float64, h.combos*d*K)
	sn := make([]float64, h.combos*kp)
	for t := range h.workers {
		for e, v := range h.workers[t].s {
			sz[e] += v
		}
		for e, v := range h.workers[t].sums {
			sn[e] += v
		}
	}
	// (6) for every cluster, and the batch terms of every combination.
	m := L + 1
	a := make([]float64, m*m)
	w := make([]float64, m*d)
	vt := make([]float32, h.combos*kp*dp)
	for k := 0; k < K; k++ {
		clear(a)
		clear(w)
		for c := 0; c < h.combos; c++ {
			nk := sn[c*kp+k]
			lev := h.comboLev[c*h.ncov : (c+1)*h.ncov]
			a[0] += nk
			for _, l := range lev {
				a[int(l+1)] += nk
				a[int(l+1)*m] += nk
				for _, l2 := range lev {
					a[int(l+1)*m+int(l2+1)] += nk
				}
			}
			for j := 0; j < d; j++ {
				v := sz[(c*d+j)*K+k]
				w[j] += v
				for _, l := range lev {
					w[int(l+1)*d+j] += v
				}
			}
		}
		if !(a[0] > 0) {
			continue // an empty cluster corrects nothing
		}
		for l := 0; l < L; l++ {
			a[(l+1)*m+l+1] += h.lambda[l]
		}
		if !cholSolve(a, m, w, d) {
			continue // not positive definite: only when the cluster is empty in floating point
		}
		for c := 0; c < h.combos; c++ {
			lev := h.comboLev[c*h.ncov : (c+1)*h.ncov]
			row := vt[(c*kp+k)*dp : (c*kp+k)*dp+d]
			for j := range row {
				var v float64
				for _, l := range lev {
					v += w[int(l+1)*d+j]
				}
				row[j] = float32(v)
			}
		}
	}
	// (7), cell by cell.
	h.runs(ctx, chunks, func(wk *worker, s, e int, c int32) {
		v := vt[int(c)*kp*dp : (int(c)+1)*kp*dp]
		for g := s; g < e; g += tileRows {
			mm6x16(h.r[g*kp:], kp, 1, v, dp, wk.tile, dp, K, dp/tileCols)
			for i := g; i < min(g+tileRows, e); i++ {
				corr := wk.tile[(i-g)*dp : (i-g)*dp+d]
				src := h.z[i*h.dz : i*h.dz+d]
				dst := h.out.Row(int(h.order[i]))
				for j, x := range src {
					dst[j] = x - corr[j]
				}
				unitRow(h.zcos[i*h.dz:i*h.dz+d], dst)
			}
		}
	})
	return ctx.Err()
}

// runs calls fn for every run of equal combination within the aligned
// chunks of storage positions, chunks split among the workers in fixed
// blocks. It stops early when ctx is cancelled.
func (h *harmony) runs(ctx context.Context, chunks int, fn func(wk *worker, s, e int, c int32)) {
	parallel.For(chunks, h.threads, func(clo, chi, t int) {
		wk := &h.workers[t]
		for ch := clo; ch < chi; ch++ {
			if ctx.Err() != nil {
				return
			}
			s, end := ch*chunkCells, min((ch+1)*chunkCells, h.n)
			for s < end {
				c := h.combo[s]
				e := s + 1
				for e < end && h.combo[e] == c {
					e++
				}
				fn(wk, s, e, c)
				s = e
			}
		}
	})
}

// regressionSums adds Σ_i R_ki Z_i and Σ_i R_ki over the storage positions
// [s, e), all of combination c, to wk.s and wk.sums.
func (wk *worker) regressionSums(h *harmony, s, e int, c int32) {
	kp, dz, K, d := h.kp, h.dz, h.k, h.d
	for r0 := 0; r0 < dz; r0 += tileRows {
		mm6x16(h.z[s*dz+r0:], 1, dz, h.r[s*kp:], kp, wk.tile[r0*kp:], kp, e-s, kp/tileCols)
	}
	dst := wk.s[int(c)*d*K : (int(c)+1)*d*K]
	for j := 0; j < d; j++ {
		row := dst[j*K : (j+1)*K]
		for k, v := range wk.tile[j*kp : j*kp+K] {
			row[k] += float64(v)
		}
	}
	sums := wk.sums[int(c)*kp : int(c)*kp+K]
	for i := s; i < e; i++ {
		for k, v := range h.r[i*kp : i*kp+K] {
			sums[k] += float64(v)
		}
	}
}

// cholSolve solves A X = B in place for a symmetric positive definite m × m
// matrix a (row-major; its lower triangle is overwritten by the Cholesky
// factor) and nrhs right-hand sides b (m × nrhs, row-major, overwritten by
// X). It returns false, leaving b undefined, when a is not positive
// definite.
func cholSolve(a []float64, m int, b []float64, nrhs int) bool {
	for j := 0; j < m; j++ {
		s := a[j*m+j]
		for p := 0; p < j; p++ {
			s -= a[j*m+p] * a[j*m+p]
		}
		if !(s > 0) {
			return false
		}
		ljj := math.Sqrt(s)
		a[j*m+j] = ljj
		for i := j + 1; i < m; i++ {
			s := a[i*m+j]
			for p := 0; p < j; p++ {
				s -= a[i*m+p] * a[j*m+p]
			}
			a[i*m+j] = s / ljj
		}
	}
	// L y = b, then Lᵀ x = y.
	for i := 0; i < m; i++ {
		for p := 0; p < i; p++ {
			l := a[i*m+p]
			for q := 0; q < nrhs; q++ {
				b[i*nrhs+q] -= l * b[p*nrhs+q]
			}
		}
		for q := 0; q < nrhs; q++ {
			b[i*nrhs+q] /= a[i*m+i]
		}
	}
	for i := m - 1; i >= 0; i-- {
		for p := i + 1; p < m; p++ {
			l := a[p*m+i]
			for q := 0; q < nrhs; q++ {
				b[i*nrhs+q] -= l * b[p*nrhs+q]
			}
		}
		for q := 0; q < nrhs; q++ {
			b[i*nrhs+q] /= a[i*m+i]
		}
	}
	return true
}
