package markers

import (
	"context"
	"math/rand/v2"
	"sync"
	"testing"

	"lodestone/compute/sparse"
	"lodestone/internal/cputime"
)

var bench100k struct {
	once sync.Once
	x    *sparse.CSR
	in   []bool
}

// benchData returns 100 000 cells × 2 000 genes with about 10⁷ non-zeros
// (randomExpression, mean detection rate 5%) and a group of every tenth
// cell that expresses 50 genes more often; built once per test binary.
func benchData() (*sparse.CSR, []bool) {
	bench100k.once.Do(func() {
		in := make([]bool, 100000)
		for c := range in {
			in[c] = c%10 == 0
		}
		bench100k.in = in
		bench100k.x = randomExpression(len(in), 2000, 0.05, in, 50, 1)
	})
	return bench100k.x, bench100k.in
}

// BenchmarkRank100k ranks all genes for one group, from the cells × genes
// matrix (checking and transposing it included).
func BenchmarkRank100k(b *testing.B) {
	x, in := benchData()
	b.ReportMetric(float64(x.NNZ()), "nnz")
	b.ResetTimer()
	for b.Loop() {
		if _, err := Rank(context.Background(), viewOf(x), in, nil, Options{}); err != nil {
			b.Fatal(err)
		}
	}
}

// BenchmarkExpressionRank100k ranks all genes for one group from a prepared
// Expression, as when several groups are compared in turn.
func BenchmarkExpressionRank100k(b *testing.B) {
	x, in := benchData()
	e, err := NewExpression(context.Background(), viewOf(x))
	if err != nil {
		b.Fatal(err)
	}
	b.ResetTimer()
	for b.Loop() {
		if _, err := e.Rank(context.Background(), in, nil, Options{}); err != nil {
			b.Fatal(err)
		}
	}
}

// benchCounts is a log-normalised view of 200,000 cells × 20,000 genes with
// about 1,100 counts per cell (2.2·10^8, the density of a real atlas), genes
// spread at random, built once.
var benchCounts = sync.OnceValue(func() *sparse.View {
	const cells, genes, perCell = 200_000, 20_000, 1_100
	rng := rand.New(rand.NewPCG(1, 2))
	b := sparse.NewCountsBuilder(cells, genes, cells*perCell)
	scale := make([]float64, cells)
	for i := range cells {
		for j := rng.IntN(2 * genes / perCell); j < genes; j += 1 + rng.IntN(2*genes/perCell) {
			k := 1 + rng.IntN(3)
			if rng.IntN(8) == 0 {
				k += rng.IntN(40)
			}
			b.Add(j, float32(k))
		}
		b.EndRow()
		scale[i] = 1e4 / float64(800+rng.IntN(3000)) // a library size in counts
	}
	v, err := sparse.NewView(b.Counts(), nil, nil, 0)
	if err == nil {
		v, err = v.WithScale(scale)
	}
	if err != nil {
		panic(err)
	}
	return v
})

// BenchmarkRankCounts200k ranks all 20,000 genes for every tenth cell
// against the rest, reading the counts as they are stored; cpu-ms/op over
// the counts gives the time at a million cells and 1.1·10^9 counts.
func BenchmarkRankCounts200k(b *testing.B) {
	x := benchCounts()
	n, _ := x.Dims()
	in := make([]bool, n)
	for c := 0; c < n; c += 10 {
		in[c] = true
	}
	e, err := NewExpression(context.Background(), x)
	if err != nil {
		b.Fatal(err)
	}
	b.ResetTimer()
	start := cputime.Used()
	for b.Loop() {
		if _, err := e.Rank(context.Background(), in, nil, Options{}); err != nil {
			b.Fatal(err)
		}
	}
	cputime.Report(b, start)
	b.ReportMetric(float64(x.NNZ()), "counts")
}

// BenchmarkNewExpressionCounts200k prepares that view for comparisons.
func BenchmarkNewExpressionCounts200k(b *testing.B) {
	x := benchCounts()
	b.ResetTimer()
	start := cputime.Used()
	for b.Loop() {
		if _, err := NewExpression(context.Background(), x); err != nil {
			b.Fatal(err)
		}
	}
	cputime.Report(b, start)
}
