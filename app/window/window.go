// Package window is Lodestone's main window: the start view, loading an
// atlas in the background, and the atlas view with the map, the attraction
// dial, paint, groups and status.
//
// The UI goroutine never computes: loading, preparation, the optimiser,
// fidelity scores and marker genes run in goroutines of their own and hand
// their results back with fyne.Do.
package window

import (
	"context"
	"fmt"
	"os"
	"path/filepath"
	"strings"

	"fyne.io/fyne/v2"
	fyneapp "fyne.io/fyne/v2/app"
	"fyne.io/fyne/v2/container"
	"fyne.io/fyne/v2/dialog"
	"fyne.io/fyne/v2/driver/desktop"
	"fyne.io/fyne/v2/widget"

	"lodestone/assets"
	lcanvas "lodestone/canvas"
)

// Options say what the window does when it opens.
type Options struct {
	Path         string  // a file, folder or session to open at once
	Example      bool    // open the bundled example atlas at once
	SelfTest     string  // run the self-test, saving screenshots into this folder; on Path when given, else the example
	SelfTestDial float64 // the dial value the self-test turns to (10 when 0)
	SelfTestTour bool    // the self-test also shows markers and a sweep, with screenshots
	Threads      int     // goroutines for computing; 0 means all processors
}

// ExampleName is what the window calls the bundled example atlas.
const ExampleName = "example atlas (invented)"

// ui is the window's shell: the start view, loading, menus, dialogs, and
// the atlas view while one is open. Its fields are touched on the UI
// goroutine only.
type ui struct {
	app     fyne.App
	win     fyne.Window
	chooser Chooser
	opts    Options

	loadCancel context.CancelFunc // cancels the loading in flight
	atlas      *atlasView         // the open atlas, nil on the start view
	atlasItems []*fyne.MenuItem   // menu items that need an open atlas

	errorsShown  []string // the errors shown to the user, oldest first
	selfTestDone chan int // receives the self-test's exit status
	autosaveOn   bool     // autosave the open map (off in tests and the self-test)
}

// Run opens the window and returns the process exit status when it closes.
func Run(opts Options) int {
	a := fyneapp.NewWithID("org.lodestone.atlas")
	a.SetIcon(fyne.NewStaticResource("lodestone.png", assets.IconPNG))
	a.Settings().SetTheme(look{})
	crashed := false
	if opts.SelfTest == "" {
		crashed = markRunning()
		defer clearRunning()
	}
	u := newUI(a, nativeChooser{}, opts)
	// The view's jobs stop before the toolkit's loop does, so that none of
	// them touches a widget after it.
	a.Lifecycle().SetOnStopped(u.closeView)
	if opts.SelfTest == "" {
		u.autosaveOn = true
		u.win.SetCloseIntercept(func() {
			if u.atlas != nil {
				u.atlas.autosave(true)
			}
			u.closeView()
			u.win.Close()
		})
		if crashed && opts.Path == "" && !opts.Example {
			u.offerRecovery()
		}
	}
	u.win.ShowAndRun()
	u.closeView()
	if u.selfTestDone != nil {
		select {
		case code := <-u.selfTestDone:
			return code
		default:
			return 1
		}
	}
	return 0
}

// closeView stops the open atlas view's work (the view stays on screen)
// and a loading in flight.
func (u *ui) closeView() {
	if u.loadCancel != nil {
		u.loadCancel()
	}
	if u.atlas != nil {
		u.atlas.close()
	}
}

func newUI(a fyne.App, ch Chooser, opts Options) *ui {
	u := &ui{app: a, chooser: ch, opts: opts}
	u.win = a.NewWindow("Lodestone")
	u.win.SetMaster() // closing it quits, plot windows and all
	u.win.Resize(fyne.NewSize(1280, 800))
	u.win.SetMainMenu(u.menu())
	u.win.SetOnDropped(u.dropped)
	u.showStart()
	switch {
	case opts.SelfTest != "":
		u.startSelfTest()
	case opts.Example:
		u.openExample()
	case opts.Path != "":
		u.openPath(opts.Path)
	}
	return u
}

// shortcut is the platform's shortcut modifier (Ctrl, ⌘ on macOS) with key,
// and shift as well when shift is set.
func shortcut(key fyne.KeyName, shift bool) fyne.Shortcut {
	mod := fyne.KeyModifierShortcutDefault
	if shift {
		mod |= fyne.KeyModifierShift
	}
	return &desktop.CustomShortcut{KeyName: key, Modifier: mod}
}

// menu builds the main menu. Items that act on the open atlas are disabled
// on the start view; items with a keyboard shortcut show it (the driver
// runs the item when the keys are pressed).
func (u *ui) menu() *fyne.MainMenu {
	item := func(label string, keys fyne.Shortcut, action func()) *fyne.MenuItem {
		it := fyne.NewMenuItem(label, action)
		it.Shortcut = keys
		return it
	}
	onAtlas := func(label string, keys fyne.Shortcut, action func(v *atlasView)) *fyne.MenuItem {
		it := item(label, keys, func() {
			if u.atlas != nil {
				action(u.atlas)
			}
		})
		it.Disabled = true
		u.atlasItems = append(u.atlasItems, it)
		return it
	}
	u.atlasItems = nil
	file := fyne.NewMenu("File",
		item("Open a file…", shortcut(fyne.KeyO, false), u.askOpenFile),
		item("Open a folder…", nil, u.askOpenFolder),
		item("Open the example atlas", nil, u.openExample),
		fyne.NewMenuItemSeparator(),
		onAtlas("Save the session…", shortcut(fyne.KeyS, false), func(v *atlasView) { v.askSaveSession() }),
		onAtlas("Export the figure…", shortcut(fyne.KeyE, false), func(v *atlasView) { v.export.askFigure() }),
		onAtlas("Export the map as a table…", nil, func(v *atlasView) { v.export.askTable() }),
		onAtlas("Export the selected cells' IDs…", nil, func(v *atlasView) { v.export.askSelection() }),
		fyne.NewMenuItemSeparator(),
		onAtlas("Close the atlas", nil, func(*atlasView) { u.closeAtlas() }),
	)
	view := fyne.NewMenu("Map",
		onAtlas("Fit the whole map", shortcut(fyne.KeyF, false), func(v *atlasView) { v.mapP.mapView.Fit() }),
		onAtlas("Move tool", shortcut(fyne.KeyM, false), func(v *atlasView) { v.mapP.setTool(lcanvas.Move) }),
		onAtlas("Lasso: add to the selection", shortcut(fyne.KeyL, false), func(v *atlasView) { v.mapP.setTool(lcanvas.LassoAdd) }),
		onAtlas("Lasso: remove from the selection", shortcut(fyne.KeyL, true), func(v *atlasView) { v.mapP.setTool(lcanvas.LassoSubtract) }),
		onAtlas("Undo the last selection change", &fyne.ShortcutUndo{}, u.undo),
		onAtlas("Make a group of the selection", shortcut(fyne.KeyG, false), func(v *atlasView) { v.groups.fromSelection() }),
		fyne.NewMenuItemSeparator(),
		onAtlas("Leiden clusters…", nil, func(v *atlasView) { v.paint.askClusters() }),
		onAtlas("Recompute the map from its history", nil, func(v *atlasView) { v.recompute() }),
	)
	help := fyne.NewMenu("Help",
		item("Reading the map", nil, u.showReadingTheMap),
		item("Keyboard", nil, u.showKeys),
	)
	return fyne.NewMainMenu(file, view, help)
}

// atlasChanged enables the menu items that need an open atlas when one is
// open, and disables them on the start view.
func (u *ui) atlasChanged() {
	for _, it := range u.atlasItems {
		it.Disabled = u.atlas == nil
	}
	if m := u.win.MainMenu(); m != nil {
		m.Refresh()
	}
}

// undo undoes the last selection change; in a text field Ctrl+Z undoes the
// typing instead.
func (u *ui) undo(v *atlasView) {
	if f, ok := u.win.Canvas().Focused().(fyne.Shortcutable); ok {
		f.TypedShortcut(&fyne.ShortcutUndo{})
		return
	}
	v.mapP.mapView.Undo()
}

// shortcutText writes a keyboard shortcut for people: "Ctrl+Shift+L".
func shortcutText(s fyne.Shortcut) string {
	k, ok := s.(fyne.KeyboardShortcut)
	if !ok {
		return ""
	}
	var b strings.Builder
	mod := k.Mod()
	if mod&fyne.KeyModifierSuper != 0 {
		b.WriteString("⌘")
	}
	if mod&fyne.KeyModifierControl != 0 {
		b.WriteString("Ctrl+")
	}
	if mod&fyne.KeyModifierAlt != 0 {
		b.WriteString("Alt+")
	}
	if mod&fyne.KeyModifierShift != 0 {
		b.WriteString("Shift+")
	}
	return b.String() + string(k.Key())
}

func (u *ui) showReadingTheMap() {
	text := widget.NewRichTextFromMarkdown(readingTheMap)
	text.Wrapping = fyne.TextWrapWord
	scroll := container.NewVScroll(text)
	scroll.SetMinSize(fyne.NewSize(560, 480))
	dialog.ShowCustom("Reading the map", "Close", scroll, u.win)
}

// showKeys lists the keyboard shortcuts.
func (u *ui) showKeys() {
	dialog.ShowCustom("Keyboard", "Close", widget.NewRichTextFromMarkdown(keysText(u.win.MainMenu())), u.win)
}

// keysText lists the menus' keyboard shortcuts and the map's and dial's
// keys in Markdown.
func keysText(menu *fyne.MainMenu) string {
	var b strings.Builder
	for _, m := range menu.Items {
		for _, it := range m.Items {
			if it.Shortcut != nil {
				fmt.Fprintf(&b, "- **%s**: %s\n", shortcutText(it.Shortcut), strings.TrimSuffix(it.Label, "…"))
			}
		}
	}
	b.WriteString("- **Wheel**: zoom about the pointer; **drag**: move the map or draw a lasso\n")
	b.WriteString("- On the dial: **← →** turn it a notch, **Home / End** go to its ends\n")
	return b.String()
}

// newWrapLabel returns a label that wraps its text, sized for a dialog.
func newWrapLabel(text string) fyne.CanvasObject {
	l := widget.NewLabel(text)
	l.Wrapping = fyne.TextWrapWord
	box := container.NewVScroll(l)
	box.SetMinSize(fyne.NewSize(520, 140))
	return box
}

// showError shows err in a dialog; the window stays usable.
func (u *ui) showError(title string, err error) {
	u.errorsShown = append(u.errorsShown, title+": "+err.Error())
	dialog.ShowCustom(title, "Close", newWrapLabel(err.Error()), u.win)
}

func (u *ui) askOpenFile() {
	go func() {
		p, err := u.chooser.OpenFile("Open an atlas: Matrix Market, CSV/TSV table, or session")
		fyne.Do(func() { u.chosen(p, err) })
	}()
}

func (u *ui) askOpenFolder() {
	go func() {
		p, err := u.chooser.OpenFolder("Open a folder holding one atlas")
		fyne.Do(func() { u.chosen(p, err) })
	}()
}

func (u *ui) chosen(path string, err error) {
	switch {
	case err == errChoiceCancelled:
	case err != nil:
		u.showError("Could not open the file dialog", err)
	default:
		u.openPath(path)
	}
}

// dropped opens what was dropped on the window: one file or folder, or
// several files of one folder (the folder is opened).
func (u *ui) dropped(_ fyne.Position, items []fyne.URI) {
	var paths []string
	for _, it := range items {
		if it.Scheme() == "file" {
			paths = append(paths, it.Path())
		}
	}
	switch {
	case len(paths) == 0:
	case len(paths) == 1:
		u.openPath(paths[0])
	default:
		dir := filepath.Dir(paths[0])
		for _, p := range paths[1:] {
			if filepath.Dir(p) != dir {
				u.showError("Cannot open these files together", fmt.Errorf("the dropped files lie in different folders; drop one file or one folder"))
				return
			}
		}
		u.openPath(dir)
	}
}

// recentKey is the preference holding recently opened paths.
const recentKey = "recent"

func (u *ui) recent() []string {
	var out []string
	for _, p := range u.app.Preferences().StringList(recentKey) {
		if _, err := os.Stat(p); err == nil {
			out = append(out, p)
		}
	}
	return out
}

func (u *ui) remember(path string) {
	abs, err := filepath.Abs(path)
	if err != nil {
		return
	}
	list := []string{abs}
	for _, p := range u.app.Preferences().StringList(recentKey) {
		if p != abs && len(list) < 8 {
			list = append(list, p)
		}
	}
	u.app.Preferences().SetStringList(recentKey, list)
}
