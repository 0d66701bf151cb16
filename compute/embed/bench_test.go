package embed

import (
	"context"
	"fmt"
	"math"
	"sync"
	"syscall"
	"testing"
	"time"

	"lodestone/compute/affinity"
	"lodestone/compute/atlas"
	"lodestone/compute/neighbors"
	"lodestone/compute/sparse"
	"lodestone/compute/synth"
	"lodestone/internal/cputime"
)

// The 70k benchmark case: 70,000 points of a 50-D Gaussian mixture with 20
// clusters (synth.GaussianMixture), their approximate 90 nearest neighbours
// (neighbors.Find), perplexity-30 affinities, and the map of a default
// 750-iteration run, built once per process.
var case70k struct {
	once   sync.Once
	x      *atlas.Dense
	p      *sparse.CSR
	layout []float32
	err    error
}

func setup70k(b *testing.B) (*sparse.CSR, []float32) {
	b.Helper()
	case70k.once.Do(func() {
		ctx := context.Background()
		x, _ := synth.GaussianMixture(70000, 50, 20, 1)
		g, err := neighbors.Find(ctx, x, neighbors.Options{K: 90, Seed: 1})
		if err != nil {
			case70k.err = err
			return
		}
		p, err := affinity.Perplexity(ctx, g, 30, 0)
		if err != nil {
			case70k.err = err
			return
		}
		init, err := InitPCA(x)
		if err != nil {
			case70k.err = err
			return
		}
		layout, err := Run(ctx, p, init, DefaultParams(), nil)
		case70k.x, case70k.p, case70k.layout, case70k.err = x, p, layout, err
	})
	if case70k.err != nil {
		b.Fatal(case70k.err)
	}
	return case70k.p, case70k.layout
}

// BenchmarkIteration70k times one iteration at attraction 1 on the map of a
// finished run (its extent and density are those the optimiser spends most
// iterations at), all processors.
func BenchmarkIteration70k(b *testing.B) {
	P, layout := setup70k(b)
	a, err := checkAffinity(P, len(layout)/2, 0)
	if err != nil {
		b.Fatal(err)
	}
	p := Params{Attraction: 1}
	if err := p.check(); err != nil {
		b.Fatal(err)
	}
	y, _ := toFloat64(layout, "layout")
	o := newOptimizer(a, y, p)
	defer o.close()
	o.iterate(1, lateMomentum, float64(o.n), false, never)
	b.ReportAllocs()
	b.ResetTimer()
	start := cputime.Used()
	for i := 0; i < b.N; i++ {
		o.iterate(1, lateMomentum, float64(o.n), false, never)
	}
	cputime.Report(b, start)
}

// BenchmarkIterationByStage shows that an iteration's cost does not grow
// with the map's extent: it records the 70k map of one fresh run at
// iterations 300, 500, 750, 1000 and 1500 (extent about 20, 75, 125, 160
// and 210), and times one iteration at attraction 1 on each, all processors,
// reporting the extent, the grid's cells per side and the near field's
// pairs per point beside the time.
func BenchmarkIterationByStage(b *testing.B) {
	P, _ := setup70k(b)
	init, _ := InitPCA(case70k.x)
	stages := []int{300, 500, 750, 1000, 1500}
	maps := map[int][]float32{}
	p := DefaultParams()
	p.Iterations, p.SnapshotEvery = stages[len(stages)-1], time.Nanosecond
	if _, err := Run(context.Background(), P, init, p, func(s Snapshot) {
		for _, t := range stages {
			if s.Iteration == t {
				maps[t] = s.Layout
			}
		}
	}); err != nil {
		b.Fatal(err)
	}
	for _, t := range stages {
		b.Run(fmt.Sprintf("it%d", t), func(b *testing.B) {
			a, err := checkAffinity(P, P.Rows, 0)
			if err != nil {
				b.Fatal(err)
			}
			q := Params{Attraction: 1}
			if err := q.check(); err != nil {
				b.Fatal(err)
			}
			y, _ := toFloat64(maps[t], "layout")
			o := newOptimizer(a, y, q)
			defer o.close()
			o.iterate(1, lateMomentum, float64(o.n), false, never)
			b.ReportAllocs()
			b.ResetTimer()
			start := cputime.Used()
			for i := 0; i < b.N; i++ {
				o.iterate(1, lateMomentum, float64(o.n), false, never)
			}
			cputime.Report(b, start)
			r := o.fft
			var work int64
			if r.near {
				work, _ = r.tally(o.n)
			}
			b.ReportMetric(max(o.bounds[1]-o.bounds[0], o.bounds[3]-o.bounds[2]), "extent")
			b.ReportMetric(float64(max(r.nx, r.ny)), "cells")
			b.ReportMetric(float64(work)/2/float64(o.n), "pairs/pt")
		})
	}
}

// BenchmarkRun70k times a fresh default run: 750 iterations (250 with early
// exaggeration) from the PCA initialisation.
func BenchmarkRun70k(b *testing.B) {
	P, _ := setup70k(b)
	init, _ := InitPCA(case70k.x)
	b.ResetTimer()
	start := cputime.Used()
	for i := 0; i < b.N; i++ {
		if _, err := Run(context.Background(), P, init, DefaultParams(), nil); err != nil {
			b.Fatal(err)
		}
	}
	cputime.Report(b, start)
}

// BenchmarkWarmRerun70k turns the dial from 1 to 4 on the finished map and
// reports, per rerun, the time to the first snapshot (first-ms), the time to
// the first settled snapshot (settled-s) and, cancelling then, the time Run
// takes to return (cancel-ms).
func BenchmarkWarmRerun70k(b *testing.B) {
	P, layout := setup70k(b)
	var first, settled, stopped time.Duration
	b.ResetTimer()
	start0 := cputime.Used()
	for i := 0; i < b.N; i++ {
		ctx, cancel := context.WithCancel(context.Background())
		start := time.Now()
		var firstAt, settledAt time.Time
		var cancelAt time.Time
		_, err := Run(ctx, P, layout, Params{Attraction: 4, Iterations: 5000}, func(s Snapshot) {
			if firstAt.IsZero() {
				firstAt = time.Now()
			}
			if s.Settled && settledAt.IsZero() {
				settledAt = time.Now()
				cancelAt = time.Now()
				cancel()
			}
		})
		end := time.Now()
		if err == nil {
			b.Fatal("the rerun never settled in 5000 iterations")
		}
		first += firstAt.Sub(start)
		settled += settledAt.Sub(start)
		stopped += end.Sub(cancelAt)
	}
	n := float64(b.N)
	b.ReportMetric(float64(first.Milliseconds())/n, "first-ms")
	b.ReportMetric(settled.Seconds()/n, "settled-s")
	b.ReportMetric(float64(stopped.Microseconds())/1000/n, "cancel-ms")
	cputime.Report(b, start0)
}

// BenchmarkSpectral70k times the Laplacian eigenmap of the 70k affinities.
func BenchmarkSpectral70k(b *testing.B) {
	P, _ := setup70k(b)
	b.ResetTimer()
	start := cputime.Used()
	var info *SpectralInfo
	for i := 0; i < b.N; i++ {
		var err error
		if _, info, err = Spectral(context.Background(), P, 0); err != nil {
			b.Fatal(err)
		}
	}
	cputime.Report(b, start)
	b.ReportMetric(float64(info.Products), "products")
	if !info.Converged {
		b.Logf("not converged: residual %.3g", info.Residual)
	}
}

// BenchmarkRepulsion times the interpolated repulsion alone at several sizes
// on clustered layouts whose extent grows as √N (about 100 at 70k).
func BenchmarkRepulsion(b *testing.B) {
	for _, n := range []int{5000, 70000, 250000} {
		b.Run(fmt.Sprintf("%dk", n/1000), func(b *testing.B) {
			y := clusteredLayout(n, 100*math.Sqrt(float64(n)/70000), 1)
			dst := make([]float64, len(y))
			r := newFFTRepulsion(testTeam(b, 0), 1)
			box := bbox(y)
			r.compute(dst, y, box, never)
			b.ResetTimer()
			start := cputime.Used()
			for i := 0; i < b.N; i++ {
				r.compute(dst, y, box, never)
			}
			cputime.Report(b, start)
		})
	}
}

// BenchmarkWhole1M times the whole path from features to map for a million
// cells — a 50-D Gaussian mixture with 40 clusters, approximate 90 nearest
// neighbours, perplexity-30 affinities, PCA initialisation and a default
// 750-iteration run — and reports the seconds of each stage and the peak
// resident memory of the process (peak-GB, from getrusage). Run it alone:
//
//	go test ./compute/embed -run XXX -bench Whole1M -benchtime 1x -timeout 3h
func BenchmarkWhole1M(b *testing.B) {
	ctx := context.Background()
	for i := 0; i < b.N; i++ {
		t0 := time.Now()
		x, _ := synth.GaussianMixture(1_000_000, 50, 40, 1)
		t1 := time.Now()
		g, err := neighbors.Find(ctx, x, neighbors.Options{K: 90, Seed: 1})
		if err != nil {
			b.Fatal(err)
		}
		t2 := time.Now()
		P, err := affinity.Perplexity(ctx, g, 30, 0)
		if err != nil {
			b.Fatal(err)
		}
		g = nil // let the graph be collected before the run
		t3 := time.Now()
		init, err := InitPCA(x)
		if err != nil {
			b.Fatal(err)
		}
		if _, err := Run(ctx, P, init, DefaultParams(), nil); err != nil {
			b.Fatal(err)
		}
		t4 := time.Now()
		b.ReportMetric(t2.Sub(t1).Seconds(), "knn-s")
		b.ReportMetric(t3.Sub(t2).Seconds(), "affinity-s")
		b.ReportMetric(t4.Sub(t3).Seconds(), "embed-s")
		b.ReportMetric(t4.Sub(t0).Seconds(), "total-s")
	}
	var ru syscall.Rusage
	if err := syscall.Getrusage(syscall.RUSAGE_SELF, &ru); err == nil {
		b.ReportMetric(float64(ru.Maxrss)/(1<<20), "peak-GB") // Maxrss is in KiB on Linux
	}
}
