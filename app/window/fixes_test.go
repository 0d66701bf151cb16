package window

import (
	"bytes"
	"context"
	"image"
	"image/png"
	"os"
	"path/filepath"
	"slices"
	"strings"
	"testing"
	"time"

	"fyne.io/fyne/v2"
	"fyne.io/fyne/v2/container"
	"fyne.io/fyne/v2/test"
	"fyne.io/fyne/v2/widget"

	"lodestone/app/paint"
	"lodestone/canvas/figure"
	"lodestone/sampledata"
)

// rankMarkers ranks the markers of which (from source) against the rest
// through the Markers tab and waits for the table.
func rankMarkers(t *testing.T, v *atlasView, source, which string) {
	t.Helper()
	onUI(func() {
		v.reveal(tabMarkers)
		v.markers.source.SetSelected(source)
		v.markers.which.SetSelected(which)
		test.Tap(v.markers.run)
	})
	waitFor(t, "the markers", 60*time.Second, func() bool {
		return !v.markers.ranking && len(v.markers.results) > 0 && v.markers.compared.which == which
	})
}

// waitForFile waits until a file exists and returns its content.
func waitForFile(t *testing.T, path string) []byte {
	t.Helper()
	waitFor(t, filepath.Base(path), 30*time.Second, func() bool { _, err := os.Stat(path); return err == nil })
	b, err := os.ReadFile(path)
	if err != nil {
		t.Fatal(err)
	}
	return b
}

// TestExpressionPlotOfADayShowsAndSaves ranks the markers of day 2 against
// all other cells, as a user met it: the plot (once refused with
// "geneNames: length does not match") opens in a window of its own, drawn
// across the five days with the top markers, and its Save PNG and Save SVG
// buttons write that plot.
func TestExpressionPlotOfADayShowsAndSaves(t *testing.T) {
	dir := t.TempDir()
	ch := chooserAnswering()
	u := newTestUI(t, ch)
	v := openFixture(t, u)
	rankMarkers(t, v, sampledata.ColumnDay, "day 2")
	onUI(func() { test.Tap(v.markers.plotBtn) })
	waitFor(t, "the plot window", 30*time.Second, func() bool { return len(v.plots.open) == 1 || topDialog(u) != nil })
	noDialog(t, u)
	var w *plotWindow
	onUI(func() {
		w = v.plots.open[0]
		// The top markers as the headless figure command draws them.
		p := v.st.prep
		day := v.st.column(sampledata.ColumnDay)
		want, size, err := paint.ExpressionPlot(context.Background(), p.Expression, v.markers.results, paint.TopMarkers,
			p.GeneIDs, p.GeneSymbols, day.Codes, day.Levels)
		if err != nil || len(want.Genes) == 0 || !slices.Equal(w.table.Genes, want.Genes) || w.size != size {
			t.Errorf("the plot shows %q (%+v), want the top %d markers %q (%+v) (%v)", w.table.Genes, w.size, paint.TopMarkers, want.Genes, size, err)
		}
		if !slices.Equal(w.table.Groups, v.st.column(sampledata.ColumnDay).Levels) {
			t.Errorf("the plot's rows are %q, want the days", w.table.Groups)
		}
		if !strings.Contains(w.win.Title(), "day 2 against all other cells") {
			t.Errorf("plot window titled %q", w.win.Title())
		}
	})

	pngPath, svgPath := filepath.Join(dir, "plot.png"), filepath.Join(dir, "plot.svg")
	ch.answer(pngPath)
	onUI(func() { test.Tap(w.savePNG) })
	b := waitForFile(t, pngPath)
	img, err := png.Decode(bytes.NewReader(b))
	if err != nil {
		t.Fatal(err)
	}
	if img.Bounds().Dx() != w.size.WidthPx || img.Bounds().Dy() != w.size.HeightPx || !bytes.Equal(b, w.png) {
		t.Errorf("saved a %v PNG; want the plot shown, %d × %d", img.Bounds(), w.size.WidthPx, w.size.HeightPx)
	}
	ch.answer(svgPath)
	onUI(func() { test.Tap(w.saveSVG) })
	var want bytes.Buffer
	if err := figure.WriteExpressionSVG(&want, w.table, w.size); err != nil {
		t.Fatal(err)
	}
	if got := waitForFile(t, svgPath); !bytes.Equal(got, want.Bytes()) {
		t.Errorf("the saved SVG (%d bytes) is not the plot's (%d bytes)", len(got), want.Len())
	}
	onUI(func() { test.Tap(button(w.win.Content(), "Close")) })
	waitFor(t, "the plot window to close", 5*time.Second, func() bool { return len(v.plots.open) == 0 })
}

// selectFirst selects the first n cells on the map, as a lasso would.
func selectFirst(v *atlasView, n int) {
	sel := make([]bool, v.st.cells())
	for i := range n {
		sel[i] = true
	}
	v.mapP.selectCells(sel)
}

// TestMakeGroupTellsAndRefusesADuplicate makes a group from the selection:
// the Groups tab comes to the front with the new group chosen, the status
// line says its name and size, and the map's strip names it; making a
// group of the same cells again makes no second group but says which
// group they are.
func TestMakeGroupTellsAndRefusesADuplicate(t *testing.T) {
	u := newTestUI(t, chooserAnswering())
	v := openFixture(t, u)
	onUI(func() {
		v.reveal(tabPaint)
		selectFirst(v, 120)
		test.Tap(v.mapP.makeGroup)
		if len(v.st.groups) != 1 || v.st.groups[0].Name != "group 1" || v.st.groups[0].Count != 120 {
			t.Fatalf("groups after Make a group: %+v", v.st.groups)
		}
		if v.tabs.Selected().Text != tabGroups || v.groups.chosen != 0 {
			t.Errorf("tab %q, chosen group %d; want the Groups tab with the new group", v.tabs.Selected().Text, v.groups.chosen)
		}
		if v.status.note.Text != "made group 1 · 120 cells" {
			t.Errorf("status note %q", v.status.note.Text)
		}
		if v.mapP.selLabel.Text != "120 selected (group 1)" {
			t.Errorf("selection label %q", v.mapP.selLabel.Text)
		}
		v.reveal(tabPaint)
		test.Tap(v.mapP.makeGroup)
		if len(v.st.groups) != 1 {
			t.Errorf("a second click made %d groups", len(v.st.groups))
		}
		if v.tabs.Selected().Text != tabGroups || v.status.note.Text != "these 120 cells are group 1 already" {
			t.Errorf("tab %q, note %q after the second click", v.tabs.Selected().Text, v.status.note.Text)
		}
		// The label of a large selection does not widen the map's strip
		// (and with it the window).
		v.mapP.mapView.ClearSelection()
		before := v.mapP.content().MinSize().Width
		selectFirst(v, v.st.cells())
		test.Tap(v.mapP.makeGroup)
		if after := v.mapP.content().MinSize().Width; after != before {
			t.Errorf("the map's strip needs %v pixels with %q, %v with nothing selected", after, v.mapP.selLabel.Text, before)
		}
		selectFirst(v, 200)
		test.Tap(v.mapP.makeGroup)
		if len(v.st.groups) != 3 || v.st.groups[2].Name != "group 3" || v.st.groups[2].Count != 200 {
			t.Errorf("groups after a new selection: %d", len(v.st.groups))
		}
	})
	noDialog(t, u)
}

// TestMarkersDefaultToTheSelectionOrNewestGroup checks what the Markers
// tab compares: the first categorical column while nothing is selected,
// the selection once there is one, a group as soon as it is made (the
// newest), and the selection again after a new lasso.
func TestMarkersDefaultToTheSelectionOrNewestGroup(t *testing.T) {
	u := newTestUI(t, chooserAnswering())
	v := openFixture(t, u)
	m := v.markers
	onUI(func() {
		if m.source.Selected != sampledata.ColumnDay || m.which.Selected != "day 2" {
			t.Errorf("with nothing selected: markers of %q / %q", m.source.Selected, m.which.Selected)
		}
		selectFirst(v, 50)
		if m.source.Selected != selectionSource || m.which.Selected != "50 selected cells" {
			t.Errorf("with 50 cells selected: markers of %q / %q", m.source.Selected, m.which.Selected)
		}
		test.Tap(v.mapP.makeGroup)
		selectFirst(v, 80)
		test.Tap(v.mapP.makeGroup)
		if m.source.Selected != groupsSource || m.which.Selected != "group 2" {
			t.Errorf("after making group 2: markers of %q / %q", m.source.Selected, m.which.Selected)
		}
		v.mapP.mapView.ClearSelection()
		if m.source.Selected != groupsSource || m.which.Selected != "group 2" || contains(m.source.Options, selectionSource) {
			t.Errorf("after clearing the selection: markers of %q / %q, sources %q", m.source.Selected, m.which.Selected, m.source.Options)
		}
		selectFirst(v, 30)
		if m.source.Selected != selectionSource {
			t.Errorf("after a new lasso: markers of %q", m.source.Selected)
		}
	})
	// The selection's markers rank and plot as two rows.
	rankMarkers(t, v, selectionSource, "30 selected cells")
	onUI(func() {
		names, codes := m.plotRows(selectionSource)
		if len(names) != 2 || codes[0] != 0 || codes[len(codes)-1] != 1 {
			t.Errorf("plot rows %q", names)
		}
	})
}

// TestFidelityIsMarkedWhileTheMapMoves turns the dial after the first run:
// while the optimiser moves the map, the status line marks the fidelity
// shown as the previous map's (dimmed); once the new map is scored it
// shows the new scores plainly.
func TestFidelityIsMarkedWhileTheMapMoves(t *testing.T) {
	u := newTestUI(t, chooserAnswering())
	v := openFixture(t, u)
	var first string
	onUI(func() {
		first = v.st.scores.text
		if l := v.status.scores; !strings.HasPrefix(l.Text, "fidelity: kept neighbours") || l.Importance != widget.MediumImportance {
			t.Errorf("settled map: %q (importance %v)", l.Text, l.Importance)
		}
		v.run.turnTo(10)
		if !v.st.run.Running {
			t.Fatal("no run after the turn")
		}
		if l := v.status.scores; l.Text != "previous map's fidelity: "+first || l.Importance != widget.LowImportance {
			t.Errorf("while the map moves: %q (importance %v)", l.Text, l.Importance)
		}
	})
	waitForRun(t, v, 2)
	waitFor(t, "the new map's scores", 30*time.Second, func() bool { return v.st.scoresCurrent() })
	onUI(func() {
		if l := v.status.scores; !strings.HasPrefix(l.Text, "fidelity: kept neighbours") || l.Importance != widget.MediumImportance {
			t.Errorf("after the turn: %q (importance %v)", l.Text, l.Importance)
		}
	})
}

// TestKeyBesideTheMapWhateverTab paints by a gene and opens the other tabs:
// the colour bar stays beside the map, and it folds away and back.
func TestKeyBesideTheMapWhateverTab(t *testing.T) {
	u := newTestUI(t, chooserAnswering())
	v := openFixture(t, u)
	var gene string
	onUI(func() {
		gene = paint.GeneLabel(v.st.prep.GeneSymbols[3], v.st.prep.GeneIDs[3])
		v.paint.geneBox.SetText(gene)
	})
	waitFor(t, "the gene's paint", 10*time.Second, func() bool { return v.st.paint.Source == paint.Gene })
	onUI(func() {
		for _, tab := range []string{tabGroups, tabMarkers, tabSweep, tabAtlas} {
			v.reveal(tab)
			if !shownIn(u.win.Content(), v.paint.key) {
				t.Errorf("the key is not on screen with the %s tab open", tab)
			}
		}
		if text := overlayText(v.paint.key); !strings.Contains(text, gene) {
			t.Errorf("the key says %q; want the gene %q", text, gene)
		}
		test.Tap(v.mapP.fold)
		if shownIn(u.win.Content(), v.paint.key) || !shownIn(u.win.Content(), v.mapP.unfold) {
			t.Error("folding did not hide the key")
		}
		test.Tap(v.mapP.unfold)
		if !shownIn(u.win.Content(), v.paint.key) {
			t.Error("unfolding did not show the key again")
		}
	})
}

// shownIn reports whether o is inside root and visible, with every
// container on the way.
func shownIn(root, o fyne.CanvasObject) bool {
	found := false
	var visit func(c fyne.CanvasObject) bool
	visit = func(c fyne.CanvasObject) bool {
		if !c.Visible() {
			return false
		}
		if c == o {
			found = true
			return true
		}
		var kids []fyne.CanvasObject
		switch w := c.(type) {
		case *fyne.Container:
			kids = w.Objects
		case fyne.Widget:
			kids = test.WidgetRenderer(w).Objects()
		}
		for _, k := range kids {
			if visit(k) {
				return true
			}
		}
		return false
	}
	visit(root)
	return found
}

// TestMenusShowShortcuts checks that every menu item with a keyboard
// shortcut carries it (so the menu shows it and the driver runs it), and
// that Help ▸ Keyboard lists the same keys.
func TestMenusShowShortcuts(t *testing.T) {
	u := newTestUI(t, chooserAnswering())
	want := map[string]string{
		"Open a file…":                     "Ctrl+O",
		"Save the session…":                "Ctrl+S",
		"Export the figure…":               "Ctrl+E",
		"Fit the whole map":                "Ctrl+F",
		"Move tool":                        "Ctrl+M",
		"Lasso: add to the selection":      "Ctrl+L",
		"Lasso: remove from the selection": "Ctrl+Shift+L",
		"Undo the last selection change":   "Ctrl+Z",
		"Make a group of the selection":    "Ctrl+G",
	}
	onUI(func() {
		got := map[string]string{}
		for _, m := range u.win.MainMenu().Items {
			for _, it := range m.Items {
				if it.Shortcut != nil {
					got[it.Label] = shortcutText(it.Shortcut)
				}
			}
		}
		for label, keys := range want {
			if got[label] != keys {
				t.Errorf("%s: shortcut %q, want %q", label, got[label], keys)
			}
		}
		if len(got) != len(want) {
			t.Errorf("shortcuts %v, want %v", got, want)
		}
		text := keysText(u.win.MainMenu())
		for label, keys := range want {
			if !strings.Contains(text, "**"+keys+"**: "+strings.TrimSuffix(label, "…")) {
				t.Errorf("Help ▸ Keyboard does not list %s for %s:\n%s", keys, label, text)
			}
		}
	})
}

// TestTabsKeepTheirRoom checks the instrument column of a window of the
// size it opens at (1280 × 800): the run's controls above the tabs leave
// the Markers tab room for at least three rows of its table, and the Sweep
// tab room for a whole map with its scores beside it. (With the grain
// control on three rows, the table showed two rows and the sweep's maps
// were cut above their scores.)
func TestTabsKeepTheirRoom(t *testing.T) {
	u := newTestUI(t, chooserAnswering())
	v := openFixture(t, u)
	rankMarkers(t, v, sampledata.ColumnDay, "day 2")
	onUI(func() {
		if s := u.win.Canvas().Size(); s.Width != 1280 || s.Height != 800 {
			t.Fatalf("the window opened at %v", s)
		}
		v.reveal(tabMarkers)
		rowH := widget.NewLabel("0").MinSize().Height
		headH := widget.NewButton("0", nil).MinSize().Height
		if rows := (v.markers.table.Size().Height - headH) / rowH; rows < 3 {
			t.Errorf("the markers table shows %.1f rows", rows)
		}
		v.reveal(tabSweep)
		var room fyne.Size
		walk(v.sweep.box, func(o fyne.CanvasObject) {
			if s, ok := o.(*container.Scroll); ok && s.Content == v.sweep.grid {
				room = s.Size()
			}
		})
		card := newThumbCard(image.NewRGBA(image.Rect(0, 0, 2, 2)), "attraction 1.0 · grain 1\nkept 0.42 · trust 0.925\ndCor 0.76 · labels 0.89\nsamples mixed 0.97\ntypes mixed 0.95", func() {})
		if need := card.MinSize(); room.Height < need.Height || room.Width < need.Width {
			t.Errorf("the sweep's maps have %v of room; a map with its scores needs %v", room, need)
		}
	})
}
