package window

import (
	"context"
	"fmt"
	"sort"
	"strings"

	"fyne.io/fyne/v2"
	"fyne.io/fyne/v2/container"
	"fyne.io/fyne/v2/dialog"
	"fyne.io/fyne/v2/theme"
	"fyne.io/fyne/v2/widget"

	"lodestone/app/paint"
	lcanvas "lodestone/canvas"
	"lodestone/compute/atlas"
	"lodestone/compute/pipeline"
)

const (
	plainChoice  = "(one colour)"
	groupsChoice = "(my groups)"
)

// paintPanel chooses what colours the map: an annotation column, a gene or
// the groups; it also finds Leiden clusters as a new column. It owns the
// key (which the map panel shows at the map's side) and the categories the
// user hid in it, and publishes each paint in the atlas state.
type paintPanel struct {
	st   *atlasState
	jobs *viewJobs
	errs errorShower
	win  fyne.Window

	choice   *widget.Select
	geneBox  *widget.SelectEntry
	clusters *widget.Button
	key      *lcanvas.Key
	box      fyne.CanvasObject

	hidden      []bool // per key entry of a categorical paint (the last: missing)
	pendingGene string // a gene to paint by once the atlas is prepared
}

func newPaintPanel(st *atlasState, jobs *viewJobs, errs errorShower, win fyne.Window) *paintPanel {
	p := &paintPanel{st: st, jobs: jobs, errs: errs, win: win}
	p.choice = widget.NewSelect(nil, p.paintByChoice)
	p.fillChoices()
	p.geneBox = widget.NewSelectEntry(nil)
	p.geneBox.OnChanged = func(s string) {
		if g := findGene(p.st.prep, s); g >= 0 {
			p.paintByGene(g)
			return
		}
		p.geneBox.SetOptions(geneMatches(p.st.prep, s, 30))
	}
	p.geneBox.OnSubmitted = func(s string) {
		if g := findGene(p.st.prep, s); g >= 0 {
			p.paintByGene(g)
		} else if m := geneMatches(p.st.prep, s, 1); len(m) == 1 {
			p.geneBox.SetText(m[0])
		}
	}
	p.clusters = widget.NewButtonWithIcon("Leiden clusters…", theme.ViewRefreshIcon(), p.askClusters)
	p.key = lcanvas.NewKey()
	p.key.OnToggle = p.toggleEntry
	p.key.OnIsolate = p.isolateEntry
	help := widget.NewLabel("The key beside the map explains the paint: tap a category to hide or show it, double-tap it to show it alone.")
	help.Wrapping = fyne.TextWrapWord
	help.Importance = widget.LowImportance
	p.box = container.NewVBox(
		widget.NewLabelWithStyle("Paint the map by", fyne.TextAlignLeading, fyne.TextStyle{Bold: true}),
		p.choice,
		widget.NewLabel("or by a gene"),
		p.geneBox,
		p.clusters,
		widget.NewSeparator(),
		help)
	p.enable()
	st.on(topicAtlas, p.attached)
	st.on(topicColumns, p.fillChoices)
	st.on(topicGroups, p.groupsChanged)
	st.on(topicPaint, p.showKey)
	return p
}

// content returns the panel's widgets.
func (p *paintPanel) content() fyne.CanvasObject { return p.box }

// keyObject returns the key, for the map's side.
func (p *paintPanel) keyObject() fyne.CanvasObject { return p.key }

// enable turns on the gene box and clustering once the atlas is prepared.
func (p *paintPanel) enable() {
	switch {
	case !p.st.ready:
		p.geneBox.Disable()
		p.geneBox.SetPlaceHolder("available once the atlas is prepared")
		p.clusters.Disable()
	case p.st.prep.Expression == nil:
		p.geneBox.Disable()
		p.geneBox.SetPlaceHolder("no expression values in this atlas")
		p.clusters.Enable()
	default:
		p.geneBox.Enable()
		p.geneBox.SetPlaceHolder("gene name or symbol…")
		p.clusters.Enable()
	}
}

// attached paints by the gene a session was painted by, now that the
// expression is there.
func (p *paintPanel) attached() {
	p.enable()
	if p.pendingGene != "" {
		if g := findGene(p.st.prep, p.pendingGene); g >= 0 {
			p.geneBox.SetText(p.pendingGene)
			p.paintByGene(g)
		}
		p.pendingGene = ""
	}
}

// fillChoices lists one colour, every annotation column and the groups.
func (p *paintPanel) fillChoices() {
	choices := []string{plainChoice}
	for _, c := range p.st.prep.Annotations {
		choices = append(choices, c.Name)
	}
	p.choice.SetOptions(append(choices, groupsChoice))
}

// paintDefault paints by the first categorical column with between 2 and
// 40 levels, or plainly.
func (p *paintPanel) paintDefault() {
	for k := range p.st.prep.Annotations {
		c := &p.st.prep.Annotations[k]
		if c.Kind == atlas.Categorical && len(c.Levels) >= 2 && len(c.Levels) <= 40 {
			p.choice.SetSelected(c.Name)
			return
		}
	}
	p.choice.SetSelected(plainChoice)
}

// paintBy paints by a choice of the list (a column's name, plainChoice or
// groupsChoice).
func (p *paintPanel) paintBy(choice string) { p.choice.SetSelected(choice) }

func (p *paintPanel) paintByChoice(s string) {
	p.hidden = nil
	switch s {
	case plainChoice:
		p.st.setPaint(paint.PlainPaint(p.st.cells()), nil)
	case groupsChoice:
		p.st.setPaint(paint.GroupsPaint(p.st.groups, p.st.cells()), nil)
	default:
		if c := p.st.column(s); c != nil {
			p.st.setPaint(paint.ForColumn(c, nil), nil)
		}
	}
}

// paintByGene paints the map by gene g's expression, read off the matrix in
// the background.
func (p *paintPanel) paintByGene(g int) {
	x := p.st.prep.Expression
	name := paint.GeneLabel(p.st.prep.GeneSymbols[g], p.st.prep.GeneIDs[g])
	p.jobs.run(func(context.Context) {
		values := paint.GeneValues(x, g)
		pt := paint.GenePaint(name, values)
		p.jobs.do(func() {
			p.hidden = nil
			p.st.setPaint(pt, values)
		})
	})
}

// showGene writes gene g into the gene box and paints by it.
func (p *paintPanel) showGene(g int) {
	p.geneBox.SetText(paint.GeneLabel(p.st.prep.GeneSymbols[g], p.st.prep.GeneIDs[g]))
	p.paintByGene(g)
}

// restore paints as a session was painted: source is "plain", "column",
// "gene" or "groups"; hidden holds the hidden categories of a column.
func (p *paintPanel) restore(source, name string, hidden []bool) {
	switch source {
	case "column":
		p.paintBy(name)
		if c := p.st.column(name); c != nil && c.Kind == atlas.Categorical && len(hidden) == len(c.Levels)+1 {
			p.hidden = hidden
			p.repaint()
		}
	case "groups":
		p.paintBy(groupsChoice)
	case "gene":
		p.pendingGene = name
		if p.st.ready {
			p.attached()
		}
	default:
		p.paintBy(plainChoice)
	}
}

// groupsChanged repaints when the groups paint the map.
func (p *paintPanel) groupsChanged() {
	if pt := p.st.paint; pt != nil && pt.Source == paint.Groups {
		p.repaint()
	}
}

// repaint recomputes a paint by a column or the groups (after the groups or
// the hidden categories changed).
func (p *paintPanel) repaint() {
	pt := p.st.paint
	if pt == nil {
		return
	}
	switch pt.Source {
	case paint.Groups:
		p.st.setPaint(paint.GroupsPaint(p.st.groups, p.st.cells()), nil)
	case paint.Column:
		if c := p.st.column(pt.Name); c != nil {
			p.st.setPaint(paint.ForColumn(c, p.hidden), nil)
		}
	}
}

// showKey explains the paint on screen in the key.
func (p *paintPanel) showKey() {
	pt := p.st.paint
	if pt == nil {
		return
	}
	if pt.Continuous {
		lo, hi := paint.FormatRange(pt.Lo, pt.Hi)
		p.key.SetRamp(pt.Name, pt.Palette[:len(pt.Palette)-1], lo, hi, pt.Missing)
		return
	}
	p.key.SetEntries(pt.Name, keyEntries(pt.Entries))
}

// keyEntries converts paint entries for the key widget.
func keyEntries(es []paint.Entry) []lcanvas.KeyEntry {
	out := make([]lcanvas.KeyEntry, len(es))
	for i, e := range es {
		out[i] = lcanvas.KeyEntry{Label: e.Label, Colour: e.Colour, Count: e.Count, Hidden: e.Hidden}
	}
	return out
}

// categoricalColumn returns the column of a categorical paint, or nil.
func (p *paintPanel) categoricalColumn() *atlas.Column {
	pt := p.st.paint
	if pt == nil || pt.Source != paint.Column || pt.Continuous {
		return nil
	}
	return p.st.column(pt.Name)
}

// entryLevel maps key entry i to its level (the last index is missing).
func entryLevel(i int, c *atlas.Column) int { return min(i, len(c.Levels)) }

// toggleEntry hides or shows category i of a categorical paint.
func (p *paintPanel) toggleEntry(i int) {
	c := p.categoricalColumn()
	if c == nil {
		return
	}
	if p.hidden == nil {
		p.hidden = make([]bool, len(c.Levels)+1)
	}
	idx := entryLevel(i, c)
	p.hidden[idx] = !p.hidden[idx]
	p.repaint()
}

// isolateEntry shows category i alone, or everything again when it is
// shown alone already.
func (p *paintPanel) isolateEntry(i int) {
	c := p.categoricalColumn()
	if c == nil {
		return
	}
	p.hidden = isolate(p.hidden, entryLevel(i, c), len(c.Levels)+1)
	p.repaint()
}

// isolate returns the hidden flags (n of them) that show only entry idx,
// or none hidden when hidden already shows idx alone.
func isolate(hidden []bool, idx, n int) []bool {
	alone := hidden != nil && !hidden[idx]
	for j, h := range hidden {
		if j != idx && !h {
			alone = false
		}
	}
	out := make([]bool, n)
	if !alone {
		for j := range out {
			out[j] = j != idx
		}
	}
	return out
}

// askClusters finds Leiden clusters at a resolution the user gives and adds
// them as an annotation column that paints the map.
func (p *paintPanel) askClusters() {
	if !p.st.ready {
		return
	}
	e := widget.NewEntry()
	e.SetText("1")
	dialog.ShowForm("Leiden clusters", "Cluster", "Cancel", []*widget.FormItem{
		widget.NewFormItem("resolution", e),
		widget.NewFormItem("", widget.NewLabel("Larger values give more, smaller clusters.")),
	}, func(ok bool) {
		if !ok {
			return
		}
		var res float64
		if _, err := fmt.Sscan(e.Text, &res); err != nil || res <= 0 || res > 100 {
			p.errs.showError("Resolution", fmt.Errorf("give a positive number, e.g. 0.5, 1 or 2 (not %q)", e.Text))
			return
		}
		p.clusterCells(res)
	}, p.win)
}

// clusterCells finds Leiden clusters in the background, adds them as a
// column and paints the map by it.
func (p *paintPanel) clusterCells(resolution float64) {
	prep := p.st.prep
	p.st.tell(fmt.Sprintf("finding clusters at resolution %g…", resolution))
	p.jobs.run(func(ctx context.Context) {
		labels, q, err := pipeline.Clusters(ctx, prep, 15, resolution, nil)
		p.jobs.do(func() {
			if err != nil {
				p.errs.showError("Could not cluster the cells", err)
				return
			}
			col := clusterColumn(labels, resolution)
			p.st.putColumn(col)
			p.paintBy(col.Name)
			p.st.tell(fmt.Sprintf("%d clusters, modularity %.3f", len(col.Levels), q))
		})
	})
}

// clusterColumn returns cluster labels as a categorical column.
func clusterColumn(labels []int32, resolution float64) atlas.Column {
	n := 0
	for _, l := range labels {
		n = max(n, int(l)+1)
	}
	col := atlas.Column{Name: fmt.Sprintf("clusters (resolution %g)", resolution), Kind: atlas.Categorical, Codes: labels}
	for k := 0; k < n; k++ {
		col.Levels = append(col.Levels, fmt.Sprintf("cluster %d", k+1))
	}
	return col
}

// geneMatches lists up to limit genes whose symbol or ID starts with s
// (case-insensitive), then those that contain it.
func geneMatches(p *pipeline.Prepared, s string, limit int) []string {
	s = strings.ToLower(strings.TrimSpace(s))
	if len(s) < 1 || p.Expression == nil {
		return nil
	}
	var first, then []string
	for j, sym := range p.GeneSymbols {
		id := p.GeneIDs[j]
		ls, li := strings.ToLower(sym), strings.ToLower(id)
		switch {
		case strings.HasPrefix(ls, s) || strings.HasPrefix(li, s):
			first = append(first, paint.GeneLabel(sym, id))
		case len(first) < limit && (strings.Contains(ls, s) || strings.Contains(li, s)):
			then = append(then, paint.GeneLabel(sym, id))
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

// findGene returns the gene a label names exactly (as paint.GeneLabel writes it,
// or a bare symbol or ID), or −1.
func findGene(p *pipeline.Prepared, s string) int {
	s = strings.TrimSpace(s)
	if s == "" || p.Expression == nil {
		return -1
	}
	for j, sym := range p.GeneSymbols {
		id := p.GeneIDs[j]
		if s == paint.GeneLabel(sym, id) || s == id || strings.EqualFold(s, sym) {
			return j
		}
	}
	return -1
}
