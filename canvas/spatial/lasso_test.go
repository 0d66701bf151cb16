package spatial

import (
	"errors"
	"math"
	"math/big"
	"math/rand/v2"
	"testing"
)

// slowInside is the exact slow reference for Inside: the rule documented at
// Inside evaluated over every edge in exact rational arithmetic (math/big),
// with no bounding box and no slabs.
func slowInside(poly []float64, x, y float64) bool {
	if !finite(x) || !finite(y) {
		return false
	}
	rat := func(v float64) *big.Rat { return new(big.Rat).SetFloat64(v) }
	px, py := rat(x), rat(y)
	m := len(poly) / 2
	in := false
	for k := 0; k < m; k++ {
		j := (k + 1) % m
		xa, ya, xb, yb := poly[2*k], poly[2*k+1], poly[2*j], poly[2*j+1]
		if ya > yb {
			xa, ya, xb, yb = xb, yb, xa, ya
		}
		// Comparisons of floats are exact; only the products need big.Rat.
		if ya == yb || ya > y || y >= yb {
			continue
		}
		// (x − xa)·(yb − ya) < (xb − xa)·(y − ya)
		lhs := new(big.Rat).Mul(new(big.Rat).Sub(px, rat(xa)), new(big.Rat).Sub(rat(yb), rat(ya)))
		rhs := new(big.Rat).Mul(new(big.Rat).Sub(rat(xb), rat(xa)), new(big.Rat).Sub(py, rat(ya)))
		if lhs.Cmp(rhs) < 0 {
			in = !in
		}
	}
	return in
}

// randomPolygons returns polygons of the kinds a lasso makes and worse:
// convex, star-shaped (concave), a freehand loop, random vertices joined in
// random order (self-intersecting), polygons with horizontal and vertical
// edges on integer coordinates, and a figure eight.
func randomPolygons(rng *rand.Rand) map[string][]float64 {
	star := func(m int, rmin, rmax float64) []float64 {
		p := make([]float64, 0, 2*m)
		for k := 0; k < m; k++ {
			a := 2 * math.Pi * float64(k) / float64(m)
			r := rmin + (rmax-rmin)*rng.Float64()
			p = append(p, 50+r*math.Cos(a), 50+r*math.Sin(a))
		}
		return p
	}
	wander := make([]float64, 0, 800)
	for k := 0; k < 400; k++ {
		a := 2 * math.Pi * float64(k) / 400
		r := 30 + 10*math.Sin(5*a) + rng.Float64()
		wander = append(wander, 50+r*math.Cos(a), 50+r*math.Sin(a))
	}
	tangle := make([]float64, 0, 60)
	for k := 0; k < 30; k++ {
		tangle = append(tangle, 100*rng.Float64(), 100*rng.Float64())
	}
	grid := make([]float64, 0, 40)
	for k := 0; k < 20; k++ {
		grid = append(grid, float64(rng.IntN(20))*5, float64(rng.IntN(20))*5)
	}
	return map[string][]float64{
		"convex":    star(50, 30, 30),
		"star":      star(40, 5, 45),
		"freehand":  wander,
		"tangle":    tangle,
		"integer":   grid,
		"eight":     {20, 20, 80, 80, 80, 20, 20, 80},
		"triangle":  {10, 10, 90, 30, 40, 95},
		"staircase": {0, 0, 40, 0, 40, 20, 60, 20, 60, 0, 100, 0, 100, 100, 0, 100},
	}
}

// TestInsideSlowReference checks Inside against slowInside on random points,
// points on the integer lattice (on vertices, on horizontal and vertical
// edges) and points exactly on polygon vertices, for several thread counts.
func TestInsideSlowReference(t *testing.T) {
	rng := rand.New(rand.NewPCG(3, 4))
	for name, poly := range randomPolygons(rng) {
		var layout []float32
		for i := 0; i < 3000; i++ {
			layout = append(layout, float32(-10+120*rng.Float64()), float32(-10+120*rng.Float64()))
		}
		for x := -5; x <= 105; x += 5 {
			for y := -5; y <= 105; y += 5 {
				layout = append(layout, float32(x), float32(y))
			}
		}
		for k := 0; k < len(poly); k += 2 {
			if float64(float32(poly[k])) == poly[k] && float64(float32(poly[k+1])) == poly[k+1] {
				layout = append(layout, float32(poly[k]), float32(poly[k+1]))
			}
		}
		layout = append(layout, float32(math.NaN()), 50, 50, float32(math.Inf(1)))
		want := make([]bool, len(layout)/2)
		for i := range want {
			want[i] = slowInside(poly, float64(layout[2*i]), float64(layout[2*i+1]))
		}
		for _, threads := range []int{1, 2, 3} {
			got, err := Inside(poly, layout, nil, threads)
			if err != nil {
				t.Fatal(err)
			}
			for i := range want {
				if got[i] != want[i] {
					t.Fatalf("%s threads=%d: point (%g, %g) inside = %v, reference %v",
						name, threads, layout[2*i], layout[2*i+1], got[i], want[i])
				}
			}
		}
	}
}

// TestInsideBoundaryRule checks the documented rule on the unit square, and
// checks that it shares out points consistently: the square [0, 8)² cut into
// 64 cells, each cut again into two triangles along a diagonal chosen at
// random, listed in random orientation; every point of a half-integer
// lattice (vertices, edges and diagonals included) must be inside exactly one
// triangle if it lies in [0, 8)², and in none otherwise.
func TestInsideBoundaryRule(t *testing.T) {
	square := []float64{0, 0, 1, 0, 1, 1, 0, 1}
	for _, tc := range []struct {
		x, y float32
		in   bool
	}{
		{0.5, 0.5, true}, {0, 0.5, true}, {1, 0.5, false}, {0.5, 0, true}, {0.5, 1, false},
		{0, 0, true}, {1, 0, false}, {0, 1, false}, {1, 1, false}, {-0.5, 0.5, false},
	} {
		got, err := Inside(square, []float32{tc.x, tc.y}, nil, 1)
		if err != nil {
			t.Fatal(err)
		}
		if got[0] != tc.in {
			t.Errorf("unit square: (%g, %g) inside = %v, want %v", tc.x, tc.y, got[0], tc.in)
		}
	}

	rng := rand.New(rand.NewPCG(5, 6))
	var tiles [][]float64
	for i := 0; i < 8; i++ {
		for j := 0; j < 8; j++ {
			x0, y0, x1, y1 := float64(i), float64(j), float64(i+1), float64(j+1)
			var a, b []float64
			if rng.IntN(2) == 0 {
				a, b = []float64{x0, y0, x1, y0, x1, y1}, []float64{x0, y0, x1, y1, x0, y1}
			} else {
				a, b = []float64{x0, y0, x1, y0, x0, y1}, []float64{x1, y0, x1, y1, x0, y1}
			}
			for _, tri := range [][]float64{a, b} {
				if rng.IntN(2) == 0 {
					tri = []float64{tri[4], tri[5], tri[2], tri[3], tri[0], tri[1]}
				}
				tiles = append(tiles, tri)
			}
		}
	}
	var layout []float32
	for x := -2; x <= 18; x++ {
		for y := -2; y <= 18; y++ {
			layout = append(layout, float32(x)/2, float32(y)/2)
		}
	}
	count := make([]int, len(layout)/2)
	for _, tri := range tiles {
		in, err := Inside(tri, layout, nil, 2)
		if err != nil {
			t.Fatal(err)
		}
		for i, v := range in {
			if v {
				count[i]++
			}
		}
	}
	for i, c := range count {
		x, y := layout[2*i], layout[2*i+1]
		want := 0
		if x >= 0 && x < 8 && y >= 0 && y < 8 {
			want = 1
		}
		if c != want {
			t.Errorf("point (%g, %g) is inside %d tiles, want %d", x, y, c, want)
		}
	}
}

func TestInsideErrors(t *testing.T) {
	layout := []float32{1, 2, 3, 4}
	tri := []float64{0, 0, 1, 0, 0, 1}
	for _, tc := range []struct {
		name   string
		poly   []float64
		layout []float32
		dst    []bool
		err    error
		arg    string
		index  int
	}{
		{"odd polygon", tri[:5], layout, nil, ErrOddLength, "polygon", -1},
		{"two vertices", tri[:4], layout, nil, ErrPolygon, "polygon", -1},
		{"NaN vertex", []float64{0, 0, 1, math.NaN(), 0, 1}, layout, nil, ErrPolygon, "polygon", 3},
		{"odd layout", tri, layout[:3], nil, ErrOddLength, "layout", -1},
		{"short dst", tri, layout, make([]bool, 1), ErrLength, "dst", -1},
	} {
		_, err := Inside(tc.poly, tc.layout, tc.dst, 1)
		var ie *InputError
		if !errors.Is(err, tc.err) || !errors.As(err, &ie) || ie.Arg != tc.arg || ie.Index != tc.index {
			t.Errorf("%s: got %v, want %v at %s[%d]", tc.name, err, tc.err, tc.arg, tc.index)
		}
	}
	// A polygon of horizontal edges only has no area.
	got, err := Inside([]float64{0, 0, 5, 0, 9, 0}, []float32{1, 0, 2, 0}, make([]bool, 2), 1)
	if err != nil || got[0] || got[1] {
		t.Errorf("flat polygon: %v %v", got, err)
	}
}

// TestInsideGridAnswersExactly checks the cell grid at the size a million
// points get (250 cells a side; Inside itself is checked at smaller
// grids by TestInsideSlowReference): for each polygon, 200,000 random points,
// points on the lattice of the cells' corners and sides (where rounding
// puts a point into the neighbouring cell), and points on the polygon's
// vertices and edges get the answer of the rule itself, the edges of their
// slab (insideExact, which TestInsideSlowReference checks against exact
// arithmetic), and most points are answered by their cell alone.
func TestInsideGridAnswersExactly(t *testing.T) {
	rng := rand.New(rand.NewPCG(7, 8))
	const n = 200000
	for name, poly := range randomPolygons(rng) {
		layout := make([]float32, 0, 2*n)
		for i := 0; i < n; i++ {
			layout = append(layout, float32(-10+120*rng.Float64()), float32(-10+120*rng.Float64()))
		}
		s := newSlabs(poly)
		s.classifyCells(poly, 250)
		if s.state == nil {
			t.Fatalf("%s: no grid", name)
		}
		for i := 0; i <= 250; i += 5 {
			for j := 0; j <= 250; j += 5 {
				x, y := s.xmin+float64(i)/s.cx, s.ymin+float64(j)/s.cy
				for _, d := range []float64{-1e-9, 0, 1e-9} {
					layout = append(layout, float32(x+d), float32(y), float32(x), float32(y+d))
				}
			}
		}
		m := len(poly) / 2
		for k := 0; k < m; k++ {
			j := (k + 1) % m
			for f := 0.0; f <= 1; f += 0.125 {
				layout = append(layout, float32(poly[2*k]+f*(poly[2*j]-poly[2*k])), float32(poly[2*k+1]+f*(poly[2*j+1]-poly[2*k+1])))
			}
		}
		got := make([]bool, len(layout)/2)
		insideGrid(poly, layout, got, 2, 250)
		byCell := 0
		for i := range got {
			x, y := float64(layout[2*i]), float64(layout[2*i+1])
			want := false
			if x >= s.xmin && x < s.xmax && y >= s.ymin && y < s.ymax {
				want = s.insideExact(x, y)
				ci, cj := min(int((x-s.xmin)*s.cx), 249), min(int((y-s.ymin)*s.cy), 249)
				if s.state[cj*250+ci] != cellEdge {
					byCell++
				}
			}
			if got[i] != want {
				t.Fatalf("%s: point (%g, %g) inside = %v, the rule says %v", name, x, y, got[i], want)
			}
		}
		if name != "tangle" && byCell < n/4 {
			t.Errorf("%s: only %d of %d points answered by their cell", name, byCell, len(got))
		}
	}
}
