package figure

import (
	"fmt"
	"image/color"
	"io"
	"math"

	"lodestone/canvas/colour"
)

// paper is the plot's background and the inside of its bars.
var paper = color.NRGBA{R: 0xff, G: 0xff, B: 0xff, A: 0xff}

// band is the fill of every other row of the expression plot,
// OKLCH(0.97, 0.005, 265), which guides the eye along a row.
var band = color.NRGBA{R: 0xf2, G: 0xf3, B: 0xf6, A: 0xff}

// Proportions of an expression tile, as shares of the tile's side: the bar's
// width and full height.
const (
	barWidth  = 0.56
	barHeight = 0.8
)

// Example fill heights shown in the key of the expression plot.
var keyFractions = [...]float64{0.25, 0.5, 1}

// WriteExpressionPNG draws t as an expression plot of size s and writes it
// as PNG, with the resolution in a pHYs chunk as WritePNG does.
//
// Each group is a row and each gene a column. The tile of group g and gene
// j holds an upright bar: a thin outline shows its full height, and it is
// filled from the bottom to Fraction[g][j] of that height in the colour of
// colour.Ramp at
//
//	t = Mean[g][j] / max_h Mean[h][j]
//
// (t = 0 when the gene's largest mean is 0), so each gene's colours run
// from its lowest group to its highest. A group without cells shows an
// empty grey outline. Group names are set right-aligned before the rows,
// gene names read upward above the columns, and a key on the right explains
// colour and height. Every other row lies on a faint band.
//
// WriteExpressionPNG returns an *InputError wrapping ErrLength when the
// table's slices do not match its genes and groups, ErrValue for a Fraction
// outside [0, 1] or a negative or infinite Mean, and ErrNoRoom when the
// tiles would be smaller than 6 pixels.
func WriteExpressionPNG(w io.Writer, t *ExpressionTable, s Size) error {
	sc, err := t.scene(s)
	if err != nil {
		return err
	}
	img, err := sc.render()
	if err != nil {
		return err
	}
	if err := encodePNG(w, img, s.DPI); err != nil {
		return fmt.Errorf("figure: writing PNG: %w", err)
	}
	return nil
}

// WriteExpressionSVG writes the plot of WriteExpressionPNG as SVG 1.1, with
// the size conventions of WriteSVG; names are XML-escaped <text>.
func WriteExpressionSVG(w io.Writer, t *ExpressionTable, s Size) error {
	sc, err := t.scene(s)
	if err != nil {
		return err
	}
	return writeSceneSVG(w, sc, 0)
}

// check returns an error for a table the plot cannot show.
func (t *ExpressionTable) check() error {
	if len(t.Genes) == 0 {
		return inputError("Genes", -1, ErrLength)
	}
	if len(t.Groups) == 0 {
		return inputError("Groups", -1, ErrLength)
	}
	if len(t.Fraction) != len(t.Groups) {
		return inputError("Fraction", -1, ErrLength)
	}
	if len(t.Mean) != len(t.Groups) {
		return inputError("Mean", -1, ErrLength)
	}
	for g := range t.Groups {
		if len(t.Fraction[g]) != len(t.Genes) {
			return inputError(fmt.Sprintf("Fraction[%d]", g), -1, ErrLength)
		}
		if len(t.Mean[g]) != len(t.Genes) {
			return inputError(fmt.Sprintf("Mean[%d]", g), -1, ErrLength)
		}
		for j := range t.Genes {
			if f := t.Fraction[g][j]; !math.IsNaN(f) && !(f >= 0 && f <= 1) {
				return inputError(fmt.Sprintf("Fraction[%d]", g), j, ErrValue)
			}
			if m := t.Mean[g][j]; !math.IsNaN(m) && !(m >= 0 && !math.IsInf(m, 1)) {
				return inputError(fmt.Sprintf("Mean[%d]", g), j, ErrValue)
			}
		}
	}
	return nil
}

// minTile is the smallest tile side, in pixels, of the expression plot.
const minTile = 6

// plotGeometry is the layout of the expression plot.
type plotGeometry struct {
	size           float64 // text size of the names
	x0, y0         float64 // top-left corner of the grid
	tile           float64 // side of a tile
	rowLabelW      float64
	colLabelH      float64
	keyX, keyW     float64
	keyTile        float64
	anyEmptyGroups bool
}

// scene lays the plot out at size s.
func (t *ExpressionTable) scene(s Size) (*scene, error) {
	if err := s.check(); err != nil {
		return nil, err
	}
	if err := t.check(); err != nil {
		return nil, err
	}
	ts, err := newTypesetter()
	if err != nil {
		return nil, err
	}
	W, H := float64(s.WidthPx), float64(s.HeightPx)
	T := s.textPx()
	pad := math.Round(0.8 * T)
	nGenes, nGroups := float64(len(t.Genes)), float64(len(t.Groups))

	g := plotGeometry{size: T}
	for try := 0; try < 4; try++ {
		g.rowLabelW, g.colLabelH = 0, 0
		for _, name := range t.Groups {
			g.rowLabelW = math.Max(g.rowLabelW, ts.advance(name, g.size, false))
		}
		for _, name := range t.Genes {
			g.colLabelH = math.Max(g.colLabelH, ts.advance(name, g.size, false))
		}
		g.rowLabelW = math.Min(g.rowLabelW, 0.3*W)
		g.colLabelH = math.Min(g.colLabelH, 0.3*H)
		g.keyW = expressionKeyWidth(ts, T)
		g.x0 = math.Round(pad + g.rowLabelW + 0.5*T)
		g.y0 = math.Round(pad + g.colLabelH + 0.5*T)
		availW := W - g.x0 - pad - 1.5*T - g.keyW
		availH := H - g.y0 - pad
		g.tile = math.Floor(math.Min(math.Min(availW/nGenes, availH/nGroups), math.Round(3.2*T)))
		// Names as tall as the rows are, at most: shrink them and retry.
		next := math.Max(0.5*T, math.Max(g.tile, minTile)/1.3)
		if g.tile >= 1.3*g.size || next >= g.size {
			break
		}
		g.size = next
	}
	if g.tile < minTile {
		return nil, inputError("Size", -1, ErrNoRoom)
	}
	g.keyX = g.x0 + nGenes*g.tile + 1.5*T
	g.keyTile = math.Min(g.tile, math.Round(2*T))

	sc := &scene{width: s.WidthPx, height: s.HeightPx, dpi: s.DPI, background: paper}
	asc, desc := ts.vmetrics(g.size, false)
	for r, name := range t.Groups {
		y := g.y0 + float64(r)*g.tile
		if r%2 == 0 {
			sc.items = append(sc.items, &rectItem{box{g.x0, y, g.x0 + nGenes*g.tile, y + g.tile}, band})
		}
		sc.items = append(sc.items, &textItem{
			s: ts.fit(name, g.size, false, g.rowLabelW), x: g.x0 - 0.4*T, y: y + g.tile/2 + (asc-desc)/2,
			size: g.size, align: alignEnd, colour: ink,
		})
	}
	for j, name := range t.Genes {
		cx := g.x0 + (float64(j)+0.5)*g.tile
		sc.items = append(sc.items, &textItem{
			s: ts.fit(name, g.size, false, g.colLabelH), x: cx + (asc-desc)/2, y: g.y0 - 0.4*T,
			size: g.size, colour: ink, vertical: true,
		})
	}
	for j := range t.Genes {
		top := 0.0
		for r := range t.Groups {
			if m := t.Mean[r][j]; m > top {
				top = m
			}
		}
		for r := range t.Groups {
			frac, mean := t.Fraction[r][j], t.Mean[r][j]
			tx, ty := g.x0+float64(j)*g.tile, g.y0+float64(r)*g.tile
			if math.IsNaN(frac) || math.IsNaN(mean) {
				g.anyEmptyGroups = true
				frac, mean = math.NaN(), math.NaN()
			}
			sc.items = append(sc.items, tileBar(tx, ty, g.tile, frac, scaledMean(mean, top))...)
		}
	}
	sc.items = append(sc.items, expressionKey(ts, &g, T)...)
	return sc, nil
}

// scaledMean returns mean / top, or 0 when top is 0; NaN stays NaN.
func scaledMean(mean, top float64) float64 {
	if top > 0 {
		return mean / top
	}
	if math.IsNaN(mean) {
		return mean
	}
	return 0
}

// tileBar returns the bar of one tile at (x, y) of side c: filled to
// fraction of its height in the ramp colour at t over white, and outlined;
// a NaN fraction gives an empty outline in the missing-value grey.
func tileBar(x, y, c, fraction, t float64) []item {
	bw := math.Max(2, math.Round(barWidth*c))
	bh := math.Max(2, math.Round(barHeight*c))
	bx := x + math.Round((c-bw)/2)
	by1 := y + math.Round((c+bh)/2)
	lw := math.Max(1, math.Round(c/28))
	b := box{bx, by1 - bh, bx + bw, by1}
	if math.IsNaN(fraction) {
		return outline(b, lw, colour.Missing)
	}
	items := []item{&rectItem{b, paper}}
	if fraction > 0 {
		items = append(items, &rectItem{box{bx, by1 - fraction*bh, bx + bw, by1}, colour.Ramp(t)})
	}
	return append(items, outline(b, lw, quiet)...)
}

// The key's wording.
const (
	keyMeanTitle     = "mean expression"
	keyMeanLow       = "0"
	keyMeanHigh      = "gene's highest"
	keyFractionTitle = "cells expressing"
	keyEmpty         = "group without cells"
)

// expressionKeyWidth returns the width of the key at text size T.
func expressionKeyWidth(ts *typesetter, T float64) float64 {
	w := math.Max(8*T, ts.advance(keyMeanTitle, T, true))
	w = math.Max(w, ts.advance(keyFractionTitle, T, true))
	w = math.Max(w, ts.advance(keyMeanLow, T, false)+ts.advance(keyMeanHigh, T, false)+T)
	return math.Max(w, ts.advance(keyEmpty, T, false)+2.5*T)
}

// expressionKey returns the key: a colour bar for the scaled mean and three
// example bars for the share of cells expressing.
func expressionKey(ts *typesetter, g *plotGeometry, T float64) []item {
	asc, desc := ts.vmetrics(T, false)
	x, y := g.keyX, g.y0
	ramp := colour.RampTable()
	items := []item{&textItem{s: keyMeanTitle, x: x, y: y + asc, size: T, bold: true, colour: ink}}
	y += math.Ceil(asc + desc + 0.4*T)
	barH := math.Round(0.7 * T)
	items = append(items, &rampItem{b: box{x, y, x + g.keyW, y + barH}, stops: ramp[:]})
	y += barH + 0.25*T
	items = append(items,
		&textItem{s: keyMeanLow, x: x, y: y + asc, size: T, colour: ink},
		&textItem{s: keyMeanHigh, x: x + g.keyW, y: y + asc, size: T, align: alignEnd, colour: ink})
	y += asc + desc + T

	items = append(items, &textItem{s: keyFractionTitle, x: x, y: y + asc, size: T, bold: true, colour: ink})
	y += math.Ceil(asc + desc + 0.2*T)
	c := g.keyTile
	step := math.Max(c, ts.advance("100%", T, false)+0.4*T)
	for i, f := range keyFractions {
		tx := x + float64(i)*step + (step-c)/2
		items = append(items, tileBar(tx, y, c, f, 0.6)...)
		items = append(items, &textItem{s: fmt.Sprintf("%.0f%%", 100*f), x: tx + c/2, y: y + c + 0.2*T + asc, size: T, align: alignMiddle, colour: ink})
	}
	y += c + 0.2*T + asc + desc + T
	if g.anyEmptyGroups {
		items = append(items, tileBar(x, y, c, math.NaN(), 0)...)
		items = append(items, &textItem{s: keyEmpty, x: x + c + 0.4*T, y: y + c/2 + (asc-desc)/2, size: T, colour: ink})
	}
	return items
}
