package window

import (
	"sort"

	"lodestone/app/paint"
	lcanvas "lodestone/canvas"
	"strings"

	"fyne.io/fyne/v2"
	"fyne.io/fyne/v2/container"
	"fyne.io/fyne/v2/widget"

	"lodestone/compute/atlas"
)

const (
	plainChoice  = "(one colour)"
	groupsChoice = "(my groups)"
)

// paintPanel holds the choice of paint and the key.
func (v *atlasView) paintPanel() fyne.CanvasObject {
	choices := []string{plainChoice}
	for _, c := range v.prep.Annotations {
		choices = append(choices, c.Name)
	}
	choices = append(choices, groupsChoice)
	v.paintSel = widget.NewSelect(choices, func(s string) { v.paintByChoice(s) })

	v.geneBox = widget.NewSelectEntry(nil)
	v.geneBox.SetPlaceHolder("gene name or symbol…")
	v.geneBox.OnChanged = func(s string) {
		if g := v.findGene(s); g >= 0 {
			v.paintByGene(g)
			return
		}
		v.geneBox.SetOptions(v.geneMatches(s, 30))
	}
	v.geneBox.OnSubmitted = func(s string) {
		if g := v.findGene(s); g >= 0 {
			v.paintByGene(g)
		} else if m := v.geneMatches(s, 1); len(m) == 1 {
			v.geneBox.SetText(m[0])
		}
	}
	if v.prep.Expression == nil {
		v.geneBox.Disable()
		if v.ready {
			v.geneBox.SetPlaceHolder("no expression values in this atlas")
		} else {
			v.geneBox.SetPlaceHolder("available once the atlas is prepared")
		}
	}
	top := container.NewVBox(
		widget.NewLabelWithStyle("Paint the map by", fyne.TextAlignLeading, fyne.TextStyle{Bold: true}),
		v.paintSel,
		widget.NewLabel("or by a gene"),
		v.geneBox,
		v.clustersBtn,
		widget.NewSeparator())
	return container.NewBorder(top, nil, nil, nil, v.key)
}

// defaultPaint paints by the first categorical column with between 2 and
// 40 levels, or plainly.
func (v *atlasView) defaultPaint() *paint.Paint {
	for k := range v.prep.Annotations {
		c := &v.prep.Annotations[k]
		if c.Kind == atlas.Categorical && len(c.Levels) >= 2 && len(c.Levels) <= 40 {
			v.paintSel.SetSelected(c.Name)
			return v.painted
		}
	}
	v.paintSel.SetSelected(plainChoice)
	return v.painted
}

func (v *atlasView) paintByChoice(s string) {
	v.hidden = nil
	switch s {
	case plainChoice:
		v.setPaint(paint.PlainPaint(v.prep.Cells()))
	case groupsChoice:
		v.setPaint(paint.GroupsPaint(v.groups, v.prep.Cells()))
	default:
		for k := range v.prep.Annotations {
			if c := &v.prep.Annotations[k]; c.Name == s {
				v.setPaint(paint.ForColumn(c, nil))
			}
		}
	}
}

// setPaint shows p on the map and in the key.
func (v *atlasView) setPaint(p *paint.Paint) {
	if p == nil {
		return
	}
	v.painted = p
	v.mapView.SetPaint(p.Colours, p.Palette)
	if p.Continuous {
		lo, hi := paint.FormatRange(p.Lo, p.Hi)
		v.key.SetRamp(p.Name, p.Palette[:len(p.Palette)-1], lo, hi, p.Missing)
		return
	}
	v.key.SetEntries(p.Name, keyEntries(p.Entries))
}

// keyEntries converts paint entries for the key widget.
func keyEntries(es []paint.Entry) []lcanvas.KeyEntry {
	out := make([]lcanvas.KeyEntry, len(es))
	for i, e := range es {
		out[i] = lcanvas.KeyEntry{Label: e.Label, Colour: e.Colour, Count: e.Count, Hidden: e.Hidden}
	}
	return out
}

// repaint recomputes the current paint (after groups or hidden categories
// changed).
func (v *atlasView) repaint() {
	if v.painted == nil {
		return
	}
	switch v.painted.Source {
	case paint.Groups:
		v.setPaint(paint.GroupsPaint(v.groups, v.prep.Cells()))
	case paint.Column:
		if c := v.column(v.painted.Name); c != nil {
			v.setPaint(paint.ForColumn(c, v.hidden))
		}
	}
}

func (v *atlasView) column(name string) *atlas.Column {
	for k := range v.prep.Annotations {
		if v.prep.Annotations[k].Name == name {
			return &v.prep.Annotations[k]
		}
	}
	return nil
}

// toggleEntry hides or shows category i of a categorical paint.
func (v *atlasView) toggleEntry(i int) {
	c := v.categoricalColumn()
	if c == nil {
		return
	}
	if v.hidden == nil {
		v.hidden = make([]bool, len(c.Levels)+1)
	}
	idx := v.entryLevel(i, c)
	v.hidden[idx] = !v.hidden[idx]
	v.repaint()
}

// isolateEntry shows category i alone, or everything again when it is
// shown alone already.
func (v *atlasView) isolateEntry(i int) {
	c := v.categoricalColumn()
	if c == nil {
		return
	}
	idx := v.entryLevel(i, c)
	alone := v.hidden != nil && !v.hidden[idx]
	if alone {
		for j, h := range v.hidden {
			if j != idx && !h {
				alone = false
			}
		}
	}
	v.hidden = make([]bool, len(c.Levels)+1)
	if !alone {
		for j := range v.hidden {
			v.hidden[j] = j != idx
		}
	}
	v.repaint()
}

// entryLevel maps key entry i to its level (the last index is missing).
func (v *atlasView) entryLevel(i int, c *atlas.Column) int {
	if i >= len(c.Levels) {
		return len(c.Levels)
	}
	return i
}

// categoricalColumn returns the column of a categorical paint, or nil.
func (v *atlasView) categoricalColumn() *atlas.Column {
	if v.painted == nil || v.painted.Source != paint.Column || v.painted.Continuous {
		return nil
	}
	return v.column(v.painted.Name)
}

// geneMatches lists up to limit genes whose symbol or ID starts with s
// (case-insensitive), then those that contain it.
func (v *atlasView) geneMatches(s string, limit int) []string {
	s = strings.ToLower(strings.TrimSpace(s))
	if len(s) < 1 || v.prep.Expression == nil {
		return nil
	}
	var first, then []string
	for j, sym := range v.prep.GeneSymbols {
		id := v.prep.GeneIDs[j]
		ls, li := strings.ToLower(sym), strings.ToLower(id)
		switch {
		case strings.HasPrefix(ls, s) || strings.HasPrefix(li, s):
			first = append(first, geneLabel(sym, id))
		case len(first) < limit && (strings.Contains(ls, s) || strings.Contains(li, s)):
			then = append(then, geneLabel(sym, id))
		}
	}
	sort.Strings(first)
	sort.Strings(then)
	out := append(first, then...)
	if len(out) > limit {
		out = out[:limit]
	}
	return out
}

func geneLabel(sym, id string) string {
	if sym == id || sym == "" {
		return id
	}
	return sym + " (" + id + ")"
}

// findGene returns the gene a label names exactly (as geneLabel writes it,
// or a bare symbol or ID), or −1.
func (v *atlasView) findGene(s string) int {
	s = strings.TrimSpace(s)
	if s == "" || v.prep.Expression == nil {
		return -1
	}
	for j, sym := range v.prep.GeneSymbols {
		id := v.prep.GeneIDs[j]
		if s == geneLabel(sym, id) || s == id || strings.EqualFold(s, sym) {
			return j
		}
	}
	return -1
}

// paintByGene paints the map by gene g's expression, read off the matrix in
// the background.
func (v *atlasView) paintByGene(g int) {
	x := v.prep.Expression
	name := geneLabel(v.prep.GeneSymbols[g], v.prep.GeneIDs[g])
	go func() {
		values := paint.GeneValues(x, g)
		p := paint.GenePaint(name, values)
		fyne.Do(func() {
			v.paintedGene = values
			v.hidden = nil
			v.setPaint(p)
		})
	}()
}

// paintValue returns cell i's value of the gene painting the map.
func (v *atlasView) paintValue(i int) float64 {
	if i < len(v.paintedGene) {
		return v.paintedGene[i]
	}
	return 0
}
