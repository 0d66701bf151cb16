package raster

import (
	"image/color"
	"math"
	"math/rand/v2"
	"testing"
	"time"

	"lodestone/internal/threadcpu"
)

// clusteredLayout returns n points in groups of different sizes and spreads,
// like a map of cells, with one group index per point.
func clusteredLayout(n, groups int, seed uint64) ([]float32, []uint16) {
	rng := rand.New(rand.NewPCG(seed, 11))
	cx, cy, sd := make([]float64, groups), make([]float64, groups), make([]float64, groups)
	for g := range cx {
		cx[g], cy[g] = 80*rng.Float64()-40, 60*rng.Float64()-30
		sd[g] = 1 + 4*rng.Float64()
	}
	layout := make([]float32, 2*n)
	colours := make([]uint16, n)
	for i := 0; i < n; i++ {
		g := int(math.Floor(float64(groups) * math.Pow(rng.Float64(), 1.5)))
		layout[2*i] = float32(cx[g] + sd[g]*rng.NormFloat64())
		layout[2*i+1] = float32(cy[g] + sd[g]*rng.NormFloat64())
		colours[i] = uint16(g)
	}
	return layout, colours
}

func benchPalette(n int) []color.NRGBA {
	p := make([]color.NRGBA, n)
	for i := range p {
		p[i] = color.NRGBA{uint8(40 + 13*i), uint8(200 - 7*i), uint8(90 + 29*i), 255}
	}
	return p
}

func benchmarkDraw(b *testing.B, n, w, h, threads int) {
	benchmarkDrawOrder(b, n, w, h, threads, Shuffle(n, 1))
}

func benchmarkDrawOrder(b *testing.B, n, w, h, threads int, order []int32) {
	layout, colours := clusteredLayout(n, 20, 1)
	palette := benchPalette(20)
	v, err := Fit(layout, w, h, 20)
	if err != nil {
		b.Fatal(err)
	}
	s := DefaultStyle(n)
	img := newImage(w, h)
	var r Renderer
	if err := r.Draw(img, layout, colours, palette, order, v, s, threads); err != nil {
		b.Fatal(err)
	}
	b.ReportAllocs()
	b.ResetTimer()
	cpu0, measured := threadcpu.Process()
	for i := 0; i < b.N; i++ {
		if err := r.Draw(img, layout, colours, palette, order, v, s, threads); err != nil {
			b.Fatal(err)
		}
	}
	reportCPU(b, cpu0, measured)
}

// reportCPU reports the processor time a frame used, on all threads
// (cpu-ms): unlike the wall time, a loaded machine does not stretch it.
// One thread's frame takes at least its processor time; frames on several
// threads take at least the processor time divided by the threads.
func reportCPU(b *testing.B, cpu0 time.Duration, measured bool) {
	if cpu1, ok := threadcpu.Process(); ok && measured {
		b.ReportMetric(float64((cpu1-cpu0).Microseconds())/1000/float64(b.N), "cpu-ms")
	}
}

// BenchmarkDraw1M draws a million points into a 1600 × 1000 image on all
// cores (target: ≤ 30 ms a frame on 2 cores).
func BenchmarkDraw1M(b *testing.B) { benchmarkDraw(b, 1000000, 1600, 1000, 0) }

// BenchmarkDraw1MOneThread is BenchmarkDraw1M on one core.
func BenchmarkDraw1MOneThread(b *testing.B) { benchmarkDraw(b, 1000000, 1600, 1000, 1) }

// BenchmarkDraw200kOneThread draws 200,000 points on one core, as the
// window draws a moving map (on the UI thread alone, beside the optimiser).
func BenchmarkDraw200kOneThread(b *testing.B) { benchmarkDraw(b, 200000, 1600, 1000, 1) }

// BenchmarkDraw70k draws 70 000 points (larger, opaque discs) at 1600 × 1000.
func BenchmarkDraw70k(b *testing.B) { benchmarkDraw(b, 70000, 1600, 1000, 0) }

// BenchmarkDraw1MUniformOrder is BenchmarkDraw1M in a uniform random order,
// the memory-bound case Shuffle's sweeps avoid.
func BenchmarkDraw1MUniformOrder(b *testing.B) {
	n := 1000000
	order := make([]int32, n)
	for i := range order {
		order[i] = int32(i)
	}
	fisherYates(order, rand.New(rand.NewPCG(1, 2)))
	benchmarkDrawOrder(b, n, 1600, 1000, 0, order)
}
