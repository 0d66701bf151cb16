package live

import (
	"context"
	"errors"
	"math"
	"testing"
)

// TestSweepMapsReplay runs a sweep with the real optimiser and checks each
// map's history: the steps it adds (warm, compacted when the attraction
// rises, spectral at +Inf; a warm map ends when it has settled, within the
// ceiling of 2,000 iterations) and that replaying the history from the
// initial layout reproduces the map bit for bit, which adopting a map
// relies on.
func TestSweepMapsReplay(t *testing.T) {
	opt, init := realOptimizer(t)
	ctx := context.Background()
	base, err := opt.Run(ctx, init, RunOptions{Attraction: 1, Iterations: 300, Early: true}, nil)
	if err != nil {
		t.Fatal(err)
	}
	history := []Step{{Kind: Fresh, Attraction: 1, Iterations: 300, Done: 300, Setting: 10}}
	values := []float64{4, 2, math.Inf(1), 30}
	var maps []SweepMap
	var started []int
	const ceiling = 2000
	err = SweepPoints(ctx, opt, base, history, AtTail(values, TailOf(history)), ceiling, 10, func(k int) { started = append(started, k) }, func(m SweepMap) error {
		maps = append(maps, m)
		return nil
	})
	if err != nil {
		t.Fatal(err)
	}
	if len(maps) != len(values) || len(started) != len(values) {
		t.Fatalf("%d maps, %d starts; want %d", len(maps), len(started), len(values))
	}
	// 1 → 4 rises; 4 → 2 does not; after the spectral step the last
	// attraction is +Inf, so 30 does not raise it either.
	wantCompact := []bool{true, false, false, false}
	for k, m := range maps {
		last := m.History[len(m.History)-1]
		if len(m.History) != len(history)+k+1 || last.Attraction != values[k] || last.Setting != 10 {
			t.Fatalf("map %d: history %+v", k, m.History)
		}
		if math.IsInf(values[k], 1) {
			if last.Kind != Spectral || last.Done != SpectralGlide {
				t.Fatalf("map %d: spectral step %+v", k, last)
			}
		} else if last.Kind != Warm || !last.Settled || last.Done >= ceiling || last.Iterations != ceiling || last.Compact != wantCompact[k] {
			t.Fatalf("map %d: step %+v, want warm, settled within %d iterations, compact %v", k, last, ceiling, wantCompact[k])
		}
		got, err := Replay(ctx, init, m.History, func(float64) (Optimizer, error) { return opt, nil })
		if err != nil {
			t.Fatal(err)
		}
		for i := range got {
			if got[i] != m.Layout[i] {
				t.Fatalf("map %d: the replayed history differs at coordinate %d: %v, map %v", k, i, got[i], m.Layout[i])
			}
		}
	}
}

// TestSweepStops checks that an error from each ends the sweep with it.
func TestSweepStops(t *testing.T) {
	stop := errors.New("enough")
	calls := 0
	err := SweepPoints(context.Background(), &drift{}, []float32{0, 0, 1, 1}, nil, AtTail([]float64{1, 2, 3}, 1), 2, 30, nil, func(SweepMap) error {
		calls++
		return stop
	})
	if !errors.Is(err, stop) || calls != 1 {
		t.Fatalf("SweepPoints returned %v after %d maps; want the callback's error after 1", err, calls)
	}
}
