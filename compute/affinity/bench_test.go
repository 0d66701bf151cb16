package affinity

import (
	"context"
	"sync"
	"testing"

	"lodestone/compute/neighbors"
	"lodestone/compute/synth"
	"lodestone/internal/cputime"
)

// graph70k is the approximate 90-nearest-neighbour graph (neighbors.Find) of
// 70,000 points of a 50-D Gaussian mixture with 20 clusters, built once.
var graph70k struct {
	once sync.Once
	g    *neighbors.Graph
	err  error
}

func setup70k(b *testing.B) *neighbors.Graph {
	b.Helper()
	graph70k.once.Do(func() {
		x, _ := synth.GaussianMixture(70000, 50, 20, 1)
		graph70k.g, graph70k.err = neighbors.Find(context.Background(), x, neighbors.Options{K: 90, Seed: 1})
	})
	if graph70k.err != nil {
		b.Fatal(graph70k.err)
	}
	return graph70k.g
}

// BenchmarkAffinity70k times perplexity-30 affinities of 70k points (90
// neighbours each), all processors.
func BenchmarkAffinity70k(b *testing.B) {
	g := setup70k(b)
	b.ResetTimer()
	start := cputime.Used()
	for i := 0; i < b.N; i++ {
		if _, err := Perplexity(context.Background(), g, 30, 0); err != nil {
			b.Fatal(err)
		}
	}
	cputime.Report(b, start)
}

// BenchmarkUniform70k times uniform 15-NN affinities of 70k points.
func BenchmarkUniform70k(b *testing.B) {
	g := setup70k(b)
	b.ResetTimer()
	start := cputime.Used()
	for i := 0; i < b.N; i++ {
		if _, err := Uniform(g, 15); err != nil {
			b.Fatal(err)
		}
	}
	cputime.Report(b, start)
}
