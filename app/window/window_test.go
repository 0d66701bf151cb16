package window

import (
	"bytes"
	"os"
	"path/filepath"
	"strings"
	"testing"
	"time"

	"fyne.io/fyne/v2"

	"lodestone/app/cli"
	"lodestone/app/live"
	"lodestone/app/session"
)

// TestBadFileShowsErrorAndKeepsTheWindow opens a broken Matrix Market
// file: an error dialog names the file and the line, and the start view
// stays usable.
func TestBadFileShowsErrorAndKeepsTheWindow(t *testing.T) {
	dir := t.TempDir()
	bad := filepath.Join(dir, "broken.mtx")
	os.WriteFile(bad, []byte("%%MatrixMarket matrix coordinate integer general\n3 4 2\n1 1 5\n9 1 2\n"), 0o644)
	os.WriteFile(filepath.Join(dir, "cells.txt"), []byte("c1\nc2\nc3\nc4\n"), 0o644)
	os.WriteFile(filepath.Join(dir, "genes.txt"), []byte("g1\tA\ng2\tB\ng3\tC\n"), 0o644)
	u := newTestUI(t, chooserAnswering(bad))
	var start fyne.CanvasObject
	onUI(func() {
		start = u.win.Content()
		u.askOpenFile()
	})
	waitFor(t, "the error dialog", 20*time.Second, func() bool { return topDialog(u) != nil })
	onUI(func() {
		if u.win.Content() != start {
			t.Error("the start view was replaced after a failed open")
		}
		text := overlayText(topDialog(u))
		if !strings.Contains(text, "broken.mtx") || !strings.Contains(text, ":4") {
			t.Errorf("error dialog says %q; want the file and line 4", text)
		}
		if u.atlas != nil {
			t.Error("an atlas view exists after a failed open")
		}
	})
}

// TestOpenFolderTurnSaveAndReopen opens a small example folder through the
// chooser, waits for the first map, turns the dial, saves a session, and
// reopens it: the stored map comes back as it was.
func TestOpenFolderTurnSaveAndReopen(t *testing.T) {
	if testing.Short() {
		t.Skip("prepares and embeds an atlas of 1,000 cells")
	}
	dir := t.TempDir()
	var out, errs bytes.Buffer
	if code := cli.Run([]string{"example", "--out", dir, "--cells", "1000", "--genes", "1500", "--quiet"}, &out, &errs); code != 0 {
		t.Fatalf("example: %s", errs.String())
	}
	path := filepath.Join(t.TempDir(), "saved"+session.Extension)
	ch := chooserAnswering(dir)
	u := newTestUI(t, ch)
	onUI(u.askOpenFolder)
	waitFor(t, "the atlas view", 120*time.Second, func() bool { return u.atlas != nil })
	var v *atlasView
	onUI(func() { v = u.atlas })
	waitForRun(t, v, 1)
	onUI(func() {
		if n := v.st.cells(); n < 900 {
			t.Errorf("%d cells on the map of 1,000", n)
		}
		if it := v.st.run.Iteration; it != live.FreshIterations {
			t.Errorf("the first run ended after %d iterations, want %d", it, live.FreshIterations)
		}
		v.run.dial.TypedKey(&fyne.KeyEvent{Name: fyne.KeyRight})
	})
	waitForRun(t, v, 2)
	ch.answer(path)
	onUI(v.askSaveSession)
	waitFor(t, "the saved session", 30*time.Second, func() bool { return strings.HasPrefix(v.st.note, "saved ") })
	s, err := session.Read(path)
	if err != nil {
		t.Fatal(err)
	}
	shown, _ := v.run.engine.Latest()
	if len(s.History) != 2 || s.History[1].Kind != "warm" || len(s.Layout) != len(shown) || s.Layout[0] != shown[0] {
		t.Fatalf("saved history %+v", s.History)
	}
	var w *atlasView
	onUI(func() {
		u.showSession(path, s)
		w = u.atlas
	})
	if w == v {
		t.Fatal("the session did not open a new view")
	}
	onUI(func() {
		l, _ := w.run.engine.Latest()
		if len(l) != len(shown) || l[len(l)-1] != shown[len(shown)-1] {
			t.Error("the reopened map differs from the saved one")
		}
		if w.run.dial.Value != v.run.dial.Value {
			t.Errorf("dial %v, saved %v", w.run.dial.Value, v.run.dial.Value)
		}
	})
	waitFor(t, "the atlas behind the session", 120*time.Second, func() bool { return w.st.ready })
}
