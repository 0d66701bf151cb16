package window

import (
	"fmt"
	"image/color"

	"fyne.io/fyne/v2"
	fynecanvas "fyne.io/fyne/v2/canvas"
	"fyne.io/fyne/v2/container"
	"fyne.io/fyne/v2/dialog"
	"fyne.io/fyne/v2/theme"
	"fyne.io/fyne/v2/widget"

	"lodestone/app/paint"
	"lodestone/canvas/colour"
)

// groupColour returns the colour of the i-th group made: the categorical
// palette, taken from its far end so that groups stand apart from the
// annotation colours shown first.
func groupColour(i int) color.NRGBA {
	p := colour.Categorical(12)
	return p[len(p)-1-i%len(p)]
}

// groupsPanel lists the groups with their actions.
func (v *atlasView) groupsPanel() fyne.CanvasObject {
	v.groupsList = widget.NewList(
		func() int { return len(v.groups) },
		func() fyne.CanvasObject {
			return container.NewBorder(nil, nil, swatch(color.Black, 14), widget.NewLabel("0"), widget.NewLabel("group"))
		},
		func(i widget.ListItemID, o fyne.CanvasObject) {
			g := v.groups[i]
			row := o.(*fyne.Container)
			label := row.Objects[0].(*widget.Label)
			label.SetText(g.Name)
			sw := row.Objects[1].(*fynecanvas.Rectangle)
			sw.FillColor = g.Colour
			sw.Refresh()
			row.Objects[2].(*widget.Label).SetText(fmt.Sprint(g.Count))
		})
	v.groupsList.OnSelected = func(i widget.ListItemID) { v.groupSel = i }
	v.groupsList.OnUnselected = func(widget.ListItemID) { v.groupSel = -1 }

	newBtn := widget.NewButtonWithIcon("From selection", theme.ContentAddIcon(), v.groupFromSelection)
	selectBtn := widget.NewButtonWithIcon("Select its cells", theme.CheckButtonCheckedIcon(), func() {
		if g := v.chosenGroup(); g != nil {
			v.mapView.SetSelection(append([]bool(nil), g.Cells...))
		}
	})
	rename := widget.NewButtonWithIcon("Rename", theme.DocumentCreateIcon(), v.renameGroup)
	recolour := widget.NewButtonWithIcon("Recolour", theme.ColorPaletteIcon(), v.recolourGroup)
	del := widget.NewButtonWithIcon("Delete", theme.DeleteIcon(), v.deleteGroup)
	paintBtn := widget.NewButton("Paint the map by groups", func() { v.paintSel.SetSelected(groupsChoice) })
	help := widget.NewLabel("Lasso cells on the map, then make a group. Groups follow the cells, so they survive every turn of the dial.")
	help.Wrapping = fyne.TextWrapWord
	help.Importance = widget.LowImportance
	actions := container.NewGridWithColumns(2, newBtn, selectBtn, rename, recolour, del, paintBtn)
	return container.NewBorder(container.NewVBox(help, actions), nil, nil, nil, v.groupsList)
}

func (v *atlasView) chosenGroup() *paint.Group {
	if v.groupSel < 0 || v.groupSel >= len(v.groups) {
		return nil
	}
	return v.groups[v.groupSel]
}

// groupFromSelection makes a new group of the selected cells.
func (v *atlasView) groupFromSelection() {
	sel, n := v.mapView.Selection()
	if n == 0 {
		v.u.showError("Nothing selected", fmt.Errorf("draw a lasso around some cells first (tool Lasso +, or Ctrl+L)"))
		return
	}
	g := &paint.Group{Name: fmt.Sprintf("group %d", len(v.groups)+1), Colour: groupColour(len(v.groups)),
		Cells: append([]bool(nil), sel...), Count: n}
	v.addGroup(g)
}

func (v *atlasView) addGroup(g *paint.Group) {
	v.groups = append(v.groups, g)
	v.groupsList.Refresh()
	if v.markers != nil && v.markers.source.Selected == groupsSource {
		v.fillMarkerChoices()
	}
	v.groupsList.Select(len(v.groups) - 1)
	v.repaint()
}

func (v *atlasView) renameGroup() {
	g := v.chosenGroup()
	if g == nil {
		return
	}
	e := widget.NewEntry()
	e.SetText(g.Name)
	dialog.ShowForm("Rename the group", "Rename", "Cancel", []*widget.FormItem{widget.NewFormItem("name", e)}, func(ok bool) {
		if ok && e.Text != "" {
			g.Name = e.Text
			v.groupsList.Refresh()
			v.repaint()
		}
	}, v.u.win)
}

func (v *atlasView) recolourGroup() {
	g := v.chosenGroup()
	if g == nil {
		return
	}
	picker := dialog.NewColorPicker("Recolour the group", g.Name, func(c color.Color) {
		r, gg, b, a := c.RGBA()
		if a == 0 {
			return
		}
		g.Colour = color.NRGBA{R: uint8(r * 0xff / a), G: uint8(gg * 0xff / a), B: uint8(b * 0xff / a), A: 0xff}
		v.groupsList.Refresh()
		v.repaint()
	}, v.u.win)
	picker.Advanced = true
	picker.SetColor(g.Colour)
	picker.Show()
}

func (v *atlasView) deleteGroup() {
	g := v.chosenGroup()
	if g == nil {
		return
	}
	dialog.ShowConfirm("Delete the group", "Delete "+g.Name+"? Its cells stay in the atlas.", func(ok bool) {
		if !ok {
			return
		}
		i := v.groupSel
		v.groups = append(v.groups[:i], v.groups[i+1:]...)
		v.groupsList.UnselectAll()
		v.groupSel = -1
		v.groupsList.Refresh()
		v.repaint()
	}, v.u.win)
}
