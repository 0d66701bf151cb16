package quality

import (
	"math"
	"sort"
)

// grid buckets the points of a 2-D layout into square cells, about two
// points a cell, to find exact nearest neighbours in the map by searching
// rings of cells outwards from a query until no unvisited cell can hold a
// nearer point.
type grid struct {
	xy         []float32 // the layout, interleaved
	minX, minY float64
	cell       float64 // side of a cell
	nx, ny     int
	start      []int32 // cell c holds ids[start[c]:start[c+1]]
	ids        []int32
}

// maxCellsPerAxis bounds the grid's size for layouts with extreme aspect.
const maxCellsPerAxis = 4096

// newGrid returns the grid of a layout of n points (finite coordinates).
func newGrid(xy []float32, n int) *grid {
	g := &grid{xy: xy}
	minX, minY := math.Inf(1), math.Inf(1)
	maxX, maxY := math.Inf(-1), math.Inf(-1)
	for i := 0; i < n; i++ {
		x, y := float64(xy[2*i]), float64(xy[2*i+1])
		minX, maxX = min(minX, x), max(maxX, x)
		minY, maxY = min(minY, y), max(maxY, y)
	}
	w, h := maxX-minX, maxY-minY
	cells := max(float64(n)/2, 1)
	switch {
	case w > 0 && h > 0:
		g.cell = math.Sqrt(w * h / cells)
	case w > 0 || h > 0:
		g.cell = max(w, h) / cells
	default:
		g.cell = 1
	}
	// Cells no smaller than the extent over maxCellsPerAxis, so the grid
	// stays small; and a little larger than needed so the maximum falls
	// inside the last cell.
	g.cell = max(g.cell, w/maxCellsPerAxis, h/maxCellsPerAxis) * (1 + 1e-9)
	g.minX, g.minY = minX, minY
	g.nx = min(int(w/g.cell)+1, maxCellsPerAxis+1)
	g.ny = min(int(h/g.cell)+1, maxCellsPerAxis+1)
	// Counting sort of the points into cells.
	g.start = make([]int32, g.nx*g.ny+1)
	cellOf := make([]int32, n)
	for i := 0; i < n; i++ {
		cx, cy := g.cellXY(float64(xy[2*i]), float64(xy[2*i+1]))
		c := int32(cy*g.nx + cx)
		cellOf[i] = c
		g.start[c+1]++
	}
	for c := 1; c < len(g.start); c++ {
		g.start[c] += g.start[c-1]
	}
	g.ids = make([]int32, n)
	fill := append([]int32(nil), g.start[:len(g.start)-1]...)
	for i, c := range cellOf {
		g.ids[fill[c]] = int32(i)
		fill[c]++
	}
	return g
}

// cellXY returns the cell coordinates of point (x, y), clamped to the grid.
func (g *grid) cellXY(x, y float64) (int, int) {
	cx := min(max(int((x-g.minX)/g.cell), 0), g.nx-1)
	cy := min(max(int((y-g.minY)/g.cell), 0), g.ny-1)
	return cx, cy
}

// neighbor is a candidate of a map search.
type neighbor struct {
	d  float64 // squared distance
	id int32
}

// nearest returns the k nearest points to point q of the layout, q itself
// excluded, nearest first, ties by smaller id; dst is reused when it has the
// capacity. There must be at least k other points.
func (g *grid) nearest(q, k int, dst []neighbor) []neighbor {
	best := dst[:0]
	qx, qy := float64(g.xy[2*q]), float64(g.xy[2*q+1])
	cx, cy := g.cellXY(qx, qy)
	worse := func(a, b neighbor) bool { return a.d > b.d || a.d == b.d && a.id > b.id }
	visit := func(x, y int) {
		c := y*g.nx + x
		for _, id := range g.ids[g.start[c]:g.start[c+1]] {
			if int(id) == q {
				continue
			}
			dx, dy := float64(g.xy[2*id])-qx, float64(g.xy[2*id+1])-qy
			cand := neighbor{dx*dx + dy*dy, id}
			if len(best) == k && !worse(best[k-1], cand) {
				continue
			}
			// Insert in order.
			pos := sort.Search(len(best), func(i int) bool { return worse(best[i], cand) })
			if len(best) < k {
				best = append(best, neighbor{})
			}
			copy(best[pos+1:], best[pos:len(best)-1])
			best[pos] = cand
		}
	}
	for r := 0; ; r++ {
		x0, x1, y0, y1 := cx-r, cx+r, cy-r, cy+r
		for y := max(y0, 0); y <= min(y1, g.ny-1); y++ {
			if y == y0 || y == y1 {
				for x := max(x0, 0); x <= min(x1, g.nx-1); x++ {
					visit(x, y)
				}
				continue
			}
			if x0 >= 0 {
				visit(x0, y)
			}
			if x1 < g.nx && x1 != x0 {
				visit(x1, y)
			}
		}
		// The nearest unvisited point lies beyond one of the sides of the
		// visited square that have cells behind them.
		bound := math.Inf(1)
		if x0 > 0 {
			bound = min(bound, qx-(g.minX+float64(x0)*g.cell))
		}
		if x1 < g.nx-1 {
			bound = min(bound, g.minX+float64(x1+1)*g.cell-qx)
		}
		if y0 > 0 {
			bound = min(bound, qy-(g.minY+float64(y0)*g.cell))
		}
		if y1 < g.ny-1 {
			bound = min(bound, g.minY+float64(y1+1)*g.cell-qy)
		}
		if math.IsInf(bound, 1) {
			return best // the square covers the grid
		}
		bound -= 1e-9 * g.cell // margin for rounding at cell edges
		if len(best) == k && best[k-1].d < bound*bound {
			return best
		}
	}
}
