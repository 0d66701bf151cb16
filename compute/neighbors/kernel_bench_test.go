package neighbors

import (
	"math/rand/v2"
	"testing"
)

func kernelData(n, dim int) []float32 {
	rng := rand.New(rand.NewPCG(3, 4))
	x := make([]float32, n*dim)
	for i := range x {
		x[i] = float32(rng.NormFloat64())
	}
	return x
}

// BenchmarkSqDistRows measures 50-dimensional distances from one row to a
// block of 256 rows, per distance.
func BenchmarkSqDistRows(b *testing.B) {
	const n, dim = 256, 50
	x := kernelData(n+1, dim)
	out := make([]float32, n)
	for i := 0; i < b.N; i++ {
		sqDistRows(x[n*dim:], x[:n*dim], out)
	}
	b.ReportMetric(float64(b.Elapsed().Nanoseconds())/float64(b.N*n), "ns/distance")
}

// BenchmarkSqDistTile measures the 4×16 tile kernel of the exhaustive
// search in 50 dimensions, per distance.
func BenchmarkSqDistTile(b *testing.B) {
	const dim = 50
	q := kernelData(4, dim)
	tile := kernelData(tileRows, dim)
	thr := []float32{1, 1, 1, 1}
	out := make([]float32, 4*tileRows)
	var mask [4]uint32
	for i := 0; i < b.N; i++ {
		sqDistTile(q, dim, tile, thr, out, &mask)
	}
	b.ReportMetric(float64(b.Elapsed().Nanoseconds())/float64(b.N*4*tileRows), "ns/distance")
}
