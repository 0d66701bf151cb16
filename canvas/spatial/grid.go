package spatial

import (
	"math"

	"lodestone/compute/parallel"
)

// pointsPerCell is the mean number of points per cell a Grid aims for.
const pointsPerCell = 2

// Grid is a uniform bucket grid over the points of a layout for
// nearest-point queries: the points' bounding box is cut into square cells
// holding about two points each on average, and a query searches rings of
// cells outwards from the query until no unsearched cell can hold a nearer
// point. A Grid is immutable and safe for concurrent queries.
type Grid struct {
	x0, y0 float64 // lower-left corner of cell (0, 0)
	cell   float64 // cell side
	inv    float64 // 1 / cell
	slack  float64 // bound on the rounding error of cell boundaries
	nx, ny int
	start  []int32   // points of cell c = cy·nx + cx are ids[start[c]:start[c+1]]
	ids    []int32   // point indices, cell by cell, increasing within a cell
	xy     []float32 // coordinates of ids, interleaved
}

// NewGrid builds a Grid over the points of layout (interleaved x, y) for
// which visible(i) is true (all points when visible is nil), skipping points
// with a non-finite coordinate. visible is called once per point, from
// several goroutines at once. Building takes O(N) time and uses all cores;
// the grid does not depend on the number of cores. It returns an error when
// layout has odd length.
func NewGrid(layout []float32, visible func(i int) bool) (*Grid, error) {
	if len(layout)%2 != 0 {
		return nil, &InputError{Arg: "layout", Index: -1, Err: ErrOddLength}
	}
	n := len(layout) / 2
	threads := parallel.Threads(0)
	blocks := len(parallel.Blocks(n, threads)) - 1

	// Pass 1: mark the points to index and find their bounding box.
	keep := make([]bool, n)
	type box struct {
		xmin, xmax, ymin, ymax float64
		count                  int
	}
	boxes := make([]box, max(blocks, 1))
	parallel.For(n, threads, func(lo, hi, b int) {
		bx := box{math.Inf(1), math.Inf(-1), math.Inf(1), math.Inf(-1), 0}
		for i := lo; i < hi; i++ {
			x, y := float64(layout[2*i]), float64(layout[2*i+1])
			if !finite(x) || !finite(y) || (visible != nil && !visible(i)) {
				continue
			}
			keep[i] = true
			bx.xmin, bx.xmax = math.Min(bx.xmin, x), math.Max(bx.xmax, x)
			bx.ymin, bx.ymax = math.Min(bx.ymin, y), math.Max(bx.ymax, y)
			bx.count++
		}
		boxes[b] = bx
	})
	all := box{math.Inf(1), math.Inf(-1), math.Inf(1), math.Inf(-1), 0}
	for _, bx := range boxes[:blocks] {
		all.xmin, all.xmax = math.Min(all.xmin, bx.xmin), math.Max(all.xmax, bx.xmax)
		all.ymin, all.ymax = math.Min(all.ymin, bx.ymin), math.Max(all.ymax, bx.ymax)
		all.count += bx.count
	}
	g := &Grid{nx: 1, ny: 1, cell: 1, inv: 1}
	if all.count == 0 {
		g.start = []int32{0, 0}
		return g, nil
	}
	g.x0, g.y0 = all.xmin, all.ymin
	g.sizeCells(all.xmax-all.xmin, all.ymax-all.ymin, all.count)
	maxAbs := math.Max(math.Max(math.Abs(all.xmin), math.Abs(all.xmax)), math.Max(math.Abs(all.ymin), math.Abs(all.ymax)))
	g.slack = 1e-9*g.cell + 1e-12*maxAbs

	// Pass 2: each block counts its points per cell.
	cells := g.nx * g.ny
	cellOf := make([]int32, n)
	counts := make([]int32, blocks*cells)
	parallel.For(n, threads, func(lo, hi, b int) {
		c := counts[b*cells : (b+1)*cells]
		for i := lo; i < hi; i++ {
			if !keep[i] {
				continue
			}
			k := g.cellIndex(float64(layout[2*i]), float64(layout[2*i+1]))
			cellOf[i] = int32(k)
			c[k]++
		}
	})
	// Offsets in cell order, then block order within a cell, so that ids
	// stay increasing within each cell.
	g.start = make([]int32, cells+1)
	var total int32
	for k := 0; k < cells; k++ {
		g.start[k] = total
		for b := 0; b < blocks; b++ {
			c := counts[b*cells+k]
			counts[b*cells+k] = total
			total += c
		}
	}
	g.start[cells] = total

	// Pass 3: each block places its points.
	g.ids = make([]int32, total)
	g.xy = make([]float32, 2*total)
	parallel.For(n, threads, func(lo, hi, b int) {
		next := counts[b*cells : (b+1)*cells]
		for i := lo; i < hi; i++ {
			if !keep[i] {
				continue
			}
			k := cellOf[i]
			p := next[k]
			next[k]++
			g.ids[p] = int32(i)
			g.xy[2*p], g.xy[2*p+1] = layout[2*i], layout[2*i+1]
		}
	})
	return g, nil
}

// sizeCells chooses the cell side and the number of cells for a bounding box
// of width w and height h holding n points: about n/pointsPerCell square
// cells, and one row or column when the box is flat.
func (g *Grid) sizeCells(w, h float64, n int) {
	target := math.Max(1, float64(n)/pointsPerCell)
	switch {
	case w > 0 && h > 0:
		g.cell = math.Sqrt(w * h / target)
	case w > 0 || h > 0:
		g.cell = math.Max(w, h) / target
	default:
		g.cell = 1
	}
	// Keep the cell count within a small multiple of the target even for
	// very elongated boxes.
	for {
		nx, ny := math.Floor(w/g.cell)+1, math.Floor(h/g.cell)+1
		if nx*ny <= 4*target+4 {
			g.nx, g.ny = int(nx), int(ny)
			break
		}
		g.cell *= 1.5
	}
	g.inv = 1 / g.cell
}

// cellIndex returns the cell holding (x, y), clamped to the grid.
func (g *Grid) cellIndex(x, y float64) int {
	cx, cy := g.clampedCell(x, y)
	return cy*g.nx + cx
}

// clampedCell returns the column and row of the cell holding (x, y), or of
// the nearest cell when (x, y) lies outside the grid.
func (g *Grid) clampedCell(x, y float64) (int, int) {
	fx, fy := (x-g.x0)*g.inv, (y-g.y0)*g.inv
	cx, cy := 0, 0
	if fx > 0 {
		cx = int(math.Min(fx, float64(g.nx-1)))
	}
	if fy > 0 {
		cy = int(math.Min(fy, float64(g.ny-1)))
	}
	return cx, cy
}

// Len returns the number of points in the grid.
func (g *Grid) Len() int { return len(g.ids) }

// Nearest returns the index of the grid's point nearest (x, y) in Euclidean
// distance, among those within maxDist (inclusive; +Inf for no limit), and
// true; or −1 and false when there is none. Of points at the same distance
// it returns the one with the smallest index. Distances are computed in
// float64 from the float32 coordinates:
//
//	d² = (float64(xᵢ) − x)² + (float64(yᵢ) − y)²
//
// The search visits rings of cells around the cell nearest (x, y), and stops
// when every unvisited cell lies farther than the best distance so far (or
// than maxDist); a query far outside the points is answered the same way.
func (g *Grid) Nearest(x, y, maxDist float64) (int, bool) {
	if len(g.ids) == 0 || math.IsNaN(x) || math.IsNaN(y) || !(maxDist >= 0) {
		return -1, false
	}
	best, bestD2 := -1, math.Inf(1)
	limit2 := maxDist * maxDist
	cx, cy := g.clampedCell(x, y)
	for r := 0; ; r++ {
		x0, x1 := cx-r, cx+r
		y0, y1 := cy-r, cy+r
		if r == 0 {
			best, bestD2 = g.scanCell(cx, cy, x, y, best, bestD2)
		} else {
			for gx := max(x0, 0); gx <= min(x1, g.nx-1); gx++ {
				if y0 >= 0 {
					best, bestD2 = g.scanCell(gx, y0, x, y, best, bestD2)
				}
				if y1 < g.ny {
					best, bestD2 = g.scanCell(gx, y1, x, y, best, bestD2)
				}
			}
			for gy := max(y0+1, 0); gy <= min(y1-1, g.ny-1); gy++ {
				if x0 >= 0 {
					best, bestD2 = g.scanCell(x0, gy, x, y, best, bestD2)
				}
				if x1 < g.nx {
					best, bestD2 = g.scanCell(x1, gy, x, y, best, bestD2)
				}
			}
		}
		// Every unvisited cell lies in one of the strips of the grid beyond
		// the sides of the visited block of cells; the nearest of those
		// strips bounds the distance to any unvisited point.
		lb := math.Inf(1)
		left, right := g.x0, g.x0+float64(g.nx)*g.cell
		bottom, top := g.y0, g.y0+float64(g.ny)*g.cell
		if x0 > 0 {
			lb = math.Min(lb, rectDistance(x, y, left, g.x0+float64(x0)*g.cell, bottom, top))
		}
		if x1 < g.nx-1 {
			lb = math.Min(lb, rectDistance(x, y, g.x0+float64(x1+1)*g.cell, right, bottom, top))
		}
		if y0 > 0 {
			lb = math.Min(lb, rectDistance(x, y, left, right, bottom, g.y0+float64(y0)*g.cell))
		}
		if y1 < g.ny-1 {
			lb = math.Min(lb, rectDistance(x, y, left, right, g.y0+float64(y1+1)*g.cell, top))
		}
		if math.IsInf(lb, 1) {
			break // the whole grid has been visited
		}
		// Points are put in cells by rounded arithmetic: allow a sliver.
		lb = math.Max(0, lb-g.slack)
		if lb*lb > bestD2 || lb*lb > limit2 {
			break
		}
	}
	if best < 0 || bestD2 > limit2 {
		return -1, false
	}
	return best, true
}

// scanCell updates the best point and squared distance with the points of
// cell (cx, cy); ties go to the smaller index.
func (g *Grid) scanCell(cx, cy int, x, y float64, best int, bestD2 float64) (int, float64) {
	c := cy*g.nx + cx
	lo, hi := g.start[c], g.start[c+1]
	for p := lo; p < hi; p++ {
		dx, dy := float64(g.xy[2*p])-x, float64(g.xy[2*p+1])-y
		d2 := dx*dx + dy*dy
		if id := int(g.ids[p]); d2 < bestD2 || (d2 == bestD2 && id < best) {
			best, bestD2 = id, d2
		}
	}
	return best, bestD2
}

// rectDistance returns the Euclidean distance from (x, y) to the rectangle
// [x0, x1] × [y0, y1], 0 inside it.
func rectDistance(x, y, x0, x1, y0, y1 float64) float64 {
	dx := math.Max(0, math.Max(x0-x, x-x1))
	dy := math.Max(0, math.Max(y0-y, y-y1))
	return math.Sqrt(dx*dx + dy*dy)
}

func finite(v float64) bool { return !math.IsNaN(v) && !math.IsInf(v, 0) }
