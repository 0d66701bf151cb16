package spatial

import (
	"errors"
	"math"
	"math/rand/v2"
	"testing"
)

// bruteNearest is the exact slow reference for Grid.Nearest: every point,
// the same float64 distance, ties to the smaller index.
func bruteNearest(layout []float32, visible func(int) bool, x, y, maxDist float64) (int, bool) {
	best, bestD2 := -1, math.Inf(1)
	for i := 0; i < len(layout)/2; i++ {
		px, py := float64(layout[2*i]), float64(layout[2*i+1])
		if !finite(px) || !finite(py) || (visible != nil && !visible(i)) {
			continue
		}
		dx, dy := px-x, py-y
		if d2 := dx*dx + dy*dy; d2 < bestD2 {
			best, bestD2 = i, d2
		}
	}
	if best < 0 || !(maxDist >= 0) || bestD2 > maxDist*maxDist {
		return -1, false
	}
	return best, true
}

type layoutCase struct {
	name   string
	layout []float32
}

// testLayouts returns layouts that stress the grid: clusters with empty
// space between them (empty cells), repeated points (ties), points on a
// lattice (ties between different points), a line (flat box), a single
// point, all points equal, non-finite coordinates and an empty layout.
func testLayouts(rng *rand.Rand) []layoutCase {
	clusters := make([]float32, 0, 2*5000)
	for i := 0; i < 5000; i++ {
		c := float64(rng.IntN(4))
		clusters = append(clusters, float32(100*c+rng.NormFloat64()), float32(-50*c+3*rng.NormFloat64()))
	}
	dups := make([]float32, 0, 2*3000)
	for i := 0; i < 1000; i++ {
		x, y := float32(rng.Float64()*10), float32(rng.Float64()*10)
		for k := 0; k < 3; k++ {
			dups = append(dups, x, y)
		}
	}
	lattice := make([]float32, 0, 2*900)
	for i := 0; i < 30; i++ {
		for j := 0; j < 30; j++ {
			lattice = append(lattice, float32(i), float32(j))
		}
	}
	line := make([]float32, 0, 2*500)
	for i := 0; i < 500; i++ {
		line = append(line, 3, float32(rng.Float64()*1000))
	}
	same := make([]float32, 0, 2*50)
	for i := 0; i < 50; i++ {
		same = append(same, 2.5, -1)
	}
	withNaN := append([]float32{float32(math.NaN()), 1, 2, float32(math.Inf(1))}, lattice[:200]...)
	extreme := []float32{3e38, -3e38, -3e38, 3e38, 0, 0, 1, 1, math.MaxFloat32, math.MaxFloat32}
	return []layoutCase{
		{"clusters", clusters}, {"duplicates", dups}, {"lattice", lattice}, {"line", line},
		{"single", []float32{4, 5}}, {"same", same}, {"non-finite", withNaN}, {"extreme", extreme}, {"empty", nil},
	}
}

// TestNearestBruteForce checks Grid.Nearest against bruteNearest for many
// queries: near the points, on lattice points and midpoints (exact ties),
// far outside, with and without a distance limit, and with a visibility
// filter.
func TestNearestBruteForce(t *testing.T) {
	rng := rand.New(rand.NewPCG(1, 2))
	for _, lc := range testLayouts(rng) {
		for _, vis := range []func(int) bool{nil, func(i int) bool { return i%3 != 1 }} {
			g, err := NewGrid(lc.layout, vis)
			if err != nil {
				t.Fatal(err)
			}
			want := 0
			for i := 0; i < len(lc.layout)/2; i++ {
				if finite(float64(lc.layout[2*i])) && finite(float64(lc.layout[2*i+1])) && (vis == nil || vis(i)) {
					want++
				}
			}
			if g.Len() != want {
				t.Errorf("%s: grid holds %d points, want %d", lc.name, g.Len(), want)
			}
			for q := 0; q < 1500; q++ {
				var x, y float64
				switch q % 5 {
				case 0, 1: // near a point
					if n := len(lc.layout) / 2; n > 0 {
						i := rng.IntN(n)
						x, y = float64(lc.layout[2*i])+rng.NormFloat64(), float64(lc.layout[2*i+1])+rng.NormFloat64()
					}
				case 2: // on a lattice point or midpoint
					x, y = float64(rng.IntN(60))/2, float64(rng.IntN(60))/2
				case 3: // anywhere in a wide box
					x, y = 2000*rng.Float64()-1000, 2000*rng.Float64()-1000
				case 4: // far outside
					x, y = 1e7*rng.NormFloat64(), 1e7*rng.NormFloat64()
				}
				for _, maxDist := range []float64{math.Inf(1), 0.7, 0} {
					gi, gok := g.Nearest(x, y, maxDist)
					bi, bok := bruteNearest(lc.layout, vis, x, y, maxDist)
					if gi != bi || gok != bok {
						t.Fatalf("%s: Nearest(%g, %g, %g) = %d %v, brute force %d %v", lc.name, x, y, maxDist, gi, gok, bi, bok)
					}
				}
			}
			if _, ok := g.Nearest(math.NaN(), 0, math.Inf(1)); ok {
				t.Errorf("%s: NaN query found a point", lc.name)
			}
			if _, ok := g.Nearest(0, 0, -1); ok {
				t.Errorf("%s: negative maxDist found a point", lc.name)
			}
		}
	}
}

// TestNearestTies checks the tie rule directly: of points at equal distance,
// the smallest index wins, whichever cell holds it.
func TestNearestTies(t *testing.T) {
	layout := []float32{1, 0, -1, 0, 0, 1, 0, -1, 5, 5}
	for _, order := range [][]int{{0, 1, 2, 3, 4}, {3, 2, 1, 0, 4}} {
		l := make([]float32, len(layout))
		for k, i := range order {
			l[2*k], l[2*k+1] = layout[2*i], layout[2*i+1]
		}
		g, err := NewGrid(l, nil)
		if err != nil {
			t.Fatal(err)
		}
		if i, ok := g.Nearest(0, 0, 2); !ok || i != 0 {
			t.Errorf("order %v: nearest of four equidistant points = %d, want 0", order, i)
		}
	}
}

func TestNewGridErrors(t *testing.T) {
	_, err := NewGrid([]float32{1, 2, 3}, nil)
	var ie *InputError
	if !errors.Is(err, ErrOddLength) || !errors.As(err, &ie) || ie.Arg != "layout" {
		t.Errorf("odd layout: got %v", err)
	}
}
