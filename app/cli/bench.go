package cli

import (
	"context"
	"fmt"
	"io"
	"math"
	"os"
	"path/filepath"
	"runtime"
	"runtime/metrics"
	"strconv"
	"strings"
	"sync"
	"sync/atomic"
	"time"

	"lodestone/compute/affinity"
	"lodestone/compute/atlas"
	"lodestone/compute/embed"
	"lodestone/compute/neighbors"
	"lodestone/compute/prep"
	"lodestone/compute/quality"
	"lodestone/compute/sparse"
	"lodestone/compute/synth"
	"lodestone/internal/cputime"
)

func init() {
	register("bench", "time the stages on generated data: kNN, PCA, the embedding, the integration of samples, the whole run from counts", runBench)
}

// maxBenchCells bounds the atlases bench generates (about 1 GB of
// features per million cells at 50 components, with the graph on top).
const maxBenchCells = 5000000

func runBench(args []string, stdout, stderr io.Writer) error {
	fs := newFlags("bench", "[--sizes 10000,70000,250000,1000000] [--sections knn,pca,embed,integrate,counts] [--data DIR]", stderr)
	sizesFlag := fs.String("sizes", "10000,70000,250000,1000000", "numbers of cells, comma-separated")
	sectionsFlag := fs.String("sections", "knn,pca,embed,integrate", "what to time: knn, pca, embed, integrate (of samples), counts (the whole run from counts on disk)")
	data := fs.String("data", filepath.Join(os.TempDir(), "lodestone-bench-counts"), "counts section: folder for the generated atlases, written once and reused")
	genes := fs.Int("genes", 0, "counts section: genes of the generated atlases")
	gz := fs.Bool("gzip", false, "counts section: read the counts gzip-compressed")
	var run string
	fs.inputPath(&run, "run", "counts section, internal: analyse the atlas folder in this process and report each stage")
	threads := fs.Int("threads", 0, "goroutines to use (0: all processors)")
	iterations := fs.Int("iterations", embed.DefaultIterations, "optimiser iterations of the embedding section")
	seed := fs.Int64("seed", 1, "seed of the generated data (the counts section's atlas is drawn with it too)")
	if err := fs.parse(args); err != nil {
		return err
	}
	var sizes []int
	for _, f := range strings.Split(*sizesFlag, ",") {
		n, err := strconv.Atoi(strings.TrimSpace(f))
		if err != nil || n < 200 || n > maxBenchCells {
			return usagef("--sizes: %q is not a number of cells from 200 to %d", f, maxBenchCells)
		}
		sizes = append(sizes, n)
	}
	sections := map[string]bool{}
	for _, s := range strings.Split(*sectionsFlag, ",") {
		s = strings.TrimSpace(s)
		if s != "knn" && s != "pca" && s != "embed" && s != "integrate" && s != "counts" {
			return usagef("--sections: unknown section %q (want knn, pca, embed, integrate, counts)", s)
		}
		sections[s] = true
	}
	ctx, stop := interruptible()
	defer stop()
	if run != "" {
		return benchCountsRun(ctx, stdout, run, *iterations, *threads, *seed)
	}
	fmt.Fprintf(stdout, "lodestone bench: %d processors, GOMAXPROCS %d, %s/%s, %s\n\n",
		runtime.NumCPU(), runtime.GOMAXPROCS(0), runtime.GOOS, runtime.GOARCH, runtime.Version())
	if sections["knn"] {
		if err := benchKNN(ctx, stdout, sizes, *threads, *seed); err != nil {
			return err
		}
	}
	if sections["pca"] {
		if err := benchPCA(ctx, stdout, *threads, *seed); err != nil {
			return err
		}
	}
	if sections["embed"] {
		if err := benchEmbed(ctx, stdout, sizes, *iterations, *threads, *seed); err != nil {
			return err
		}
	}
	if sections["integrate"] {
		if err := benchIntegrate(ctx, stdout, sizes, *threads, *seed); err != nil {
			return err
		}
	}
	if sections["counts"] {
		if err := benchCounts(ctx, stdout, sizes, *data, *genes, *gz, *iterations, *threads, *seed); err != nil {
			return err
		}
	}
	return nil
}

// peakHeap samples the heap in use every 10 ms while f runs and returns
// the largest value seen (and the one at the end of f).
func peakHeap(f func() error) (uint64, error) {
	var peak atomic.Uint64
	done := make(chan struct{})
	var wg sync.WaitGroup
	wg.Add(1)
	sample := func() {
		if v := heapInUse(); v > peak.Load() {
			peak.Store(v)
		}
	}
	go func() {
		defer wg.Done()
		t := time.NewTicker(10 * time.Millisecond)
		defer t.Stop()
		for {
			select {
			case <-done:
				return
			case <-t.C:
				sample()
			}
		}
	}()
	err := f()
	sample()
	close(done)
	wg.Wait()
	return peak.Load(), err
}

// heapInUse returns the heap in use: its objects, its unused spans and the
// goroutines' stacks. runtime/metrics reads these without stopping the
// world, unlike runtime.ReadMemStats, which would stall the timed work.
func heapInUse() uint64 {
	samples := [...]metrics.Sample{
		{Name: "/memory/classes/heap/objects:bytes"},
		{Name: "/memory/classes/heap/unused:bytes"},
		{Name: "/memory/classes/heap/stacks:bytes"},
	}
	metrics.Read(samples[:])
	var v uint64
	for _, s := range samples {
		if s.Value.Kind() == metrics.KindUint64 {
			v += s.Value.Uint64()
		}
	}
	return v
}

func mib(b uint64) string { return fmt.Sprintf("%.0f MiB", float64(b)/(1<<20)) }

// benchData is the generated input of one size: a 50-D Gaussian mixture of
// 20 clusters.
func benchData(n int, seed int64) *synthData {
	x, labels := synth.GaussianMixture(n, 50, 20, seed)
	return &synthData{x: x, labels: labels}
}

type synthData struct {
	x      *atlas.Dense
	labels []int32
}

func benchKNN(ctx context.Context, w io.Writer, sizes []int, threads int, seed int64) error {
	fmt.Fprintln(w, "k nearest neighbours (k = 90, 50-D Gaussian mixture; recall against exact search of 1,000 sampled cells, ± its standard error)")
	fmt.Fprintf(w, "%10s %12s %10s %10s %17s %12s\n", "cells", "method", "time", "cpu time", "recall", "peak heap")
	for _, n := range sizes {
		runtime.GC()
		d := benchData(n, seed)
		var g *neighbors.Graph
		var stages []string
		start, cpu := time.Now(), cputime.Used()
		last, lastCPU := start, cpu
		// Each stage of the approximate search: its wall and processor
		// time, the list entries it changed (per entry of the N×90 lists),
		// the distances it computed, and the points whose candidates the
		// descent's sample cut.
		stage := func(st neighbors.Stage) {
			now, c := time.Now(), cputime.Used()
			name := st.Name
			if st.Step > 0 {
				name = fmt.Sprintf("%s %d", name, st.Step)
			}
			stages = append(stages, fmt.Sprintf("%23s %8.2f s %8.2f s %10.4f %10.3g %10d", name, now.Sub(last).Seconds(), (c-lastCPU).Seconds(),
				float64(st.Changed)/(float64(n)*90), float64(st.Distances), st.Cut))
			last, lastCPU = now, c
		}
		peak, err := peakHeap(func() (err error) {
			g, err = neighbors.Find(ctx, d.x, neighbors.Options{K: 90, Seed: seed, Threads: threads, Stages: stage})
			return err
		})
		if err != nil {
			return err
		}
		elapsed, cpu := time.Since(start), cputime.Used()-cpu
		sample := quality.Sample(n, 1000, seed)
		exact, err := neighbors.ExactFor(ctx, d.x, sample, neighbors.Options{K: 90, Threads: threads})
		if err != nil {
			return err
		}
		recall, se, err := sampleRecall(g, exact, sample)
		if err != nil {
			return err
		}
		method := "approximate"
		if n <= neighbors.ExactLimit {
			method = "exact"
		}
		fmt.Fprintf(w, "%10d %12s %8.2f s %8.2f s %8.4f ± %.4f %12s\n", n, method, elapsed.Seconds(), cpu.Seconds(), recall, se, mib(peak))
		if len(stages) > 0 {
			fmt.Fprintf(w, "%23s %10s %10s %10s %10s %10s\n", "stage", "time", "cpu time", "changed", "distances", "cut")
			for _, l := range stages {
				fmt.Fprintln(w, l)
			}
		}
	}
	fmt.Fprintln(w)
	return nil
}

// sampleRecall returns the recall of g on the sampled rows (as
// neighbors.Recall) and its standard error, the standard deviation of the
// rows' recalls divided by √rows.
func sampleRecall(g, exact *neighbors.Graph, rows []int) (mean, se float64, err error) {
	k := exact.K
	var sum, sum2 float64
	for r := range rows {
		one := &neighbors.Graph{N: 1, K: k, Index: exact.Index[r*k : (r+1)*k], Dist: exact.Dist[r*k : (r+1)*k]}
		v, err := neighbors.Recall(g, one, rows[r:r+1])
		if err != nil {
			return 0, 0, err
		}
		sum += v
		sum2 += v * v
	}
	m := float64(len(rows))
	mean = sum / m
	if len(rows) > 1 {
		se = math.Sqrt(max(sum2/m-mean*mean, 0) / (m - 1))
	}
	return mean, se, nil
}

func benchPCA(ctx context.Context, w io.Writer, threads int, seed int64) error {
	fmt.Fprintln(w, "PCA (100,000 cells × 2,000 genes, about 10^7 counts, log-normalised, 50 components)")
	x := synth.Counts(100_000, 2_000, 100, seed)
	norm, err := prep.Normalize(ctx, x, prep.DefaultTarget, threads, nil)
	if err != nil {
		return err
	}
	opt := prep.DefaultPCA()
	opt.Threads, opt.Seed = threads, seed
	start := time.Now()
	var res *prep.PCA
	peak, err := peakHeap(func() (err error) {
		res, err = prep.RunPCA(ctx, norm, opt)
		return err
	})
	if err != nil {
		return err
	}
	fmt.Fprintf(w, "%10s %10s %20s %12s\n", "entries", "time", "variance explained", "peak heap")
	sum := 0.0
	for _, r := range res.ExplainedVarianceRatio {
		sum += r
	}
	fmt.Fprintf(w, "%10d %8.2f s %19.1f%% %12s\n", norm.NNZ(), time.Since(start).Seconds(), 100*sum, mib(peak))
	fmt.Fprintln(w)
	return nil
}

func benchEmbed(ctx context.Context, w io.Writer, sizes []int, iterations, threads int, seed int64) error {
	fmt.Fprintf(w, "embedding (perplexity 30 on 90 neighbours, attraction 1, %d iterations; fidelity as the window scores it: %d cells, k = %d;\n",
		iterations, quality.DefaultFidelitySample, quality.DefaultFidelityK)
	fmt.Fprintln(w, "whole = neighbours + affinities + initial layout + run; cores = processor time over wall time during the run)")
	fmt.Fprintf(w, "%10s %12s %12s %13s %10s %6s %10s %8s %9s %7s %7s %12s\n", "cells", "neighbours", "affinities", "ms/iteration", "run", "cores",
		"whole", "KL", "kNN kept", "trust", "dCor", "peak heap")
	for _, n := range sizes {
		runtime.GC()
		d := benchData(n, seed)
		start := time.Now()
		g, err := neighbors.Find(ctx, d.x, neighbors.Options{K: 90, Seed: seed, Threads: threads})
		if err != nil {
			return err
		}
		knnTime := time.Since(start)
		var layout, init []float32
		var P *sparse.CSR
		var affTime, initTime, runTime, runCPU time.Duration
		kl := math.NaN()
		runtime.GC() // between the stages, as pipeline.Graph does
		peak, err := peakHeap(func() (err error) {
			start := time.Now()
			if P, err = affinity.Perplexity(ctx, g, 30, threads); err != nil {
				return err
			}
			runtime.GC()
			affTime = time.Since(start)
			start = time.Now()
			init, err = embed.InitPCA(d.x)
			initTime = time.Since(start)
			return err
		})
		if err != nil {
			return err
		}
		// During the run the heap is sampled at its snapshots, from the run's
		// own goroutine: a sampler waking every 10 ms beside the run's
		// goroutines slowed a 10k run by about 15 % on two cores.
		p := embed.DefaultParams()
		p.Iterations, p.Seed, p.Threads = iterations, seed, threads
		if p.EarlyIterations > iterations {
			p.EarlyIterations = iterations
		}
		start, cpu := time.Now(), cputime.Used()
		layout, err = embed.Run(ctx, P, init, p, func(s embed.Snapshot) {
			peak = max(peak, heapInUse())
			if s.Done {
				kl = s.KL
			}
		})
		runTime, runCPU = time.Since(start), cputime.Used()-cpu
		if err != nil {
			return err
		}
		f, err := quality.Fidelity(ctx, d.x, layout, quality.FidelityOptions{Seed: seed, Threads: threads})
		if err != nil {
			return err
		}
		whole := knnTime + affTime + initTime + runTime
		fmt.Fprintf(w, "%10d %10.2f s %10.2f s %13.1f %8.1f s %6.2f %8.1f s %8.3f %9.3f %7.3f %7.3f %12s\n", n, knnTime.Seconds(), affTime.Seconds(),
			1000*runTime.Seconds()/float64(iterations), runTime.Seconds(), runCPU.Seconds()/runTime.Seconds(), whole.Seconds(),
			kl, f.KNN, f.Trust, f.DCor, mib(peak))
	}
	fmt.Fprintln(w)
	return nil
}
