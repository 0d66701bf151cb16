package cluster

import (
	"context"
	"slices"
	"sync"
	"testing"

	"lodestone/compute/neighbors"
	"lodestone/compute/sparse"
	"lodestone/compute/synth"
)

var bench70k struct {
	once  sync.Once
	knn   *neighbors.Graph
	graph *sparse.CSR
}

// benchGraph returns the k = 15 nearest-neighbour graph of 70 000 points
// drawn in the plane from synth's mixture of 10 Gaussians (a random
// geometric kNN graph), and its union graph; built once per test binary.
func benchGraph(b *testing.B) (*neighbors.Graph, *sparse.CSR) {
	bench70k.once.Do(func() {
		x, _ := synth.GaussianMixture(70000, 2, 10, 1)
		xy := make([][2]float64, x.Rows)
		for i := range xy {
			xy[i] = [2]float64{float64(x.At(i, 0)), float64(x.At(i, 1))}
		}
		bench70k.knn = gridKNN(xy, 15)
		a, err := FromKNN(bench70k.knn, 15)
		if err != nil {
			panic(err)
		}
		bench70k.graph = a
	})
	return bench70k.knn, bench70k.graph
}

func BenchmarkFromKNN70k(b *testing.B) {
	knn, _ := benchGraph(b)
	b.ResetTimer()
	for b.Loop() {
		if _, err := FromKNN(knn, 15); err != nil {
			b.Fatal(err)
		}
	}
}

func BenchmarkLeiden70k(b *testing.B) {
	_, a := benchGraph(b)
	b.ResetTimer()
	var q float64
	var k int32
	for b.Loop() {
		memb, mod, err := Leiden(context.Background(), a, Options{Seed: 1})
		if err != nil {
			b.Fatal(err)
		}
		q, k = mod, slices.Max(memb)+1
	}
	b.ReportMetric(q, "modularity")
	b.ReportMetric(float64(k), "communities")
}
