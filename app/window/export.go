package window

import (
	"context"
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
	"lodestone/canvas/figure"
	"lodestone/internal/atomicfile"
)

// presetLabels names the figure presets for people.
var presetLabels = map[string]string{
	"slide16x9": "slide 16:9 (1920 × 1080)",
	"slide4x3":  "slide 4:3 (1440 × 1080)",
	"column1":   "journal, one column (89 mm)",
	"column2":   "journal, two columns (183 mm)",
}

const customSize = "custom size (pixels)"

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
func (v *atlasView) askExportFigure() {
	if len(v.shown) == 0 {
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
			v.u.showError("Custom size", fmt.Errorf("give a width and a height from 16 to 20000 pixels"))
			return
		}
		v.saveFigureAs(c)
	}, v.u.win)
}

func (v *atlasView) saveFigureAs(c figureChoices) {
	name := strings.TrimSuffix(v.src.name(), filepath.Ext(v.src.name()))
	if v.src.example {
		name = "example"
	}
	if v.painted != nil {
		name += "-" + strings.ReplaceAll(v.painted.Name, " ", "-")
	}
	go func() {
		path, err := v.u.chooser.SaveFile("Export the figure", name+"."+c.format, strings.ToUpper(c.format)+" image", c.format)
		fyne.Do(func() {
			switch {
			case err == errChoiceCancelled:
			case err != nil:
				v.u.showError("Could not open the file dialog", err)
			default:
				if !strings.EqualFold(filepath.Ext(path), "."+c.format) {
					path += "." + c.format
				}
				v.writeFigure(path, c)
			}
		})
	}()
}

// mapFigure describes what the map shows as a figure: the layout, the
// paint (without the on-screen dimming of unselected cells), the drawing
// order and, when the user pinned it, the view.
func (v *atlasView) mapFigure(c figureChoices) *figure.Figure {
	f := &figure.Figure{
		Layout: v.shown, Colours: v.painted.Colours, Palette: v.painted.Palette, Order: v.mapView.Order(),
		Title: c.title, Background: color.NRGBA{R: 0xff, G: 0xff, B: 0xff, A: 0xff},
	}
	f.ScreenRadius, f.Opacity = v.mapView.PointStyle()
	view, width := v.mapView.LogicalView()
	f.ScreenWidth = width
	if v.mapView.Pinned() {
		f.View = &view
	}
	if c.transparent {
		f.Background = color.NRGBA{}
	}
	if c.key {
		f.Key = v.painted.Key()
	}
	return f
}

// writeFigure renders and writes the figure in the background.
func (v *atlasView) writeFigure(path string, c figureChoices) {
	f := v.mapFigure(c)
	p := v.painted
	v.note("exporting " + filepath.Base(path) + "…")
	go func() {
		err := func() error {
			if c.labels {
				l, err := p.Labels(context.Background(), f.Layout)
				if err != nil {
					return err
				}
				f.Labels = l
			}
			size := figure.Size{WidthPx: c.width, HeightPx: c.height, DPI: c.dpi}
			if c.preset != customSize {
				var err error
				if size, err = figure.Preset(c.preset, c.dpi); err != nil {
					return err
				}
			}
			return atomicfile.Write(path, func(w io.Writer) error {
				if c.format == "svg" {
					return figure.WriteSVG(w, f, size, figure.DefaultVectorLimit)
				}
				return figure.WritePNG(w, f, size)
			})
		}()
		fyne.Do(func() {
			if err != nil {
				v.u.showError("Could not export the figure", err)
				return
			}
			v.note("exported " + path)
		})
	}()
}

// askExportTable saves the map's table: per cell its coordinates, the
// groups it belongs to and the value of the current paint.
func (v *atlasView) askExportTable() {
	t := tables.Cells{IDs: v.prep.CellIDs, Layout: v.shown}
	for _, g := range v.groups {
		t.Groups = append(t.Groups, tables.Group{Name: g.Name, Cells: g.Cells})
	}
	if p := v.painted; p != nil && p.Source != paint.Plain {
		t.PaintName = p.Name
		t.PaintValue = v.paintLabel
	}
	v.saveTable("Export the map as a table", "map-cells.csv", t.Write)
}

// askExportSelection saves the IDs of the selected cells, one per line.
func (v *atlasView) askExportSelection() {
	sel, n := v.mapView.Selection()
	if n == 0 {
		v.u.showError("Nothing selected", fmt.Errorf("draw a lasso around some cells first"))
		return
	}
	ids := v.prep.CellIDs
	v.saveTable("Export the selected cells' IDs", "selected-cells.txt", func(w io.Writer) error {
		return tables.WriteIDs(w, ids, sel)
	})
}

// saveTable asks for a file and writes it atomically in the background.
func (v *atlasView) saveTable(title, suggested string, write func(io.Writer) error) {
	go func() {
		ext := strings.TrimPrefix(filepath.Ext(suggested), ".")
		path, err := v.u.chooser.SaveFile(title, suggested, strings.ToUpper(ext)+" file", ext)
		if err == nil {
			if filepath.Ext(path) == "" {
				path += "." + ext
			}
			err = atomicfile.Write(path, write)
		}
		fyne.Do(func() {
			switch {
			case err == errChoiceCancelled:
			case err != nil:
				v.u.showError("Could not save", err)
			default:
				v.note("saved " + path)
			}
		})
	}()
}

// paintLabel returns cell i's value of the current paint as text.
func (v *atlasView) paintLabel(i int) string {
	p := v.painted
	switch {
	case p == nil:
		return ""
	case p.Source == paint.Gene:
		return strconv.FormatFloat(v.paintValue(i), 'g', 6, 64)
	case p.Source == paint.Groups:
		c := p.Colours[i]
		if int(c) < len(p.Entries)-1 {
			return p.Entries[c].Label
		}
		return ""
	}
	if c := v.column(p.Name); c != nil {
		return c.Label(i)
	}
	return ""
}
