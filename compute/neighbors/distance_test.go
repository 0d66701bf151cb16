package neighbors

import (
	"math"
	"math/rand/v2"
	"testing"
)

// dist returns the squared distance between a and b by sqDistRows on a
// block of one row.
func dist(a, b []float32) float32 {
	var out [1]float32
	sqDistRows(a, b, out[:])
	return out[0]
}

// TestDistanceKernels checks both kernels against a float64 sum of squares
// (an exact slow computation) for every dimension 1 … 70, including the
// masked tails, and that single and batched kernels agree bit for bit and
// are symmetric.
func TestDistanceKernels(t *testing.T) {
	rng := rand.New(rand.NewPCG(1, 2))
	for dim := 1; dim <= 70; dim++ {
		const n = 11
		rows := make([]float32, n*dim)
		for i := range rows {
			rows[i] = float32(rng.NormFloat64() * 3)
		}
		q := make([]float32, dim)
		for i := range q {
			q[i] = float32(rng.NormFloat64())
		}
		out := make([]float32, n)
		sqDistRows(q, rows, out)
		for r := 0; r < n; r++ {
			row := rows[r*dim : (r+1)*dim]
			want := 0.0
			for j := range q {
				d := float64(q[j]) - float64(row[j])
				want += d * d
			}
			got := dist(q, row)
			// float32 sums of dim non-negative terms: relative error below
			// dim·2⁻²⁴ (common practice bound for recursive summation).
			if math.Abs(float64(got)-want) > float64(dim+2)*0x1p-24*want {
				t.Fatalf("dim %d row %d: distance = %g, float64 sum = %g", dim, r, got, want)
			}
			if out[r] != got {
				t.Fatalf("dim %d row %d: among %d rows %g, alone %g", dim, r, n, out[r], got)
			}
			if back := dist(row, q); back != got {
				t.Fatalf("dim %d row %d: not symmetric: %g vs %g", dim, r, got, back)
			}
			if self := dist(row, row); self != 0 {
				t.Fatalf("dim %d row %d: distance to itself %g", dim, r, self)
			}
			if g := sqDistGo(q, row); math.Abs(float64(g)-want) > float64(dim+2)*0x1p-24*want {
				t.Fatalf("dim %d row %d: portable kernel %g, float64 sum %g", dim, r, g, want)
			}
		}
	}
}

// TestTileKernel checks the tile kernel, assembly and portable, against a
// float64 sum of squares for several dimensions, and its threshold masks.
func TestTileKernel(t *testing.T) {
	rng := rand.New(rand.NewPCG(5, 6))
	for _, dim := range []int{1, 2, 7, 8, 9, 50} {
		q := make([]float32, 4*dim)
		rows := make([]float32, tileRows*dim)
		for i := range q {
			q[i] = float32(rng.NormFloat64())
		}
		for i := range rows {
			rows[i] = float32(rng.NormFloat64())
		}
		tile := make([]float32, tileRows*dim)
		for r := 0; r < tileRows; r++ {
			for j := 0; j < dim; j++ {
				tile[j*tileRows+r] = rows[r*dim+j]
			}
		}
		// Thresholds between the distances, so masks are mixed.
		thr := []float32{0, float32(dim), 2 * float32(dim), float32(math.Inf(1))}
		out, outGo := make([]float32, 4*tileRows), make([]float32, 4*tileRows)
		var mask, maskGo [4]uint32
		sqDistTile(q, dim, tile, thr, out, &mask)
		sqDistTileGo(q, dim, tile, thr, outGo, &maskGo)
		for i := 0; i < 4; i++ {
			for r := 0; r < tileRows; r++ {
				want := 0.0
				for j := 0; j < dim; j++ {
					d := float64(q[i*dim+j]) - float64(rows[r*dim+j])
					want += d * d
				}
				for _, got := range []float32{out[i*tileRows+r], outGo[i*tileRows+r]} {
					if math.Abs(float64(got)-want) > float64(dim+2)*0x1p-24*want {
						t.Fatalf("dim %d query %d row %d: %g, float64 sum %g", dim, i, r, got, want)
					}
				}
				for _, m := range []uint32{mask[i], maskGo[i]} {
					if (m>>r)&1 == 1 != (out[i*tileRows+r] <= thr[i]) {
						t.Fatalf("dim %d query %d row %d: mask bit wrong", dim, i, r)
					}
				}
			}
		}
	}
}

// TestSquaredDistances checks the exported kernel against a float64 sum of
// squares (an exact slow computation).
func TestSquaredDistances(t *testing.T) {
	rng := rand.New(rand.NewPCG(8, 9))
	const n, dim = 37, 50
	rows := make([]float32, n*dim)
	q := make([]float32, dim)
	for i := range rows {
		rows[i] = float32(rng.NormFloat64())
	}
	for i := range q {
		q[i] = float32(rng.NormFloat64())
	}
	dst := make([]float32, n)
	SquaredDistances(dst, q, rows)
	for r := range dst {
		want := 0.0
		for j := range q {
			d := float64(q[j]) - float64(rows[r*dim+j])
			want += d * d
		}
		if math.Abs(float64(dst[r])-want) > float64(dim+2)*0x1p-24*want {
			t.Fatalf("row %d: %g, float64 sum %g", r, dst[r], want)
		}
	}
}
