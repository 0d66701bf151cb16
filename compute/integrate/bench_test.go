package integrate

import (
	"context"
	"os"
	"strconv"
	"testing"
	"time"
)

// BenchmarkHarmony integrates LODESTONE_HARMONY_CELLS (default 100,000)
// planted cells × 50 components in 10 batches with the default parameters.
func BenchmarkHarmony(b *testing.B) {
	n := 100000
	if s := os.Getenv("LODESTONE_HARMONY_CELLS"); s != "" {
		n, _ = strconv.Atoi(s)
	}
	p := newPlanted(n, 50, 20, 10, 6, 0.5, 1)
	cov := p.covariate()
	b.ResetTimer()
	for b.Loop() {
		start := time.Now()
		res, err := Harmony(context.Background(), p.z, []Covariate{cov}, Options{Seed: 1})
		if err != nil {
			b.Fatal(err)
		}
		b.Logf("%d cells: %d rounds, %d clustering iterations, converged %v, %.1f s", n, res.Rounds, len(res.Objective)-1, res.Converged, time.Since(start).Seconds())
	}
}
