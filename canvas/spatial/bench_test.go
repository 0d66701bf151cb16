package spatial

import (
	"math"
	"math/rand/v2"
	"testing"

	"lodestone/internal/threadcpu"
)

// mapLike returns n points in groups of different sizes and spreads, like a
// map of cells.
func mapLike(n int, seed uint64) []float32 {
	rng := rand.New(rand.NewPCG(seed, 11))
	const groups = 20
	cx, cy, sd := make([]float64, groups), make([]float64, groups), make([]float64, groups)
	for g := range cx {
		cx[g], cy[g] = 80*rng.Float64()-40, 60*rng.Float64()-30
		sd[g] = 1 + 4*rng.Float64()
	}
	layout := make([]float32, 2*n)
	for i := 0; i < n; i++ {
		g := int(math.Floor(groups * math.Pow(rng.Float64(), 1.5)))
		layout[2*i] = float32(cx[g] + sd[g]*rng.NormFloat64())
		layout[2*i+1] = float32(cy[g] + sd[g]*rng.NormFloat64())
	}
	return layout
}

// BenchmarkGridBuild1M builds the hover grid over a million points.
func BenchmarkGridBuild1M(b *testing.B) {
	layout := mapLike(1000000, 1)
	b.ReportAllocs()
	b.ResetTimer()
	for i := 0; i < b.N; i++ {
		if _, err := NewGrid(layout, nil); err != nil {
			b.Fatal(err)
		}
	}
}

// BenchmarkNearest1M answers one hover query among a million points, at
// random places over the map and around it, with a limit of a few pixels
// (target: ≤ 5 ms; typically microseconds).
func BenchmarkNearest1M(b *testing.B) {
	layout := mapLike(1000000, 1)
	g, err := NewGrid(layout, nil)
	if err != nil {
		b.Fatal(err)
	}
	rng := rand.New(rand.NewPCG(2, 3))
	qs := make([]float64, 2*4096)
	for i := range qs {
		qs[i] = 120*rng.Float64() - 60
	}
	b.ResetTimer()
	for i := 0; i < b.N; i++ {
		k := 2 * (i % 4096)
		g.Nearest(qs[k], qs[k+1], 0.2)
	}
}

// BenchmarkNearest1MFarOutside is the worst case of a query far from every
// point with no distance limit.
func BenchmarkNearest1MFarOutside(b *testing.B) {
	layout := mapLike(1000000, 1)
	g, err := NewGrid(layout, nil)
	if err != nil {
		b.Fatal(err)
	}
	b.ResetTimer()
	for i := 0; i < b.N; i++ {
		g.Nearest(1e4, -1e4, math.Inf(1))
	}
}

// BenchmarkLasso1M tests a million points against a freehand lasso of 600
// vertices around a third of the map, on all cores (target: ≤ 50 ms).
func BenchmarkLasso1M(b *testing.B) {
	layout := mapLike(1000000, 1)
	rng := rand.New(rand.NewPCG(4, 5))
	poly := make([]float64, 0, 1200)
	for k := 0; k < 600; k++ {
		a := 2 * math.Pi * float64(k) / 600
		r := 20 + 6*math.Sin(3*a) + 0.5*rng.Float64()
		poly = append(poly, -10+r*math.Cos(a), 5+0.8*r*math.Sin(a))
	}
	dst := make([]bool, 1000000)
	b.ResetTimer()
	cpu0, measured := threadcpu.Process()
	for i := 0; i < b.N; i++ {
		if _, err := Inside(poly, layout, dst, 0); err != nil {
			b.Fatal(err)
		}
	}
	if cpu1, ok := threadcpu.Process(); ok && measured { // unlike the wall time, not stretched by a loaded machine
		b.ReportMetric(float64((cpu1-cpu0).Microseconds())/1000/float64(b.N), "cpu-ms")
	}
}
