package window

import (
	"fmt"
	"image/color"
	"io"
	"path/filepath"
	"strconv"
	"strings"

	"fyne.io/fyne/v2"
	"fyne.io/fyne/v2/container"
	"fyne.io/fyne/v2/dialog"
	"fyne.io/fyne/v2/widget"

	"lodestone/app/paint"
	"lodestone/app/tables"
	lcanvas "lodestone/canvas"
	"lodestone/canvas/figure"
	"lodestone/compute/atlas"
)

// presetLabels names the figure presets for people.
var presetLabels = map[string]string{
	"slide16x9": "slide 16:9 (1920 × 1080)",
	"slide4x3":  "slide 4:3 (1440 × 1080)",
	"column1":   "journal, one column (89 mm)",
	"column2":   "journal, two columns (183 mm)",
}

const customSize = "custom size (pixels)"

// exporter writes what the map shows: the figure (PNG or SVG), the map's
// table (coordinates, groups and paint per cell) and the selected cells'
// IDs. It reads the atlas state and the map widget's view and style.
type exporter struct {
	st    *atlasState
	view  *lcanvas.Map
	files *saver
	errs  errorShower
	win   fyne.Window
}

// figureChoices are what the export dialog asks.
type figureChoices struct {
	format        string // "png" or "svg"
	preset        string // a figure preset name, or customSize
	dpi           float64
	width, height int
	title         string
	key, labels   bool
	transparent   bool
}

// askExportFigure shows the export dialog, then asks where to save.
func (e *exporter) askFigure() {
	if len(e.st.layout) == 0 || e.st.paint == nil {
		e.errs.showError("Nothing to export", fmt.Errorf("the map has not been drawn yet"))
		return
	}
	var presets, labels []string
	for _, p := range figure.Presets() {
		presets = append(presets, p)
		labels = append(labels, presetLabels[p])
	}
	labels = append(labels, customSize)
	format := widget.NewRadioGroup([]string{"PNG", "SVG"}, nil)
	format.Horizontal = true
	format.SetSelected("PNG")
	size := widget.NewSelect(labels, nil)
	size.SetSelected(labels[0])
	dpi := widget.NewSelect([]string{"150", "300", "600"}, nil)
	dpi.SetSelected("300")
	width, height := widget.NewEntry(), widget.NewEntry()
	width.SetText("1600")
	height.SetText("1200")
	title := widget.NewEntry()
	title.SetPlaceHolder("(none)")
	withKey := widget.NewCheck("key beside the map", nil)
	withKey.SetChecked(true)
	withLabels := widget.NewCheck("category names on the map", nil)
	transparent := widget.NewCheck("transparent background", nil)
	items := []*widget.FormItem{
		widget.NewFormItem("format", format),
		widget.NewFormItem("size", size),
		widget.NewFormItem("resolution (dpi)", dpi),
		widget.NewFormItem("custom width × height", container.NewGridWithColumns(2, width, height)),
		widget.NewFormItem("title", title),
		widget.NewFormItem("", withKey),
		widget.NewFormItem("", withLabels),
		widget.NewFormItem("", transparent),
	}
	dialog.ShowForm("Export the map as a figure", "Export…", "Cancel", items, func(ok bool) {
		if !ok {
			return
		}
		c := figureChoices{format: strings.ToLower(format.Selected), title: title.Text,
			key: withKey.Checked, labels: withLabels.Checked, transparent: transparent.Checked}
		c.dpi, _ = strconv.ParseFloat(dpi.Selected, 64)
		c.preset = customSize
		for i, l := range labels[:len(presets)] {
			if l == size.Selected {
				c.preset = presets[i]
			}
		}
		var err1, err2 error
		c.width, err1 = strconv.Atoi(strings.TrimSpace(width.Text))
		c.height, err2 = strconv.Atoi(strings.TrimSpace(height.Text))
		if c.preset == customSize && (err1 != nil || err2 != nil || c.width < 16 || c.height < 16 || c.width > 20000 || c.height > 20000) {
			e.errs.showError("Custom size", fmt.Errorf("give a width and a height from 16 to 20000 pixels"))
			return
		}
		e.saveFigureAs(c)
	}, e.win)
}

// saveFigureAs asks where to save the figure, then writes it.
func (e *exporter) saveFigureAs(c figureChoices) {
	name := stem(e.st.src)
	if p := e.st.paint; p != nil && p.Source != paint.Plain {
		name += "-" + strings.ReplaceAll(p.Name, " ", "-")
	}
	e.files.ask("Export the figure", name+"."+c.format, func(path string) { e.writeFigure(path, c) })
}

// stem is the start of the names of files suggested for an atlas.
func stem(src source) string {
	if src.example {
		return "example"
	}
	return strings.TrimSuffix(src.name(), filepath.Ext(src.name()))
}

// mapFigure describes what the map shows as a figure: the layout, the
// paint (without the on-screen dimming of unselected cells), the drawing
// order and, when the user pinned it, the view.
func (e *exporter) mapFigure(c figureChoices) *figure.Figure {
	p := e.st.paint
	f := &figure.Figure{
		Layout: e.st.layout, Colours: p.Colours, Palette: p.Palette, Order: e.view.Order(),
		Title: c.title, Background: color.NRGBA{R: 0xff, G: 0xff, B: 0xff, A: 0xff},
	}
	f.ScreenRadius, f.Opacity = e.view.PointStyle()
	view := e.view.View()
	f.ScreenWidth = view.Width
	if e.view.Pinned() {
		f.View = &view
	}
	if c.transparent {
		f.Background = color.NRGBA{}
	}
	if c.key {
		f.Key = p.Key()
	}
	return f
}

// writeFigure renders and writes the figure in the background.
func (e *exporter) writeFigure(path string, c figureChoices) {
	f := e.mapFigure(c)
	p := e.st.paint
	size := figure.Size{WidthPx: c.width, HeightPx: c.height, DPI: c.dpi}
	if c.preset != customSize {
		var err error
		if size, err = figure.Preset(c.preset, c.dpi); err != nil {
			e.errs.showError("Could not export the figure", err)
			return
		}
	}
	e.files.write(path, func(w io.Writer) error {
		if c.labels {
			l, err := p.Labels(e.files.jobs.ctx, f.Layout)
			if err != nil {
				return err
			}
			f.Labels = l
		}
		if c.format == "svg" {
			return figure.WriteSVG(w, f, size, figure.DefaultVectorLimit)
		}
		return figure.WritePNG(w, f, size)
	})
}

// askTable saves the map's table: per cell its coordinates, the groups
// it belongs to and the value of the current paint.
func (e *exporter) askTable() {
	if len(e.st.layout) == 0 {
		e.errs.showError("Nothing to export", fmt.Errorf("the map has not been drawn yet"))
		return
	}
	t := tables.Cells{IDs: e.st.prep.CellIDs, Layout: e.st.layout}
	for _, g := range e.st.groups {
		t.Groups = append(t.Groups, tables.Group{Name: g.Name, Cells: g.Cells})
	}
	if p := e.st.paint; p != nil && p.Source != paint.Plain {
		t.PaintName = p.Name
		t.PaintValue = paintLabel(p, e.st.geneValues, e.st.column(p.Name))
	}
	e.files.save("Export the map as a table", stem(e.st.src)+"-cells.csv", t.Write)
}

// askSelection saves the IDs of the selected cells, one per line.
func (e *exporter) askSelection() {
	if e.st.selected == 0 {
		e.errs.showError("Nothing selected", fmt.Errorf("draw a lasso around some cells first"))
		return
	}
	ids, sel := e.st.prep.CellIDs, e.st.selection
	e.files.save("Export the selected cells' IDs", "selected-cells.txt", func(w io.Writer) error {
		return tables.WriteIDs(w, ids, sel)
	})
}

// paintLabel returns a function that writes cell i's value of paint p as
// text: the gene's value, the group's or the column's label.
func paintLabel(p *paint.Paint, geneValues []float64, c *atlas.Column) func(i int) string {
	return func(i int) string {
		switch {
		case p.Source == paint.Gene:
			if i < len(geneValues) {
				return strconv.FormatFloat(geneValues[i], 'g', 6, 64)
			}
			return ""
		case p.Source == paint.Groups:
			if k := int(p.Colours[i]); k < len(p.Entries)-1 {
				return p.Entries[k].Label
			}
			return ""
		case c != nil:
			return c.Label(i)
		}
		return ""
	}
}
