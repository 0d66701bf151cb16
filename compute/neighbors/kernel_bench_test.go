package neighbors

import (
	"context"
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

// BenchmarkLocalJoin measures the local join of one point's candidates in
// a descent step (80 new and 60 old candidates in 50 dimensions, lists of
// 90 filled by exact search, so that about as many pairs pass the
// thresholds as in a real step), with the data in cache.
func BenchmarkLocalJoin(b *testing.B) {
	x := randomMatrix(4000, 50, 5)
	ctx := context.Background()
	all := make([]int, x.Rows)
	for i := range all {
		all[i] = i
	}
	g, err := exactSquared(ctx, x, all, 90, 0, nil)
	if err != nil {
		b.Fatal(err)
	}
	l := &lists{k: 90, dist: g.Dist, idx: g.Index, flag: make([]uint8, len(g.Index))}
	j := newJoiner(x, l, 1, 140)
	// The candidates: point 0's neighbours and 50 others.
	grp := &group{nNew: 80}
	grp.ids = append(grp.ids, l.idx[:90]...)
	for q := int32(100); len(grp.ids) < 140; q += 37 {
		grp.ids = append(grp.ids, q)
	}
	var buf []update
	b.ResetTimer()
	for i := 0; i < b.N; i++ {
		buf = j.localJoin(grp, 0, buf[:0])
	}
	b.ReportMetric(float64(len(buf)), "offers")
}
