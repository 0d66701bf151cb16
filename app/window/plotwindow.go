package window

import (
	"bytes"
	"io"

	"fyne.io/fyne/v2"
	fynecanvas "fyne.io/fyne/v2/canvas"
	"fyne.io/fyne/v2/container"
	"fyne.io/fyne/v2/layout"
	"fyne.io/fyne/v2/theme"
	"fyne.io/fyne/v2/widget"

	"lodestone/canvas/figure"
)

// plotWindows shows expression plots in windows of their own, which the
// user can enlarge, with Save PNG and Save SVG. They close with the view.
type plotWindows struct {
	app   fyne.App
	files *saver
	open  []*plotWindow
}

// plotWindow is one plot: its table, the size it is drawn at, and the PNG
// shown (which Save PNG writes as it is).
type plotWindow struct {
	win     fyne.Window
	name    string
	table   *figure.ExpressionTable
	size    figure.Size
	png     []byte
	savePNG *widget.Button
	saveSVG *widget.Button
}

// openPlot shows a plot; name is the stem of the files it suggests.
func (p *plotWindows) openPlot(title, name string, t *figure.ExpressionTable, size figure.Size, png []byte) {
	w := &plotWindow{win: p.app.NewWindow(title), name: name, table: t, size: size, png: png}
	img := fynecanvas.NewImageFromReader(bytes.NewReader(png), name+".png")
	img.FillMode = fynecanvas.ImageFillContain
	img.ScaleMode = fynecanvas.ImageScaleSmooth
	shown := fyne.NewSize(float32(size.WidthPx), float32(size.HeightPx))
	if shown.Width > 1100 {
		shown = fyne.NewSize(1100, shown.Height*1100/shown.Width)
	}
	img.SetMinSize(fyne.NewSize(shown.Width/2, shown.Height/2))
	w.savePNG = widget.NewButtonWithIcon("Save PNG…", theme.DocumentSaveIcon(), func() {
		p.files.save("Save the expression plot as PNG", name+".png", func(out io.Writer) error {
			_, err := out.Write(w.png)
			return err
		})
	})
	w.saveSVG = widget.NewButtonWithIcon("Save SVG…", theme.DocumentSaveIcon(), func() {
		p.files.save("Save the expression plot as SVG", name+".svg", func(out io.Writer) error {
			return figure.WriteExpressionSVG(out, w.table, w.size)
		})
	})
	closeBtn := widget.NewButton("Close", func() { w.win.Close() })
	note := widget.NewLabel("Bars filled to the share of cells expressing; colour: mean expression, scaled per gene.")
	note.Importance = widget.LowImportance
	bar := container.NewHBox(note, layout.NewSpacer(), w.savePNG, w.saveSVG, closeBtn)
	w.win.SetContent(container.NewBorder(nil, container.NewPadded(bar), nil, nil, img))
	w.win.Resize(fyne.NewSize(shown.Width, shown.Height+56))
	w.win.SetOnClosed(func() { p.forget(w) })
	p.open = append(p.open, w)
	w.win.Show()
}

func (p *plotWindows) forget(w *plotWindow) {
	for i, o := range p.open {
		if o == w {
			p.open = append(p.open[:i], p.open[i+1:]...)
			return
		}
	}
}

// closeAll closes every plot window.
func (p *plotWindows) closeAll() {
	for _, w := range append([]*plotWindow(nil), p.open...) {
		w.win.Close()
	}
}
