package figure

import (
	"math"
	"slices"
	"sync"
)

// Label placement: a label's box may move from its anchor by steps of
// labelStepX of its width and labelStepY of its height, up to labelReach in
// the norm √((dx/w)² + (dy/h)²): a move of one box width sideways costs as
// much as one box height up or down.
const (
	labelStepX = 0.25
	labelStepY = 0.5
	labelReach = 3.0
)

var labelOffsets struct {
	once sync.Once
	d    [][2]float64 // (dx/w, dy/h), nearest first
}

// candidateOffsets returns the moves a label tries, as shares of its width
// and height: every point of the grid of steps (labelStepX, labelStepY)
// within labelReach, nearest first, ties in a fixed order (upward moves,
// then leftward ones, first).
func candidateOffsets() [][2]float64 {
	labelOffsets.once.Do(func() {
		kx, ky := int(labelReach/labelStepX), int(labelReach/labelStepY)
		for j := -ky; j <= ky; j++ {
			for i := -kx; i <= kx; i++ {
				dx, dy := float64(i)*labelStepX, float64(j)*labelStepY
				if math.Hypot(dx, dy) <= labelReach {
					labelOffsets.d = append(labelOffsets.d, [2]float64{dx, dy})
				}
			}
		}
		slices.SortStableFunc(labelOffsets.d, func(a, b [2]float64) int {
			return cmpFloat(a[0]*a[0]+a[1]*a[1], b[0]*b[0]+b[1]*b[1])
		})
	})
	return labelOffsets.d
}

func cmpFloat(a, b float64) int {
	switch {
	case a < b:
		return -1
	case a > b:
		return 1
	}
	return 0
}

// placedLabel is a label's text, its box (halo included) and its anchor, in
// figure pixels.
type placedLabel struct {
	text   string
	b      box
	ax, ay float64
}

// maxHalo is the widest label halo, in pixels: wide enough for any text
// size, and it bounds the cost of widening the glyph masks.
const maxHalo = 10

// labelStyle returns the text size and halo width of labels for body text
// size T: the halo is 0.14 T, within [1, maxHalo] pixels.
func labelStyle(T float64) (size, halo float64) {
	return T, math.Max(1, math.Min(maxHalo, 0.14*T))
}

// layoutLabels places the labels whose anchors lie in the map, in order.
// Each label's box (its text's advance and height, widened by the halo) is
// tried at each of candidateOffsets around the anchor and goes to the first
// place inside the map that overlaps no box placed before it; when there is
// none, to the place with the least overlap, and when no candidate lies
// inside the map, to the anchored box pushed inside. Texts wider than the
// map are shortened with an ellipsis.
func layoutLabels(ts *typesetter, labels []Label, p *pointsLayer, T float64) []placedLabel {
	size, halo := labelStyle(T)
	area := box{float64(p.area.Min.X), float64(p.area.Min.Y), float64(p.area.Max.X), float64(p.area.Max.Y)}
	asc, desc := ts.vmetrics(size, true)
	h := asc + desc + 2*halo
	var out []placedLabel
	for _, l := range labels {
		ax, ay := p.view.ToPixel(l.X, l.Y)
		ax, ay = ax+area.x0, ay+area.y0
		if l.Text == "" || !(ax >= area.x0 && ax < area.x1 && ay >= area.y0 && ay < area.y1) {
			continue
		}
		text := ts.fit(l.Text, size, true, area.w()-2*halo)
		if text == "" || h > area.h() {
			continue
		}
		w := ts.advance(text, size, true) + 2*halo
		best, bestOverlap := box{}, math.Inf(1)
		for _, d := range candidateOffsets() {
			cx, cy := ax+d[0]*w, ay+d[1]*h
			b := box{cx - w/2, cy - h/2, cx + w/2, cy + h/2}
			if !b.inside(area) {
				continue
			}
			var ov float64
			for _, q := range out {
				ov += b.overlap(q.b)
			}
			if ov < bestOverlap {
				best, bestOverlap = b, ov
				if ov == 0 {
					break
				}
			}
		}
		if math.IsInf(bestOverlap, 1) {
			x0 := math.Max(area.x0, math.Min(area.x1-w, ax-w/2))
			y0 := math.Max(area.y0, math.Min(area.y1-h, ay-h/2))
			best = box{x0, y0, x0 + w, y0 + h}
		}
		out = append(out, placedLabel{text: text, b: best, ax: ax, ay: ay})
	}
	return out
}

// placeLabels returns the labels as text items with a white halo.
func placeLabels(ts *typesetter, labels []Label, p *pointsLayer, T float64) []item {
	size, halo := labelStyle(T)
	asc, _ := ts.vmetrics(size, true)
	var items []item
	for _, pl := range layoutLabels(ts, labels, p, T) {
		items = append(items, &textItem{
			s: pl.text, x: (pl.b.x0 + pl.b.x1) / 2, y: pl.b.y0 + halo + asc,
			size: size, bold: true, align: alignMiddle, colour: ink, halo: halo,
		})
	}
	return items
}
