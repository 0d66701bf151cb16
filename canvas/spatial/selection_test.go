package spatial

import (
	"errors"
	"math"
	"math/rand/v2"
	"testing"
)

// TestCombine checks every mode against its truth table.
func TestCombine(t *testing.T) {
	current := []bool{false, false, true, true}
	lasso := []bool{false, true, false, true}
	for _, tc := range []struct {
		mode Mode
		want []bool
	}{
		{Replace, []bool{false, true, false, true}},
		{Add, []bool{false, true, true, true}},
		{Subtract, []bool{false, false, true, false}},
		{Intersect, []bool{false, false, false, true}},
	} {
		got, err := Combine(nil, current, lasso, tc.mode)
		if err != nil {
			t.Fatal(err)
		}
		for i := range got {
			if got[i] != tc.want[i] {
				t.Errorf("mode %d: %v, want %v", tc.mode, got, tc.want)
				break
			}
		}
	}
	in := append([]bool(nil), current...)
	if got, _ := Combine(in, in, lasso, Add); &got[0] != &in[0] || !got[1] {
		t.Error("Combine in place failed")
	}
	if _, err := Combine(nil, current, lasso[:3], Add); !errors.Is(err, ErrLength) {
		t.Errorf("length mismatch: %v", err)
	}
	if _, err := Combine(make([]bool, 2), current, lasso, Add); !errors.Is(err, ErrLength) {
		t.Errorf("short dst: %v", err)
	}
	if _, err := Combine(nil, current, lasso, Mode(9)); !errors.Is(err, ErrMode) {
		t.Errorf("bad mode: %v", err)
	}
}

// TestSimplify checks Simplify against its definition on a random walk:
// the first vertex is kept, kept vertices are in order and at least minDist
// apart, and every dropped vertex lies within minDist of the last vertex
// kept before it.
func TestSimplify(t *testing.T) {
	rng := rand.New(rand.NewPCG(7, 8))
	path := []float64{0, 0}
	for k := 0; k < 2000; k++ {
		n := len(path)
		path = append(path, path[n-2]+0.3*rng.NormFloat64(), path[n-1]+0.3*rng.NormFloat64())
	}
	const minDist = 1.0
	got, err := Simplify(nil, path, minDist)
	if err != nil {
		t.Fatal(err)
	}
	if got[0] != 0 || got[1] != 0 {
		t.Fatal("first vertex dropped")
	}
	kept := 0 // index into got of the last vertex kept so far
	for k := 2; k < len(path); k += 2 {
		if kept+3 < len(got) && got[kept+2] == path[k] && got[kept+3] == path[k+1] {
			kept += 2
			if d := math.Hypot(got[kept]-got[kept-2], got[kept+1]-got[kept-1]); d < minDist {
				t.Fatalf("kept vertices %g apart", d)
			}
			continue
		}
		if d := math.Hypot(path[k]-got[kept], path[k+1]-got[kept+1]); d >= minDist {
			t.Fatalf("vertex %d dropped at distance %g", k/2, d)
		}
	}
	if kept+2 != len(got) {
		t.Fatalf("kept %d coordinates, walked %d", len(got), kept+2)
	}
	same := append([]float64(nil), path...)
	inPlace, _ := Simplify(same, same, minDist)
	for i := range got {
		if inPlace[i] != got[i] {
			t.Fatal("in-place result differs")
		}
	}
	if _, err := Simplify(nil, []float64{1, 2, 3}, 1); !errors.Is(err, ErrOddLength) {
		t.Errorf("odd path: %v", err)
	}
	if _, err := Simplify(nil, []float64{1, math.Inf(1)}, 1); !errors.Is(err, ErrPolygon) {
		t.Errorf("infinite vertex: %v", err)
	}
	if out, err := Simplify(nil, nil, 1); err != nil || len(out) != 0 {
		t.Errorf("empty path: %v %v", out, err)
	}
}
