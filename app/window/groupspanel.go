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

// groupsPanel lists the user's groups (named sets of cells made from the
// selection) with their actions: make, select, rename, recolour, delete,
// paint by. The groups live in the atlas state; this panel is the only one
// that changes them.
type groupsPanel struct {
	st     *atlasState
	errs   errorShower
	win    fyne.Window
	sel    func([]bool) // selects cells on the map
	paint  func()       // paints the map by the groups
	reveal func()       // brings this panel to the front

	list   *widget.List
	chosen int // the group chosen in the list, or −1
	box    fyne.CanvasObject

	fromSel, selectBtn, rename, recolour, del, paintBtn *widget.Button
}

func newGroupsPanel(st *atlasState, errs errorShower, win fyne.Window, sel func([]bool), paintGroups, reveal func()) *groupsPanel {
	g := &groupsPanel{st: st, errs: errs, win: win, sel: sel, paint: paintGroups, reveal: reveal, chosen: -1}
	g.list = widget.NewList(
		func() int { return len(g.st.groups) },
		func() fyne.CanvasObject {
			return container.NewBorder(nil, nil, swatch(color.Black, 14), widget.NewLabel("0"), widget.NewLabel("group"))
		},
		func(i widget.ListItemID, o fyne.CanvasObject) {
			gr := g.st.groups[i]
			row := o.(*fyne.Container)
			row.Objects[0].(*widget.Label).SetText(gr.Name)
			sw := row.Objects[1].(*fynecanvas.Rectangle)
			sw.FillColor = gr.Colour
			sw.Refresh()
			row.Objects[2].(*widget.Label).SetText(count(gr.Count))
		})
	g.list.OnSelected = func(i widget.ListItemID) { g.chosen = i }
	g.list.OnUnselected = func(widget.ListItemID) { g.chosen = -1 }

	g.fromSel = widget.NewButtonWithIcon("From selection", theme.ContentAddIcon(), g.fromSelection)
	g.selectBtn = widget.NewButtonWithIcon("Select its cells", theme.CheckButtonCheckedIcon(), g.selectCells)
	g.rename = widget.NewButtonWithIcon("Rename", theme.DocumentCreateIcon(), g.askRename)
	g.recolour = widget.NewButtonWithIcon("Recolour", theme.ColorPaletteIcon(), g.askRecolour)
	g.del = widget.NewButtonWithIcon("Delete", theme.DeleteIcon(), g.askDelete)
	g.paintBtn = widget.NewButton("Paint the map by groups", paintGroups)
	help := widget.NewLabel("Lasso cells on the map, then make a group. Groups follow the cells, so they survive every turn of the dial.")
	help.Wrapping = fyne.TextWrapWord
	help.Importance = widget.LowImportance
	actions := container.NewGridWithColumns(2, g.fromSel, g.selectBtn, g.rename, g.recolour, g.del, g.paintBtn)
	g.box = container.NewBorder(container.NewVBox(help, actions), nil, nil, nil, g.list)
	st.on(topicGroups, g.list.Refresh)
	return g
}

// content returns the panel's widgets.
func (g *groupsPanel) content() fyne.CanvasObject { return g.box }

// groupColour returns the colour of the i-th group made: the categorical
// palette, taken from its far end so that groups stand apart from the
// annotation colours shown first.
func groupColour(i int) color.NRGBA {
	p := colour.Categorical(12)
	return p[len(p)-1-i%len(p)]
}

func (g *groupsPanel) chosenGroup() *paint.Group {
	if g.chosen < 0 || g.chosen >= len(g.st.groups) {
		return nil
	}
	return g.st.groups[g.chosen]
}

// choose chooses group i in the list.
func (g *groupsPanel) choose(i int) {
	g.list.Select(i)
	g.chosen = i
}

// fromSelection makes a new group of the selected cells and says so; when
// a group of exactly these cells exists it is shown instead.
func (g *groupsPanel) fromSelection() {
	sel, n := g.st.selection, g.st.selected
	if n == 0 {
		g.errs.showError("Nothing selected", fmt.Errorf("draw a lasso around some cells first (tool Lasso +, or Ctrl+L)"))
		return
	}
	if old := g.st.groupWithCells(sel); old != nil {
		for i, gr := range g.st.groups {
			if gr == old {
				g.choose(i)
			}
		}
		g.reveal()
		g.st.tell(fmt.Sprintf("these %s cells are %s already", count(n), old.Name))
		return
	}
	gr := &paint.Group{Name: g.freeName(), Colour: groupColour(len(g.st.groups)), Cells: append([]bool(nil), sel...), Count: n}
	g.st.setGroups(append(g.st.groups, gr))
	g.choose(len(g.st.groups) - 1)
	g.reveal()
	g.st.tell(fmt.Sprintf("made %s · %s cells", gr.Name, count(n)))
	g.st.emit(topicSelection) // the selection is now a group
}

// freeName returns the first name "group k" that no group has.
func (g *groupsPanel) freeName() string {
	for k := len(g.st.groups) + 1; ; k++ {
		name := fmt.Sprintf("group %d", k)
		if !g.nameTaken(name, nil) {
			return name
		}
	}
}

// nameTaken reports whether a group other than except has that name.
func (g *groupsPanel) nameTaken(name string, except *paint.Group) bool {
	for _, gr := range g.st.groups {
		if gr != except && gr.Name == name {
			return true
		}
	}
	return false
}

// selectCells selects the cells of the chosen group on the map.
func (g *groupsPanel) selectCells() {
	if gr := g.chosenGroup(); gr != nil {
		g.sel(gr.Cells)
	}
}

func (g *groupsPanel) askRename() {
	gr := g.chosenGroup()
	if gr == nil {
		g.errs.showError("No group chosen", fmt.Errorf("choose a group in the list first"))
		return
	}
	e := widget.NewEntry()
	e.SetText(gr.Name)
	dialog.ShowForm("Rename the group", "Rename", "Cancel", []*widget.FormItem{widget.NewFormItem("name", e)}, func(ok bool) {
		if ok {
			g.renameGroup(gr, e.Text)
		}
	}, g.win)
}

// renameGroup names gr name, unless the name is empty or another group's.
func (g *groupsPanel) renameGroup(gr *paint.Group, name string) {
	switch {
	case name == "":
		g.errs.showError("Rename the group", fmt.Errorf("a group needs a name"))
	case g.nameTaken(name, gr):
		g.errs.showError("Rename the group", fmt.Errorf("another group is called %q already", name))
	default:
		gr.Name = name
		g.st.setGroups(g.st.groups)
	}
}

func (g *groupsPanel) askRecolour() {
	gr := g.chosenGroup()
	if gr == nil {
		g.errs.showError("No group chosen", fmt.Errorf("choose a group in the list first"))
		return
	}
	picker := dialog.NewColorPicker("Recolour the group", gr.Name, func(c color.Color) { g.recolourGroup(gr, c) }, g.win)
	picker.Advanced = true
	picker.SetColor(gr.Colour)
	picker.Show()
}

// recolourGroup gives gr colour c (opaque).
func (g *groupsPanel) recolourGroup(gr *paint.Group, c color.Color) {
	r, gg, b, a := c.RGBA()
	if a == 0 {
		return
	}
	gr.Colour = color.NRGBA{R: uint8(r * 0xff / a), G: uint8(gg * 0xff / a), B: uint8(b * 0xff / a), A: 0xff}
	g.st.setGroups(g.st.groups)
}

func (g *groupsPanel) askDelete() {
	gr := g.chosenGroup()
	if gr == nil {
		g.errs.showError("No group chosen", fmt.Errorf("choose a group in the list first"))
		return
	}
	dialog.ShowConfirm("Delete the group", "Delete "+gr.Name+"? Its cells stay in the atlas.", func(ok bool) {
		if ok {
			g.deleteGroup(gr)
		}
	}, g.win)
}

func (g *groupsPanel) deleteGroup(gr *paint.Group) {
	var kept []*paint.Group
	for _, o := range g.st.groups {
		if o != gr {
			kept = append(kept, o)
		}
	}
	g.list.UnselectAll()
	g.chosen = -1
	g.st.setGroups(kept)
}
