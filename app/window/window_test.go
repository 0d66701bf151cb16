package window

import (
	"bytes"
	"os"
	"path/filepath"
	"strings"
	"testing"
	"time"

	"fyne.io/fyne/v2"
	"fyne.io/fyne/v2/test"
	"fyne.io/fyne/v2/widget"

	"lodestone/app/cli"
	"lodestone/app/session"
)

// answer is a Chooser that answers without a person.
type answer struct{ path string }

func (a answer) OpenFile(string) (string, error)   { return a.path, nil }
func (a answer) OpenFolder(string) (string, error) { return a.path, nil }
func (a answer) SaveFile(string, string, string, ...string) (string, error) {
	return a.path, nil
}

// waitFor polls cond on the UI side until it holds or the time is up.
func waitFor(t *testing.T, what string, limit time.Duration, cond func() bool) {
	t.Helper()
	deadline := time.Now().Add(limit)
	for time.Now().Before(deadline) {
		ok := false
		fyne.DoAndWait(func() { ok = cond() })
		if ok {
			return
		}
		time.Sleep(20 * time.Millisecond)
	}
	t.Fatalf("timed out waiting for %s", what)
}

// TestBadFileShowsErrorAndKeepsTheWindow opens a broken Matrix Market
// file: an error dialog names the file and the line, and the start view
// stays usable.
func TestBadFileShowsErrorAndKeepsTheWindow(t *testing.T) {
	a := test.NewApp()
	defer a.Quit()
	dir := t.TempDir()
	bad := filepath.Join(dir, "broken.mtx")
	os.WriteFile(bad, []byte("%%MatrixMarket matrix coordinate integer general\n3 4 2\n1 1 5\n9 1 2\n"), 0o644)
	os.WriteFile(filepath.Join(dir, "cells.txt"), []byte("c1\nc2\nc3\nc4\n"), 0o644)
	os.WriteFile(filepath.Join(dir, "genes.txt"), []byte("g1\tA\ng2\tB\ng3\tC\n"), 0o644)
	u := newUI(a, answer{bad}, Options{})
	start := u.win.Content()
	u.askOpenFile()
	waitFor(t, "the error dialog", 20*time.Second, func() bool { return u.win.Canvas().Overlays().Top() != nil })
	if u.win.Content() != start {
		t.Fatal("the start view was replaced after a failed open")
	}
	text := overlayText(u.win.Canvas().Overlays().Top())
	if !strings.Contains(text, "broken.mtx") || !strings.Contains(text, ":4") {
		t.Fatalf("error dialog says %q; want the file and line 4", text)
	}
	if u.atlas != nil {
		t.Fatal("an atlas view exists after a failed open")
	}
}

// overlayText collects the text of the labels in an overlay.
func overlayText(o fyne.CanvasObject) string {
	var b strings.Builder
	var walk func(fyne.CanvasObject)
	walk = func(o fyne.CanvasObject) {
		switch w := o.(type) {
		case *widget.Label:
			b.WriteString(w.Text + "\n")
		case *fyne.Container:
			for _, c := range w.Objects {
				walk(c)
			}
		case fyne.Widget:
			for _, c := range test.WidgetRenderer(w).Objects() {
				walk(c)
			}
		}
	}
	walk(o)
	return b.String()
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
	a := test.NewApp()
	defer a.Quit()
	u := newUI(a, answer{dir}, Options{Threads: 2})
	u.askOpenFolder()
	waitFor(t, "the atlas view", 120*time.Second, func() bool { return u.atlas != nil })
	var v *atlasView
	fyne.DoAndWait(func() { v = u.atlas })
	waitFor(t, "the first run", 120*time.Second, func() bool {
		_, st := v.engine.Latest()
		return st.Runs == 1 && !st.Running && st.Iteration == freshIterations
	})
	fyne.DoAndWait(func() {
		if n := v.prep.Cells(); n < 900 {
			t.Errorf("%d cells on the map of 1,000", n)
		}
		v.dial.TypedKey(&fyne.KeyEvent{Name: fyne.KeyRight})
	})
	waitFor(t, "the turned run", 120*time.Second, func() bool {
		_, st := v.engine.Latest()
		return st.Runs == 2 && !st.Running
	})
	path := filepath.Join(t.TempDir(), "saved"+session.Extension)
	fyne.DoAndWait(func() { v.saveSession(path, false) })
	waitFor(t, "the saved session", 30*time.Second, func() bool { _, err := os.Stat(path); return err == nil })
	s, err := session.Read(path)
	if err != nil {
		t.Fatal(err)
	}
	shown, _ := v.engine.Latest()
	if len(s.History) != 2 || s.History[1].Kind != "warm" || len(s.Layout) != len(shown) || s.Layout[0] != shown[0] {
		t.Fatalf("saved history %+v", s.History)
	}
	fyne.DoAndWait(func() { u.showSession(path, s) })
	var w *atlasView
	fyne.DoAndWait(func() { w = u.atlas })
	if w == v {
		t.Fatal("the session did not open a new view")
	}
	fyne.DoAndWait(func() {
		l, _ := w.engine.Latest()
		if len(l) != len(shown) || l[len(l)-1] != shown[len(shown)-1] {
			t.Error("the reopened map differs from the saved one")
		}
		if w.dial.Value != v.dial.Value {
			t.Errorf("dial %v, saved %v", w.dial.Value, v.dial.Value)
		}
	})
	waitFor(t, "the atlas behind the session", 120*time.Second, func() bool { return w.ready })
	fyne.DoAndWait(func() { u.closeAtlas() })
}
