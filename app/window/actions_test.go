package window

import (
	"bytes"
	"encoding/csv"
	"fmt"
	"image/png"
	"os"
	"path/filepath"
	"sort"
	"strings"
	"sync"
	"testing"
	"time"

	"fyne.io/fyne/v2"
	"fyne.io/fyne/v2/test"
	"fyne.io/fyne/v2/widget"

	"lodestone/app/cli"
	"lodestone/app/live"
	"lodestone/app/paint"
	"lodestone/app/session"
	lcanvas "lodestone/canvas"
	"lodestone/sampledata"
)

// Every menu item and every button of the window has a test here that
// drives it as a user would (the fake chooser answers the file dialogs) and
// checks what it did: a file written with the expected content, a state
// changed, or a clear error shown. TestEveryMenuItemIsTested and
// TestEveryButtonIsTested fail when one is added without a test.

// action drives one menu item or button and checks its outcome.
type action func(t *testing.T, u *ui, v *atlasView, ch *fakeChooser)

// menuItem returns the menu item labelled label.
func menuItem(t *testing.T, u *ui, label string) *fyne.MenuItem {
	t.Helper()
	for _, m := range u.win.MainMenu().Items {
		for _, it := range m.Items {
			if it.Label == label {
				return it
			}
		}
	}
	t.Fatalf("no menu item %q", label)
	return nil
}

// choose runs a menu item, as clicking it does.
func choose(t *testing.T, u *ui, label string) {
	t.Helper()
	onUI(func() {
		it := menuItem(t, u, label)
		if it.Disabled {
			t.Fatalf("menu item %q is disabled", label)
		}
		it.Action()
	})
}

// exampleFolder writes a small example atlas as files once for the tests.
var exampleFolder struct {
	once sync.Once
	dir  string
	err  error
}

func smallExampleFolder(t *testing.T) string {
	t.Helper()
	exampleFolder.once.Do(func() {
		dir, err := os.MkdirTemp("", "lodestone-window-test")
		if err != nil {
			exampleFolder.err = err
			return
		}
		var out, errs bytes.Buffer
		if code := cli.Run([]string{"example", "--out", dir, "--cells", "400", "--genes", "500", "--quiet"}, &out, &errs); code != 0 {
			exampleFolder.err = fmt.Errorf("example: %s", errs.String())
		}
		exampleFolder.dir = dir
	})
	if exampleFolder.err != nil {
		t.Fatal(exampleFolder.err)
	}
	return exampleFolder.dir
}

// savedSession saves the fixture's view as a session and returns its path.
func savedSession(t *testing.T) string {
	t.Helper()
	path := filepath.Join(t.TempDir(), "fixture"+session.Extension)
	ch := chooserAnswering(path)
	u := newTestUI(t, ch)
	v := openFixture(t, u)
	onUI(func() {
		selectFirst(v, 40)
		v.groups.fromSelection()
		v.askSaveSession()
	})
	waitForFile(t, path)
	return path
}

// readCSV reads a CSV file's records.
func readCSV(t *testing.T, b []byte) [][]string {
	t.Helper()
	recs, err := csv.NewReader(bytes.NewReader(b)).ReadAll()
	if err != nil {
		t.Fatal(err)
	}
	return recs
}

// exportFigure answers the export dialog (the preset size, PNG) and checks
// the PNG written.
func exportFigure(t *testing.T, u *ui, v *atlasView, ch *fakeChooser) {
	path := filepath.Join(t.TempDir(), "figure.png")
	ch.answer(path)
	waitFor(t, "the export dialog", 5*time.Second, func() bool { return topDialog(u) != nil })
	tapDialog(t, u, "Export…")
	img, err := png.Decode(bytes.NewReader(waitForFile(t, path)))
	if err != nil {
		t.Fatal(err)
	}
	if img.Bounds().Dx() != 1920 || img.Bounds().Dy() != 1080 {
		t.Errorf("figure of %v; want the 16:9 slide, 1920 × 1080", img.Bounds())
	}
	if shares, inked := PaletteShares(img, v.st.paint.Palette); inked < 0.01 || shares[0] == 0 {
		t.Errorf("the figure looks blank: %.2f%% inked", 100*inked)
	}
}

// clusterCells answers the clustering dialog and checks the new column.
func clusterCells(t *testing.T, u *ui, v *atlasView, ch *fakeChooser) {
	waitFor(t, "the clustering dialog", 5*time.Second, func() bool { return topDialog(u) != nil })
	onUI(func() {
		e := entries(topDialog(u))
		if len(e) != 1 || e[0].Text != "1" {
			t.Fatalf("the dialog asks %d entries", len(e))
		}
		e[0].SetText("0.5")
	})
	tapDialog(t, u, "Cluster")
	const name = "clusters (resolution 0.5)"
	waitFor(t, "the clusters", 30*time.Second, func() bool { return v.st.column(name) != nil })
	onUI(func() {
		c := v.st.column(name)
		if len(c.Levels) < 2 || len(c.Codes) != v.st.cells() {
			t.Errorf("%d clusters for %d cells", len(c.Levels), len(c.Codes))
		}
		if v.st.paint.Name != name || v.paint.choice.Selected != name || !contains(v.markers.source.Options, name) {
			t.Errorf("the map is painted by %q; the clusters are not offered everywhere", v.st.paint.Name)
		}
		if !strings.HasSuffix(v.status.note.Text, "modularity "+v.status.note.Text[strings.LastIndex(v.status.note.Text, " ")+1:]) ||
			!strings.Contains(v.status.note.Text, fmt.Sprintf("%d clusters", len(c.Levels))) {
			t.Errorf("note %q", v.status.note.Text)
		}
	})
	// A resolution that is not a number is refused with a message.
	onUI(v.paint.askClusters)
	onUI(func() { entries(topDialog(u))[0].SetText("many") })
	tapDialog(t, u, "Cluster")
	dialogSays(t, u, "Resolution", "positive number")
}

// makeGroup checks that the selection became group 1.
func makeGroup(t *testing.T, u *ui, v *atlasView, _ *fakeChooser) {
	onUI(func() {
		if len(v.st.groups) != 1 || v.st.groups[0].Count != 40 || v.tabs.Selected().Text != tabGroups {
			t.Errorf("groups %d, tab %q", len(v.st.groups), v.tabs.Selected().Text)
		}
	})
}

// menuActions drives each menu item. before, when not nil, runs on the
// open fixture before the item is chosen.
var menuActions = map[string]struct {
	noAtlas bool // the item is tried on the start view
	before  func(v *atlasView)
	check   action
}{
	"Open a file…": {noAtlas: true, check: func(t *testing.T, u *ui, _ *atlasView, ch *fakeChooser) {
		ch.answer(savedSession(t))
		choose(t, u, "Open a file…")
		waitFor(t, "the session's view", 10*time.Second, func() bool { return u.atlas != nil })
		var v *atlasView
		onUI(func() { v = u.atlas })
		waitFor(t, "the atlas behind the session", 60*time.Second, func() bool { return v.st.ready })
		onUI(func() {
			if v.st.cells() != fixture.p.Cells() || len(v.st.groups) != 1 || v.st.groups[0].Count != 40 {
				t.Errorf("the session opened with %d cells and %d groups", v.st.cells(), len(v.st.groups))
			}
			if !strings.HasPrefix(u.win.Title(), "Lodestone — fixture") {
				t.Errorf("window title %q", u.win.Title())
			}
		})
		// A file that is no atlas is refused with a message naming it.
		bad := filepath.Join(t.TempDir(), "notes.txt")
		os.WriteFile(bad, []byte("a shopping list\n"), 0o644)
		ch.answer(bad)
		choose(t, u, "Open a file…")
		dialogSays(t, u, "notes.txt")
	}},
	"Open a folder…": {noAtlas: true, check: func(t *testing.T, u *ui, _ *atlasView, ch *fakeChooser) {
		ch.answer(smallExampleFolder(t))
		choose(t, u, "Open a folder…")
		waitFor(t, "the atlas view", 60*time.Second, func() bool { return u.atlas != nil })
		onUI(func() {
			if n := u.atlas.st.cells(); n < 250 || n > 400 || u.atlas.st.column(sampledata.ColumnState) == nil {
				t.Errorf("%d cells on the map of 400, columns %d", n, len(u.atlas.st.prep.Annotations))
			}
			if len(u.app.Preferences().StringList(recentKey)) != 1 {
				t.Error("the folder is not among the recent ones")
			}
		})
	}},
	"Open the example atlas": {noAtlas: true, check: func(t *testing.T, u *ui, _ *atlasView, _ *fakeChooser) {
		var start fyne.CanvasObject
		onUI(func() { start = u.win.Content() })
		choose(t, u, "Open the example atlas")
		onUI(func() {
			text := overlayText(u.win.Content())
			if !strings.Contains(text, "Opening "+ExampleName) || !strings.Contains(text, "reading the files") {
				t.Errorf("the loading view says %q", text)
			}
			// Cancel goes back to the start view.
			test.Tap(button(u.win.Content(), "Cancel"))
		})
		waitFor(t, "the start view", 30*time.Second, func() bool { return u.win.Content() == start && u.loadCancel == nil })
		noDialog(t, u)
	}},
	"Save the session…": {check: func(t *testing.T, u *ui, v *atlasView, ch *fakeChooser) {
		path := filepath.Join(t.TempDir(), "saved")
		ch.answer(path)
		choose(t, u, "Save the session…")
		waitForFile(t, path+session.Extension)
		s, err := session.Read(path + session.Extension)
		if err != nil {
			t.Fatal(err)
		}
		onUI(func() {
			shown, _ := v.run.engine.Latest()
			if len(s.Layout) != len(shown) || s.Layout[7] != shown[7] || s.Example == nil || s.Example.Cells != fixtureOptions.Cells {
				t.Error("the session does not hold the map shown")
			}
			if s.Paint.Name != sampledata.ColumnDay || len(s.History) != 1 {
				t.Errorf("session paint %q, history %+v", s.Paint.Name, s.History)
			}
		})
	}},
	"Export the figure…": {check: func(t *testing.T, u *ui, v *atlasView, ch *fakeChooser) {
		choose(t, u, "Export the figure…")
		exportFigure(t, u, v, ch)
	}},
	"Export the map as a table…": {before: func(v *atlasView) { selectFirst(v, 40); v.groups.fromSelection() },
		check: func(t *testing.T, u *ui, v *atlasView, ch *fakeChooser) {
			path := filepath.Join(t.TempDir(), "cells.csv")
			ch.answer(path)
			choose(t, u, "Export the map as a table…")
			recs := readCSV(t, waitForFile(t, path))
			onUI(func() {
				if len(recs) != v.st.cells()+1 || strings.Join(recs[0], ",") != "id,x,y,group 1,day" {
					t.Fatalf("%d rows, header %q", len(recs), recs[0])
				}
				if recs[1][0] != v.st.prep.CellIDs[0] || recs[1][3] != "1" || recs[41][3] != "0" || recs[1][4] != v.st.column("day").Label(0) {
					t.Errorf("first rows %q, %q", recs[1], recs[41])
				}
			})
		}},
	"Export the selected cells' IDs…": {check: func(t *testing.T, u *ui, v *atlasView, ch *fakeChooser) {
		choose(t, u, "Export the selected cells' IDs…")
		dialogSays(t, u, "Nothing selected")
		path := filepath.Join(t.TempDir(), "ids.txt")
		ch.answer(path)
		onUI(func() { selectFirst(v, 10) })
		choose(t, u, "Export the selected cells' IDs…")
		got := strings.Fields(string(waitForFile(t, path)))
		onUI(func() {
			if strings.Join(got, " ") != strings.Join(v.st.prep.CellIDs[:10], " ") {
				t.Errorf("wrote %q", got)
			}
		})
	}},
	"Close the atlas": {check: func(t *testing.T, u *ui, v *atlasView, _ *fakeChooser) {
		choose(t, u, "Close the atlas")
		onUI(func() {
			if u.atlas != nil || !v.jobs.closed() || !strings.Contains(overlayText(u.win.Content()), "Open a folder…") {
				t.Error("the start view is not back")
			}
			if !menuItem(t, u, "Save the session…").Disabled {
				t.Error("Save the session… is enabled without an atlas")
			}
		})
	}},
	"Fit the whole map": {check: func(t *testing.T, u *ui, v *atlasView, _ *fakeChooser) {
		onUI(func() { zoomIn(v) })
		choose(t, u, "Fit the whole map")
		onUI(func() {
			if v.mapP.mapView.Pinned() {
				t.Error("the view is still pinned")
			}
		})
	}},
	"Move tool": {before: func(v *atlasView) { v.mapP.setTool(lcanvas.LassoAdd) }, check: func(t *testing.T, u *ui, v *atlasView, _ *fakeChooser) {
		choose(t, u, "Move tool")
		checkTool(t, v, lcanvas.Move)
	}},
	"Lasso: add to the selection": {check: func(t *testing.T, u *ui, v *atlasView, _ *fakeChooser) {
		choose(t, u, "Lasso: add to the selection")
		checkTool(t, v, lcanvas.LassoAdd)
	}},
	"Lasso: remove from the selection": {check: func(t *testing.T, u *ui, v *atlasView, _ *fakeChooser) {
		choose(t, u, "Lasso: remove from the selection")
		checkTool(t, v, lcanvas.LassoSubtract)
	}},
	"Undo the last selection change": {before: func(v *atlasView) { selectFirst(v, 10); selectFirst(v, 25) },
		check: func(t *testing.T, u *ui, v *atlasView, _ *fakeChooser) {
			choose(t, u, "Undo the last selection change")
			onUI(func() {
				if v.st.selected != 10 || v.mapP.selLabel.Text != "10 selected" {
					t.Errorf("%d selected after undo", v.st.selected)
				}
				// In a text field the keys undo the typing, not the selection.
				u.win.Canvas().Focus(v.run.iterations)
			})
			choose(t, u, "Undo the last selection change")
			onUI(func() {
				if v.st.selected != 10 {
					t.Errorf("undo in a text field changed the selection to %d", v.st.selected)
				}
			})
		}},
	"Make a group of the selection": {before: func(v *atlasView) { selectFirst(v, 40) }, check: func(t *testing.T, u *ui, v *atlasView, ch *fakeChooser) {
		choose(t, u, "Make a group of the selection")
		makeGroup(t, u, v, ch)
	}},
	"Leiden clusters…": {check: func(t *testing.T, u *ui, v *atlasView, ch *fakeChooser) {
		choose(t, u, "Leiden clusters…")
		clusterCells(t, u, v, ch)
	}},
	"Recompute the map from its history": {before: func(v *atlasView) { v.run.turnTo(4) },
		check: func(t *testing.T, u *ui, v *atlasView, _ *fakeChooser) {
			waitForRun(t, v, 2)
			choose(t, u, "Recompute the map from its history")
			dialogSays(t, u, "its 2 runs", "identical, bit for bit")
		}},
	"Reading the map": {noAtlas: true, check: func(t *testing.T, u *ui, _ *atlasView, _ *fakeChooser) {
		choose(t, u, "Reading the map")
		onUI(func() {
			if text := overlayText(topDialog(u)); !strings.Contains(text, "Reading the map") || !strings.Contains(text, "not quantitative") {
				t.Errorf("the dialog says %q", text)
			}
		})
	}},
	"Keyboard": {noAtlas: true, check: func(t *testing.T, u *ui, _ *atlasView, _ *fakeChooser) {
		choose(t, u, "Keyboard")
		onUI(func() {
			if text := overlayText(topDialog(u)); !strings.Contains(text, "Keyboard") || !strings.Contains(text, "Ctrl+S") {
				t.Errorf("the dialog says %q", text)
			}
		})
	}},
}

func checkTool(t *testing.T, v *atlasView, want lcanvas.Tool) {
	t.Helper()
	onUI(func() {
		if v.mapP.mapView.Tool() != want || v.mapP.tools.Selected != toolNames[want] {
			t.Errorf("tool %v (%q), want %v", v.mapP.mapView.Tool(), v.mapP.tools.Selected, want)
		}
	})
}

// TestEveryMenuItem drives every menu item and checks what it did.
func TestEveryMenuItem(t *testing.T) {
	labels := make([]string, 0, len(menuActions))
	for l := range menuActions {
		labels = append(labels, l)
	}
	sort.Strings(labels)
	for _, label := range labels {
		a := menuActions[label]
		t.Run(label, func(t *testing.T) {
			ch := chooserAnswering()
			u := newTestUI(t, ch)
			var v *atlasView
			if a.noAtlas {
				onUI(func() {
					if it := menuItem(t, u, label); it.Disabled {
						t.Errorf("%q is disabled on the start view", label)
					}
				})
			} else {
				onUI(func() {
					if it := menuItem(t, u, label); !it.Disabled {
						t.Errorf("%q is enabled on the start view, where it can do nothing", label)
					}
				})
				v = openFixture(t, u)
				if a.before != nil {
					onUI(func() { a.before(v) })
				}
			}
			a.check(t, u, v, ch)
		})
	}
}

// TestEveryMenuItemIsTested fails when a menu item has no test.
func TestEveryMenuItemIsTested(t *testing.T) {
	u := newTestUI(t, chooserAnswering())
	onUI(func() {
		for _, m := range u.win.MainMenu().Items {
			for _, it := range m.Items {
				if _, ok := menuActions[it.Label]; !ok && !it.IsSeparator {
					t.Errorf("menu item %q has no test in menuActions", it.Label)
				}
			}
		}
	})
}

// viewButtons names every button of the atlas view (and of the windows and
// views it opens) and drives it.
var viewButtons = []struct {
	name   string
	get    func(v *atlasView) *widget.Button
	before func(t *testing.T, u *ui, v *atlasView, ch *fakeChooser)
	check  action
}{
	{"Fit", func(v *atlasView) *widget.Button { return v.mapP.fit }, func(_ *testing.T, _ *ui, v *atlasView, _ *fakeChooser) {
		onUI(func() { zoomIn(v) })
	}, func(t *testing.T, _ *ui, v *atlasView, _ *fakeChooser) {
		onUI(func() {
			if v.mapP.mapView.Pinned() {
				t.Error("Fit left the view pinned")
			}
		})
	}},
	{"Make a group", func(v *atlasView) *widget.Button { return v.mapP.makeGroup }, func(_ *testing.T, _ *ui, v *atlasView, _ *fakeChooser) {
		onUI(func() { selectFirst(v, 40) })
	}, makeGroup},
	{"clear the selection", func(v *atlasView) *widget.Button { return v.mapP.clearSel }, func(_ *testing.T, _ *ui, v *atlasView, _ *fakeChooser) {
		onUI(func() { selectFirst(v, 40) })
	}, func(t *testing.T, _ *ui, v *atlasView, _ *fakeChooser) {
		onUI(func() {
			if v.st.selected != 0 || v.mapP.selLabel.Text != "nothing selected" {
				t.Errorf("%d selected", v.st.selected)
			}
		})
	}},
	{"fold the key", func(v *atlasView) *widget.Button { return v.mapP.fold }, nil, func(t *testing.T, u *ui, v *atlasView, _ *fakeChooser) {
		onUI(func() {
			if shownIn(u.win.Content(), v.paint.key) {
				t.Error("the key is still shown")
			}
		})
	}},
	{"unfold the key", func(v *atlasView) *widget.Button { return v.mapP.unfold }, func(_ *testing.T, _ *ui, v *atlasView, _ *fakeChooser) {
		onUI(func() { v.mapP.showKey(false) })
	}, func(t *testing.T, u *ui, v *atlasView, _ *fakeChooser) {
		onUI(func() {
			if !shownIn(u.win.Content(), v.paint.key) {
				t.Error("the key is not shown")
			}
		})
	}},
	{"Stop / Continue", func(v *atlasView) *widget.Button { return v.run.stopBtn }, nil, func(t *testing.T, _ *ui, v *atlasView, _ *fakeChooser) {
		onUI(func() {
			if !v.st.run.Running || v.st.run.Runs != 2 || v.run.stopBtn.Text != "Stop" {
				t.Errorf("Continue: running %v, runs %d, button %q", v.st.run.Running, v.st.run.Runs, v.run.stopBtn.Text)
			}
			test.Tap(v.run.stopBtn)
			if v.st.run.Running || v.run.stopBtn.Text != "Continue" {
				t.Errorf("Stop: running %v, button %q", v.st.run.Running, v.run.stopBtn.Text)
			}
		})
	}},
	{"Restart", func(v *atlasView) *widget.Button { return v.run.restartBtn }, nil, func(t *testing.T, _ *ui, v *atlasView, _ *fakeChooser) {
		waitForRun(t, v, 2)
		onUI(func() {
			h := v.run.engine.History()
			if len(h) != 1 || h[0].Kind != "fresh" || h[0].Done != live.FreshIterations {
				t.Errorf("history after Restart: %+v", h)
			}
		})
	}},
	{"Leiden clusters…", func(v *atlasView) *widget.Button { return v.paint.clusters }, nil, clusterCells},
	{"From selection", func(v *atlasView) *widget.Button { return v.groups.fromSel }, func(_ *testing.T, _ *ui, v *atlasView, _ *fakeChooser) {
		onUI(func() { selectFirst(v, 40) })
	}, makeGroup},
	{"Select its cells", func(v *atlasView) *widget.Button { return v.groups.selectBtn }, func(t *testing.T, _ *ui, v *atlasView, _ *fakeChooser) {
		onUI(func() { selectFirst(v, 40); v.groups.fromSelection(); v.mapP.mapView.ClearSelection() })
	}, func(t *testing.T, _ *ui, v *atlasView, _ *fakeChooser) {
		onUI(func() {
			if v.st.selected != 40 || v.mapP.selLabel.Text != "40 selected (group 1)" {
				t.Errorf("%d selected (%q)", v.st.selected, v.mapP.selLabel.Text)
			}
		})
	}},
	{"Rename", func(v *atlasView) *widget.Button { return v.groups.rename }, oneGroup, func(t *testing.T, u *ui, v *atlasView, _ *fakeChooser) {
		waitFor(t, "the rename dialog", 5*time.Second, func() bool { return topDialog(u) != nil })
		onUI(func() { entries(topDialog(u))[0].SetText("early progenitors") })
		tapDialog(t, u, "Rename")
		onUI(func() {
			if v.st.groups[0].Name != "early progenitors" || v.markers.which.Selected != "early progenitors" {
				t.Errorf("group named %q; markers of %q", v.st.groups[0].Name, v.markers.which.Selected)
			}
			// An empty name is refused with a message.
			test.Tap(v.groups.rename)
			entries(topDialog(u))[0].SetText("")
		})
		tapDialog(t, u, "Rename")
		dialogSays(t, u, "needs a name")
	}},
	{"Recolour", func(v *atlasView) *widget.Button { return v.groups.recolour }, oneGroup, func(t *testing.T, u *ui, v *atlasView, _ *fakeChooser) {
		waitFor(t, "the colour picker", 5*time.Second, func() bool { return topDialog(u) != nil })
		before := v.st.groups[0].Colour
		onUI(func() {
			v.paint.paintBy(groupsChoice)
			var swatch fyne.Tappable
			walk(topDialog(u), func(o fyne.CanvasObject) {
				if tp, ok := o.(fyne.Tappable); ok && swatch == nil && fmt.Sprintf("%T", o) == "*dialog.colorButton" {
					swatch = tp
				}
			})
			if swatch == nil {
				t.Fatal("no colour to pick in the dialog")
			}
			test.Tap(swatch)
			after := v.st.groups[0].Colour
			if after == before || after.A != 0xff || v.st.paint.Palette[0] != after {
				t.Errorf("colour %v → %v; the map's groups paint has %v", before, after, v.st.paint.Palette[0])
			}
		})
	}},
	{"Delete", func(v *atlasView) *widget.Button { return v.groups.del }, oneGroup, func(t *testing.T, u *ui, v *atlasView, _ *fakeChooser) {
		waitFor(t, "the confirmation", 5*time.Second, func() bool { return topDialog(u) != nil })
		tapDialog(t, u, "Yes")
		onUI(func() {
			if len(v.st.groups) != 0 || v.groups.chosen != -1 {
				t.Errorf("%d groups after Delete", len(v.st.groups))
			}
			// Without a chosen group the buttons say what to do.
			test.Tap(v.groups.del)
		})
		dialogSays(t, u, "choose a group")
	}},
	{"Paint the map by groups", func(v *atlasView) *widget.Button { return v.groups.paintBtn }, oneGroup, func(t *testing.T, _ *ui, v *atlasView, _ *fakeChooser) {
		onUI(func() {
			if v.st.paint.Source != paint.Groups || v.st.paint.Entries[0].Count != 40 || v.paint.choice.Selected != groupsChoice {
				t.Errorf("paint %q", v.st.paint.Name)
			}
		})
	}},
	{"Rank the genes", func(v *atlasView) *widget.Button { return v.markers.run }, nil, func(t *testing.T, _ *ui, v *atlasView, _ *fakeChooser) {
		waitFor(t, "the markers", 30*time.Second, func() bool { return len(v.markers.results) > 0 })
		onUI(func() {
			m := v.markers
			if m.compared.label() != "day 2 against all other cells" || len(m.results) != len(v.st.prep.GeneIDs) {
				t.Errorf("ranked %q: %d genes", m.compared.label(), len(m.results))
			}
			for i := 1; i < len(m.results); i++ {
				if m.results[i].Z > m.results[i-1].Z {
					t.Errorf("row %d: z %g after %g; want the genes higher in the group first", i, m.results[i].Z, m.results[i-1].Z)
					break
				}
			}
			// A header sorts the table; a row paints the map by its gene.
			m.sortBy(1)
			if m.results[0].LogFoldChange < m.results[1].LogFoldChange {
				t.Error("the fold-change header did not sort descending")
			}
			m.table.Select(widget.TableCellID{Row: 0, Col: 0})
		})
		waitFor(t, "the gene's paint", 10*time.Second, func() bool { return v.st.paint.Source == paint.Gene })
	}},
	{"Save table…", func(v *atlasView) *widget.Button { return v.markers.saveBtn }, func(t *testing.T, _ *ui, v *atlasView, ch *fakeChooser) {
		onUI(func() { test.Tap(v.markers.saveBtn) })
		dialogSays(t, v.u, "rank the genes first")
		rankMarkers(t, v, sampledata.ColumnState, "seedbed")
		ch.answer(filepath.Join(t.TempDir(), "markers.csv"))
	}, func(t *testing.T, _ *ui, v *atlasView, ch *fakeChooser) {
		recs := readCSV(t, waitForFile(t, ch.pending()))
		onUI(func() {
			if len(recs) != len(v.markers.results)+1 {
				t.Errorf("%d rows for %d genes", len(recs), len(v.markers.results))
			}
			if g := v.markers.results[0].Gene; recs[1][0] != v.st.prep.GeneIDs[g] {
				t.Errorf("first row %q, want gene %q", recs[1], v.st.prep.GeneIDs[g])
			}
		})
	}},
	{"Expression plot", func(v *atlasView) *widget.Button { return v.markers.plotBtn }, func(t *testing.T, u *ui, v *atlasView, _ *fakeChooser) {
		onUI(func() { test.Tap(v.markers.plotBtn) })
		dialogSays(t, u, "rank the genes first")
		rankMarkers(t, v, sampledata.ColumnState, "seedbed")
	}, func(t *testing.T, _ *ui, v *atlasView, _ *fakeChooser) {
		waitFor(t, "the plot window", 30*time.Second, func() bool { return len(v.plots.open) == 1 })
	}},
	{"Run the sweep", func(v *atlasView) *widget.Button { return v.sweep.run }, func(_ *testing.T, _ *ui, v *atlasView, _ *fakeChooser) {
		onUI(func() { v.sweep.values.SetText("2, inf"); v.run.iterations.SetText("50") })
	}, func(t *testing.T, _ *ui, v *atlasView, _ *fakeChooser) {
		waitFor(t, "the sweep", 60*time.Second, func() bool { return !v.sweep.running() })
		onUI(func() {
			s := v.sweep
			if len(s.results) != 2 || len(s.grid.Objects) != 2 || !strings.HasPrefix(s.info.Text, "2 maps in") {
				t.Fatalf("%d maps; info %q", len(s.results), s.info.Text)
			}
			// Tapping a map adopts it: the dial and the map follow.
			test.Tap(s.grid.Objects[1].(*thumbCard))
			if !sameLayout(v.st.layout, s.results[1].Layout) || v.run.dial.Value != s.results[1].Attraction {
				t.Error("the tapped map was not adopted")
			}
			// The same button stops a sweep in flight.
			s.values.SetText("1, 2, 4, 8, 16, 32, inf")
			test.Tap(s.run)
			if !s.running() || s.run.Text != "Stop the sweep" {
				t.Errorf("a second sweep: running %v, button %q", s.running(), s.run.Text)
			}
			test.Tap(s.run)
		})
		waitFor(t, "the sweep to stop", 30*time.Second, func() bool { return !v.sweep.running() })
		onUI(func() {
			s := v.sweep
			if !strings.HasPrefix(s.info.Text, "sweep stopped after") || len(s.results) == 7 || s.run.Text != "Run the sweep" {
				t.Errorf("after Stop the sweep: %d maps, info %q, button %q", len(s.results), s.info.Text, s.run.Text)
			}
			// A bad list of values is refused with a message.
			s.values.SetText("1, lots")
			test.Tap(s.run)
		})
		dialogSays(t, v.u, "not a dial value")
	}},
	{"Integrate the samples", func(v *atlasView) *widget.Button { return v.samples.button }, func(_ *testing.T, _ *ui, v *atlasView, _ *fakeChooser) {
		onUI(func() { v.samples.samples.SetSelected(sampledata.ColumnBatch) })
	}, func(t *testing.T, _ *ui, v *atlasView, _ *fakeChooser) {
		// TestIntegrateTheSamples follows the integration through.
		waitFor(t, "the integrated atlas", 120*time.Second, func() bool { return v.st.prep.Integrated != nil && !v.samples.busy })
		waitForRun(t, v, 2)
	}},
}

// oneGroup makes a group of the first 40 cells and chooses it.
func oneGroup(_ *testing.T, _ *ui, v *atlasView, _ *fakeChooser) {
	onUI(func() { selectFirst(v, 40); v.groups.fromSelection() })
}

// TestEveryButton taps every button of the atlas view and checks what it
// did.
func TestEveryButton(t *testing.T) {
	for _, b := range viewButtons {
		t.Run(b.name, func(t *testing.T) {
			ch := chooserAnswering()
			u := newTestUI(t, ch)
			v := openFixture(t, u)
			if b.before != nil {
				b.before(t, u, v, ch)
			}
			onUI(func() { test.Tap(b.get(v)) })
			b.check(t, u, v, ch)
		})
	}
}

// TestEveryButtonIsTested walks the atlas view, its plot window and the
// start and loading views, and fails when a button has no test.
func TestEveryButtonIsTested(t *testing.T) {
	ch := chooserAnswering()
	u := newTestUI(t, ch)
	v := openFixture(t, u)
	rankMarkers(t, v, sampledata.ColumnDay, "day 2")
	onUI(func() { test.Tap(v.markers.plotBtn) })
	waitFor(t, "the plot window", 30*time.Second, func() bool { return len(v.plots.open) == 1 })
	onUI(func() {
		tested := map[*widget.Button]bool{}
		for _, b := range viewButtons {
			tested[b.get(v)] = true
		}
		// The table's headers (TestEveryButton/Rank_the_genes sorts by one)
		// and the gene box's list of suggestions (TestKeyBesideTheMapWhateverTab
		// types a gene) are parts of widgets tested as a whole.
		headers := map[*widget.Button]bool{}
		for _, w := range []fyne.CanvasObject{v.markers.table, v.paint.geneBox} {
			walk(w, func(o fyne.CanvasObject) {
				if b, ok := o.(*widget.Button); ok {
					headers[b] = true
				}
			})
		}
		check := func(o fyne.CanvasObject) {
			// The tabs' overflow menu, when they do not fit, is the toolkit's.
			if b, ok := o.(*widget.Button); ok && !tested[b] && !headers[b] && !strings.Contains(iconName(b), "more-horizontal") {
				t.Errorf("button %q (icon %s) of the atlas view has no test in viewButtons", b.Text, iconName(b))
			}
		}
		walk(v.content(), check)
		for _, tab := range v.tabs.Items { // the tabs not in front too
			walk(tab.Content, check)
		}
		walk(v.mapP.sideClosed, check) // the folded key's strip
		w := v.plots.open[0]
		plotTested := map[string]bool{"Save PNG…": true, "Save SVG…": true, "Close": true} // TestExpressionPlotOfADayShowsAndSaves
		walk(w.win.Content(), func(o fyne.CanvasObject) {
			if b, ok := o.(*widget.Button); ok && !plotTested[b.Text] {
				t.Errorf("button %q of the plot window has no test", b.Text)
			}
		})
		u.closeAtlas()
		// The start view's buttons: the same actions as the File menu's
		// items (TestEveryMenuItem), and the recent files (TestStartViewButtons).
		startTested := map[string]bool{"Open a file…": true, "Open a folder…": true, "Open the example atlas": true}
		walk(u.win.Content(), func(o fyne.CanvasObject) {
			if b, ok := o.(*widget.Button); ok && !startTested[b.Text] && !strings.Contains(b.Text, "   —   ") {
				t.Errorf("button %q of the start view has no test", b.Text)
			}
		})
	})
}

// TestStartViewButtons taps the start view's buttons: they do what the
// File menu's items do, and a recent file reopens.
func TestStartViewButtons(t *testing.T) {
	path := savedSession(t)
	ch := chooserAnswering("")
	u := newTestUI(t, ch)
	for _, label := range []string{"Open a file…", "Open a folder…"} {
		ch.answer("")
		onUI(func() { test.Tap(button(u.win.Content(), label)) })
		waitFor(t, "the chooser", 5*time.Second, func() bool { ch.mu.Lock(); defer ch.mu.Unlock(); return len(ch.asked) > 0 })
		ch.mu.Lock()
		asked := ch.asked
		ch.asked = nil
		ch.mu.Unlock()
		if !strings.HasPrefix(asked[0], map[string]string{"Open a file…": "Open an atlas", "Open a folder…": "Open a folder"}[label]) {
			t.Errorf("%s asked %q", label, asked)
		}
		noDialog(t, u)
	}
	onUI(func() {
		test.Tap(button(u.win.Content(), "Open the example atlas"))
		if !strings.Contains(overlayText(u.win.Content()), "Opening "+ExampleName) {
			t.Error("the example atlas is not loading")
		}
		test.Tap(button(u.win.Content(), "Cancel"))
	})
	waitFor(t, "the start view", 30*time.Second, func() bool { return u.loadCancel == nil })
	onUI(func() {
		u.remember(path)
		u.showStart()
		var recent *widget.Button
		walk(u.win.Content(), func(o fyne.CanvasObject) {
			if b, ok := o.(*widget.Button); ok && strings.HasPrefix(b.Text, filepath.Base(path)+"   —   ") {
				recent = b
			}
		})
		if recent == nil {
			t.Fatal("the saved session is not among the recent files")
		}
		test.Tap(recent)
	})
	waitFor(t, "the session", 10*time.Second, func() bool { return u.atlas != nil && u.atlas.sessionPath == path })
}

func iconName(b *widget.Button) string {
	if b.Icon == nil {
		return ""
	}
	return b.Icon.Name()
}

// TestTheOtherControls drives the view's controls that are not buttons:
// the paint's choice, the key's rows, the tools, dot and ink, and the
// perplexity.
func TestTheOtherControls(t *testing.T) {
	u := newTestUI(t, chooserAnswering())
	v := openFixture(t, u)
	onUI(func() {
		p := v.paint
		for _, c := range []string{sampledata.ColumnState, plainChoice, groupsChoice, sampledata.ColumnMaturation} {
			p.choice.SetSelected(c)
			want := c
			if c == plainChoice {
				want = "none"
			} else if c == groupsChoice {
				want = "groups"
			}
			if v.st.paint.Name != want || overlayText(p.key) == "" {
				t.Errorf("chose %q: paint %q", c, v.st.paint.Name)
			}
		}
		if !v.st.paint.Continuous {
			t.Error("maturation does not paint on the ramp")
		}
		// Key rows: a tap hides a day, a double tap shows it alone.
		p.choice.SetSelected(sampledata.ColumnDay)
		p.key.Tap(1)
		if !v.st.paint.Entries[1].Hidden || v.st.paint.Entries[0].Hidden {
			t.Error("a tap on day 4 did not hide it alone")
		}
		p.isolateEntry(2)
		for i, e := range v.st.paint.Entries {
			if e.Hidden != (i != 2) {
				t.Errorf("after a double tap on day 6, entry %d hidden %v", i, e.Hidden)
			}
		}
		// Tools, dot and ink.
		v.mapP.tools.SetSelected(toolNames[lcanvas.LassoSubtract])
		if v.mapP.mapView.Tool() != lcanvas.LassoSubtract {
			t.Error("the tool strip did not choose the lasso")
		}
		v.mapP.dot.SetValue(5)
		v.mapP.ink.SetValue(0.4)
		if r, o := v.mapP.mapView.PointStyle(); r != 5 || o != 0.4 {
			t.Errorf("point style %v, %v after dot 5, ink 0.4", r, o)
		}
		// A perplexity out of range is refused.
		v.run.perplexity.SetText("500")
		v.run.perplexity.OnSubmitted("500")
	})
	dialogSays(t, u, "Perplexity", "from 2 to 50")
	onUI(func() {
		v.run.perplexity.SetText("12")
		v.run.perplexity.OnSubmitted("12")
	})
	waitForRun(t, v, 2)
	onUI(func() {
		h := v.run.engine.History()
		if len(h) != 2 || h[1].Setting != 12 || v.run.perplexity.Text != "12" {
			t.Errorf("history after perplexity 12: %+v", h)
		}
	})
}

// zoomIn turns the wheel over the middle of the map, as a user zooms.
func zoomIn(v *atlasView) {
	m := v.mapP.mapView
	m.Scrolled(&fyne.ScrollEvent{PointEvent: fyne.PointEvent{Position: fyne.NewPos(m.Size().Width/2, m.Size().Height/2)},
		Scrolled: fyne.NewDelta(0, 400)})
}
