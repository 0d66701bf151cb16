package embed

import (
	"context"
	"math"
	"slices"
	"testing"
	"time"
)

// shapeMotion is the definition of SettledMotion's m written out plainly,
// from two float32 layouts: the mean distance between the points of a and b
// after each is centred and divided by its root-mean-square radius.
func shapeMotion(a, b []float32) float64 {
	norm := func(l []float32) []float64 {
		n := len(l) / 2
		var cx, cy float64
		for i := 0; i < n; i++ {
			cx += float64(l[2*i])
			cy += float64(l[2*i+1])
		}
		cx, cy = cx/float64(n), cy/float64(n)
		var r2 float64
		for i := 0; i < n; i++ {
			dx, dy := float64(l[2*i])-cx, float64(l[2*i+1])-cy
			r2 += dx*dx + dy*dy
		}
		r := math.Sqrt(r2 / float64(n))
		out := make([]float64, len(l))
		for i := 0; i < n; i++ {
			out[2*i], out[2*i+1] = (float64(l[2*i])-cx)/r, (float64(l[2*i+1])-cy)/r
		}
		return out
	}
	x, y := norm(a), norm(b)
	var d float64
	for i := 0; i < len(x)/2; i++ {
		d += math.Hypot(x[2*i]-y[2*i], x[2*i+1]-y[2*i+1])
	}
	return d / float64(len(x)/2)
}

// TestStopSettled turns a finished map to attraction 4 with StopSettled and a
// generous ceiling: the run ends at the first tenth iteration, from the
// 30th, where the shape moved by less than SettledMotion over the last 10
// iterations (checked against the definition from the published layouts),
// every earlier measurement found more motion, and a run of as many
// iterations without StopSettled gives the same layout bit for bit.
func TestStopSettled(t *testing.T) {
	P := mixtureAffinity(t, 2500)
	p := DefaultParams()
	p.Threads = 2
	start, err := Run(context.Background(), P, nil, p, nil)
	if err != nil {
		t.Fatal(err)
	}
	p.Attraction, p.Iterations, p.EarlyIterations = 4, 5000, 0
	p.StopSettled, p.SnapshotEvery = true, time.Nanosecond // a snapshot every iteration
	var snaps []Snapshot
	got, err := Run(context.Background(), P, start, p, func(s Snapshot) { snaps = append(snaps, s) })
	if err != nil {
		t.Fatal(err)
	}
	last := snaps[len(snaps)-1]
	done := last.Iteration
	if !last.Done || !last.Settled || done >= p.Iterations || done%settleEvery != 0 || done < settleAfter {
		t.Fatalf("the run ended after %d of %d iterations with snapshot %+v", done, p.Iterations, last)
	}
	if !slices.Equal(last.Layout, got) || len(snaps) != done {
		t.Fatalf("%d snapshots for %d iterations; the last is the result: %v", len(snaps), done, slices.Equal(last.Layout, got))
	}
	layoutAt := func(it int) []float32 { return snaps[it-1].Layout }
	// The optimiser measures its float64 layout; the definition here reads
	// the float32 snapshots, which differ from it by rounding only.
	const tol = 1e-5
	for it := 2 * settleEvery; it <= done; it += settleEvery {
		m := shapeMotion(layoutAt(it), layoutAt(it-settleEvery))
		settled := snaps[it-1].Settled
		switch {
		case it < done && it >= settleAfter && m < SettledMotion-tol:
			t.Fatalf("iteration %d: motion %.5f below %g, but the run went on", it, m, SettledMotion)
		case it == done && m > SettledMotion+tol:
			t.Fatalf("the run stopped at %d with motion %.5f", it, m)
		case it >= settleAfter && settled != (m < SettledMotion) && math.Abs(m-SettledMotion) > tol:
			t.Fatalf("iteration %d: motion %.5f, snapshot says settled %v", it, m, settled)
		}
	}
	p.StopSettled, p.Iterations = false, done
	again, err := Run(context.Background(), P, start, p, nil)
	if err != nil {
		t.Fatal(err)
	}
	if !slices.Equal(again, got) {
		t.Fatalf("a run of %d iterations differs from the settled run that stopped there", done)
	}
	t.Logf("settled after %d iterations", done)
}
