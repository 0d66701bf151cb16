package canvas

import (
	"image/color"
	"math"
	"math/rand/v2"
	"testing"
	"time"

	"fyne.io/fyne/v2"
	fynecanvas "fyne.io/fyne/v2/canvas"
	"fyne.io/fyne/v2/test"

	"lodestone/internal/threadcpu"
)

// clusteredMap returns n points in 20 groups of different sizes and
// spreads, like a map of cells, and each point's group.
func clusteredMap(n int, seed uint64) ([]float32, []uint16) {
	rng := rand.New(rand.NewPCG(seed, 11))
	const groups = 20
	var cx, cy, sd [groups]float64
	for g := range cx {
		cx[g], cy[g] = 80*rng.Float64()-40, 60*rng.Float64()-30
		sd[g] = 1 + 4*rng.Float64()
	}
	layout, colours := make([]float32, 2*n), make([]uint16, n)
	for i := range colours {
		g := int(math.Floor(groups * math.Pow(rng.Float64(), 1.5)))
		layout[2*i] = float32(cx[g] + sd[g]*rng.NormFloat64())
		layout[2*i+1] = float32(cy[g] + sd[g]*rng.NormFloat64())
		colours[i] = uint16(g)
	}
	return layout, colours
}

// BenchmarkLasso1MMap closes a freehand lasso of 600 vertices around a
// third of a map of a million cells at 1600 × 1000 and draws the map with
// its new selection, as the window does at its next frame: the time from
// the release of the lasso to the new image (target: ≤ 50 ms on 2 cores).
// The lassos alternate between adding the loop's cells to an empty
// selection and removing them again, so every one changes the selection;
// select-ms and draw-ms report the two parts.
func BenchmarkLasso1MMap(b *testing.B) {
	const n = 1000000
	a := test.NewApp()
	defer a.Quit()
	m := NewMap()
	w := test.NewWindow(m)
	defer w.Close()
	w.SetPadded(false)
	w.Resize(fyne.NewSize(1600, 1000))
	layout, colours := clusteredMap(n, 1)
	palette := make([]color.NRGBA, 20)
	for i := range palette {
		palette[i] = color.NRGBA{uint8(40 + 13*i), uint8(200 - 7*i), uint8(90 + 29*i), 255}
	}
	m.SetLayout(layout)
	m.SetPaint(colours, palette)
	rng := rand.New(rand.NewPCG(4, 5))
	poly := make([]float64, 0, 1200)
	for k := 0; k < 600; k++ {
		t := 2 * math.Pi * float64(k) / 600
		r := 20 + 6*math.Sin(3*t) + 0.5*rng.Float64()
		poly = append(poly, -10+r*math.Cos(t), 5+0.8*r*math.Sin(t))
	}
	raster := test.WidgetRenderer(m).Objects()[0].(*fynecanvas.Raster)
	size := m.Size()
	draw := func() { raster.Generator(int(size.Width), int(size.Height)) }
	draw()
	var selecting, drawing time.Duration
	b.ResetTimer()
	cpu0, measured := threadcpu.Process()
	for i := 0; i < b.N; i++ {
		start := time.Now()
		m.ApplyLasso(poly, i%2 == 1)
		selected := time.Now()
		draw()
		selecting += selected.Sub(start)
		drawing += time.Since(selected)
	}
	b.ReportMetric(float64(selecting.Microseconds())/1000/float64(b.N), "select-ms")
	b.ReportMetric(float64(drawing.Microseconds())/1000/float64(b.N), "draw-ms")
	if cpu1, ok := threadcpu.Process(); ok && measured { // unlike the wall time, not stretched by a loaded machine
		b.ReportMetric(float64((cpu1-cpu0).Microseconds())/1000/float64(b.N), "cpu-ms")
	}
	if _, k := m.Selection(); b.N%2 == 1 && k == 0 {
		b.Fatal("the lasso selected nothing")
	}
}
