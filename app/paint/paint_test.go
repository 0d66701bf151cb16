package paint

import (
	"context"
	"image/color"
	"math"
	"math/rand/v2"
	"slices"
	"sort"
	"testing"

	"lodestone/canvas/colour"
	"lodestone/canvas/raster"
	"lodestone/compute/atlas"
	"lodestone/compute/sparse"
)

func TestCategoricalCountsHiddenAndMissing(t *testing.T) {
	c := &atlas.Column{Name: "kind", Kind: atlas.Categorical, Levels: []string{"a", "b"}, Codes: []int32{0, 1, 1, -1, 0, 1}}
	p := Categorical(c, []bool{false, true, false})
	if len(p.Palette) != 3 || p.Palette[2] != colour.Missing {
		t.Fatalf("palette %v", p.Palette)
	}
	want := []uint16{0, raster.Hidden, raster.Hidden, 2, 0, raster.Hidden}
	for i, w := range want {
		if p.Colours[i] != w {
			t.Fatalf("colours %v, want %v", p.Colours, want)
		}
	}
	if len(p.Entries) != 3 || p.Entries[0].Count != 2 || p.Entries[1].Count != 3 || !p.Entries[1].Hidden || p.Entries[2].Count != 1 {
		t.Fatalf("entries %+v", p.Entries)
	}
	k := p.Key()
	if len(k.Entries) != 2 || k.Entries[0].Label != "a" || k.Entries[1].Label != "(missing)" {
		t.Fatalf("the key should leave out hidden entries: %+v", k.Entries)
	}
}

func TestContinuousMapsRangeOntoRamp(t *testing.T) {
	p := Continuous("score", []float64{0, 5, 10, math.NaN(), -3, 20}, 0, 10)
	want := []uint16{0, 128, 255, colour.RampSize, 0, 255}
	for i, w := range want {
		if p.Colours[i] != w {
			t.Fatalf("colours %v, want %v", p.Colours, want)
		}
	}
	if p.Missing != 1 || len(p.Palette) != colour.RampSize+1 {
		t.Fatalf("missing %d, palette %d", p.Missing, len(p.Palette))
	}
}

func TestGenePaintEndsAtThe99thPercentile(t *testing.T) {
	// 200 cells: values 1…200 / 100; nearest-rank 99th percentile is
	// value 198/100 (⌈0.99·200⌉ = 198).
	v := make([]float64, 200)
	for i := range v {
		v[i] = float64(i+1) / 100
	}
	p := GenePaint("g", v)
	if p.Hi != 1.98 || p.Lo != 0 {
		t.Fatalf("range %v–%v, want 0–1.98", p.Lo, p.Hi)
	}
	// A gene expressed in fewer than 1% of cells uses its maximum.
	w := make([]float64, 1000)
	w[3] = 2.5
	if q := GenePaint("rare", w); q.Hi != 2.5 {
		t.Fatalf("rare gene range ends at %v, want 2.5", q.Hi)
	}
}

func TestGeneValuesReadsAColumn(t *testing.T) {
	// Counts 1, 2 / nothing / 3, 4 in columns (0, 2) / – / (1, 2) of a
	// 3 × 3 matrix, read as stored, then the view of rows 2, 0 and columns
	// 1, 2 log-normalised with factors 0.5 and 2.
	b := sparse.NewCountsBuilder(3, 3, 4)
	b.Add(0, 1)
	b.Add(2, 2)
	b.EndRow()
	b.EndRow()
	b.Add(1, 3)
	b.Add(2, 4)
	x, err := sparse.NewView(b.Counts(), nil, nil, 0)
	if err != nil {
		t.Fatal(err)
	}
	if got := GeneValues(x, 2); !slices.Equal(got, []float64{2, 0, 4}) {
		t.Fatalf("column 2 = %v", got)
	}
	sub, err := sparse.NewView(b.Counts(), []int{2, 0}, []int{1, 2}, 0)
	if err != nil {
		t.Fatal(err)
	}
	if sub, err = sub.WithScale([]float64{0.5, 2}); err != nil {
		t.Fatal(err)
	}
	want := []float64{float64(float32(math.Log1p(4 * 0.5))), float64(float32(math.Log1p(2 * 2)))}
	if got := GeneValues(sub, 1); !slices.Equal(got, want) {
		t.Fatalf("normalised column 1 = %v, want %v", got, want)
	}
}

func TestGroupsPaintLastGroupWins(t *testing.T) {
	red := color.NRGBA{R: 255, A: 255}
	blue := color.NRGBA{B: 255, A: 255}
	gs := []*Group{
		{Name: "first", Colour: red, Cells: []bool{true, true, false, false}},
		{Name: "second", Colour: blue, Cells: []bool{false, true, true, false}},
	}
	p := GroupsPaint(gs, 4)
	if p.Colours[0] != 0 || p.Colours[1] != 1 || p.Colours[2] != 1 || p.Colours[3] != 2 {
		t.Fatalf("colours %v", p.Colours)
	}
	if p.Entries[2].Count != 1 || p.Entries[0].Count != 1 {
		t.Fatalf("entries %+v", p.Entries)
	}
}

func TestLabelsSitAtCategoryCentres(t *testing.T) {
	// Two categories around (0,0) and (10,10), cell 4 missing.
	layout := []float32{-1, 0, 1, 0, 0, 0, 9, 10, 11, 10, 10, 10, 50, 50}
	c := &atlas.Column{Name: "k", Kind: atlas.Categorical, Levels: []string{"left", "right"}, Codes: []int32{0, 0, 0, 1, 1, 1, -1}}
	labels, err := Categorical(c, nil).Labels(context.Background(), layout)
	if err != nil {
		t.Fatal(err)
	}
	if len(labels) != 2 {
		t.Fatalf("labels %+v", labels)
	}
	for _, l := range labels {
		switch l.Text {
		case "left":
			if l.X != 0 || l.Y != 0 {
				t.Errorf("left at (%v,%v), want the medoid (0,0)", l.X, l.Y)
			}
		case "right":
			if l.X != 10 || l.Y != 10 {
				t.Errorf("right at (%v,%v), want the medoid (10,10)", l.X, l.Y)
			}
		default:
			t.Errorf("unexpected label %q", l.Text)
		}
	}
}

func TestFormatRange(t *testing.T) {
	for _, c := range []struct {
		lo, hi float64
		a, b   string
	}{
		{5.1e-5, 0.999, "0.000", "0.999"},
		{0, 1, "0.00", "1.00"},
		{3, 1203, "3", "1203"},
		{0.5, 0.75, "0.500", "0.750"},
	} {
		if a, b := FormatRange(c.lo, c.hi); a != c.a || b != c.b {
			t.Errorf("FormatRange(%v, %v) = %q, %q; want %q, %q", c.lo, c.hi, a, b, c.a, c.b)
		}
	}
}

// Quantile selects what sorting would find: checked against sort.Float64s
// on random values with many ties, zeros and NaNs, for many q.
func TestQuantileMatchesSorting(t *testing.T) {
	rng := rand.New(rand.NewPCG(1, 2))
	for trial := range 200 {
		n := 1 + rng.IntN(3000)
		v := make([]float64, n)
		for i := range v {
			switch rng.IntN(6) {
			case 0:
				v[i] = 0
			case 1:
				v[i] = math.NaN()
			default:
				v[i] = float64(rng.IntN(50)) / 7
			}
		}
		sorted := slices.Clone(v)
		sort.Float64s(sorted)
		for _, q := range []float64{0, 0.01, 0.5, 0.99, 1, rng.Float64()} {
			want := sorted[max(0, min(n-1, int(math.Ceil(q*float64(n)))-1))]
			got := Quantile(v, q)
			if got != want && !(math.IsNaN(got) && math.IsNaN(want)) {
				t.Fatalf("trial %d, q %v: %v, sorting gives %v", trial, q, got, want)
			}
		}
	}
}
