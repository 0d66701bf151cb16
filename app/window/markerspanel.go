package window

import (
	"bytes"
	"context"
	"fmt"
	"io"
	"math"
	"slices"
	"sort"
	"strings"
	"time"

	"fyne.io/fyne/v2"
	"fyne.io/fyne/v2/container"
	"fyne.io/fyne/v2/layout"
	"fyne.io/fyne/v2/theme"
	"fyne.io/fyne/v2/widget"

	"lodestone/app/paint"
	"lodestone/app/tables"
	"lodestone/canvas/figure"
	"lodestone/compute/atlas"
	"lodestone/compute/markers"
	"lodestone/compute/pipeline"
	"lodestone/compute/sparse"
)

// markerColumns are the columns of the markers table.
var markerColumns = []string{"gene", "log₂ fold", "q (FDR)", "% in", "% rest"}

const (
	restChoice      = "all other cells"
	groupsSource    = "my groups"
	selectionSource = "the selection"
)

// markersPanel ranks the genes that mark a set of cells (the selection, a
// group or a category) against the rest or another set, shows them in a
// sortable table, saves it, and draws the expression of the top markers
// across the categories. It owns the comparison's choices, the results and
// the expression matrix held gene by gene.
type markersPanel struct {
	st       *atlasState
	jobs     *viewJobs
	errs     errorShower
	files    *saver
	showGene func(g int) // paints the map by a gene
	plots    plotOpener

	source  *widget.Select // the selection, "my groups" or a categorical column
	which   *widget.Select // a group or a level
	against *widget.Select // "all other cells" or another group or level
	run     *widget.Button
	info    *widget.Label
	table   *widget.Table
	saveBtn *widget.Button
	plotBtn *widget.Button
	box     fyne.CanvasObject

	results    []markers.Result
	compared   comparison // what results compare
	sortCol    int
	sortDesc   bool
	expr       *markers.Expression
	exprOf     *sparse.View // the matrix expr was made from
	ranking    bool
	groupCount int // groups seen, to notice a new one
}

// comparison is what a ranking compared: the cells of which (from source)
// against the rest or against.
type comparison struct {
	source, which, against string
}

func (c comparison) label() string { return c.which + " against " + c.against }

// plotOpener shows an expression plot in a window of its own: png is t
// drawn at size.
type plotOpener interface {
	openPlot(title, name string, t *figure.ExpressionTable, size figure.Size, png []byte)
}

func newMarkersPanel(st *atlasState, jobs *viewJobs, errs errorShower, files *saver, showGene func(int), plots plotOpener) *markersPanel {
	m := &markersPanel{st: st, jobs: jobs, errs: errs, files: files, showGene: showGene, plots: plots, sortCol: -1}
	m.which = widget.NewSelect(nil, nil)
	m.against = widget.NewSelect(nil, nil)
	m.source = widget.NewSelect(nil, func(string) { m.fillChoices("") })
	m.run = widget.NewButtonWithIcon("Rank the genes", theme.SearchIcon(), m.rank)
	m.info = widget.NewLabel("Genes that mark a group or category: Wilcoxon rank-sum test, Benjamini–Hochberg q-values.")
	m.info.Wrapping = fyne.TextWrapWord
	m.info.Importance = widget.LowImportance
	m.table = widget.NewTableWithHeaders(
		func() (int, int) { return len(m.results), len(markerColumns) },
		func() fyne.CanvasObject { return widget.NewLabel("0000000000") },
		func(id widget.TableCellID, o fyne.CanvasObject) {
			o.(*widget.Label).SetText(m.cell(id.Row, id.Col))
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
		b.OnTapped = func() { m.sortBy(col) }
	}
	for c, w := range []float32{104, 58, 64, 40, 48} {
		m.table.SetColumnWidth(c, w)
	}
	m.table.OnSelected = func(id widget.TableCellID) {
		if id.Row >= 0 && id.Row < len(m.results) {
			m.showGene(m.results[id.Row].Gene)
		}
	}
	m.saveBtn = widget.NewButtonWithIcon("Save table…", theme.DocumentSaveIcon(), m.askSave)
	m.plotBtn = widget.NewButtonWithIcon("Expression plot", theme.GridIcon(), m.plot)
	form := container.NewVBox(
		container.New(layout.NewFormLayout(),
			widget.NewLabelWithStyle("markers of", fyne.TextAlignLeading, fyne.TextStyle{Bold: true}), m.source,
			widget.NewLabel(""), m.which,
			widget.NewLabel("against"), m.against),
		m.run, m.info)
	m.box = container.NewBorder(form, container.NewGridWithColumns(2, m.saveBtn, m.plotBtn), nil, nil, m.table)
	m.fillSources()
	m.pickDefault()
	st.on(topicColumns, func() { m.fillSources() })
	st.on(topicSelection, m.selectionChanged)
	st.on(topicGroups, m.groupsChanged)
	return m
}

// content returns the panel's widgets.
func (m *markersPanel) content() fyne.CanvasObject { return m.box }

// fillSources lists the places sets of cells come from: the selection (when
// there is one), the user's groups and every categorical column with 2–200
// levels. The source chosen stays chosen while it is listed.
func (m *markersPanel) fillSources() {
	var opts []string
	if m.st.selected > 0 {
		opts = append(opts, selectionSource)
	}
	opts = append(opts, groupsSource)
	for i := range m.st.prep.Annotations {
		c := &m.st.prep.Annotations[i]
		if c.Kind == atlas.Categorical && len(c.Levels) >= 2 && len(c.Levels) <= 200 {
			opts = append(opts, c.Name)
		}
	}
	m.source.SetOptions(opts)
	if sel := m.source.Selected; sel != "" && !contains(opts, sel) {
		m.source.ClearSelected()
	}
}

func contains(list []string, s string) bool {
	for _, x := range list {
		if x == s {
			return true
		}
	}
	return false
}

// choose compares which of source against the rest.
func (m *markersPanel) choose(source, which string) {
	m.source.Selected = source // without the callback: fillChoices follows
	m.source.Refresh()
	m.fillChoices(which)
}

// pickDefault chooses what the markers are of: the selection when cells are
// selected (the group of exactly those cells when there is one), else the
// newest group, else the first categorical column.
func (m *markersPanel) pickDefault() {
	m.fillSources()
	switch {
	case m.st.selected > 0:
		if g := m.st.groupWithCells(m.st.selection); g != nil {
			m.choose(groupsSource, g.Name)
		} else {
			m.choose(selectionSource, "")
		}
	case len(m.st.groups) > 0:
		m.choose(groupsSource, m.st.groups[len(m.st.groups)-1].Name)
	case len(m.source.Options) > 1:
		m.choose(m.source.Options[1], "")
	default:
		m.choose(groupsSource, "")
	}
}

// selectionChanged makes the new selection (or, when it was cleared, the
// next best thing) what the markers are of.
func (m *markersPanel) selectionChanged() {
	if m.st.selected > 0 || m.source.Selected == selectionSource {
		m.pickDefault()
		return
	}
	m.fillSources()
}

// groupsChanged makes a new group what the markers are of, and follows
// renames and deletions.
func (m *markersPanel) groupsChanged() {
	n := len(m.st.groups)
	grew := n > m.groupCount
	m.groupCount = n
	if grew {
		m.pickDefault()
		return
	}
	if m.source.Selected == groupsSource {
		m.fillChoices(m.which.Selected)
	}
}

// fillChoices lists the sets of the chosen source, choosing which when it
// is one of them (else the first).
func (m *markersPanel) fillChoices(which string) {
	names := m.names(m.source.Selected)
	m.which.SetOptions(names)
	against := []string{restChoice}
	if m.source.Selected != selectionSource {
		against = append(against, names...)
	}
	m.against.SetOptions(against)
	switch {
	case contains(names, which):
		m.which.SetSelected(which)
	case len(names) > 0:
		m.which.SetSelected(names[0])
	default:
		m.which.ClearSelected()
	}
	m.against.SetSelected(restChoice)
}

// names returns the names of the sets of cells of a source.
func (m *markersPanel) names(source string) []string {
	switch source {
	case selectionSource:
		return []string{fmt.Sprintf("%s selected cells", count(m.st.selected))}
	case groupsSource:
		var out []string
		for _, g := range m.st.groups {
			out = append(out, g.Name)
		}
		return out
	}
	if c := m.st.column(source); c != nil {
		return c.Levels
	}
	return nil
}

// mask returns the cells of set name of a source, or nil.
func (m *markersPanel) mask(source, name string) []bool {
	switch source {
	case selectionSource:
		if m.st.selected == 0 {
			return nil
		}
		return m.st.selection
	case groupsSource:
		for _, g := range m.st.groups {
			if g.Name == name {
				return g.Cells
			}
		}
		return nil
	}
	if c := m.st.column(source); c != nil {
		return levelMask(c, name)
	}
	return nil
}

// levelMask returns the cells whose value in column c is level name.
func levelMask(c *atlas.Column, name string) []bool {
	level := int32(-1)
	for i, l := range c.Levels {
		if l == name {
			level = int32(i)
		}
	}
	if level < 0 {
		return nil
	}
	mask := make([]bool, len(c.Codes))
	for i, code := range c.Codes {
		mask[i] = code == level
	}
	return mask
}

// rank ranks the genes for the chosen cells in the background.
func (m *markersPanel) rank() {
	if !m.st.ready || m.st.prep.Expression == nil {
		m.errs.showError("No expression values", fmt.Errorf("marker genes need the expression of the atlas (counts or a wide table)"))
		return
	}
	if m.ranking {
		return
	}
	c := comparison{source: m.source.Selected, which: m.which.Selected, against: m.against.Selected}
	in := m.mask(c.source, c.which)
	if in == nil {
		m.errs.showError("Nothing to compare", fmt.Errorf("choose a group (lasso some cells and make a group), the selection or a category first"))
		return
	}
	var ref []bool
	if c.against != restChoice {
		if ref = m.mask(c.source, c.against); ref == nil {
			m.errs.showError("Nothing to compare against", fmt.Errorf("%q holds no cells", c.against))
			return
		}
	}
	m.ranking = true
	m.run.Disable()
	m.info.SetText("ranking genes for " + c.label() + "…")
	x := m.st.prep.Expression
	threads := m.st.prep.Settings.Threads
	expr := m.expr
	if m.exprOf != x {
		expr = nil
	}
	m.jobs.run(func(ctx context.Context) {
		start := time.Now()
		var err error
		if expr == nil {
			expr, err = markers.NewExpression(ctx, x)
		}
		var res []markers.Result
		if err == nil {
			res, err = expr.Rank(ctx, in, ref, markers.Options{Threads: threads})
		}
		m.jobs.do(func() {
			m.ranking = false
			m.run.Enable()
			if err != nil {
				m.info.SetText("")
				m.errs.showError("Could not rank the genes", err)
				return
			}
			m.expr, m.exprOf = expr, x
			m.showResults(c, res, time.Since(start))
		})
	})
}

// showResults fills the table with a ranking.
func (m *markersPanel) showResults(c comparison, res []markers.Result, took time.Duration) {
	m.results, m.compared = res, c
	m.sortCol, m.sortDesc = -1, false
	up := 0
	for _, r := range res {
		if r.Q < 0.05 && r.LogFoldChange > 0 {
			up++
		}
	}
	m.info.SetText(fmt.Sprintf("%s: %d genes higher at q < 0.05 (%.1f s); tap one to paint by it", c.label(), up, took.Seconds()))
	m.table.Refresh()
	m.table.ScrollToTop()
}

// cell formats one cell of the markers table.
func (m *markersPanel) cell(row, col int) string {
	r := m.results[row]
	switch col {
	case 0:
		return geneName(m.st.prep, r.Gene)
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

// sortBy sorts the table by a column (a second tap reverses it).
func (m *markersPanel) sortBy(col int) {
	if m.sortCol == col {
		m.sortDesc = !m.sortDesc
	} else {
		m.sortCol, m.sortDesc = col, col == 1 || col == 3
	}
	sortResults(m.results, col, m.sortDesc, m.st.prep.GeneSymbols)
	m.table.Refresh()
}

// sortResults sorts marker results by a column of the table: 0 the gene's
// symbol, 1 the fold change, 2 q, 3 and 4 the shares expressing; NaN last.
func sortResults(res []markers.Result, col int, desc bool, symbols []string) {
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
	sort.SliceStable(res, func(a, b int) bool {
		ra, rb := res[a], res[b]
		if col == 0 {
			la, lb := strings.ToLower(symbols[ra.Gene]), strings.ToLower(symbols[rb.Gene])
			if desc {
				return la > lb
			}
			return la < lb
		}
		ka, kb := key(ra), key(rb)
		switch {
		case math.IsNaN(ka):
			return false
		case math.IsNaN(kb):
			return true
		case desc:
			return ka > kb
		}
		return ka < kb
	})
}

// geneName names gene g as the table and the plot do (paint.GeneName).
func geneName(p *pipeline.Prepared, g int) string {
	return paint.GeneName(p.GeneSymbols[g], p.GeneIDs[g])
}

// fileStem turns a comparison's label into part of a file name.
func fileStem(s string) string {
	return strings.NewReplacer(" ", "-", "/", "-", "\\", "-").Replace(s)
}

func (m *markersPanel) askSave() {
	if len(m.results) == 0 {
		m.errs.showError("No markers yet", fmt.Errorf("rank the genes first"))
		return
	}
	res := append([]markers.Result(nil), m.results...)
	ids, syms := m.st.prep.GeneIDs, m.st.prep.GeneSymbols
	m.files.save("Save the markers table", "markers-"+fileStem(m.compared.label())+".csv",
		func(w io.Writer) error { return tables.WriteMarkers(w, res, ids, syms) })
}

// plotRows returns the rows of the expression plot for the source of a
// comparison: its sets of cells by name and each cell's row (−1: none). A
// cell in several groups counts in the first. For the selection the rows
// are the selected and the other cells.
func (m *markersPanel) plotRows(source string) (names []string, codes []int32) {
	codes = make([]int32, m.st.cells())
	for i := range codes {
		codes[i] = -1
	}
	if source == selectionSource {
		names = []string{"selected cells", "other cells"}
		for i, in := range m.st.selection {
			codes[i] = 1
			if in {
				codes[i] = 0
			}
		}
		return names, codes
	}
	names = m.names(source)
	for k, n := range names {
		for i, in := range m.mask(source, n) {
			if in && codes[i] < 0 {
				codes[i] = int32(k)
			}
		}
	}
	return names, codes
}

// plot draws the expression of the top markers across the sets of cells of
// the ranking's source in the background, and shows it in a window of its
// own, from which it can be saved.
func (m *markersPanel) plot() {
	if len(m.results) == 0 {
		m.errs.showError("No markers yet", fmt.Errorf("rank the genes first; the plot shows the top ones across the categories"))
		return
	}
	if !slices.ContainsFunc(m.results, func(r markers.Result) bool { return r.LogFoldChange > 0 }) {
		m.errs.showError("No markers to plot", fmt.Errorf("no gene is higher in %s than in %s", m.compared.which, m.compared.against))
		return
	}
	names, codes := m.plotRows(m.compared.source)
	x, res := m.st.prep.Expression, m.results
	ids, syms := m.st.prep.GeneIDs, m.st.prep.GeneSymbols
	c := m.compared
	m.jobs.run(func(ctx context.Context) {
		var png bytes.Buffer
		t, size, err := paint.ExpressionPlot(ctx, x, res, paint.TopMarkers, ids, syms, codes, names)
		if err == nil {
			err = figure.WriteExpressionPNG(&png, t, size)
		}
		m.jobs.do(func() {
			if err != nil {
				m.errs.showError("Could not draw the expression plot", err)
				return
			}
			m.plots.openPlot("Top markers of "+c.label(), "expression-"+fileStem(c.which), t, size, png.Bytes())
		})
	})
}
