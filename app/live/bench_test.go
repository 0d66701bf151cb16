package live

import (
	"context"
	"math"
	"sync"
	"testing"
	"time"

	"lodestone/compute/affinity"
	"lodestone/compute/atlas"
	"lodestone/compute/embed"
	"lodestone/compute/neighbors"
	"lodestone/compute/quality"
	"lodestone/compute/synth"
)

var dial70k struct {
	once   sync.Once
	x      *atlas.Dense
	opt    *TSNE
	layout []float32
	err    error
}

// setupDial70k makes the affinities of a 70,000-cell, 50-D Gaussian
// mixture (perplexity 30 on 90 neighbours) and a finished map at
// attraction 1, once per process.
func setupDial70k(b *testing.B) (*TSNE, []float32) {
	dial70k.once.Do(func() {
		ctx := context.Background()
		x, _ := synth.GaussianMixture(70000, 50, 20, 1)
		dial70k.x = x
		g, err := neighbors.Find(ctx, x, neighbors.Options{K: 90, Seed: 1})
		if err != nil {
			dial70k.err = err
			return
		}
		P, err := affinity.Perplexity(ctx, g, 30, 0)
		if err != nil {
			dial70k.err = err
			return
		}
		init, err := embed.InitPCA(x)
		if err != nil {
			dial70k.err = err
			return
		}
		dial70k.opt = &TSNE{P: P, Seed: 1}
		dial70k.layout, dial70k.err = dial70k.opt.Run(ctx, init, RunOptions{Attraction: 1, Iterations: embed.DefaultIterations, Early: true}, nil)
	})
	if dial70k.err != nil {
		b.Fatal(dial70k.err)
	}
	return dial70k.opt, dial70k.layout
}

// BenchmarkDialTurn70k turns the dial of a finished 70k map from 1 to 4,
// as the window does (the raising turn starts from the compacted layout),
// and reports the time to the first new frame (first-ms) and to the first
// frame of a settled layout (settled-s).
func BenchmarkDialTurn70k(b *testing.B) {
	opt, layout := setupDial70k(b)
	var first, settled time.Duration
	b.ResetTimer()
	for i := 0; i < b.N; i++ {
		var mu sync.Mutex
		var firstAt, settledAt time.Time
		done := make(chan struct{})
		var e *Engine
		e = New(opt, 30, layout, func() {
			_, st := e.Latest()
			if st.Runs == 0 {
				return // SetLayout's own notice, before the turn
			}
			mu.Lock()
			defer mu.Unlock()
			if st.Iteration > 0 && firstAt.IsZero() {
				firstAt = time.Now()
			}
			if st.Settled && settledAt.IsZero() {
				settledAt = time.Now()
				close(done)
			}
		})
		e.SetLayout(layout, []Step{{Kind: Fresh, Attraction: 1, Iterations: 750, Done: 750, Setting: 30}})
		start := time.Now()
		e.Turn(4, 5000)
		select {
		case <-done:
		case <-time.After(5 * time.Minute):
			b.Fatal("the turned map did not settle within 5 minutes")
		}
		e.Stop()
		e.Wait()
		mu.Lock()
		first += firstAt.Sub(start)
		settled += settledAt.Sub(start)
		mu.Unlock()
	}
	b.ReportMetric(float64(first.Milliseconds())/float64(b.N), "first-ms")
	b.ReportMetric(settled.Seconds()/float64(b.N), "settled-s")
}

// BenchmarkSweep70k runs the window's default sweep on a finished 70k map:
// attractions 1, 2, 4, 10, 30 and ∞, 500 iterations each, every map scored
// as the Sweep tab scores it (ScoredSweep, quality.Fidelity at its defaults), and reports
// the seconds per sweep.
func BenchmarkSweep70k(b *testing.B) {
	opt, layout := setupDial70k(b)
	ctx := context.Background()
	values := []float64{1, 2, 4, 10, 30, math.Inf(1)}
	history := []Step{{Kind: Fresh, Attraction: 1, Iterations: embed.DefaultIterations, Done: embed.DefaultIterations, Setting: 30}}
	b.ResetTimer()
	for i := 0; i < b.N; i++ {
		err := ScoredSweep(ctx, opt, layout, history, AtTail(values, 1), 500, 30, dial70k.x, quality.FidelityOptions{Seed: 1}, nil,
			func(ScoredMap) error { return nil })
		if err != nil {
			b.Fatal(err)
		}
	}
	b.ReportMetric(b.Elapsed().Seconds()/float64(b.N), "s/sweep")
}
