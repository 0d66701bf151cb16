package markers

import (
	"context"
	"sync"
	"testing"

	"lodestone/compute/sparse"
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
