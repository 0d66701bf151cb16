// Package paint computes what colours the map: a palette index per cell
// and the key that explains it, for an annotation column, a gene's
// expression or the user's groups; and the expression plot of ranked
// markers. The window and the headless figure command both use it, so
// figures match the screen.
package paint

import (
	"context"
	"fmt"
	"image/color"
	"math"
	"sort"
	"strconv"

	"lodestone/canvas/colour"
	"lodestone/canvas/figure"
	"lodestone/canvas/raster"
	"lodestone/compute/atlas"
	"lodestone/compute/sparse"

	"lodestone/internal/order"
)

// Source says what colours the map.
type Source int

// The sources of a paint.
const (
	Plain  Source = iota // one colour for every cell
	Column               // an annotation column
	Gene                 // a gene's expression
	Groups               // the user's groups
)

// Entry is one line of a categorical key: a category, its colour and
// number of cells, and whether it is hidden.
type Entry struct {
	Label  string
	Colour color.NRGBA
	Count  int
	Hidden bool
}

// Paint is a computed paint: a palette index per cell and what the key
// shows.
type Paint struct {
	Source  Source
	Name    string // the column, gene or "groups"
	Colours []uint16
	Palette []color.NRGBA

	// categorical: one entry per category, then one for missing values
	// when there are any
	Entries []Entry
	// continuous: the range mapped onto the ramp, and the cells without a
	// value
	Continuous bool
	Lo, Hi     float64
	Missing    int
}

// PlainColour paints every cell when nothing else does.
var PlainColour = color.NRGBA{R: 0x4a, G: 0x4f, B: 0x5c, A: 0xff}

// PlainPaint paints n cells in PlainColour.
func PlainPaint(n int) *Paint {
	return &Paint{Source: Plain, Name: "none", Colours: make([]uint16, n), Palette: []color.NRGBA{PlainColour}}
}

// Categorical paints by a categorical column. hidden, when not nil,
// holds one flag per level and a last one for missing values; hidden cells
// get raster.Hidden.
func Categorical(c *atlas.Column, hidden []bool) *Paint {
	k := len(c.Levels)
	p := &Paint{Source: Column, Name: c.Name, Colours: make([]uint16, len(c.Codes))}
	p.Palette = append(colour.Categorical(k), colour.Missing)
	counts := make([]int, k+1)
	for i, code := range c.Codes {
		idx := k
		if code >= 0 {
			idx = int(code)
		}
		counts[idx]++
		if hidden != nil && hidden[idx] {
			p.Colours[i] = raster.Hidden
		} else {
			p.Colours[i] = uint16(idx)
		}
	}
	for l := 0; l < k; l++ {
		p.Entries = append(p.Entries, Entry{Label: c.Levels[l], Colour: p.Palette[l], Count: counts[l], Hidden: hidden != nil && hidden[l]})
	}
	if counts[k] > 0 {
		p.Entries = append(p.Entries, Entry{Label: "(missing)", Colour: colour.Missing, Count: counts[k], Hidden: hidden != nil && hidden[k]})
	}
	return p
}

// RampPalette is the continuous ramp followed by the missing-value grey.
func RampPalette() []color.NRGBA {
	t := colour.RampTable()
	return append(t[:], colour.Missing)
}

// Continuous paints values on the ramp from lo to hi (values outside
// are clamped); NaN values get the missing grey.
func Continuous(name string, values []float64, lo, hi float64) *Paint {
	p := &Paint{Source: Column, Name: name, Colours: make([]uint16, len(values)), Palette: RampPalette(),
		Continuous: true, Lo: lo, Hi: hi}
	span := hi - lo
	for i, v := range values {
		switch {
		case math.IsNaN(v):
			p.Colours[i] = colour.RampSize
			p.Missing++
		case span <= 0:
			p.Colours[i] = colour.RampSize / 2
		default:
			t := (v - lo) / span
			idx := int(t*(colour.RampSize-1) + 0.5)
			p.Colours[i] = uint16(max(0, min(colour.RampSize-1, idx)))
		}
	}
	return p
}

// ValueRange returns the smallest and largest finite values.
func ValueRange(values []float64) (lo, hi float64) {
	lo, hi = math.Inf(1), math.Inf(-1)
	for _, v := range values {
		if !math.IsNaN(v) && !math.IsInf(v, 0) {
			lo, hi = math.Min(lo, v), math.Max(hi, v)
		}
	}
	if lo > hi {
		return 0, 0
	}
	return lo, hi
}

// GeneValues returns column g of the cells × genes matrix x as float64, zero
// where nothing is stored. Each cell's row is searched for the gene on all
// processors (sparse.View.Column): the matrix needs no index by gene and
// no transposed copy.
func GeneValues(x *sparse.View, g int) []float64 {
	col := x.Column(g, nil, 0)
	out := make([]float64, len(col))
	for i, v := range col {
		out[i] = float64(v)
	}
	return out
}

// Quantile returns the q-quantile of values (by the nearest rank: the
// ⌈q·n⌉-th smallest, NaN counting as smallest, as sort.Float64s orders
// them), leaving values unchanged. It selects the value in expected linear
// time instead of sorting (Hoare's FIND, Communications of the ACM 4, 1961).
func Quantile(values []float64, q float64) float64 {
	if len(values) == 0 {
		return 0
	}
	s := append([]float64(nil), values...)
	idx := int(math.Ceil(q*float64(len(s)))) - 1
	return order.Nth(s, max(0, min(len(s)-1, idx)))
}

// GenePaint paints a gene's log-normalised expression from 0 to its 99th
// percentile (common practice for expression maps), or to its maximum when
// fewer than 1% of cells express it.
func GenePaint(name string, values []float64) *Paint {
	hi := Quantile(values, 0.99)
	if hi <= 0 {
		_, hi = ValueRange(values)
	}
	p := Continuous(name, values, 0, hi)
	p.Source = Gene
	return p
}

// Group is a named set of cells made with the lasso.
type Group struct {
	Name   string
	Colour color.NRGBA
	Cells  []bool
	Count  int
}

// GroupsPaint paints each cell with the colour of the last group holding
// it, and grey when it is in none.
func GroupsPaint(groups []*Group, n int) *Paint {
	p := &Paint{Source: Groups, Name: "groups", Colours: make([]uint16, n)}
	for _, g := range groups {
		p.Palette = append(p.Palette, g.Colour)
	}
	none := uint16(len(groups))
	p.Palette = append(p.Palette, colour.Missing)
	counts := make([]int, len(groups)+1)
	for i := range p.Colours {
		c := none
		for gi := len(groups) - 1; gi >= 0; gi-- {
			if groups[gi].Cells[i] {
				c = uint16(gi)
				break
			}
		}
		p.Colours[i] = c
		counts[c]++
	}
	for gi, g := range groups {
		p.Entries = append(p.Entries, Entry{Label: g.Name, Colour: g.Colour, Count: counts[gi]})
	}
	p.Entries = append(p.Entries, Entry{Label: "(in no group)", Colour: colour.Missing, Count: counts[len(groups)]})
	return p
}

// FormatValue writes a continuous value compactly.
func FormatValue(v float64) string {
	a := math.Abs(v)
	switch {
	case a == 0:
		return "0"
	case a >= 1e4 || a < 1e-3:
		return fmt.Sprintf("%.2e", v)
	case a >= 100:
		return fmt.Sprintf("%.0f", v)
	default:
		return fmt.Sprintf("%.3g", v)
	}
}

// ForColumn paints by any annotation column: Categorical for categorical
// columns (hidden as there), Continuous over the column's range otherwise.
func ForColumn(c *atlas.Column, hidden []bool) *Paint {
	if c.Kind == atlas.Categorical {
		return Categorical(c, hidden)
	}
	lo, hi := ValueRange(c.Values)
	return Continuous(c.Name, c.Values, lo, hi)
}

// Key returns the figure key that explains p: its categories with their
// counts (hidden ones left out), or its colour bar.
func (p *Paint) Key() *figure.Key {
	if p.Continuous {
		lo, hi := FormatRange(p.Lo, p.Hi)
		return &figure.Key{Title: p.Name, Ramp: p.Palette[:len(p.Palette)-1], Low: lo, High: hi, Missing: p.Missing}
	}
	k := &figure.Key{Title: p.Name, Counts: true}
	for _, e := range p.Entries {
		if !e.Hidden {
			k.Entries = append(k.Entries, figure.KeyEntry{Label: e.Label, Colour: e.Colour, Count: e.Count})
		}
	}
	return k
}

// Labels returns a label for each visible category of a categorical
// paint, anchored at the category's medoid in layout (figure.Medoids),
// largest categories first; none for a continuous paint.
func (p *Paint) Labels(ctx context.Context, layout []float32) ([]figure.Label, error) {
	if p.Continuous || len(p.Entries) == 0 {
		return nil, nil
	}
	k := len(p.Palette)
	codes := make([]int32, len(p.Colours))
	for i, c := range p.Colours {
		if c == raster.Hidden || int(c) >= k {
			codes[i] = -1
		} else {
			codes[i] = int32(c)
		}
	}
	centres, err := figure.Medoids(ctx, layout, codes, k)
	if err != nil {
		return nil, err
	}
	// Entries follow the palette for the categories; the missing entry,
	// if any, is the palette's last colour and gets no label.
	type cand struct {
		label string
		at    int
		count int
	}
	var cands []cand
	for i, e := range p.Entries {
		if i >= k-1 || e.Hidden || centres[i] < 0 {
			continue
		}
		cands = append(cands, cand{e.Label, centres[i], e.Count})
	}
	sort.SliceStable(cands, func(a, b int) bool { return cands[a].count > cands[b].count })
	out := make([]figure.Label, len(cands))
	for i, c := range cands {
		out[i] = figure.Label{Text: c.label, X: float64(layout[2*c.at]), Y: float64(layout[2*c.at+1])}
	}
	return out, nil
}

// FormatRange writes the ends of a colour bar with the same number of
// decimals, enough to tell them apart: 0.00 and 1.00 for a range of about
// 1, 0 and 1200 for one of thousands. Very large or very small ranges use
// FormatValue.
func FormatRange(lo, hi float64) (string, string) {
	span := hi - lo
	if span <= 0 || math.IsNaN(span) || math.IsInf(span, 0) || span >= 1e6 || span < 1e-6 {
		return FormatValue(lo), FormatValue(hi)
	}
	decimals := max(0, 2-int(math.Floor(math.Log10(span))))
	return strconv.FormatFloat(lo, 'f', decimals, 64), strconv.FormatFloat(hi, 'f', decimals, 64)
}
