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
)

// Options say what the window does when it opens.
type Options struct {
	Path         string  // a file, folder or session to open at once
	Example      bool    // open the bundled example atlas at once
	SelfTest     string  // run the self-test, saving screenshots into this folder
	SelfTestDial float64 // the dial value the self-test turns to (10 when 0)
	SelfTestTour bool    // the self-test also shows markers and a sweep, with screenshots
	Threads      int     // goroutines for computing; 0 means all processors
}

// ExampleName is what the window calls the bundled example atlas.
const ExampleName = "example atlas (invented)"

// ui is the state of the window. Its fields are touched on the UI goroutine
// only.
type ui struct {
	app     fyne.App
	win     fyne.Window
	chooser Chooser
	opts    Options

	loadCancel context.CancelFunc // cancels the loading in flight
	atlas      *atlasView         // the open atlas, nil on the start view

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
	if opts.SelfTest == "" {
		u.autosaveOn = true
		u.win.SetCloseIntercept(func() {
			if u.atlas != nil {
				u.atlas.autosave(true)
			}
			u.win.Close()
		})
		if crashed && opts.Path == "" && !opts.Example {
			u.offerRecovery()
		}
	}
	u.win.ShowAndRun()
	if u.atlas != nil {
		u.atlas.close()
	}
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

func newUI(a fyne.App, ch Chooser, opts Options) *ui {
	u := &ui{app: a, chooser: ch, opts: opts}
	u.win = a.NewWindow("Lodestone")
	u.win.Resize(fyne.NewSize(1280, 800))
	u.win.SetMainMenu(u.menu())
	u.addShortcuts()
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

func (u *ui) menu() *fyne.MainMenu {
	file := fyne.NewMenu("File",
		fyne.NewMenuItem("Open a file…", u.askOpenFile),
		fyne.NewMenuItem("Open a folder…", u.askOpenFolder),
		fyne.NewMenuItem("Open the example atlas", u.openExample),
		fyne.NewMenuItemSeparator(),
		fyne.NewMenuItem("Save the session…", func() { u.withAtlas(func(v *atlasView) { v.askSaveSession() }) }),
		fyne.NewMenuItem("Export the figure…", func() { u.withAtlas(func(v *atlasView) { v.askExportFigure() }) }),
		fyne.NewMenuItem("Export the map as a table…", func() { u.withAtlas(func(v *atlasView) { v.askExportTable() }) }),
		fyne.NewMenuItem("Export the selected cells' IDs…", func() { u.withAtlas(func(v *atlasView) { v.askExportSelection() }) }),
		fyne.NewMenuItemSeparator(),
		fyne.NewMenuItem("Close the atlas", u.closeAtlas),
	)
	view := fyne.NewMenu("Map",
		fyne.NewMenuItem("Fit the whole map", func() { u.withAtlas(func(v *atlasView) { v.mapView.Fit() }) }),
		fyne.NewMenuItem("Move tool", func() { u.withAtlas(func(v *atlasView) { v.setTool(0) }) }),
		fyne.NewMenuItem("Lasso: add to selection", func() { u.withAtlas(func(v *atlasView) { v.setTool(1) }) }),
		fyne.NewMenuItem("Lasso: remove from selection", func() { u.withAtlas(func(v *atlasView) { v.setTool(2) }) }),
		fyne.NewMenuItem("Undo the last selection change", func() { u.withAtlas(func(v *atlasView) { v.mapView.Undo() }) }),
		fyne.NewMenuItemSeparator(),
		fyne.NewMenuItem("Leiden clusters…", func() { u.withAtlas(func(v *atlasView) { v.askClusters() }) }),
		fyne.NewMenuItem("Recompute the map from its history", func() { u.withAtlas(func(v *atlasView) { v.recompute() }) }),
	)
	help := fyne.NewMenu("Help",
		fyne.NewMenuItem("Reading the map", u.showReadingTheMap),
		fyne.NewMenuItem("Keyboard", u.showKeys),
	)
	return fyne.NewMainMenu(file, view, help)
}

// withAtlas calls f with the open atlas view, if any.
func (u *ui) withAtlas(f func(*atlasView)) {
	if u.atlas != nil {
		f(u.atlas)
	}
}

// keys lists the keyboard shortcuts for Help ▸ Keyboard and addShortcuts.
var keys = []struct {
	key  fyne.KeyName
	what string
}{
	{fyne.KeyO, "open a file"},
	{fyne.KeyS, "save the session"},
	{fyne.KeyE, "export the figure"},
	{fyne.KeyF, "fit the whole map"},
	{fyne.KeyL, "lasso (again: switch between adding and removing)"},
	{fyne.KeyM, "move tool"},
	{fyne.KeyZ, "undo the last selection change"},
}

func (u *ui) addShortcuts() {
	mod := fyne.KeyModifierShortcutDefault
	add := func(k fyne.KeyName, f func()) {
		u.win.Canvas().AddShortcut(&desktop.CustomShortcut{KeyName: k, Modifier: mod}, func(fyne.Shortcut) { f() })
	}
	add(fyne.KeyO, u.askOpenFile)
	add(fyne.KeyS, func() { u.withAtlas(func(v *atlasView) { v.askSaveSession() }) })
	add(fyne.KeyE, func() { u.withAtlas(func(v *atlasView) { v.askExportFigure() }) })
	add(fyne.KeyF, func() { u.withAtlas(func(v *atlasView) { v.mapView.Fit() }) })
	add(fyne.KeyL, func() { u.withAtlas(func(v *atlasView) { v.toggleLasso() }) })
	add(fyne.KeyM, func() { u.withAtlas(func(v *atlasView) { v.setTool(0) }) })
	add(fyne.KeyZ, func() { u.withAtlas(func(v *atlasView) { v.mapView.Undo() }) })
}

func (u *ui) showReadingTheMap() {
	text := widget.NewRichTextFromMarkdown(readingTheMap)
	text.Wrapping = fyne.TextWrapWord
	scroll := container.NewVScroll(text)
	scroll.SetMinSize(fyne.NewSize(560, 480))
	dialog.ShowCustom("Reading the map", "Close", scroll, u.win)
}

func (u *ui) showKeys() {
	var b strings.Builder
	for _, k := range keys {
		fmt.Fprintf(&b, "- **Ctrl+%s** (⌘ on macOS): %s\n", k.key, k.what)
	}
	b.WriteString("- **Wheel**: zoom about the pointer; **drag**: move the map or draw a lasso\n")
	b.WriteString("- On the dial: **← →** turn it a notch, **Home / End** go to its ends\n")
	dialog.ShowCustom("Keyboard", "Close", widget.NewRichTextFromMarkdown(b.String()), u.win)
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
