package spatial

import (
	"math"

	"lodestone/compute/parallel"
)

// maxSlabs bounds the number of horizontal slabs Inside sorts edges into.
const maxSlabs = 1 << 12

// maxCells bounds the cells per side of the grid Inside classifies (for a
// million points it has about 250).
const maxCells = 256

// States of a grid cell: every point of the cell outside, every point
// inside, or an edge touches it and each point is tested.
const (
	cellOut uint8 = iota
	cellIn
	cellEdge
)

// edge is a polygon edge with its lower end first (ya < yb).
type edge struct{ xa, ya, xb, yb float64 }

// Inside reports for every point of layout (interleaved x, y) whether it
// lies inside the closed polygon poly (x₀, y₀, x₁, y₁, …; the last vertex
// joins the first), by the even–odd rule, and returns dst. If dst is nil a
// new slice is allocated; otherwise it must hold one entry per point.
//
// Boundary rule: a point is inside when a ray from it towards +x crosses an
// odd number of edges, where an edge from (xa, ya) to (xb, yb), ya < yb,
// counts when
//
//	ya ≤ y < yb  and  (x − xa)·(yb − ya) < (xb − xa)·(y − ya)
//
// that is, when it spans the point's height half-open (lower end included)
// and passes strictly to the right of the point. Horizontal edges never
// count. So points on left and bottom boundaries are inside, points on right
// and top boundaries outside, and polygons that tile the plane share out
// every point to exactly one of them, vertices included. Points with a
// non-finite coordinate are outside.
//
// A bounding-box test rejects most outside points. A grid over the box
// then answers for the points of every cell that no edge touches, all of
// which lie on the same side as the cell's centre; the others are tested
// only against the edges of their horizontal slab of the polygon. The work
// is split over threads goroutines (threads < 1: all processors).
//
// Inside returns an error when poly has odd length, fewer than three
// vertices or a non-finite coordinate, when layout has odd length, or when
// dst has the wrong length.
func Inside(poly []float64, layout []float32, dst []bool, threads int) ([]bool, error) {
	switch {
	case len(poly)%2 != 0:
		return nil, &InputError{Arg: "polygon", Index: -1, Err: ErrOddLength}
	case len(poly) < 6:
		return nil, &InputError{Arg: "polygon", Index: -1, Err: ErrPolygon}
	case len(layout)%2 != 0:
		return nil, &InputError{Arg: "layout", Index: -1, Err: ErrOddLength}
	}
	for i, v := range poly {
		if !finite(v) {
			return nil, &InputError{Arg: "polygon", Index: i, Err: ErrPolygon}
		}
	}
	n := len(layout) / 2
	if dst == nil {
		dst = make([]bool, n)
	} else if len(dst) != n {
		return nil, &InputError{Arg: "dst", Index: -1, Err: ErrLength}
	}
	insideGrid(poly, layout, dst, threads, min(maxCells, max(8, int(math.Sqrt(float64(n))/4))))
	return dst, nil
}

// insideGrid is Inside on checked inputs with a grid of g × g cells.
func insideGrid(poly []float64, layout []float32, dst []bool, threads, g int) {
	s := newSlabs(poly)
	s.classifyCells(poly, g)
	parallel.For(len(dst), threads, func(lo, hi, _ int) {
		for i := lo; i < hi; i++ {
			dst[i] = s.inside(float64(layout[2*i]), float64(layout[2*i+1]))
		}
	})
}

// slabs sorts the polygon's non-horizontal edges into horizontal slabs of
// equal height covering [ymin, ymax), so that a point is tested only against
// the edges that can span its height.
type slabs struct {
	xmin, xmax, ymin, ymax float64
	inv                    float64 // slabs per unit of height
	n                      int
	start                  []int32 // edges of slab s are edges[index[start[s]:start[s+1]]]
	index                  []int32
	edges                  []edge

	// A grid of cells × cells over the box, cx·cy cells per unit of
	// width and height; state[j·cells + i] is the state of cell (i, j).
	cells  int
	cx, cy float64
	state  []uint8
}

// classifyCells lays a grid of g × g cells over the box and finds each
// cell's state. It marks every cell an edge (horizontal ones too) passes
// through as cellEdge: the edge is sampled at most a quarter of a cell
// apart and the 3 × 3 cells around each sample's are marked, which covers
// the cells between samples and also those a rounding of a point's cell
// could put a point of the edge in. No edge passes through another cell,
// so all its points lie on the side of its centre, which is tested.
func (s *slabs) classifyCells(poly []float64, g int) {
	if len(s.edges) == 0 || !(s.xmax > s.xmin) {
		return
	}
	s.cells = g
	s.cx, s.cy = float64(g)/(s.xmax-s.xmin), float64(g)/(s.ymax-s.ymin)
	s.state = make([]uint8, g*g)
	m := len(poly) / 2
	for k := 0; k < m; k++ {
		j := (k + 1) % m
		ax, ay := (poly[2*k]-s.xmin)*s.cx, (poly[2*k+1]-s.ymin)*s.cy
		bx, by := (poly[2*j]-s.xmin)*s.cx, (poly[2*j+1]-s.ymin)*s.cy
		steps := int(math.Ceil(4*math.Max(math.Abs(bx-ax), math.Abs(by-ay)))) + 1
		for t := 0; t <= steps; t++ {
			f := float64(t) / float64(steps)
			ci, cj := int(math.Floor(ax+f*(bx-ax))), int(math.Floor(ay+f*(by-ay)))
			for dj := max(cj-1, 0); dj <= min(cj+1, g-1); dj++ {
				for di := max(ci-1, 0); di <= min(ci+1, g-1); di++ {
					s.state[dj*g+di] = cellEdge
				}
			}
		}
	}
	for j := 0; j < g; j++ {
		y := s.ymin + (float64(j)+0.5)/s.cy
		for i := 0; i < g; i++ {
			if s.state[j*g+i] == cellEdge {
				continue
			}
			if s.insideExact(s.xmin+(float64(i)+0.5)/s.cx, y) {
				s.state[j*g+i] = cellIn
			}
		}
	}
}

func newSlabs(poly []float64) *slabs {
	m := len(poly) / 2
	s := &slabs{xmin: math.Inf(1), xmax: math.Inf(-1), ymin: math.Inf(1), ymax: math.Inf(-1)}
	for k := 0; k < m; k++ {
		xa, ya := poly[2*k], poly[2*k+1]
		j := (k + 1) % m
		xb, yb := poly[2*j], poly[2*j+1]
		s.xmin, s.xmax = math.Min(s.xmin, xa), math.Max(s.xmax, xa)
		if ya == yb {
			continue
		}
		if ya > yb {
			xa, ya, xb, yb = xb, yb, xa, ya
		}
		s.edges = append(s.edges, edge{xa, ya, xb, yb})
		s.ymin, s.ymax = math.Min(s.ymin, ya), math.Max(s.ymax, yb)
	}
	if len(s.edges) == 0 {
		return s // no area: nothing is inside
	}
	s.n = min(len(s.edges), maxSlabs)
	s.inv = float64(s.n) / (s.ymax - s.ymin)
	counts := make([]int32, s.n+1)
	for _, e := range s.edges {
		for k := s.slabOf(e.ya); k <= s.slabOf(e.yb); k++ {
			counts[k+1]++
		}
	}
	for k := 0; k < s.n; k++ {
		counts[k+1] += counts[k]
	}
	s.start = counts
	s.index = make([]int32, counts[s.n])
	next := make([]int32, s.n)
	copy(next, counts[:s.n])
	for i, e := range s.edges {
		for k := s.slabOf(e.ya); k <= s.slabOf(e.yb); k++ {
			s.index[next[k]] = int32(i)
			next[k]++
		}
	}
	return s
}

// slabOf returns the slab holding height y, clamped to the slabs; it is
// monotone in y, so an edge listed in the slabs of its two ends is listed in
// the slab of every height between them.
func (s *slabs) slabOf(y float64) int {
	k := int((y - s.ymin) * s.inv)
	return max(0, min(k, s.n-1))
}

// inside applies the even–odd rule documented at Inside.
func (s *slabs) inside(x, y float64) bool {
	// Outside the box no edge counts (right, above, below) or every edge
	// spanning y counts, an even number (left); NaN fails every test.
	if !(x >= s.xmin && x < s.xmax && y >= s.ymin && y < s.ymax) {
		return false
	}
	if s.state != nil {
		i, j := min(int((x-s.xmin)*s.cx), s.cells-1), min(int((y-s.ymin)*s.cy), s.cells-1)
		switch s.state[j*s.cells+i] {
		case cellOut:
			return false
		case cellIn:
			return true
		}
	}
	return s.insideExact(x, y)
}

// insideExact applies the even–odd rule to a point of the box, against the
// edges of its slab.
func (s *slabs) insideExact(x, y float64) bool {
	k := s.slabOf(y)
	in := false
	for _, i := range s.index[s.start[k]:s.start[k+1]] {
		e := &s.edges[i]
		if e.ya <= y && y < e.yb && (x-e.xa)*(e.yb-e.ya) < (e.xb-e.xa)*(y-e.ya) {
			in = !in
		}
	}
	return in
}
