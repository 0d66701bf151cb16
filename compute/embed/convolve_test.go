package embed

import (
	"math"
	"testing"

	"gonum.org/v1/gonum/dsp/fourier"
)

// TestConvolveAgainstGonum checks the kernel spectra and the potentials of
// the interpolated repulsion (cplan and rplan transforms) against the same
// convolution done with gonum's transforms (fourier.FFT, fourier.CmplxFFT)
// from every kernel sample, to 1e-12 relative to the largest value, for
// tails 1 and 0.5 on grids of unequal sides.
func TestConvolveAgainstGonum(t *testing.T) {
	for _, tail := range []float64{1, 0.5} {
		for _, n := range []int{3000, 20000} {
			y := clusteredLayout(n, 60, 9)
			y[0], y[1] = 45, -10
			r := newFFTRepulsion(testTeam(t, 2), tail)
			dst := make([]float64, len(y))
			r.compute(dst, y, bbox(y), never)
			lx, ly, hw, mx, my := r.lx, r.ly, r.lx/2+1, r.mx, r.my
			offset := func(i, l int) float64 {
				if i > l/2 {
					i -= l
				}
				return float64(i) * r.delta
			}
			rows, cols := fourier.NewFFT(lx), fourier.NewCmplxFFT(ly)
			kern := make([][]complex128, 3)
			line, col := make([]float64, lx), make([]complex128, ly)
			var maxK [3]float64
			for k := range kern {
				spec := make([]complex128, ly*hw)
				for row := 0; row < ly; row++ {
					for c := range line {
						kx, ky, kw := r.tail.at(offset(c, lx), offset(row, ly))
						line[c] = [3]float64{kx, ky, kw}[k]
						if c == lx/2 || row == ly/2 {
							line[c] = 0
						}
					}
					rows.Coefficients(spec[row*hw:(row+1)*hw], line)
				}
				for c := 0; c < hw; c++ {
					for row := range col {
						col[row] = spec[row*hw+c]
					}
					cols.Coefficients(col, col)
					for row, v := range col {
						spec[row*hw+c] = v / complex(float64(lx*ly), 0)
					}
				}
				kern[k] = spec
				var e float64
				for i, v := range spec {
					w := r.kw[i]
					g := real(v)
					if k == 0 {
						w, g = r.kxIm[i], imag(v)
					} else if k == 1 {
						w, g = r.kyIm[i], imag(v)
					}
					e = math.Max(e, math.Abs(w-g))
					maxK[k] = math.Max(maxK[k], math.Abs(g))
				}
				if e > 1e-12*maxK[k] {
					t.Errorf("tail %g, %d points, grid %d × %d, kernel %d: spectrum's relative error %.3g", tail, n, lx, ly, k, e/maxK[k])
				}
			}
			// The charge grid's rows, padded with zeros, then its columns,
			// each product and its inverse.
			grid := make([]complex128, ly*hw)
			for row := 0; row < my; row++ {
				clear(line)
				copy(line, r.charge[row*mx:(row+1)*mx])
				rows.Coefficients(grid[row*hw:(row+1)*hw], line)
			}
			for k := 0; k < 3; k++ {
				prod := make([]complex128, ly*hw)
				for c := 0; c < hw; c++ {
					for row := range col {
						col[row] = grid[row*hw+c]
					}
					cols.Coefficients(col, col)
					for row := range col {
						v, s := col[row], kern[k][row*hw+c]
						if k < 2 {
							col[row] = v * complex(0, imag(s))
						} else {
							col[row] = v * complex(real(s), 0)
						}
					}
					cols.Sequence(col, col)
					for row := range col {
						prod[row*hw+c] = col[row]
					}
				}
				var e, big float64
				for row := 0; row < my; row++ {
					rows.Sequence(line, prod[row*hw:(row+1)*hw])
					for c := 0; c < mx; c++ {
						e = math.Max(e, math.Abs(line[c]-r.pot[k*mx*my+row*mx+c]))
						big = math.Max(big, math.Abs(line[c]))
					}
				}
				if e > 1e-12*big {
					t.Errorf("tail %g, %d points, grid %d × %d, potential %d: relative error %.3g", tail, n, lx, ly, k, e/big)
				}
			}
		}
	}
}
