package window

import (
	"context"
	"fmt"
	"io"
	"math"
	"sort"
	"strings"
	"time"

	"fyne.io/fyne/v2"
	"fyne.io/fyne/v2/container"
	"fyne.io/fyne/v2/dialog"
	"fyne.io/fyne/v2/layout"
	"fyne.io/fyne/v2/theme"
	"fyne.io/fyne/v2/widget"

	"lodestone/app/tables"
	"lodestone/canvas/figure"
	"lodestone/compute/atlas"
	"lodestone/compute/markers"
	"lodestone/compute/pipeline"
	"lodestone/internal/atomicfile"
)

// markerColumns are the columns of the markers table.
var markerColumns = []string{"gene", "log₂ fold", "q (FDR)", "% in", "% rest"}

// markersState is the markers tab: which cells to compare, and the result.
type markersState struct {
	source    *widget.Select // "my groups" or a categorical column
	which     *widget.Select // a group or a level
	against   *widget.Select // "all other cells" or another group or level
	run       *widget.Button
	info      *widget.Label
	table     *widget.Table
	results   []markers.Result
	sortCol   int
	sortDesc  bool
	expr      *markers.Expression
	exprBusy  bool
	lastLabel string
	onDone    func() // called after a ranking finished (used by the self-test)
}

const (
	restChoice   = "all other cells"
	groupsSource = "my groups"
)

// markersPanel builds the markers tab.
func (v *atlasView) markersPanel() fyne.CanvasObject {
	m := &markersState{sortCol: -1}
	v.markers = m
	m.which = widget.NewSelect(nil, nil)
	m.against = widget.NewSelect(nil, nil)
	m.source = widget.NewSelect(nil, func(string) { v.fillMarkerChoices() })
	m.run = widget.NewButtonWithIcon("Rank the genes", theme.SearchIcon(), v.rankMarkers)
	m.info = widget.NewLabel("Genes that mark a group or category: Wilcoxon rank-sum test, Benjamini–Hochberg q-values.")
	m.info.Wrapping = fyne.TextWrapWord
	m.info.Importance = widget.LowImportance
	m.table = widget.NewTableWithHeaders(
		func() (int, int) { return len(m.results), len(markerColumns) },
		func() fyne.CanvasObject { return widget.NewLabel("0000000000") },
		func(id widget.TableCellID, o fyne.CanvasObject) {
			o.(*widget.Label).SetText(v.markerCell(id.Row, id.Col))
		})
	m.table.ShowHeaderColumn = false
	m.table.CreateHeader = func() fyne.CanvasObject { return widget.NewButton("", nil) }
	m.table.UpdateHeader = func(id widget.TableCellID, o fyne.CanvasObject) {
		b := o.(*widget.Button)
		if id.Col < 0 {
			return
		}
		label := markerColumns[id.Col]
		if id.Col == m.sortCol {
			label += map[bool]string{true: " ↓", false: " ↑"}[m.sortDesc]
		}
		b.SetText(label)
		col := id.Col
		b.OnTapped = func() { v.sortMarkers(col) }
	}
	for c, w := range []float32{104, 58, 64, 40, 48} {
		m.table.SetColumnWidth(c, w)
	}
	m.table.OnSelected = func(id widget.TableCellID) {
		if id.Row >= 0 && id.Row < len(m.results) {
			g := m.results[id.Row].Gene
			v.geneBox.SetText(geneLabel(v.prep.GeneSymbols[g], v.prep.GeneIDs[g]))
			v.paintByGene(g)
		}
	}
	save := widget.NewButtonWithIcon("Save table…", theme.DocumentSaveIcon(), v.askSaveMarkers)
	plot := widget.NewButtonWithIcon("Expression plot…", theme.GridIcon(), v.askExpressionPlot)
	form := container.NewVBox(
		container.New(layout.NewFormLayout(),
			widget.NewLabelWithStyle("markers of", fyne.TextAlignLeading, fyne.TextStyle{Bold: true}), m.source,
			widget.NewLabel(""), m.which,
			widget.NewLabel("against"), m.against),
		m.run, m.info)
	v.fillMarkerSources()
	return container.NewBorder(form, container.NewGridWithColumns(2, save, plot), nil, nil, m.table)
}

// fillMarkerSources lists the places groups of cells come from: the user's
// groups and every categorical column with 2–200 levels.
func (v *atlasView) fillMarkerSources() {
	m := v.markers
	opts := []string{groupsSource}
	for i := range v.prep.Annotations {
		c := &v.prep.Annotations[i]
		if c.Kind == atlas.Categorical && len(c.Levels) >= 2 && len(c.Levels) <= 200 {
			opts = append(opts, c.Name)
		}
	}
	sel := m.source.Selected
	m.source.SetOptions(opts)
	if sel == "" {
		if len(opts) > 1 {
			sel = opts[1]
		} else {
			sel = opts[0]
		}
	}
	m.source.SetSelected(sel)
}

// fillMarkerChoices lists the groups or levels of the chosen source.
func (v *atlasView) fillMarkerChoices() {
	m := v.markers
	names := v.markerNames()
	m.which.SetOptions(names)
	m.against.SetOptions(append([]string{restChoice}, names...))
	if len(names) > 0 {
		m.which.SetSelected(names[0])
	} else {
		m.which.ClearSelected()
	}
	m.against.SetSelected(restChoice)
}

// markerNames returns the names of the groups or levels of the chosen source.
func (v *atlasView) markerNames() []string {
	m := v.markers
	if m.source.Selected == groupsSource {
		var out []string
		for _, g := range v.groups {
			out = append(out, g.Name)
		}
		return out
	}
	if c := v.column(m.source.Selected); c != nil {
		return c.Levels
	}
	return nil
}

// markerMask returns the cells of a group or level of the chosen source.
func (v *atlasView) markerMask(name string) []bool {
	m := v.markers
	if m.source.Selected == groupsSource {
		for _, g := range v.groups {
			if g.Name == name {
				return g.Cells
			}
		}
		return nil
	}
	c := v.column(m.source.Selected)
	if c == nil {
		return nil
	}
	level := int32(-1)
	for i, l := range c.Levels {
		if l == name {
			level = int32(i)
		}
	}
	mask := make([]bool, len(c.Codes))
	for i, code := range c.Codes {
		mask[i] = code == level
	}
	return mask
}

// rankMarkers ranks the genes for the chosen cells in the background.
func (v *atlasView) rankMarkers() {
	m := v.markers
	if !v.ready || v.prep.Expression == nil {
		v.u.showError("No expression values", fmt.Errorf("marker genes need the expression of the atlas (counts or a wide table)"))
		return
	}
	in := v.markerMask(m.which.Selected)
	if in == nil {
		v.u.showError("Nothing to compare", fmt.Errorf("choose a group (lasso some cells and make a group) or a category first"))
		return
	}
	var ref []bool
	if m.against.Selected != restChoice {
		if ref = v.markerMask(m.against.Selected); ref == nil {
			return
		}
	}
	label := m.which.Selected + " against " + m.against.Selected
	m.run.Disable()
	m.info.SetText("ranking genes for " + label + "…")
	x := v.prep.Expression
	threads := v.prep.Settings.Threads
	expr := m.expr
	go func() {
		start := time.Now()
		ctx := context.Background()
		var err error
		if expr == nil {
			expr, err = markers.NewExpression(ctx, x)
		}
		var res []markers.Result
		if err == nil {
			res, err = expr.Rank(ctx, in, ref, markers.Options{Threads: threads})
		}
		fyne.Do(func() {
			m.run.Enable()
			if err != nil {
				m.info.SetText("")
				v.u.showError("Could not rank the genes", err)
				return
			}
			m.expr = expr
			m.results = res
			m.sortCol, m.sortDesc = -1, false
			m.lastLabel = label
			up := 0
			for _, r := range res {
				if r.Q < 0.05 && r.LogFoldChange > 0 {
					up++
				}
			}
			m.info.SetText(fmt.Sprintf("%d genes higher at q < 0.05 (%.1f s); tap one to paint by it", up, time.Since(start).Seconds()))
			m.table.Refresh()
			m.table.ScrollToTop()
			if m.onDone != nil {
				m.onDone()
			}
		})
	}()
}

// markerCell formats one cell of the markers table.
func (v *atlasView) markerCell(row, col int) string {
	r := v.markers.results[row]
	switch col {
	case 0:
		if sym := v.prep.GeneSymbols[r.Gene]; sym != "" {
			return sym
		}
		return v.prep.GeneIDs[r.Gene]
	case 1:
		return fmt.Sprintf("%.2f", r.LogFoldChange)
	case 2:
		if r.Q == 0 {
			return "< 1e-300" // below the smallest double
		}
		return fmt.Sprintf("%.1e", r.Q)
	case 3:
		return fmt.Sprintf("%.0f", 100*r.FractionIn)
	default:
		return fmt.Sprintf("%.0f", 100*r.FractionOut)
	}
}

// sortMarkers sorts the table by a column (a second tap reverses it).
func (v *atlasView) sortMarkers(col int) {
	m := v.markers
	if m.sortCol == col {
		m.sortDesc = !m.sortDesc
	} else {
		m.sortCol, m.sortDesc = col, col == 1 || col == 3
	}
	key := func(r markers.Result) float64 {
		switch col {
		case 1:
			return r.LogFoldChange
		case 2:
			return r.Q
		case 3:
			return r.FractionIn
		case 4:
			return r.FractionOut
		}
		return 0
	}
	sort.SliceStable(m.results, func(a, b int) bool {
		ra, rb := m.results[a], m.results[b]
		if col == 0 {
			la := strings.ToLower(v.prep.GeneSymbols[ra.Gene])
			lb := strings.ToLower(v.prep.GeneSymbols[rb.Gene])
			if m.sortDesc {
				return la > lb
			}
			return la < lb
		}
		ka, kb := key(ra), key(rb)
		if math.IsNaN(ka) {
			return false
		}
		if m.sortDesc {
			return ka > kb
		}
		return ka < kb
	})
	m.table.Refresh()
}

func (v *atlasView) askSaveMarkers() {
	m := v.markers
	if len(m.results) == 0 {
		v.u.showError("No markers yet", fmt.Errorf("rank the genes first"))
		return
	}
	res := append([]markers.Result(nil), m.results...)
	ids, syms := v.prep.GeneIDs, v.prep.GeneSymbols
	name := "markers-" + strings.NewReplacer(" ", "-", "/", "-").Replace(m.lastLabel) + ".csv"
	v.saveTable("Save the markers table", name, func(w io.Writer) error { return tables.WriteMarkers(w, res, ids, syms) })
}

// askExpressionPlot draws the expression-by-group plot of the top markers
// (up to 12 genes higher in the group) across the categories of the
// chosen source, and saves it as PNG or SVG.
func (v *atlasView) askExpressionPlot() {
	m := v.markers
	if len(m.results) == 0 {
		v.u.showError("No markers yet", fmt.Errorf("rank the genes first; the plot shows the top ones across the categories"))
		return
	}
	var genes []int
	byZ := append([]markers.Result(nil), m.results...)
	sort.SliceStable(byZ, func(a, b int) bool { return byZ[a].Z > byZ[b].Z })
	for _, r := range byZ {
		if len(genes) == 12 {
			break
		}
		if r.LogFoldChange > 0 {
			genes = append(genes, r.Gene)
		}
	}
	names := v.markerNames()
	codes := make([]int32, v.prep.Cells())
	for i := range codes {
		codes[i] = -1
	}
	for k, n := range names {
		for i, in := range v.markerMask(n) {
			if in && codes[i] < 0 {
				codes[i] = int32(k)
			}
		}
	}
	geneNames := make([]string, len(v.prep.GeneSymbols))
	for j := range geneNames {
		geneNames[j] = geneLabel(v.prep.GeneSymbols[j], v.prep.GeneIDs[j])
	}
	x := v.prep.Expression
	go func() {
		path, err := v.u.chooser.SaveFile("Save the expression plot", "expression-by-group.png", "PNG or SVG image", "png", "svg")
		if err == nil {
			var t *figure.ExpressionTable
			t, err = figure.Expression(context.Background(), x, genes, geneNames, codes, names)
			if err == nil {
				size := figure.Size{WidthPx: 200 + 70*len(genes), HeightPx: 260 + 36*len(names), DPI: 150}
				err = atomicfile.Write(path, func(w io.Writer) error {
					if strings.EqualFold(strings.TrimPrefix(pathExt(path), "."), "svg") {
						return figure.WriteExpressionSVG(w, t, size)
					}
					return figure.WriteExpressionPNG(w, t, size)
				})
			}
		}
		fyne.Do(func() {
			switch {
			case err == errChoiceCancelled:
			case err != nil:
				v.u.showError("Could not draw the expression plot", err)
			default:
				v.note("saved " + path)
			}
		})
	}()
}

func pathExt(p string) string {
	if i := strings.LastIndex(p, "."); i >= 0 && !strings.ContainsAny(p[i:], "/\\") {
		return p[i:]
	}
	return ""
}

// askClusters finds Leiden clusters at a resolution the user gives and adds
// them as an annotation column that paints the map.
func (v *atlasView) askClusters() {
	if !v.ready {
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
			v.u.showError("Resolution", fmt.Errorf("give a positive number, e.g. 0.5, 1 or 2"))
			return
		}
		v.clusterCells(res)
	}, v.u.win)
}

func (v *atlasView) clusterCells(resolution float64) {
	p := v.prep
	v.note(fmt.Sprintf("finding clusters at resolution %g…", resolution))
	go func() {
		labels, q, err := pipeline.Clusters(context.Background(), p, 15, resolution, nil)
		fyne.Do(func() {
			if err != nil {
				v.u.showError("Could not cluster the cells", err)
				return
			}
			n := 0
			for _, l := range labels {
				n = max(n, int(l)+1)
			}
			col := atlas.Column{Name: fmt.Sprintf("clusters (resolution %g)", resolution), Kind: atlas.Categorical, Codes: labels}
			for k := 0; k < n; k++ {
				col.Levels = append(col.Levels, fmt.Sprintf("cluster %d", k+1))
			}
			v.addColumn(col)
			v.note(fmt.Sprintf("%d clusters, modularity %.3f", n, q))
		})
	}()
}

// addColumn adds (or replaces) an annotation column and paints by it.
func (v *atlasView) addColumn(col atlas.Column) {
	replaced := false
	for i := range v.prep.Annotations {
		if v.prep.Annotations[i].Name == col.Name {
			v.prep.Annotations[i] = col
			replaced = true
		}
	}
	if !replaced {
		v.prep.Annotations = append(v.prep.Annotations, col)
		opts := append([]string(nil), v.paintSel.Options[:len(v.paintSel.Options)-1]...)
		opts = append(opts, col.Name, groupsChoice)
		v.paintSel.SetOptions(opts)
	}
	v.paintSel.SetSelected(col.Name)
	v.fillMarkerSources()
}
