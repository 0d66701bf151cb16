package figure

import (
	"context"
	"io"
	"strconv"
	"sync"
	"testing"

	"lodestone/canvas/colour"
)

var bench1M struct {
	once sync.Once
	f    *Figure
}

// figure1M returns a figure of a million points in 20 categories, with a
// title, a key with counts and a label at each category's medoid.
func figure1M(b *testing.B) *Figure {
	bench1M.once.Do(func() {
		const n, k = 1_000_000, 20
		layout, codes, _ := clusters(n, k, 2, 1)
		colours := make([]uint16, n)
		for i, c := range codes {
			colours[i] = uint16(c)
		}
		pal := colour.Categorical(k)
		med, err := Medoids(context.Background(), layout, codes, k)
		if err != nil {
			panic(err)
		}
		key := &Key{Title: "state", Counts: true}
		var labels []Label
		for c := 0; c < k; c++ {
			name := "state " + strconv.Itoa(c)
			key.Entries = append(key.Entries, KeyEntry{Label: name, Colour: pal[c], Count: n / k})
			labels = append(labels, Label{Text: name, X: float64(layout[2*med[c]]), Y: float64(layout[2*med[c]+1])})
		}
		bench1M.f = &Figure{
			Layout: layout, Colours: colours, Palette: pal, Title: "A million cells",
			Key: key, Labels: labels, Background: white,
		}
	})
	return bench1M.f
}

// BenchmarkPNG1M exports a million points as a 1920 × 1080 PNG, from the
// figure to the encoded bytes.
func BenchmarkPNG1M(b *testing.B) {
	f := figure1M(b)
	s, _ := Preset("slide16x9", 0)
	b.ResetTimer()
	for b.Loop() {
		if err := WritePNG(io.Discard, f, s); err != nil {
			b.Fatal(err)
		}
	}
}

// BenchmarkSVGHybrid1M exports a million points as a 1920 × 1080 SVG with
// the points embedded as one PNG.
func BenchmarkSVGHybrid1M(b *testing.B) {
	f := figure1M(b)
	s, _ := Preset("slide16x9", 0)
	b.ResetTimer()
	for b.Loop() {
		if err := WriteSVG(io.Discard, f, s, 0); err != nil {
			b.Fatal(err)
		}
	}
}

// BenchmarkMedoids1M finds the centres of 20 categories of a million
// points.
func BenchmarkMedoids1M(b *testing.B) {
	layout, codes, _ := clusters(1_000_000, 20, 2, 1)
	b.ResetTimer()
	for b.Loop() {
		if _, err := Medoids(context.Background(), layout, codes, 20); err != nil {
			b.Fatal(err)
		}
	}
}

// BenchmarkExpression computes 20 genes over 12 groups of 200 000 cells of
// 400 genes, a tenth of the entries stored.
func BenchmarkExpression(b *testing.B) {
	X, _ := randomCSR(200_000, 400, 0.1, 4)
	genes := make([]int, 20)
	names := make([]string, 20)
	for j := range genes {
		genes[j] = 17 * j
		names[j] = strconv.Itoa(genes[j])
	}
	codes := make([]int32, X.Rows)
	groups := make([]string, 12)
	for i := range codes {
		codes[i] = int32(i % 12)
	}
	b.ResetTimer()
	for b.Loop() {
		if _, err := Expression(context.Background(), X, genes, names, codes, groups); err != nil {
			b.Fatal(err)
		}
	}
}
