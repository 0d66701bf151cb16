package quality

import (
	"context"
	"errors"
	"math"
	"math/rand/v2"
	"testing"

	"lodestone/compute/atlas"
)

// TestLISIByHand works the index out for six cells in two batches (A, B):
// three cells lie on one spot and three on another far away, so each
// cell's two coincident neighbours carry all the weight at perplexity 2
// (half each: the entropy of two equal weights is one bit, 2¹ = 2), and
//
//	spot 1: a(A) b(B) c(A)    spot 2: d(B) e(B) f(A)
//	a: neighbours b, c → p = (½, ½), D = ½, LISI 2     b: a, c → A only, LISI 1
//	c: a, b → LISI 2     d: e, f → 2     e: d, f → 2     f: d, e → 1
//
// mean LISI 10/6. Chance: Σw² = ½ and Σπ² = ½, so C = ½ + ½·½ = ¾ and
// 1/C − 1 = ⅓; normalised, a LISI of 2 scores 3 and of 1 scores 0: mean
// (3+0+3+3+3+0)/6 = 2, more mixed than chance (two neighbours are rarely
// split evenly at random). In the map and in a 3-D space alike.
func TestLISIByHand(t *testing.T) {
	batches := []int32{0, 1, 0, 1, 1, 0}
	layout := []float32{0, 0, 0, 0, 0, 0, 100, 0, 100, 0, 100, 0}
	high := atlas.NewDense(6, 3)
	for i := 3; i < 6; i++ {
		high.Data[3*i+1] = 50
	}
	o := MixingOptions{Perplexity: 2, Batches: batches, Sample: 6}
	ms, err := MapMixing(context.Background(), layout, o)
	if err != nil {
		t.Fatal(err)
	}
	ss, err := SpaceMixing(context.Background(), high, o)
	if err != nil {
		t.Fatal(err)
	}
	for name, s := range map[string]MixingScores{"map": ms, "space": ss} {
		if s.Cells != 6 || s.Neighbours != 5 || s.Perplexity != 2 {
			t.Errorf("%s: %d cells, %d neighbours, perplexity %v", name, s.Cells, s.Neighbours, s.Perplexity)
		}
		if math.Abs(s.BatchLISI-10.0/6) > 1e-4 || math.Abs(s.Batch-2) > 1e-3 {
			t.Errorf("%s: LISI %.6f (want 10/6), normalised %.6f (want 2)", name, s.BatchLISI, s.Batch)
		}
		if !math.IsNaN(s.Types) {
			t.Errorf("%s: type mixing %v without types", name, s.Types)
		}
	}
}

// TestMixingAgainstDefinition compares both scores with a slow direct
// computation on random data: all distances in float64, the k = 3·perplexity
// nearest by sorting, the precision found by plain bisection (van der
// Maaten & Hinton 2008) so that the weights' entropy is log2(perplexity),
// then the index of LISI's documentation, averaged over the sample.
func TestMixingAgainstDefinition(t *testing.T) {
	const n, perp = 400, 10.0
	x := randomData(n, 4, 17)
	layout := noisyLayout(x, 0.3, 18)
	rng := rand.New(rand.NewPCG(19, 20))
	batches, types := make([]int32, n), make([]int32, n)
	for i := range batches {
		// Batches follow the first coordinate partly; a few labels missing.
		batches[i] = int32(rng.IntN(2))
		if x.At(i, 0) > 0.5 {
			batches[i] = 2
		}
		types[i] = int32(rng.IntN(4)) - 1
	}
	o := MixingOptions{Perplexity: perp, Batches: batches, Types: types, Sample: 150, Seed: 3}
	sample := Sample(n, 150, 3)
	for _, tc := range []struct {
		name string
		d    func(i, j int) float64
		run  func() (MixingScores, error)
	}{
		{"map", layoutDist(layout), func() (MixingScores, error) { return MapMixing(context.Background(), layout, o) }},
		{"space", denseDist(x), func() (MixingScores, error) { return SpaceMixing(context.Background(), x, o) }},
	} {
		got, err := tc.run()
		if err != nil {
			t.Fatal(err)
		}
		wb, wbl, wt, wtl := slowMixing(n, int(3*perp), perp, sample, tc.d, batches, types)
		for _, c := range []struct {
			what      string
			got, want float64
		}{{"batch", got.Batch, wb}, {"batch LISI", got.BatchLISI, wbl}, {"types", got.Types, wt}, {"types LISI", got.TypesLISI, wtl}} {
			if math.Abs(c.got-c.want) > 1e-4 {
				t.Errorf("%s %s: %.6f, from the definition %.6f", tc.name, c.what, c.got, c.want)
			}
		}
		t.Logf("%s: batch %.4f (LISI %.4f), types %.4f (LISI %.4f)", tc.name, got.Batch, got.BatchLISI, got.Types, got.TypesLISI)
	}
}

// denseDist returns squared Euclidean distances between rows of x in float64.
func denseDist(x *atlas.Dense) func(i, j int) float64 {
	return func(i, j int) float64 {
		var s float64
		for c := 0; c < x.Cols; c++ {
			d := float64(x.At(i, c)) - float64(x.At(j, c))
			s += d * d
		}
		return s
	}
}

// slowMixing is the direct computation described at
// TestMixingAgainstDefinition.
func slowMixing(n, k int, perp float64, sample []int, d func(i, j int) float64, batches, types []int32) (b, bl, ty, tl float64) {
	index := func(labels []int32, ids []int32, w []float64) (float64, float64, bool) {
		levels := 0
		counts := map[int32]float64{}
		var labelled float64
		for _, l := range labels {
			if l >= 0 {
				counts[l]++
				labelled++
				levels = max(levels, int(l)+1)
			}
		}
		var pi2 float64
		for _, c := range counts {
			pi2 += (c / labelled) * (c / labelled)
		}
		p := map[int32]float64{}
		var tot float64
		for j, id := range ids {
			if l := labels[id]; l >= 0 {
				p[l] += w[j]
				tot += w[j]
			}
		}
		if tot == 0 {
			return 0, 0, false
		}
		var dd, w2 float64
		for _, v := range p {
			dd += (v / tot) * (v / tot)
		}
		for j, id := range ids {
			if labels[id] >= 0 {
				w2 += (w[j] / tot) * (w[j] / tot)
			}
		}
		c := w2 + (1-w2)*pi2
		return 1 / dd, (1/dd - 1) / (1/c - 1), true
	}
	var nb, nt int
	for _, i := range sample {
		ids := naiveKNN(n, i, k, d)
		d2 := make([]float64, k)
		for j, id := range ids {
			d2[j] = d(i, int(id))
		}
		w := bisectWeights(d2, perp)
		if batches[i] >= 0 {
			if l, m, ok := index(batches, ids, w); ok {
				bl, b, nb = bl+l, b+m, nb+1
			}
		}
		if types[i] >= 0 {
			if l, m, ok := index(types, ids, w); ok {
				tl, ty, nt = tl+l, ty+m, nt+1
			}
		}
	}
	return b / float64(nb), bl / float64(nb), ty / float64(nt), tl / float64(nt)
}

// bisectWeights returns exp(−β d2_j)/Σ with β found by bisection on
// log β so that the entropy (bits) is log2(perp) to 1e-10.
func bisectWeights(d2 []float64, perp float64) []float64 {
	w := make([]float64, len(d2))
	lo, hi := -50.0, 50.0
	for it := 0; it < 200; it++ {
		beta := math.Exp((lo + hi) / 2)
		var s, h float64
		m := math.Inf(1)
		for _, v := range d2 {
			m = math.Min(m, v)
		}
		for j, v := range d2 {
			w[j] = math.Exp(-beta * (v - m))
			s += w[j]
		}
		for j := range w {
			w[j] /= s
			if w[j] > 0 {
				h -= w[j] * math.Log2(w[j])
			}
		}
		if h > math.Log2(perp) {
			lo = (lo + hi) / 2
		} else {
			hi = (lo + hi) / 2
		}
	}
	return w
}

// TestMixingExtremes checks the ends of the scale on data with a known
// answer: labels drawn at random score about 1, labels that follow two
// far-apart groups score 0 (batches) — and types that are the groups score
// 0 too, while random types score about 1.
func TestMixingExtremes(t *testing.T) {
	const n = 3000
	rng := rand.New(rand.NewPCG(23, 24))
	x := atlas.NewDense(n, 5)
	group := make([]int32, n)
	random := make([]int32, n)
	for i := 0; i < n; i++ {
		group[i] = int32(i % 2)
		random[i] = int32(rng.IntN(3))
		for c := 0; c < 5; c++ {
			x.Data[i*5+c] = float32(rng.NormFloat64() + 40*float64(group[i]))
		}
	}
	s, err := SpaceMixing(context.Background(), x, MixingOptions{Batches: random, Types: group})
	if err != nil {
		t.Fatal(err)
	}
	// Random labels: the mean of 1/D over cells slightly exceeds 1/E[D]
	// (Jensen), by about the variance of D: a few per cent at perplexity 30.
	if math.Abs(s.Batch-1) > 0.05 || s.Types > 1e-6 || math.Abs(s.TypesLISI-1) > 1e-6 {
		t.Errorf("random batches %.4f (want ≈ 1), grouped types %.6f (want 0, LISI 1: %.6f)", s.Batch, s.Types, s.TypesLISI)
	}
	s, err = SpaceMixing(context.Background(), x, MixingOptions{Batches: group})
	if err != nil {
		t.Fatal(err)
	}
	if s.Batch > 1e-6 || s.Cells != DefaultFidelitySample {
		t.Errorf("batches in separate groups score %.6f over %d cells (want 0 over %d)", s.Batch, s.Cells, DefaultFidelitySample)
	}
}

// TestMixingBadInput checks the errors.
func TestMixingBadInput(t *testing.T) {
	layout := []float32{0, 0, 1, 1, 2, 2}
	for _, tc := range []struct {
		name string
		o    MixingOptions
		err  error
	}{
		{"short labels", MixingOptions{Batches: []int32{0, 1}}, ErrShape},
		{"one level", MixingOptions{Batches: []int32{0, 0, -1}}, ErrOneLevel},
		{"bad label", MixingOptions{Batches: []int32{0, 1, -2}}, ErrShape},
		{"perplexity", MixingOptions{Batches: []int32{0, 1, 1}, Perplexity: 0.5}, ErrK},
	} {
		if _, err := MapMixing(context.Background(), layout, tc.o); !errors.Is(err, tc.err) {
			t.Errorf("%s: %v (want %v)", tc.name, err, tc.err)
		}
	}
	ctx, cancel := context.WithCancel(context.Background())
	cancel()
	if _, err := MapMixing(ctx, layout, MixingOptions{Batches: []int32{0, 1, 1}}); !errors.Is(err, context.Canceled) {
		t.Errorf("cancelled: %v", err)
	}
}
