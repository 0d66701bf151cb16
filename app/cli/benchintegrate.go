package cli

import (
	"context"
	"fmt"
	"io"
	"runtime"
	"time"

	"lodestone/compute/integrate"
	"lodestone/compute/quality"
	"lodestone/compute/synth"
)

// Shape of the integration section's generated data.
const (
	benchBatches = 10
	benchTypes   = 20
	benchShift   = 6 // batch offsets about 8.5 apart, types about 5.7
)

// benchIntegrate times Harmony on 50-D mixtures of benchTypes types seen in
// benchBatches batches with their own offsets (synth.BatchMixture), with the
// default parameters, and reports how mixed the batches are before and
// after, and the types (which should stay apart), on the fidelity scores'
// sample.
func benchIntegrate(ctx context.Context, w io.Writer, sizes []int, threads int, seed int64) error {
	fmt.Fprintf(w, "integration of samples (Harmony, default parameters; 50-D mixture of %d types in %d batches; mixing on %d cells, perplexity %d: 0 apart, 1 as chance)\n",
		benchTypes, benchBatches, quality.DefaultFidelitySample, quality.DefaultMixingPerplexity)
	fmt.Fprintf(w, "%10s %9s %7s %11s %10s %15s %15s %12s\n", "cells", "clusters", "rounds", "iterations", "time", "batch mixing", "type mixing", "peak heap")
	for _, n := range sizes {
		runtime.GC()
		x, types, batches := synth.BatchMixture(n, 50, benchTypes, benchBatches, benchShift, seed)
		levels := make([]string, benchBatches)
		for b := range levels {
			levels[b] = fmt.Sprintf("batch %d", b+1)
		}
		cov := integrate.Covariate{Name: "batch", Levels: levels, Codes: batches, Theta: integrate.DefaultTheta, Lambda: integrate.DefaultLambda}
		var res *integrate.Result
		start := time.Now()
		peak, err := peakHeap(func() (err error) {
			res, err = integrate.Harmony(ctx, x, []integrate.Covariate{cov}, integrate.Options{Seed: seed, Threads: threads})
			return err
		})
		if err != nil {
			return err
		}
		elapsed := time.Since(start)
		o := quality.MixingOptions{Seed: seed, Threads: threads, Batches: batches, Types: types}
		before, err := quality.SpaceMixing(ctx, x, o)
		if err != nil {
			return err
		}
		after, err := quality.SpaceMixing(ctx, res.Corrected, o)
		if err != nil {
			return err
		}
		fmt.Fprintf(w, "%10d %9d %7d %11d %8.1f s %6.3f → %5.3f %6.3f → %5.3f %12s\n", n, res.Clusters, res.Rounds, len(res.Objective)-1,
			elapsed.Seconds(), before.Batch, after.Batch, before.Types, after.Types, mib(peak))
	}
	fmt.Fprintln(w)
	return nil
}
