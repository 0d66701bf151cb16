package window

import (
	"fmt"
	"image/color"
	"math"
	"sort"

	lcanvas "lodestone/canvas"
	"lodestone/canvas/colour"
	"lodestone/canvas/raster"
	"lodestone/compute/atlas"
	"lodestone/compute/sparse"
)

// paintSource says what colours the map.
type paintSource int

const (
	paintPlain  paintSource = iota // one colour for every cell
	paintColumn                    // an annotation column
	paintGene                      // a gene's expression
	paintGroups                    // the user's groups
)

// paint is a computed paint: a palette index per cell and what the key
// shows.
type paint struct {
	source  paintSource
	name    string // the column, gene or "groups"
	colours []uint16
	palette []color.NRGBA

	// categorical: one entry per category, then one for missing values
	// when there are any
	entries []lcanvas.KeyEntry
	// continuous: the range mapped onto the ramp, and the cells without a
	// value
	continuous bool
	lo, hi     float64
	missing    int
}

// plainColour paints every cell when nothing else does.
var plainColour = color.NRGBA{R: 0x4a, G: 0x4f, B: 0x5c, A: 0xff}

func plainPaint(n int) *paint {
	return &paint{source: paintPlain, name: "none", colours: make([]uint16, n), palette: []color.NRGBA{plainColour}}
}

// categoricalPaint paints by a categorical column. hidden, when not nil,
// holds one flag per level and a last one for missing values; hidden cells
// get raster.Hidden.
func categoricalPaint(c *atlas.Column, hidden []bool) *paint {
	k := len(c.Levels)
	p := &paint{source: paintColumn, name: c.Name, colours: make([]uint16, len(c.Codes))}
	p.palette = append(colour.Categorical(k), colour.Missing)
	counts := make([]int, k+1)
	for i, code := range c.Codes {
		idx := k
		if code >= 0 {
			idx = int(code)
		}
		counts[idx]++
		if hidden != nil && hidden[idx] {
			p.colours[i] = raster.Hidden
		} else {
			p.colours[i] = uint16(idx)
		}
	}
	for l := 0; l < k; l++ {
		p.entries = append(p.entries, lcanvas.KeyEntry{Label: c.Levels[l], Colour: p.palette[l], Count: counts[l], Hidden: hidden != nil && hidden[l]})
	}
	if counts[k] > 0 {
		p.entries = append(p.entries, lcanvas.KeyEntry{Label: "(missing)", Colour: colour.Missing, Count: counts[k], Hidden: hidden != nil && hidden[k]})
	}
	return p
}

// rampPalette is the continuous ramp followed by the missing-value grey.
func rampPalette() []color.NRGBA {
	t := colour.RampTable()
	return append(t[:], colour.Missing)
}

// continuousPaint paints values on the ramp from lo to hi (values outside
// are clamped); NaN values get the missing grey.
func continuousPaint(name string, values []float64, lo, hi float64) *paint {
	p := &paint{source: paintColumn, name: name, colours: make([]uint16, len(values)), palette: rampPalette(),
		continuous: true, lo: lo, hi: hi}
	span := hi - lo
	for i, v := range values {
		switch {
		case math.IsNaN(v):
			p.colours[i] = colour.RampSize
			p.missing++
		case span <= 0:
			p.colours[i] = colour.RampSize / 2
		default:
			t := (v - lo) / span
			idx := int(t*(colour.RampSize-1) + 0.5)
			p.colours[i] = uint16(max(0, min(colour.RampSize-1, idx)))
		}
	}
	return p
}

// valueRange returns the smallest and largest finite values.
func valueRange(values []float64) (lo, hi float64) {
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

// geneValues returns column g of the cells × genes matrix x as float64, zero
// where nothing is stored.
func geneValues(x *sparse.CSR, g int) []float64 {
	out := make([]float64, x.Rows)
	for i := 0; i < x.Rows; i++ {
		cols, vals := x.Row(i)
		k := sort.Search(len(cols), func(k int) bool { return int(cols[k]) >= g })
		if k < len(cols) && int(cols[k]) == g {
			out[i] = float64(vals[k])
		}
	}
	return out
}

// quantile returns the q-quantile of values (by the nearest rank), leaving
// values unchanged.
func quantile(values []float64, q float64) float64 {
	if len(values) == 0 {
		return 0
	}
	s := append([]float64(nil), values...)
	sort.Float64s(s)
	idx := int(math.Ceil(q*float64(len(s)))) - 1
	return s[max(0, min(len(s)-1, idx))]
}

// genePaint paints a gene's log-normalised expression from 0 to its 99th
// percentile (common practice for expression maps), or to its maximum when
// fewer than 1% of cells express it.
func genePaint(name string, values []float64) *paint {
	hi := quantile(values, 0.99)
	if hi <= 0 {
		_, hi = valueRange(values)
	}
	p := continuousPaint(name, values, 0, hi)
	p.source = paintGene
	return p
}

// group is a named set of cells made with the lasso.
type group struct {
	Name   string
	Colour color.NRGBA
	Cells  []bool
	Count  int
}

// groupsPaint paints each cell with the colour of the last group holding
// it, and grey when it is in none.
func groupsPaint(groups []*group, n int) *paint {
	p := &paint{source: paintGroups, name: "groups", colours: make([]uint16, n)}
	for _, g := range groups {
		p.palette = append(p.palette, g.Colour)
	}
	none := uint16(len(groups))
	p.palette = append(p.palette, colour.Missing)
	counts := make([]int, len(groups)+1)
	for i := range p.colours {
		c := none
		for gi := len(groups) - 1; gi >= 0; gi-- {
			if groups[gi].Cells[i] {
				c = uint16(gi)
				break
			}
		}
		p.colours[i] = c
		counts[c]++
	}
	for gi, g := range groups {
		p.entries = append(p.entries, lcanvas.KeyEntry{Label: g.Name, Colour: g.Colour, Count: counts[gi]})
	}
	p.entries = append(p.entries, lcanvas.KeyEntry{Label: "(in no group)", Colour: colour.Missing, Count: counts[len(groups)]})
	return p
}

// formatValue writes a continuous value compactly.
func formatValue(v float64) string {
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
