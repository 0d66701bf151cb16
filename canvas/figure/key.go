package figure

import (
	"math"
	"strconv"

	"lodestone/canvas/colour"
)

// keyLayout is a key laid out at the origin: its size and its items.
type keyLayout struct {
	w, h  float64
	items []item
}

// origin moves the key's items so that its top-left corner is at (x, y).
func (k *keyLayout) origin(x, y float64) {
	for _, it := range k.items {
		switch v := it.(type) {
		case *rectItem:
			v.b = box{v.b.x0 + x, v.b.y0 + y, v.b.x1 + x, v.b.y1 + y}
		case *rampItem:
			v.b = box{v.b.x0 + x, v.b.y0 + y, v.b.x1 + x, v.b.y1 + y}
		case *discItem:
			v.cx, v.cy = v.cx+x, v.cy+y
		case *textItem:
			v.x, v.y = v.x+x, v.y+y
		}
	}
}

// Smallest text scale a crowded key shrinks to, and the steps it takes.
const (
	keyMinScale  = 0.75
	keyScaleStep = 0.1
)

// layoutKey lays k out within maxW × maxH pixels, with body text size T.
// A list of categories is set in columns of rows: as few columns as fit
// the height when the key is beside the map (maxH the larger), as many as
// fit the width when it is below. A crowded list first shrinks its text
// (down to keyMinScale · T, 5¼ pt for 7 pt text), then shortens its labels with an ellipsis, then
// ends with a line that counts the entries left out.
func layoutKey(ts *typesetter, k *Key, T, maxW, maxH float64) *keyLayout {
	if len(k.Entries) == 0 {
		return layoutBar(ts, k, T, maxW)
	}
	beside := maxH > maxW
	n := len(k.Entries)
	counts := make([]string, n)
	if k.Counts {
		for i, e := range k.Entries {
			counts[i] = strconv.Itoa(e.Count)
		}
	}
	var g keyGrid
	for scale := 1.0; ; scale -= keyScaleStep {
		if scale < keyMinScale+1e-9 {
			scale = keyMinScale
		}
		g = newKeyGrid(ts, k, counts, T*scale)
		rowsFit := int(math.Floor((maxH - g.titleH) / g.rowH))
		if rowsFit >= 1 {
			if beside {
				g.cols = (n + rowsFit - 1) / rowsFit
			} else {
				g.cols = max(1, min(n, int((maxW+g.gap)/(g.colW+g.gap))))
			}
			g.rows = (n + g.cols - 1) / g.cols
			if g.rows <= rowsFit && g.width() <= maxW {
				break
			}
		}
		if scale == keyMinScale {
			// Still too crowded: narrow the columns, then drop entries.
			rowsFit = max(1, rowsFit)
			minColW := g.labelX + 3*g.size + g.countW
			g.cols = max(1, min((n+rowsFit-1)/rowsFit, int((maxW+g.gap)/(minColW+g.gap))))
			g.colW = math.Min(g.colW, (maxW-float64(g.cols-1)*g.gap)/float64(g.cols))
			g.rows = min(rowsFit, (n+g.cols-1)/g.cols)
			break
		}
	}
	return g.emit(ts, k, counts, maxW)
}

// keyGrid is the geometry of a list of categories.
type keyGrid struct {
	size           float64 // text size
	titleH, rowH   float64
	labelX, countW float64 // label offset from the column start; width of the count column
	colW, gap      float64
	rows, cols     int
}

func newKeyGrid(ts *typesetter, k *Key, counts []string, size float64) keyGrid {
	g := keyGrid{size: size, rowH: math.Round(1.45 * size), labelX: 1.05 * size, gap: size}
	if k.Title != "" {
		asc, desc := ts.vmetrics(size, true)
		g.titleH = math.Ceil(asc + desc + 0.4*size)
	}
	var labelW float64
	for i, e := range k.Entries {
		labelW = math.Max(labelW, ts.advance(e.Label, size, false))
		if counts[i] != "" {
			g.countW = math.Max(g.countW, ts.advance(counts[i], size, false))
		}
	}
	if g.countW > 0 {
		g.countW += 0.6 * size
	}
	g.colW = g.labelX + labelW + g.countW
	return g
}

func (g *keyGrid) width() float64 { return float64(g.cols)*g.colW + float64(g.cols-1)*g.gap }

// emit places the title and the entries, column by column.
func (g *keyGrid) emit(ts *typesetter, k *Key, counts []string, maxW float64) *keyLayout {
	kl := &keyLayout{w: math.Min(maxW, g.width())}
	if k.Title != "" {
		asc, _ := ts.vmetrics(g.size, true)
		t := ts.fit(k.Title, g.size, true, maxW)
		kl.items = append(kl.items, &textItem{s: t, y: asc, size: g.size, bold: true, colour: ink})
		kl.w = math.Max(kl.w, ts.advance(t, g.size, true))
	}
	n := len(k.Entries)
	slots := g.rows * g.cols
	shown := n
	if n > slots {
		shown = slots - 1 // the last slot counts the rest
	}
	asc, desc := ts.vmetrics(g.size, false)
	labelW := g.colW - g.labelX - g.countW
	for s := 0; s < min(n, slots); s++ {
		col, row := s/g.rows, s%g.rows
		x := float64(col) * (g.colW + g.gap)
		mid := g.titleH + (float64(row)+0.5)*g.rowH
		base := mid + (asc-desc)/2
		if s == shown {
			more := "+ " + strconv.Itoa(n-shown) + " more"
			kl.items = append(kl.items, &textItem{s: ts.fit(more, g.size, false, g.colW), x: x, y: base, size: g.size, colour: quiet})
			break
		}
		e := k.Entries[s]
		kl.items = append(kl.items,
			&discItem{cx: x + 0.4*g.size, cy: mid, r: 0.34 * g.size, colour: e.Colour},
			&textItem{s: ts.fit(e.Label, g.size, false, labelW), x: x + g.labelX, y: base, size: g.size, colour: ink})
		if counts[s] != "" {
			kl.items = append(kl.items, &textItem{s: counts[s], x: x + g.colW, y: base, size: g.size, align: alignEnd, colour: quiet})
		}
	}
	kl.h = g.titleH + float64(g.rows)*g.rowH
	return kl
}

// layoutBar lays out a colour bar: title, bar, end labels, and the count of
// cells without a value.
func layoutBar(ts *typesetter, k *Key, T, maxW float64) *keyLayout {
	kl := &keyLayout{}
	asc, desc := ts.vmetrics(T, false)
	y := 0.0
	if k.Title != "" {
		t := ts.fit(k.Title, T, true, maxW)
		kl.items = append(kl.items, &textItem{s: t, y: asc, size: T, bold: true, colour: ink})
		kl.w = ts.advance(t, T, true)
		y = math.Ceil(asc + desc + 0.4*T)
	}
	if len(k.Ramp) > 0 {
		barW := math.Min(maxW, math.Max(8*T, kl.w))
		barH := math.Round(0.7 * T)
		kl.items = append(kl.items, &rampItem{b: box{0, y, barW, y + barH}, stops: k.Ramp})
		y += barH + 0.25*T
		half := barW/2 - 0.25*T
		kl.items = append(kl.items,
			&textItem{s: ts.fit(k.Low, T, false, half), y: y + asc, size: T, colour: ink},
			&textItem{s: ts.fit(k.High, T, false, half), x: barW, y: y + asc, size: T, align: alignEnd, colour: ink})
		y += asc + desc
		kl.w = math.Max(kl.w, barW)
	}
	if k.Missing > 0 {
		y += 0.3 * T
		mid := y + 0.5*(asc+desc)
		text := ts.fit(strconv.Itoa(k.Missing)+" without a value", T, false, maxW-1.05*T)
		kl.items = append(kl.items,
			&discItem{cx: 0.4 * T, cy: mid, r: 0.34 * T, colour: colour.Missing},
			&textItem{s: text, x: 1.05 * T, y: mid + (asc-desc)/2, size: T, colour: ink})
		kl.w = math.Max(kl.w, 1.05*T+ts.advance(text, T, false))
		y += asc + desc
	}
	kl.h = math.Ceil(y)
	return kl
}
