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

// TestBelowKernel checks sqDistRowsBelow (portable_amd64_test.go runs the
// check on the portable path too): its distances equal sqDistRows's bit for
// bit, and its bits mark exactly the rows whose distance does not exceed
// the query's threshold or the row's own, for every dimension 1 … 70 and
// every number of rows 0 … 13 (full groups of four and the rest).
func TestBelowKernel(t *testing.T) { checkBelowKernel(t) }

func checkBelowKernel(t *testing.T) {
	rng := rand.New(rand.NewPCG(7, 8))
	asm := haveAVX2
	for dim := 1; dim <= 70; dim++ {
		for n := 0; n <= 13; n++ {
			rows := make([]float32, n*dim)
			for i := range rows {
				rows[i] = float32(rng.NormFloat64())
			}
			q := make([]float32, dim)
			for i := range q {
				q[i] = float32(rng.NormFloat64())
			}
			want := make([]float32, n)
			sqDistRows(q, rows, want)
			// Thresholds at, above and below the distances.
			thr := make([]float32, n)
			for r := range thr {
				thr[r] = want[r] * float32(rng.IntN(3)) / 1.5
				if rng.IntN(4) == 0 {
					thr[r] = want[r]
				}
			}
			tq := float32(2 * dim * rng.IntN(2))
			if n > 0 && rng.IntN(3) == 0 {
				tq = want[rng.IntN(n)]
			}
			out := make([]float32, n)
			below := make([]uint8, (n+3)/4)
			for i := range below {
				below[i] = 0xff
			}
			sqDistRowsBelow(q, rows, out, tq, thr, below)
			for r := 0; r < n; r++ {
				if out[r] != want[r] {
					t.Fatalf("asm %v, dim %d, row %d of %d: %g, want %g", asm, dim, r, n, out[r], want[r])
				}
				bit := below[r/4]>>(r%4)&1 == 1
				if bit != (want[r] <= tq || want[r] <= thr[r]) {
					t.Fatalf("asm %v, dim %d, row %d of %d: bit %v for %g against %g and %g", asm, dim, r, n, bit, want[r], tq, thr[r])
				}
			}
			for r := n; r < len(below)*4; r++ {
				if below[r/4]>>(r%4)&1 == 1 {
					t.Fatalf("asm %v, dim %d, %d rows: bit %d set past the end", asm, dim, n, r)
				}
			}
		}
	}
}

// TestContains checks the list membership test (portable_amd64_test.go
// runs the check on the portable path too) against a direct search, for
// every length 1 … 100 (full blocks of 32 and 8 and the masked rest), with
// the id at each position and absent, for the id 0 too (masked-out lanes
// read as zero), and that the list before is not read.
func TestContains(t *testing.T) { checkContains(t) }

func checkContains(t *testing.T) {
	for n := 1; n <= 100; n++ {
		l := &lists{k: n, idx: make([]int32, 2*n)}
		for i := range l.idx[:n] {
			l.idx[i] = int32(1000 + i)
		}
		row := l.idx[n:]
		for at := -1; at < n; at++ {
			for _, q := range []int32{7, 0} {
				for i := range row {
					row[i] = int32(2000 + i)
				}
				if at >= 0 {
					row[at] = q
				}
				if got := l.has(1, q); got != (at >= 0) {
					t.Fatalf("AVX2 %v, %d ids, %d at %d: has = %v", haveAVX2, n, q, at, got)
				}
			}
		}
		if l.has(1, 1000+int32(n)-1) {
			t.Fatalf("AVX2 %v, %d ids: found an id of the list before", haveAVX2, n)
		}
	}
}
