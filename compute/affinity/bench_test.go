package affinity

import (
	"context"
	"sync"
	"syscall"
	"testing"
	"time"

	"lodestone/compute/neighbors"
	"lodestone/compute/synth"
)

// graph70k is the approximate 90-nearest-neighbour graph (neighbors.Find) of
// 70,000 points of a 50-D Gaussian mixture with 20 clusters, built once.
var graph70k struct {
	once sync.Once
	g    *neighbors.Graph
	err  error
}

// cpuTime returns the processor time this process has used, so benchmarks can
// report it beside the wall time (on a shared machine the wall time also
// counts other processes' turns).
func cpuTime() time.Duration {
	var ru syscall.Rusage
	if err := syscall.Getrusage(syscall.RUSAGE_SELF, &ru); err != nil {
		return 0
	}
	return time.Duration(ru.Utime.Nano() + ru.Stime.Nano())
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
	start := cpuTime()
	for i := 0; i < b.N; i++ {
		if _, err := Perplexity(context.Background(), g, 30, 0); err != nil {
			b.Fatal(err)
		}
	}
	b.ReportMetric(float64((cpuTime()-start).Milliseconds())/float64(b.N), "cpu-ms/op")
}

// BenchmarkUniform70k times uniform 15-NN affinities of 70k points.
func BenchmarkUniform70k(b *testing.B) {
	g := setup70k(b)
	b.ResetTimer()
	start := cpuTime()
	for i := 0; i < b.N; i++ {
		if _, err := Uniform(g, 15); err != nil {
			b.Fatal(err)
		}
	}
	b.ReportMetric(float64((cpuTime()-start).Milliseconds())/float64(b.N), "cpu-ms/op")
}
