package embed

import (
	"math"

	"gonum.org/v1/gonum/mat"

	"lodestone/compute/atlas"
	"lodestone/compute/parallel"
)

// pcaChunks is the number of row chunks whose partial sums InitPCA adds in
// order; fixed, so the result does not depend on the number of processors.
const pcaChunks = 64

// InitPCA returns the initial layout made of the first two principal
// components of the features (rows are cells), scaled so that the first
// coordinate has standard deviation 1e-4 (common practice), the second
// scaled by the same factor:
//
//	C = (1/(n−1)) Σ_i (x_i − μ)(x_i − μ)ᵀ,   C v_k = λ_k v_k,   λ_1 ≥ λ_2,
//	y_i = s · ((x_i − μ)·v_1, (x_i − μ)·v_2),   s = 1e-4 / sd((x − μ)·v_1).
//
// The covariance is accumulated in float64 and decomposed with gonum; each
// v_k has its largest-magnitude entry positive (the first such entry on ties),
// which fixes the signs. With one feature the second coordinate is zero. The
// result is deterministic and independent of the number of processors.
//
// features must have at least two rows, at least one column, Rows·Cols
// values, all finite, and must not be constant; otherwise InitPCA returns a
// *LayoutError.
func InitPCA(features *atlas.Dense) ([]float32, error) {
	if features == nil || features.Rows < 2 || features.Cols < 1 || len(features.Data) != features.Rows*features.Cols {
		return nil, &LayoutError{What: "features", Point: -1, Err: ErrShape}
	}
	n, d := features.Rows, features.Cols
	for k, v := range features.Data {
		if f := float64(v); math.IsNaN(f) || math.IsInf(f, 0) {
			return nil, &LayoutError{What: "features", Point: k / d, Err: ErrNotFinite}
		}
	}
	chunks := parallel.Blocks(n, pcaChunks)
	nc := len(chunks) - 1
	// Column means.
	partial := make([]float64, nc*d*d)
	parallel.For(nc, 0, func(lo, hi, _ int) {
		for c := lo; c < hi; c++ {
			s := partial[c*d : (c+1)*d]
			for i := chunks[c]; i < chunks[c+1]; i++ {
				for j, v := range features.Row(i) {
					s[j] += float64(v)
				}
			}
		}
	})
	mean := make([]float64, d)
	for c := 0; c < nc; c++ {
		for j := range mean {
			mean[j] += partial[c*d+j]
		}
	}
	for j := range mean {
		mean[j] /= float64(n)
	}
	// Covariance, upper triangle.
	clear(partial)
	parallel.For(nc, 0, func(lo, hi, _ int) {
		x := make([]float64, d)
		for c := lo; c < hi; c++ {
			s := partial[c*d*d : (c+1)*d*d]
			for i := chunks[c]; i < chunks[c+1]; i++ {
				for j, v := range features.Row(i) {
					x[j] = float64(v) - mean[j]
				}
				for a := 0; a < d; a++ {
					row := s[a*d:]
					for b := a; b < d; b++ {
						row[b] += x[a] * x[b]
					}
				}
			}
		}
	})
	cov := mat.NewSymDense(d, nil)
	for a := 0; a < d; a++ {
		for b := a; b < d; b++ {
			var s float64
			for c := 0; c < nc; c++ {
				s += partial[c*d*d+a*d+b]
			}
			cov.SetSym(a, b, s/float64(n-1))
		}
	}
	var eig mat.EigenSym
	if !eig.Factorize(cov, true) {
		return nil, &LayoutError{What: "features", Point: -1, Err: ErrNotFinite}
	}
	var vecs mat.Dense
	eig.VectorsTo(&vecs)
	axes := make([][]float64, 2)
	for k := range axes {
		axes[k] = make([]float64, d)
		if k >= d {
			continue
		}
		mat.Col(axes[k], d-1-k, &vecs) // ascending order: the largest are last
		var big float64
		for _, v := range axes[k] {
			if math.Abs(v) > math.Abs(big) {
				big = v
			}
		}
		if big < 0 {
			for j := range axes[k] {
				axes[k][j] = -axes[k][j]
			}
		}
	}
	y := make([]float64, 2*n)
	parallel.For(n, 0, func(lo, hi, _ int) {
		for i := lo; i < hi; i++ {
			var s0, s1 float64
			for j, v := range features.Row(i) {
				x := float64(v) - mean[j]
				s0 += x * axes[0][j]
				s1 += x * axes[1][j]
			}
			y[2*i], y[2*i+1] = s0, s1
		}
	})
	var ss float64
	for i := 0; i < n; i++ {
		ss += y[2*i] * y[2*i]
	}
	sd := math.Sqrt(ss / float64(n-1))
	if !(sd > 0) {
		return nil, &LayoutError{What: "features", Point: -1, Err: ErrEmpty}
	}
	out := make([]float32, 2*n)
	for i, v := range y {
		out[i] = float32(v * initialStd / sd)
	}
	return out, nil
}
